import { readFileSync } from 'node:fs';
import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import { createQuantileErrorWorkspace, quantileStdErrs, stridedMoments } from '../../src/statistics/batch-means.js';
import { ChannelVarianceAccumulator } from '../../src/statistics/channel-variance.js';
import { midRankPercentileSorted, quantileSorted } from '../../src/statistics/quantiles.js';
import { ScalarAccumulator } from '../../src/statistics/scalar-accumulator.js';
import { WeightAccumulator } from '../../src/statistics/weight-accumulator.js';

// Fixture: scripts/reference/statistics_reference.py — numpy.quantile(method='linear')
// (Hyndman & Fan 1996, type 7; numpy's default percentile), numpy.std(ddof=1),
// scipy.stats.percentileofscore(kind='mean') for mid-ranks, and the batch-means errors
// recomputed in numpy the way batch-means.ts documents them (Schmeiser 1982).
interface Fixture {
  percentiles: Record<string, { values: number[]; probabilities: number[]; quantiles: number[]; percentile5_50_95: number[] }>;
  midRanks: { sample: string; score: number; percentile: number }[];
  batchMeans: Record<
    string,
    {
      values: (number | null)[];
      batches: number;
      moments: { count: number; mean: number; sd: number | null; stdErr: number | null };
      quantiles: number[];
      quantileStdErrs: number[];
      bandWidthStdErr: number;
    }
  >;
  weights: {
    draws: number;
    assets: number;
    rows: (number | null)[][];
    proposal: number[];
    threshold: number;
    perAsset: {
      mean: number;
      meanStdErr: number;
      sd: number;
      sdStdErr: number;
      bands: number[];
      p05StdErr: number;
      p95StdErr: number;
      p50StdErr: number;
      selectionRateStdErr: number;
      selectionRate: number;
      proposalPercentile: number;
      proposalPercentileStdErr: number;
    }[];
  };
  channels: Record<
    string,
    {
      meanRows: number[][];
      covarianceRows: number[][];
      meanVariance: number[];
      covarianceVariance: number[];
      perAsset: number[];
      overall: number;
      overallStdErr: number;
    }
  >;
}

const fixture = JSON.parse(readFileSync(new URL('./fixtures/statistics.json', import.meta.url), 'utf8')) as Fixture;

const TOLERANCE = 1e-12;
let worst = 0;

/** |actual − expected| ≤ 1e-12 · max(1, |expected|); also tracks the worst relative gap seen. */
function expectClose(actual: number, expected: number, what: string): void {
  const gap = Math.abs(actual - expected) / Math.max(1, Math.abs(expected));
  worst = Math.max(worst, gap);
  expect(gap, `${what}: ${actual} vs ${expected}`).toBeLessThanOrEqual(TOLERANCE);
}

function toFloat(values: (number | null)[]): Float64Array {
  return Float64Array.from(values, (v) => (v === null ? Number.NaN : v));
}

describe('percentiles against numpy (type 7)', () => {
  it('quantileSorted reproduces numpy.quantile(method="linear") including ties, n = 1, 2 and constants', () => {
    for (const [name, sample] of Object.entries(fixture.percentiles)) {
      const sorted = Float64Array.from(sample.values).sort();
      sample.probabilities.forEach((p, j) => expectClose(quantileSorted(sorted, sorted.length, p), sample.quantiles[j], `${name} q${p}`));
      [0.05, 0.5, 0.95].forEach((p, j) => expectClose(quantileSorted(sorted, sorted.length, p), sample.percentile5_50_95[j], `${name} pct`));
    }
  });

  it('mid-rank percentile matches scipy.stats.percentileofscore(kind="mean")', () => {
    for (const row of fixture.midRanks) {
      const sorted = Float64Array.from(fixture.percentiles[row.sample].values).sort();
      expectClose(midRankPercentileSorted(sorted, sorted.length, row.score), row.percentile, `${row.sample} @ ${row.score}`);
    }
  });
});

