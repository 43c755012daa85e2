import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { drawBootstrapIndices, iidBootstrapIndices, stationaryBootstrapIndices } from '../../src/resample/bootstrap.js';
import { stationaryBootstrapMeanVariance } from '../../src/resample/bootstrap-variance.js';
import { createDrawStream } from '../../src/resample/streams.js';

// Stationary bootstrap: Politis & Romano (1994), JASA 89(428). iid bootstrap: Efron (1979),
// Annals of Statistics 7(1). Monte Carlo checks use a bound of 5 standard errors (a two-sided
// false-alarm rate of about 6e-7 per check; the seeds are fixed, so results are reproducible),
// and chi-square bin tests use scipy's upper 1e-6 point (fixtures/resample-distributions.json).

const variance = JSON.parse(
  readFileSync(new URL('./fixtures/resample-stationary-bootstrap-variance.json', import.meta.url), 'utf8'),
) as {
  x: number[];
  p: number;
  meanBlockLength: number;
  closedForm: number;
  markovChain: number;
  iidClosedForm: number;
  iidMarkovChain: number;
  sharedVarianceOfMean: number;
};
const distributions = JSON.parse(readFileSync(new URL('./fixtures/resample-distributions.json', import.meta.url), 'utf8')) as {
  chiSquareCritical1e6: Record<string, number>;
};

const Z = 5;

function mean(values: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < values.length; i++) s += values[i];
  return s / values.length;
}

describe('exact variance of the stationary-bootstrap mean (closed form)', () => {
  it('matches the shared reference value and a direct Markov-chain computation to 1e-12', () => {
    // Shared reference/stationary-bootstrap-variance.json: 0.009348069192599813 (also re-derived by
    // scripts/reference/resample_reference.py from the resampling law itself: I_1 uniform, then
    // I_{t+1} = I_t + 1 mod N w.p. 1 − p, uniform w.p. p; Cov* from powers of that transition matrix).
    const got = stationaryBootstrapMeanVariance(variance.x, variance.p);
    expect(variance.sharedVarianceOfMean).toBe(0.009348069192599813);
    expect(Math.abs(got - variance.sharedVarianceOfMean)).toBeLessThan(1e-12);
    expect(Math.abs(got - variance.markovChain)).toBeLessThan(1e-12);
    expect(Math.abs(got / variance.sharedVarianceOfMean - 1)).toBeLessThan(1e-12);
  });

  it('reduces to the iid bootstrap ĉ(0)/N at p = 1 (Efron 1979)', () => {
    const x = variance.x;
    const n = x.length;
    const xbar = mean(x);
    const c0 = x.reduce((s, v) => s + (v - xbar) ** 2, 0) / n;
    const got = stationaryBootstrapMeanVariance(x, 1);
    expect(Math.abs(got - c0 / n)).toBeLessThan(1e-15);
    expect(Math.abs(got - variance.iidMarkovChain)).toBeLessThan(1e-15);
  });
});

/**
 * Exact law of an index sequence (i_1..i_T) under Politis & Romano's definition:
 * P(i_1) = 1/n, P(i_{t+1} | i_t) = (1 − p)·[i_{t+1} = i_t + 1 mod n] + p/n.
 */
function stationarySequenceProbability(sequence: number[], n: number, p: number): number {
  let prob = 1 / n;
  for (let t = 1; t < sequence.length; t++) {
    const continues = sequence[t] === (sequence[t - 1] + 1) % n ? 1 - p : 0;
    prob *= continues + p / n;
  }
  return prob;
}

function allSequences(n: number, length: number): number[][] {
  const out: number[][] = [];
  const total = n ** length;
  for (let code = 0; code < total; code++) {
    const seq: number[] = [];
    let c = code;
    for (let t = 0; t < length; t++) {
      seq.push(c % n);
      c = Math.floor(c / n);
    }
    out.push(seq.reverse());
  }
  return out;
}

function sequenceCode(indices: Int32Array, n: number): number {
  let code = 0;
  for (let t = 0; t < indices.length; t++) code = code * n + indices[t];
  return code;
}

