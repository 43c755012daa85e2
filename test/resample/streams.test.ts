import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { createDrawStream, streamKey, type RandomStream } from '../../src/resample/streams.js';

// Distribution checks against scipy.stats quantiles (test/reference/fixtures/resample-distributions.json,
// written by scripts/reference/resample_reference.py) and textbook moments:
// N(0,1): mean 0, variance 1, skewness 0, kurtosis 3; Gamma(a,1): mean a, variance a, third central
// moment 2a; χ²_k: mean k, variance 2k; Geometric(p) on {1,2,…}: P(K=k) = (1−p)^{k−1}p, mean 1/p,
// variance (1−p)/p² (e.g. Johnson, Kotz & Kemp, Univariate Discrete Distributions, from memory).
// Monte Carlo bounds: 5 standard errors (exact where the variance of the estimator is known,
// else the delta-method estimate); bin tests: chi-square statistic below scipy's upper 1e-6 point.

const fixture = JSON.parse(
  readFileSync(new URL('../reference/fixtures/resample-distributions.json', import.meta.url), 'utf8'),
) as {
  deciles: number[];
  normal: number[];
  gamma: Record<string, number[]>;
  chiSquare: Record<string, number[]>;
  chiSquareCritical1e6: Record<string, number>;
};

const Z = 5;
const DRAWS = 100_000;

function sample(draw: (s: RandomStream) => number, seed: string, count = DRAWS): Float64Array {
  const stream = createDrawStream(seed, 0);
  const out = new Float64Array(count);
  for (let i = 0; i < count; i++) out[i] = draw(stream);
  return out;
}

function centralMoments(values: Float64Array): { mean: number; m2: number; m3: number; m4: number; m6: number } {
  let mean = 0;
  for (const v of values) mean += v;
  mean /= values.length;
  let m2 = 0;
  let m3 = 0;
  let m4 = 0;
  let m6 = 0;
  for (const v of values) {
    const d = v - mean;
    const d2 = d * d;
    m2 += d2;
    m3 += d2 * d;
    m4 += d2 * d2;
    m6 += d2 * d2 * d2;
  }
  const n = values.length;
  return { mean, m2: m2 / n, m3: m3 / n, m4: m4 / n, m6: m6 / n };
}

/** Chi-square statistic of the counts in the 10 bins cut at the reference deciles. */
function decileStatistic(values: Float64Array, deciles: number[]): number {
  const counts = new Float64Array(deciles.length + 1);
  for (const v of values) {
    let bin = 0;
    while (bin < deciles.length && v > deciles[bin]) bin++;
    counts[bin]++;
  }
  const expected = values.length / counts.length;
  let statistic = 0;
  for (const c of counts) statistic += (c - expected) ** 2 / expected;
  return statistic;
}

describe('uniform()', () => {
  it('lies strictly inside (0, 1) and is uniform over 10 equal bins', () => {
    const u = sample((s) => s.uniform(), 'uniform');
    let min = 1;
    let max = 0;
    for (const v of u) {
      min = Math.min(min, v);
      max = Math.max(max, v);
    }
    expect(min).toBeGreaterThan(0);
    expect(max).toBeLessThan(1);
    expect(decileStatistic(u, fixture.deciles)).toBeLessThan(fixture.chiSquareCritical1e6['9']);
    const m = centralMoments(u);
    expect(Math.abs(m.mean - 0.5)).toBeLessThan(Z * Math.sqrt(1 / 12 / DRAWS));
  });
});

describe('normal() — Marsaglia polar method', () => {
  const x = sample((s) => s.normal(), 'normal');
  const m = centralMoments(x);

  it('mean 0, variance 1, skewness 0, kurtosis 3 within 5 SE', () => {
    expect(Math.abs(m.mean)).toBeLessThan(Z / Math.sqrt(DRAWS));
    expect(Math.abs(m.m2 - 1)).toBeLessThan(Z * Math.sqrt(2 / DRAWS));
    expect(Math.abs(m.m3)).toBeLessThan(Z * Math.sqrt(15 / DRAWS)); // Var(X³) = 15
    expect(Math.abs(m.m4 - 3)).toBeLessThan(Z * Math.sqrt(96 / DRAWS)); // Var(X⁴) = 105 − 9
  });

  it('deciles match scipy norm.ppf (chi-square over 10 bins)', () => {
    expect(decileStatistic(x, fixture.normal)).toBeLessThan(fixture.chiSquareCritical1e6['9']);
  });

  it('consecutive values are uncorrelated (the cached second value of each pair included)', () => {
    let lag1 = 0;
    for (let i = 1; i < x.length; i++) lag1 += x[i] * x[i - 1];
    expect(Math.abs(lag1 / (x.length - 1))).toBeLessThan(Z / Math.sqrt(DRAWS));
  });
});