describe('moments and batch-means errors against numpy', () => {
  it('mean, sample sd (ddof=1), sd/√n and the documented quantile errors', () => {
    for (const [name, c] of Object.entries(fixture.batchMeans)) {
      const x = toFloat(c.values);
      const moments = stridedMoments(x, 0, 1, x.length);
      expect(moments.count).toBe(c.moments.count);
      expectClose(moments.mean, c.moments.mean, `${name} mean`);
      expectClose(moments.sd, c.moments.sd ?? Number.NaN, `${name} sd`);
      expectClose(moments.stdErr, c.moments.stdErr ?? Number.NaN, `${name} stdErr`);
      const errors = new Float64Array(3);
      const method = quantileStdErrs(x, 0, 1, x.length, [0.05, 0.5, 0.95], errors, createQuantileErrorWorkspace(x.length));
      expect(method).toBe('order-statistic');
      errors.forEach((e, j) => expectClose(e, c.quantileStdErrs[j], `${name} quantile SE ${j}`));

      const scalars = new ScalarAccumulator(x.length);
      x.forEach((v, b) => scalars.record(b, v));
      const summary = scalars.summarize();
      expect(summary.successfulDraws).toBe(c.moments.count);
      expect(summary.failedDraws).toBe(x.length - c.moments.count);
      expectClose(summary.p05, c.quantiles[0], `${name} p05`);
      expectClose(summary.p50, c.quantiles[1], `${name} p50`);
      expectClose(summary.p95, c.quantiles[2], `${name} p95`);
      expectClose(summary.p50StdErr, c.quantileStdErrs[1], `${name} p50 SE`);
      expectClose(summary.bandWidthStdErr, c.bandWidthStdErr, `${name} width SE`);
    }
  });
});

describe('weight accumulator summary against numpy', () => {
  it('bands, sd, errors, selection rate and proposal percentile per asset', () => {
    const w = fixture.weights;
    const accumulator = new WeightAccumulator(w.draws, w.assets);
    w.rows.forEach((row, b) => accumulator.record(b, toFloat(row)));
    const summary = accumulator.summarize(w.proposal, w.threshold);
    expect(summary.failedDraws).toBe(3);
    w.perAsset.forEach((expected, i) => {
      const got = summary.perAsset[i];
      expectClose(got.mean, expected.mean, `asset ${i} mean`);
      expectClose(summary.meanOfOptima[i], expected.mean, `asset ${i} average`);
      expectClose(got.meanStdErr, expected.meanStdErr, `asset ${i} meanStdErr`);
      expectClose(got.sd, expected.sd, `asset ${i} sd`);
      expectClose(got.sdStdErr, expected.sdStdErr, `asset ${i} sdStdErr`);
      [got.p05, got.p25, got.p50, got.p75, got.p95].forEach((v, j) => expectClose(v, expected.bands[j], `asset ${i} band ${j}`));
      expectClose(got.p05StdErr, expected.p05StdErr, `asset ${i} p05 SE`);
      expectClose(got.p95StdErr, expected.p95StdErr, `asset ${i} p95 SE`);
      expectClose(got.p50StdErr, expected.p50StdErr, `asset ${i} p50 SE`);
      expectClose(got.selectionRateStdErr, expected.selectionRateStdErr, `asset ${i} selection SE`);
      expectClose(got.bandStdErr, Math.max(expected.p05StdErr, expected.p95StdErr), `asset ${i} band SE`);
      expectClose(got.selectionRate, expected.selectionRate, `asset ${i} selection`);
      expectClose(got.proposalPercentile, expected.proposalPercentile, `asset ${i} percentile`);
      expectClose(got.proposalPercentileStdErr, expected.proposalPercentileStdErr, `asset ${i} percentile SE`);
    });
  });
});

describe('mean-driven share against numpy.var(ddof=1)', () => {
  it('per-asset and overall shares and the batch-means error, including an ill-conditioned case', () => {
    for (const [name, c] of Object.entries(fixture.channels)) {
      const draws = c.meanRows.length;
      const accumulator = new ChannelVarianceAccumulator(draws, c.meanRows[0].length);
      for (let b = 0; b < draws; b++) {
        accumulator.record(b, 'mean-only', c.meanRows[b]);
        accumulator.record(b, 'covariance-only', c.covarianceRows[b]);
      }
      const summary = accumulator.summarize();
      // Variances are compared relative to themselves: in the ill-conditioned case (0.3 + 1e-7 noise)
      // a naive Σw² − (Σw)²/n would lose about 13 of 16 digits.
      c.meanVariance.forEach((v, i) => expectClose(summary.meanChannelVariance[i] / v, 1, `${name} Var_mean ${i}`));
      c.covarianceVariance.forEach((v, i) => expectClose(summary.covarianceChannelVariance[i] / v, 1, `${name} Var_cov ${i}`));
      c.perAsset.forEach((v, i) => expectClose(summary.perAsset[i], v, `${name} share ${i}`));
      expectClose(summary.overall, c.overall, `${name} overall`);
      expectClose(summary.overallStdErr, c.overallStdErr, `${name} overall SE`);
    }
  });
});

