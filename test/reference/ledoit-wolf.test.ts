import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { createReturnHistory, returnHistoryFromRows, type ReturnHistory } from '../../src/estimate/history.js';
import { ledoitWolfConstantCorrelation, ledoitWolfIdentity } from '../../src/estimate/ledoit-wolf.js';
import { parkMiller } from '../helpers/reference-data.js';

// Inputs and scikit-learn 1.9.1 outputs (sklearn.covariance.LedoitWolf), copied from the team's shared reference set into fixtures/ledoit-wolf.json.
interface LedoitWolfCase {
  readonly name: string;
  readonly X: number[][];
  readonly shrinkage: number;
  readonly covariance: number[][];
}
const reference = JSON.parse(
  readFileSync(new URL('./fixtures/ledoit-wolf.json', import.meta.url), 'utf8'),
) as { cases: LedoitWolfCase[] };

/** The 40×3 case's generator as stated in the reference file: X0=U0; X1=U1+0.5U0; X2=U2+0.3U0−0.2U1. */
function lcg40x3(): ReturnHistory {
  const next = parkMiller(12345); // Park–Miller LCG of shared/REFERENCES.md
  const values = new Float64Array(120);
  for (let t = 0; t < 40; t++) {
    const u0 = next() - 0.5;
    const u1 = next() - 0.5;
    const u2 = next() - 0.5;
    values.set([u0, u1 + 0.5 * u0, u2 + 0.3 * u0 - 0.2 * u1], t * 3);
  }
  return createReturnHistory(values, 40, 3);
}

function maxRelativeGap(actual: Float64Array, expected: readonly number[][]): number {
  const flat = expected.flat();
  const scale = Math.max(...flat.map(Math.abs));
  let gap = 0;
  for (let i = 0; i < flat.length; i++) gap = Math.max(gap, Math.abs(actual[i] - flat[i]) / scale);
  return gap;
}

function scaled(history: ReturnHistory, factor: number): ReturnHistory {
  return createReturnHistory(history.values.map((v) => v * factor), history.periods, history.series);
}

describe('Ledoit–Wolf, scaled-identity target, against scikit-learn', () => {
  it('rebuilds the 40×3 LCG input exactly from the stated generator', () => {
    const rebuilt = lcg40x3();
    const stored = reference.cases.find((c) => c.name === 'lcg-40x3');
    expect(stored).toBeDefined();
    expect(Array.from(rebuilt.values)).toEqual(stored!.X.flat());
  });

  for (const testCase of reference.cases) {
    it(`matches scikit-learn's shrinkage and matrix on ${testCase.name} (~1e-12 relative)`, () => {
      // Ledoit & Wolf (2004), J. Multivariate Analysis 88(2); scikit-learn LedoitWolf (mean removed, divisor n).
      const estimate = ledoitWolfIdentity(returnHistoryFromRows(testCase.X));
      expect(Math.abs(estimate.shrinkage - testCase.shrinkage) / testCase.shrinkage).toBeLessThan(1e-12);
      expect(maxRelativeGap(estimate.model.cov, testCase.covariance)).toBeLessThan(1e-12);
    });
  }

  it('keeps the shrinkage in [0, 1], is invariant to scaling the data and preserves the trace', () => {
    // Properties stated in Ledoit & Wolf (2004), J. Multivariate Analysis 88(2): δ = b²/d² with b² ≤ d²,
    // a ratio of quantities that scale alike; the target μI has the trace of S.
    for (const testCase of reference.cases) {
      const history = returnHistoryFromRows(testCase.X);
      const base = ledoitWolfIdentity(history);
      expect(base.shrinkage).toBeGreaterThanOrEqual(0);
      expect(base.shrinkage).toBeLessThanOrEqual(1);
      for (const factor of [1e-3, 7.5, 250]) {
        const other = ledoitWolfIdentity(scaled(history, factor));
        expect(Math.abs(other.shrinkage - base.shrinkage)).toBeLessThan(1e-12);
        for (let i = 0; i < base.model.cov.length; i++) {
          expect(other.model.cov[i] / (factor * factor)).toBeCloseTo(base.model.cov[i], 14);
        }
      }
      const n = history.series;
      let shrunkTrace = 0;
      let sampleTrace = 0;
      for (let j = 0; j < n; j++) {
        shrunkTrace += base.model.cov[j * n + j];
        let mean = 0;
        for (let t = 0; t < history.periods; t++) mean += history.values[t * n + j] / history.periods;
        for (let t = 0; t < history.periods; t++) sampleTrace += (history.values[t * n + j] - mean) ** 2 / history.periods;
      }
      expect(Math.abs(shrunkTrace - sampleTrace) / sampleTrace).toBeLessThan(1e-14);
    }
  });
});

describe('Ledoit–Wolf, constant-correlation target', () => {
  it('reproduces δ* and the mean correlation on the 40×3 LCG case', () => {
    // Ledoit & Wolf (2004), "Honey, I shrunk the sample covariance matrix", JPM 30(4);
    // values computed with numpy, listed in shared/REFERENCES.md (Covariance estimation).
    const estimate = ledoitWolfConstantCorrelation(lcg40x3());
    expect(Math.abs(estimate.shrinkage - 0.5215461271710512)).toBeLessThan(1e-13);
    expect(Math.abs(estimate.meanCorrelation! - 0.3165344808922563)).toBeLessThan(1e-14);
  });

  it('blends the sample matrix (divisor T) with the constant-correlation target at δ*', () => {
    // Same paper: Σ̂ = δ*F + (1 − δ*)S, F_ii = s_ii, F_ij = r̄·√(s_ii s_jj).
    const history = lcg40x3();
    const { model, shrinkage, meanCorrelation } = ledoitWolfConstantCorrelation(history);
    const n = 3;
    const t = history.periods;
    const mean = [0, 1, 2].map((j) => {
      let s = 0;
      for (let p = 0; p < t; p++) s += history.values[p * n + j];
      return s / t;
    });
    const sample = (i: number, j: number): number => {
      let s = 0;
      for (let p = 0; p < t; p++) s += (history.values[p * n + i] - mean[i]) * (history.values[p * n + j] - mean[j]);
      return s / t;
    };
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        const target = i === j ? sample(i, i) : meanCorrelation! * Math.sqrt(sample(i, i) * sample(j, j));
        const expected = shrinkage * target + (1 - shrinkage) * sample(i, j);
        expect(Math.abs(model.cov[i * n + j] - expected)).toBeLessThan(1e-15);
      }
    }
  });
});
