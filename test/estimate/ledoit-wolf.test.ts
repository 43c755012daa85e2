import fc from 'fast-check';
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { sampleCovariance } from '../../src/estimate/covariance.js';
import { createReturnHistory, returnHistoryFromRows, type ReturnHistory } from '../../src/estimate/history.js';
import { ledoitWolfConstantCorrelation, ledoitWolfIdentity } from '../../src/estimate/ledoit-wolf.js';
import { EstimationWorkspace } from '../../src/estimate/workspace.js';

/** Gaussian rows with volatilities `vols` and a common factor giving correlation ≈ rho. */
function gaussianHistory(seed: string, periods: number, vols: readonly number[], rho: number): ReturnHistory {
  const rng = seedrandom(seed);
  const normal = (): number => Math.sqrt(-2 * Math.log(1 - rng())) * Math.cos(2 * Math.PI * rng());
  const n = vols.length;
  const values = new Float64Array(periods * n);
  for (let t = 0; t < periods; t++) {
    const common = normal();
    for (let i = 0; i < n; i++) values[t * n + i] = vols[i] * (Math.sqrt(rho) * common + Math.sqrt(1 - rho) * normal());
  }
  return createReturnHistory(values, periods, n);
}

const shrinkers = [
  ['scaled identity', ledoitWolfIdentity],
  ['constant correlation', ledoitWolfConstantCorrelation],
] as const;

describe('Ledoit–Wolf shrinkage, general properties', () => {
  for (const [name, shrink] of shrinkers) {
    it(`${name}: intensity in [0, 1], scale invariant, symmetric, same on selected and copied rows`, () => {
      // Ledoit & Wolf (2004), JMVA 88(2) and JPM 30(4): δ is a ratio of moments of equal degree.
      fc.assert(
        fc.property(fc.integer({ min: 3, max: 40 }), fc.integer({ min: 2, max: 8 }), fc.nat(), (periods, n, seed) => {
          const vols = Array.from({ length: n }, (_, i) => 0.02 + 0.01 * i);
          const history = gaussianHistory(`p${seed}`, periods, vols, 0.3);
          const estimate = shrink(history);
          expect(estimate.shrinkage).toBeGreaterThanOrEqual(0);
          expect(estimate.shrinkage).toBeLessThanOrEqual(1);
          const doubled = shrink(createReturnHistory(history.values.map((v) => 4 * v), periods, n));
          expect(Math.abs(doubled.shrinkage - estimate.shrinkage)).toBeLessThan(1e-10);
          const cov = estimate.model.cov;
          for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) expect(cov[i * n + j]).toBe(cov[j * n + i]);

          const rows = Int32Array.from({ length: periods }, (_, p) => (p * 5 + seed) % periods);
          const copied = new Float64Array(periods * n);
          rows.forEach((r, p) => copied.set(history.values.subarray(r * n, (r + 1) * n), p * n));
          const viaIndex = shrink(history, { rows, workspace: new EstimationWorkspace() });
          const viaCopy = shrink(createReturnHistory(copied, periods, n));
          expect(viaIndex.shrinkage).toBe(viaCopy.shrinkage);
          expect(Array.from(viaIndex.model.cov)).toEqual(Array.from(viaCopy.model.cov));
        }),
        { numRuns: 80 },
      );
    });
  }
});

describe('ledoitWolfIdentity', () => {
  it('shrinks strongly when the true covariance is a multiple of I and weakly when the target is wrong and T is large', () => {
    // Consistency argument of Ledoit & Wolf (2004), JMVA 88(2): δ → 0 when the target is
    // misspecified and T grows; a correct target keeps δ large.
    const spherical = ledoitWolfIdentity(gaussianHistory('sphere', 20, Array(10).fill(0.05), 0));
    const structured = ledoitWolfIdentity(gaussianHistory('struct', 2000, [0.01, 0.03, 0.05, 0.08], 0.6));
    expect(spherical.shrinkage).toBeGreaterThan(0.5);
    expect(structured.shrinkage).toBeLessThan(0.01);
  });

  it('leaves S unchanged when S already is a multiple of I (d² = 0)', () => {
    const estimate = ledoitWolfIdentity(returnHistoryFromRows([[1, 0], [-1, 0], [0, 1], [0, -1]]));
    expect(estimate.shrinkage).toBe(0);
    expect(Array.from(estimate.model.cov)).toEqual([0.5, 0, 0, 0.5]);
  });
});

describe('ledoitWolfConstantCorrelation', () => {
  it('returns the divisor-T sample matrix with δ = 0 when N = 2 (target equals the sample)', () => {
    // Ledoit & Wolf (2004), JPM 30(4): with one correlation, r̄ is it, so F = S (shared/REFERENCES.md).
    const history = gaussianHistory('two', 30, [0.02, 0.05], 0.4);
    const estimate = ledoitWolfConstantCorrelation(history);
    const sample = sampleCovariance(history).model.cov;
    expect(estimate.shrinkage).toBe(0);
    for (let i = 0; i < 4; i++) expect(estimate.model.cov[i]).toBeCloseTo((sample[i] * 29) / 30, 16);
    expect(estimate.meanCorrelation).toBeCloseTo(sample[1] / Math.sqrt(sample[0] * sample[3]), 14);
  });

  it('leaves a constant (zero-variance) asset out of the mean correlation and keeps its row at zero', () => {
    const base = gaussianHistory('cash', 40, [0.02, 0.04, 0.06], 0.5);
    const values = new Float64Array(40 * 4);
    for (let t = 0; t < 40; t++) {
      values.set(base.values.subarray(t * 3, t * 3 + 3), t * 4);
      values[t * 4 + 3] = 0.001; // constant return
    }
    const withCash = ledoitWolfConstantCorrelation(createReturnHistory(values, 40, 4));
    const without = ledoitWolfConstantCorrelation(base);
    expect(withCash.meanCorrelation).toBeCloseTo(without.meanCorrelation!, 15);
    for (let i = 0; i < 4; i++) {
      // Zero up to the rounding left by demeaning a constant (|x − x̄| ~ 1e-19 here).
      expect(Math.abs(withCash.model.cov[i * 4 + 3])).toBeLessThan(1e-20);
      expect(withCash.model.cov[3 * 4 + i]).toBe(withCash.model.cov[i * 4 + 3]);
    }
    expect(withCash.model.cov.every(Number.isFinite)).toBe(true);
    // The cash row adds nothing to π̂, ρ̂ or γ̂, so δ* is that of the three risky assets.
    expect(withCash.shrinkage).toBeCloseTo(without.shrinkage, 12);
  });

  it('keeps the variances and moves every correlation towards r̄', () => {
    const history = gaussianHistory('towards', 24, [0.02, 0.03, 0.05, 0.07, 0.04], 0.35);
    const n = 5;
    const estimate = ledoitWolfConstantCorrelation(history);
    const sample = sampleCovariance(history).model.cov.map((v) => (v * 23) / 24);
    expect(estimate.shrinkage).toBeGreaterThan(0);
    const rBar = estimate.meanCorrelation!;
    for (let i = 0; i < n; i++) {
      expect(estimate.model.cov[i * n + i]).toBeCloseTo(sample[i * n + i], 16);
      for (let j = 0; j < n; j++) {
        if (i === j) continue;
        const sd = Math.sqrt(sample[i * n + i] * sample[j * n + j]);
        const before = sample[i * n + j] / sd;
        const after = estimate.model.cov[i * n + j] / sd;
        expect(Math.abs(after - rBar)).toBeCloseTo((1 - estimate.shrinkage) * Math.abs(before - rBar), 12);
      }
    }
  });
});