describe('the bootstrap mean is unbiased for the sample mean (Politis & Romano 1994)', () => {
  const data = [0.3, -1.2, 2.5]; // any values: unbiasedness holds for every data set
  const n = 3;
  const length = 4; // longer than the data, so blocks wrap circularly
  const p = 0.4;
  const sequences = allSequences(n, length);

  it('by exact enumeration of the index law: E*[x̄*] = x̄ and the law sums to 1', () => {
    let totalProbability = 0;
    let expectedMean = 0;
    for (const seq of sequences) {
      const prob = stationarySequenceProbability(seq, n, p);
      totalProbability += prob;
      expectedMean += prob * mean(seq.map((i) => data[i]));
    }
    expect(Math.abs(totalProbability - 1)).toBeLessThan(1e-15);
    expect(Math.abs(expectedMean - mean(data))).toBeLessThan(1e-15);
  });

  it('the sampler draws index sequences with exactly that law (chi-square over all 81 sequences)', () => {
    // Checks the geometric-block implementation against the step-by-step definition.
    const draws = 200_000;
    const counts = new Float64Array(sequences.length);
    const out = new Int32Array(length);
    const stream = createDrawStream('enumeration', 0, 'rows');
    for (let b = 0; b < draws; b++) counts[sequenceCode(stationaryBootstrapIndices(stream, n, 1 / p, out), n)]++;
    let statistic = 0;
    for (const seq of sequences) {
      const expected = draws * stationarySequenceProbability(seq, n, p);
      const observed = counts[seq.reduce((c, i) => c * n + i, 0)];
      statistic += (observed - expected) ** 2 / expected;
    }
    // 81 cells → 80 degrees of freedom; scipy chi2.isf(1e-6, 80) = 155.08.
    expect(statistic).toBeLessThan(distributions.chiSquareCritical1e6['80']);
  });

  it('iid sampler: every sequence has probability n^−T (chi-square over 81 sequences)', () => {
    const draws = 200_000;
    const counts = new Float64Array(sequences.length);
    const out = new Int32Array(length);
    const stream = createDrawStream('enumeration-iid', 0, 'rows');
    for (let b = 0; b < draws; b++) counts[sequenceCode(iidBootstrapIndices(stream, n, out), n)]++;
    const expected = draws / sequences.length;
    let statistic = 0;
    for (const c of counts) statistic += (c - expected) ** 2 / expected;
    expect(statistic).toBeLessThan(distributions.chiSquareCritical1e6['80']);
  });

  it('Monte Carlo on the 60-point series: mean of x̄* within 5 exact standard errors of x̄', () => {
    // Per-draw streams (seed, b, 'rows'), as the stress loop uses them.
    const x = Float64Array.from(variance.x);
    const draws = 20_000;
    const indices = new Int32Array(x.length);
    let sum = 0;
    for (let b = 0; b < draws; b++) {
      drawBootstrapIndices('unbiased', b, 'stationary-bootstrap', x.length, variance.meanBlockLength, indices);
      let s = 0;
      for (let t = 0; t < indices.length; t++) s += x[indices[t]];
      sum += s / indices.length;
    }
    const standardError = Math.sqrt(variance.closedForm / draws); // exact Var* known
    expect(Math.abs(sum / draws - mean(x))).toBeLessThan(Z * standardError);
  });
});

describe("the sampler's Monte Carlo variance agrees with the closed form", () => {
  function bootstrapMeans(scheme: 'iid-bootstrap' | 'stationary-bootstrap', seed: string, draws: number): Float64Array {
    const x = Float64Array.from(variance.x);
    const indices = new Int32Array(x.length);
    const means = new Float64Array(draws);
    for (let b = 0; b < draws; b++) {
      drawBootstrapIndices(seed, b, scheme, x.length, variance.meanBlockLength, indices);
      let s = 0;
      for (let t = 0; t < indices.length; t++) s += x[indices[t]];
      means[b] = s / indices.length;
    }
    return means;
  }

  /** Sample variance and its delta-method standard error √((m4 − s⁴)/B). */
  function varianceWithError(values: Float64Array): { variance: number; standardError: number } {
    const m = mean(values);
    let m2 = 0;
    let m4 = 0;
    for (const v of values) {
      const d = (v - m) ** 2;
      m2 += d;
      m4 += d * d;
    }
    const count = values.length;
    m2 /= count;
    m4 /= count;
    return { variance: (m2 * count) / (count - 1), standardError: Math.sqrt((m4 - m2 * m2) / count) };
  }

  it('stationary bootstrap, p = 0.2: within 5 standard errors of 0.009348069192599813', () => {
    const { variance: v, standardError } = varianceWithError(bootstrapMeans('stationary-bootstrap', 'variance', 20_000));
    expect(Math.abs(v - variance.closedForm)).toBeLessThan(Z * standardError);
    // Dependence matters: the stationary variance is well above the iid one (3.7× here), and the
    // Monte Carlo estimate resolves the difference.
    expect(v - variance.iidClosedForm).toBeGreaterThan(10 * standardError);
  });

  it('iid bootstrap: within 5 standard errors of ĉ(0)/N', () => {
    const { variance: v, standardError } = varianceWithError(bootstrapMeans('iid-bootstrap', 'variance-iid', 20_000));
    expect(Math.abs(v - variance.iidClosedForm)).toBeLessThan(Z * standardError);
  });
});
