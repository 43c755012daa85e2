import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { sampleCovariance } from '../../src/estimate/covariance.js';
import { EstimationError } from '../../src/estimate/errors.js';
import { ewmaCovariance, ewmaEffectiveWindow, ewmaWeights, RISKMETRICS_DAILY_DECAY } from '../../src/estimate/ewma.js';
import { createReturnHistory, type ReturnHistory } from '../../src/estimate/history.js';

function randomHistory(seed: string, periods: number, series: number): ReturnHistory {
  const rng = seedrandom(seed);
  return createReturnHistory(Float64Array.from({ length: periods * series }, () => 0.04 * (rng() - 0.45)), periods, series);
}

describe('EWMA weights', () => {
  it('sum to one, decay by λ per period back in time, newest row last', () => {
    const w = ewmaWeights(0.94, 50);
    let total = 0;
    for (const v of w) total += v;
    expect(total).toBeCloseTo(1, 15);
    for (let p = 0; p < 49; p++) expect(w[p] / w[p + 1]).toBeCloseTo(0.94, 14);
    // Closed form of the normalisation: w_newest = (1 − λ)/(1 − λ^m).
    expect(w[49]).toBeCloseTo(0.06 / (1 - 0.94 ** 50), 15);
  });

  it('use the RiskMetrics daily default 0.94 (common practice) and its 1 % window of 74.43 rows', () => {
    // RiskMetrics Technical Document (1996); ln(0.01)/ln(0.94) = 74.43 (shared/REFERENCES.md).
    expect(RISKMETRICS_DAILY_DECAY).toBe(0.94);
    expect(ewmaEffectiveWindow(0.94)).toBeCloseTo(74.43, 2);
    expect(() => ewmaEffectiveWindow(1)).toThrow(EstimationError);
  });

  it('reject a decay outside (0, 1]', () => {
    for (const bad of [0, -0.5, 1.01, Number.NaN]) expect(() => ewmaWeights(bad, 10)).toThrow(EstimationError);
  });
});

describe('ewmaCovariance', () => {
  it('equals the RiskMetrics recursion Σ ← λΣ + (1 − λ)xxᵀ from zero, divided by 1 − λ^m (zero mean)', () => {
    // RiskMetrics Technical Document (1996): the recursive form of the exponentially weighted estimator.
    const history = randomHistory('recursion', 80, 4);
    const lambda = 0.94;
    const n = 4;
    const recursive = new Float64Array(n * n);
    for (let t = 0; t < 80; t++) {
      const x = history.values.subarray(t * n, t * n + n);
      for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) recursive[i * n + j] = lambda * recursive[i * n + j] + (1 - lambda) * x[i] * x[j];
    }
    const estimate = ewmaCovariance(history, { decay: lambda });
    for (let i = 0; i < n * n; i++) expect(estimate.model.cov[i]).toBeCloseTo(recursive[i] / (1 - lambda ** 80), 16);
  });

  it('with λ = 1 and the weighted mean is the divisor-T sample covariance', () => {
    const history = randomHistory('equal', 30, 3);
    const ewma = ewmaCovariance(history, { decay: 1, mean: 'weighted' });
    const sample = sampleCovariance(history).model.cov;
    for (let i = 0; i < 9; i++) expect(ewma.model.cov[i]).toBeCloseTo((sample[i] * 29) / 30, 16);
    expect(ewma.effectiveObservations).toBeCloseTo(30, 12);
  });

  it("reports Kish's effective sample size 1/Σw², (1−λ^m)(1+λ)/((1−λ)(1+λ^m)), → (1+λ)/(1−λ)", () => {
    // Kish (1965), Survey Sampling (from memory): n_eff = (Σw)²/Σw²; geometric sums give the closed form.
    const lambda = 0.94;
    const short = ewmaCovariance(randomHistory('kish', 40, 2), { decay: lambda });
    const closed = ((1 - lambda ** 40) * (1 + lambda)) / ((1 - lambda) * (1 + lambda ** 40));
    expect(short.effectiveObservations).toBeCloseTo(closed, 11);
    const long = ewmaCovariance(randomHistory('kish-long', 1500, 2), { decay: lambda });
    expect(long.effectiveObservations).toBeCloseTo((1 + lambda) / (1 - lambda), 9);
  });

  it('weighs rows by their position in a selection (the last position is newest)', () => {
    const history = randomHistory('positions', 20, 3);
    const rows = Int32Array.from([19, 3, 3, 7, 0, 12, 5, 5, 18, 1]);
    const copied = new Float64Array(rows.length * 3);
    rows.forEach((r, p) => copied.set(history.values.subarray(r * 3, r * 3 + 3), p * 3));
    for (const mean of ['zero', 'weighted'] as const) {
      const viaIndex = ewmaCovariance(history, { rows, decay: 0.9, mean });
      const viaCopy = ewmaCovariance(createReturnHistory(copied, rows.length, 3), { decay: 0.9, mean });
      expect(Array.from(viaIndex.model.cov)).toEqual(Array.from(viaCopy.model.cov));
    }
  });

  it('removing the weighted mean lowers each variance by the squared weighted mean', () => {
    // Σ_w (x − x̄_w)² = Σ_w x² − x̄_w² with weights summing to one.
    const history = randomHistory('shift', 60, 2);
    const weights = ewmaWeights(0.97, 60);
    const zero = ewmaCovariance(history, { decay: 0.97 }).model.cov;
    const centred = ewmaCovariance(history, { decay: 0.97, mean: 'weighted' }).model.cov;
    for (let j = 0; j < 2; j++) {
      let mean = 0;
      for (let t = 0; t < 60; t++) mean += weights[t] * history.values[t * 2 + j];
      expect(zero[j * 2 + j] - centred[j * 2 + j]).toBeCloseTo(mean * mean, 16);
    }
  });
});