describe('gamma(shape) — Marsaglia & Tsang (2000), with the U^{1/a} boost below 1', () => {
  for (const shapeText of Object.keys(fixture.gamma)) {
    const a = Number(shapeText);
    it(`shape ${a}: mean a, variance a, third central moment 2a; deciles match scipy gamma.ppf`, () => {
      const x = sample((s) => s.gamma(a), `gamma-${a}`);
      const m = centralMoments(x);
      expect(Math.abs(m.mean - a)).toBeLessThan(Z * Math.sqrt(a / DRAWS));
      expect(Math.abs(m.m2 - a)).toBeLessThan(Z * Math.sqrt((m.m4 - m.m2 * m.m2) / DRAWS));
      expect(Math.abs(m.m3 - 2 * a)).toBeLessThan(Z * Math.sqrt((m.m6 - m.m3 * m.m3) / DRAWS));
      expect(decileStatistic(x, fixture.gamma[shapeText])).toBeLessThan(fixture.chiSquareCritical1e6['9']);
    });
  }
});

describe('chiSquare(df)', () => {
  for (const dfText of Object.keys(fixture.chiSquare)) {
    const k = Number(dfText);
    it(`df ${k}: mean k, variance 2k; deciles match scipy chi2.ppf`, () => {
      const x = sample((s) => s.chiSquare(k), `chi-${k}`);
      const m = centralMoments(x);
      expect(Math.abs(m.mean - k)).toBeLessThan(Z * Math.sqrt((2 * k) / DRAWS));
      expect(Math.abs(m.m2 - 2 * k)).toBeLessThan(Z * Math.sqrt((m.m4 - m.m2 * m.m2) / DRAWS));
      expect(decileStatistic(x, fixture.chiSquare[dfText])).toBeLessThan(fixture.chiSquareCritical1e6['9']);
    });
  }
});

describe('geometric(p)', () => {
  it('p = 0.2: P(K = k) = (1−p)^{k−1} p for k = 1..10 and the tail (chi-square), mean 1/p, variance (1−p)/p²', () => {
    const p = 0.2;
    const x = sample((s) => s.geometric(p), 'geometric');
    const counts = new Float64Array(11);
    let invalid = 0;
    for (const k of x) {
      if (!Number.isInteger(k) || k < 1) invalid++;
      counts[Math.min(k, 11) - 1]++;
    }
    expect(invalid).toBe(0);
    let statistic = 0;
    for (let k = 1; k <= 11; k++) {
      const prob = k <= 10 ? (1 - p) ** (k - 1) * p : (1 - p) ** 10;
      statistic += (counts[k - 1] - DRAWS * prob) ** 2 / (DRAWS * prob);
    }
    expect(statistic).toBeLessThan(fixture.chiSquareCritical1e6['10']);
    const m = centralMoments(x);
    expect(Math.abs(m.mean - 1 / p)).toBeLessThan(Z * Math.sqrt((1 - p) / p / p / DRAWS));
    expect(Math.abs(m.m2 - (1 - p) / p / p)).toBeLessThan(Z * Math.sqrt((m.m4 - m.m2 * m.m2) / DRAWS));
  });

  it('p = 1 always gives 1', () => {
    const s = createDrawStream('g1', 0);
    for (let i = 0; i < 100; i++) expect(s.geometric(1)).toBe(1);
  });
});