describe('Monte Carlo checks of the error estimates', () => {
  // Standard normals by Box–Muller (Box & Muller 1958) from a seeded uniform stream.
  function normals(seed: string, count: number): Float64Array {
    const random = seedrandom(seed);
    const out = new Float64Array(count);
    for (let k = 0; k < count; k += 2) {
      const radius = Math.sqrt(-2 * Math.log(1 - random()));
      const angle = 2 * Math.PI * random();
      out[k] = radius * Math.cos(angle);
      if (k + 1 < count) out[k + 1] = radius * Math.sin(angle);
    }
    return out;
  }

  it('exact-bootstrap SE of the median of N(0,1) draws ≈ √(π/2)/√B (asymptotic variance 1/(4 f(0)² B))', () => {
    // Textbook result: the sample median's asymptotic variance is 1/(4 f(m)² B) (e.g. Serfling 1980,
    // Approximation Theorems of Mathematical Statistics, §2.3.3); for N(0,1), f(0) = 1/√(2π), so the
    // SE is √(π/2)/√B ≈ 1.2533/√B. Averaging R = 40 runs of B = 3000; tolerance 8 %. A second
    // check: the spread of the 40 full-sample medians themselves, relative sd ≈ 11 %, within 35 %.
    const B = 3000;
    const R = 40;
    const workspace = createQuantileErrorWorkspace(B);
    const errors = new Float64Array(1);
    const medians = new Float64Array(R);
    let meanError = 0;
    for (let r = 0; r < R; r++) {
      const x = normals(`median-${r}`, B);
      expect(quantileStdErrs(x, 0, 1, B, [0.5], errors, workspace)).toBe('order-statistic');
      meanError += errors[0] / R;
      const sorted = Float64Array.from(x).sort();
      medians[r] = quantileSorted(sorted, B, 0.5);
    }
    const asymptotic = Math.sqrt(Math.PI / 2) / Math.sqrt(B);
    console.log(`median SE: order statistic / asymptotic = ${(meanError / asymptotic).toFixed(4)}`);
    expect(Math.abs(meanError / asymptotic - 1)).toBeLessThan(0.08);
    const spread = stridedMoments(medians, 0, 1, R).sd;
    console.log(`median SE: spread of medians / asymptotic = ${(spread / asymptotic).toFixed(4)}`);
    expect(Math.abs(spread / asymptotic - 1)).toBeLessThan(0.35);
  });

  it('exact-bootstrap SE of the median for B = 60 is also near √(π/2)/√B', () => {
    // Same textbook asymptotics at a small B; ranks are interpolated (type 7), so the estimate is
    // close to unbiased; 200 runs are averaged: accept 0.9..1.15 of the asymptotic value.
    const B = 60;
    const R = 200;
    const workspace = createQuantileErrorWorkspace(B);
    const errors = new Float64Array(1);
    let meanError = 0;
    for (let r = 0; r < R; r++) {
      const x = normals(`order-${r}`, B);
      expect(quantileStdErrs(x, 0, 1, B, [0.5], errors, workspace)).toBe('order-statistic');
      meanError += errors[0] / R;
    }
    const ratio = meanError / (Math.sqrt(Math.PI / 2) / Math.sqrt(B));
    console.log(`median SE: order statistic / asymptotic = ${ratio.toFixed(4)}`);
    expect(ratio).toBeGreaterThan(0.9);
    expect(ratio).toBeLessThan(1.15);
  });

  it('reports the worst relative gap against the fixture', () => {
    expect(worst).toBeLessThanOrEqual(TOLERANCE);
    console.log(`statistics reference: worst relative gap ${worst.toExponential(2)}`);
  });
});
