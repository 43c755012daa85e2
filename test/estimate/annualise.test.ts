import { describe, expect, it } from 'vitest';
import { annualiseMean, annualiseVariance, annualiseVolatility } from '../../src/estimate/annualise.js';

describe('annualisation (common practice under iid returns)', () => {
  it('scales the mean and variance by p and the volatility by √p', () => {
    expect(annualiseMean(0.01, 12)).toBeCloseTo(0.12, 15);
    expect(annualiseVolatility(0.05, 12)).toBeCloseTo(0.05 * Math.sqrt(12), 15);
    expect(annualiseVariance(0.0025, 12)).toBeCloseTo(0.03, 15);
    // Daily: √252 (shared/REFERENCES.md, facts of the trade).
    expect(annualiseVolatility(0.01, 252)).toBeCloseTo(0.158745078663875, 14);
  });

  it('keeps volatility² = variance after annualising', () => {
    for (const p of [12, 52, 252]) {
      const vol = 0.037;
      expect(annualiseVolatility(vol, p) ** 2).toBeCloseTo(annualiseVariance(vol * vol, p), 14);
    }
  });

  it('refuses a non-positive or non-finite number of periods', () => {
    for (const bad of [0, -12, Number.NaN, Number.POSITIVE_INFINITY]) {
      expect(() => annualiseMean(0.01, bad)).toThrow(RangeError);
      expect(() => annualiseVolatility(0.01, bad)).toThrow(RangeError);
      expect(() => annualiseVariance(0.01, bad)).toThrow(RangeError);
    }
  });
});