describe('integer(n)', () => {
  it('n = 7: uniform over {0..6} (chi-square, 6 df)', () => {
    const x = sample((s) => s.integer(7), 'int7');
    const counts = new Float64Array(7);
    for (const v of x) counts[v]++;
    let statistic = 0;
    for (const c of counts) statistic += (c - DRAWS / 7) ** 2 / (DRAWS / 7);
    expect(statistic).toBeLessThan(fixture.chiSquareCritical1e6['6']);
  });

  it('n near 2^32 (rejection path, ~1/4 rejected at n = 3·2^30): in range, mean (n−1)/2', () => {
    const n = 3 * 2 ** 30;
    const x = sample((s) => s.integer(n), 'int-large', 20_000);
    expect(x.every((v) => Number.isInteger(v) && v >= 0 && v < n)).toBe(true);
    const m = centralMoments(x);
    expect(Math.abs(m.mean - (n - 1) / 2)).toBeLessThan(Z * Math.sqrt((n * n - 1) / 12 / x.length));
  });

  it('rejects invalid n', () => {
    const s = createDrawStream('bad', 0);
    expect(() => s.integer(0)).toThrow(RangeError);
    expect(() => s.integer(2.5)).toThrow(RangeError);
    expect(() => s.integer(2 ** 32 + 1)).toThrow(RangeError);
    expect(() => s.gamma(0)).toThrow(RangeError);
    expect(() => s.chiSquare(-1)).toThrow(RangeError);
    expect(() => s.geometric(0)).toThrow(RangeError);
    expect(() => s.geometric(1.5)).toThrow(RangeError);
  });
});

describe('determinism: one stream per (seed, draw, purpose)', () => {
  function firstValues(seed: string | number, draw: number, purpose: string): number[] {
    const s = createDrawStream(seed, draw, purpose);
    return [s.uniform(), s.normal(), s.gamma(0.7), s.chiSquare(5), s.integer(1000), s.geometric(0.1), s.normal()];
  }

  it('the same triple gives the same numbers whatever order the draws are generated in', () => {
    const forward = Array.from({ length: 20 }, (_, b) => firstValues('order', b, 'mean'));
    const backward: number[][] = [];
    for (let b = 19; b >= 0; b--) backward[b] = firstValues('order', b, 'mean');
    // Interleave another purpose and another seed between the draws: nothing leaks across streams.
    const interleaved: number[][] = [];
    for (const b of [7, 3, 19, 0, 12, 5, 1, 18, 2, 9, 4, 15, 6, 11, 8, 17, 10, 14, 13, 16]) {
      firstValues('other-seed', b, 'mean');
      firstValues('order', b, 'cov');
      interleaved[b] = firstValues('order', b, 'mean');
    }
    expect(backward).toEqual(forward);
    expect(interleaved).toEqual(forward);
  });

  it('different seeds, draws and purposes give different streams', () => {
    const reference = firstValues('s', 0, 'mean');
    expect(firstValues('t', 0, 'mean')).not.toEqual(reference);
    expect(firstValues('s', 1, 'mean')).not.toEqual(reference);
    expect(firstValues('s', 0, 'cov')).not.toEqual(reference);
    expect(firstValues(1, 0, 'mean')).not.toEqual(firstValues(2, 0, 'mean'));
    // Across 2000 streams of one seed, no two first uniforms coincide.
    const firsts = new Set<number>();
    for (let b = 0; b < 2000; b++) firsts.add(createDrawStream('many', b, 'rows').uniform());
    expect(firsts.size).toBe(2000);
  });

  it('a numeric seed and its decimal string name the same streams (documented)', () => {
    expect(firstValues(42, 3, 'rows')).toEqual(firstValues('42', 3, 'rows'));
  });

  it('keys are unambiguous: a separator inside the seed or purpose cannot alias another triple', () => {
    expect(streamKey('a|1', 0, 'x')).not.toBe(streamKey('a', 1, '0|x'));
    expect(firstValues('a|1', 0, 'x')).not.toEqual(firstValues('a', 1, '0|x'));
    expect(() => streamKey('s', -1)).toThrow(RangeError);
    expect(() => streamKey('s', 1.5)).toThrow(RangeError);
    expect(() => streamKey(Number.NaN, 0)).toThrow(RangeError);
  });

  it('streams of neighbouring draws are uncorrelated (first 64 normals, 2000 draw pairs)', () => {
    // Correlation of the k-th normal of draw b with the k-th normal of draw b + 1.
    const count = 2000;
    const width = 64;
    let sum = 0;
    let previous = new Float64Array(width);
    for (let b = 0; b <= count; b++) {
      const s = createDrawStream('neighbours', b, 'mean');
      const current = new Float64Array(width);
      for (let k = 0; k < width; k++) current[k] = s.normal();
      if (b > 0) for (let k = 0; k < width; k++) sum += current[k] * previous[k];
      previous = current;
    }
    const products = count * width;
    expect(Math.abs(sum / products)).toBeLessThan(Z / Math.sqrt(products));
  });
});
