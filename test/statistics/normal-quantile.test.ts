import { describe, expect, it } from 'vitest';
import { normalQuantile } from '../../src/statistics/normal-quantile.js';

describe('normalQuantile', () => {
  it('matches standard table values', () => {
    // Values of scipy.stats.norm.ppf (scipy 1.17.1, run on this machine); the first three are the usual table values (Abramowitz & Stegun 1964, Table 26.5).
    expect(normalQuantile(0.95)).toBeCloseTo(1.6448536269514722, 12);
    expect(normalQuantile(0.975)).toBeCloseTo(1.959963984540054, 12);
    expect(normalQuantile(0.99)).toBeCloseTo(2.3263478740408408, 12);
    expect(normalQuantile(0.5)).toBeCloseTo(0, 14);
    expect(normalQuantile(0.01)).toBeCloseTo(-2.3263478740408408, 12);
    expect(normalQuantile(1e-10)).toBeCloseTo(-6.361340902404056, 9);
  });
  it('rejects p outside (0,1)', () => {
    expect(() => normalQuantile(1)).toThrow(RangeError);
  });
});
