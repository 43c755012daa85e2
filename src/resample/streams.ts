import seedrandom from 'seedrandom';

/**
 * Seeded random streams, one per (seed, draw, purpose).
 *
 * Why one stream per draw: a draw's random numbers must not depend on how draws are split
 * across loops, workers or shards, so draw b never continues another draw's sequence. Each
 * stream is seeded from an unambiguous key built from (seed, draw, purpose); the purpose label
 * separates independent sub-streams of one draw (row indices, mean noise, covariance noise),
 * which is what lets the stress channels share common random numbers.
 *
 * Generator: seedrandom's xor4096 (Brent 2010, "Some long-period random number generators
 * using shifts and xors", arXiv:1004.3115): a 4096-bit xorshift combined with a Weyl sequence,
 * period 2^4128 − 2^32, no systematic BigCrush failures reported (seedrandom's notes, which
 * point to its long period when many generators are in use — one per draw here). String keys are mixed into
 * the whole state and the generator is run 512 steps before use.
 *
 * Determinism across runtimes: the generator is integer arithmetic only. The transforms below
 * use Math.sqrt (correctly rounded by IEEE 754, identical everywhere) and Math.log / Math.log1p
 * (V8's fdlibm port: identical in Node and in the Workers runtime, both V8). No trigonometry.
 */

/** A seed as callers give it. Numbers and their decimal strings name the same streams (42 ≡ "42"). */
export type Seed = string | number;

/** Sub-stream labels used by the stress engine (common random numbers across channels). */
export const STREAM_PURPOSE = {
  /** Bootstrap row indices for draw b. */
  rows: 'rows',
  /** Noise in the mean (parametric μ_b, or views' stdErr noise). */
  mean: 'mean',
  /** Noise in the covariance (Wishart Σ_b, or F_b and D_b for a factor model). */
  cov: 'cov',
} as const;

export type StreamPurpose = (typeof STREAM_PURPOSE)[keyof typeof STREAM_PURPOSE];

/** Random variates drawn from one deterministic stream. No method allocates. */
export interface RandomStream {
  /** Uniform on the open interval (0, 1): 52 random bits, never exactly 0 or 1. */
  uniform(): number;
  /** Standard normal N(0, 1), Marsaglia polar method. */
  normal(): number;
  /** Gamma(shape, scale 1), mean = variance = shape; Marsaglia & Tsang (2000). shape > 0. */
  gamma(shape: number): number;
  /** Chi-square with df > 0 degrees of freedom (= 2·Gamma(df/2)). */
  chiSquare(df: number): number;
  /** Uniform integer in {0, …, n−1}, exactly uniform (rejection); 1 ≤ n ≤ 2^32. */
  integer(n: number): number;
  /** Number of Bernoulli(p) trials up to and including the first success: support {1, 2, …}, mean 1/p. 0 < p ≤ 1. */
  geometric(p: number): number;
}

const TWO_POW_26 = 67108864;
const TWO_POW_MINUS_52 = 2.220446049250313e-16;
const TWO_POW_32 = 4294967296;

/**
 * The key that seeds a stream. Injective in (seed, draw, purpose): the seed is length-prefixed,
 * the draw is a decimal integer and the purpose takes the rest, so no two triples collide.
 */
export function streamKey(seed: Seed, draw: number, purpose: string = 'main'): string {
  const seedText = canonicalSeed(seed);
  if (!Number.isSafeInteger(draw) || draw < 0) {
    throw new RangeError(`draw index must be a non-negative safe integer, got ${draw}`);
  }
  return `wobble-stream-v1|${seedText.length}:${seedText}|${draw}|${purpose}`;
}

function canonicalSeed(seed: Seed): string {
  if (typeof seed === 'number') {
    if (!Number.isFinite(seed)) throw new RangeError(`seed must be finite, got ${seed}`);
    return String(seed);
  }
  return seed;
}

class Xor4096Stream implements RandomStream {
  /** Next signed 32-bit output of xor4096 (bound to the generator's state by seedrandom). */
  private readonly nextInt32: () => number;
  private spareNormal = 0;
  private hasSpareNormal = false;

  constructor(key: string) {
    this.nextInt32 = seedrandom.xor4096(key).int32;
  }

  uniform(): number {
    // 26 + 26 bits → k ∈ [0, 2^52); (k + ½)·2^-52 is exact in double precision and lies in
    // [2^-53, 1 − 2^-53], so log(u) and 1/u are always finite.
    const high = this.nextInt32() >>> 6;
    const low = this.nextInt32() >>> 6;
    return (high * TWO_POW_26 + low + 0.5) * TWO_POW_MINUS_52;
  }

  normal(): number {
    // Marsaglia & Bray (1964) polar method: exact (no approximation), only sqrt and log.
    // Each accepted pair gives two independent normals; the second is kept for the next call.
    if (this.hasSpareNormal) {
      this.hasSpareNormal = false;
      return this.spareNormal;
    }
    let v1 = 0;
    let v2 = 0;
    let s = 0;
    do {
      v1 = 2 * this.uniform() - 1;
      v2 = 2 * this.uniform() - 1;
      s = v1 * v1 + v2 * v2;
    } while (s >= 1 || s === 0);
    const factor = Math.sqrt((-2 * Math.log(s)) / s);
    this.spareNormal = v2 * factor;
    this.hasSpareNormal = true;
    return v1 * factor;
  }

  gamma(shape: number): number {
    if (!(shape > 0) || !Number.isFinite(shape)) throw new RangeError(`gamma shape must be positive and finite, got ${shape}`);
    if (shape < 1) {
      // Marsaglia & Tsang (2000), §6: Gamma(a) = Gamma(a + 1) · U^{1/a} for 0 < a < 1.
      const boosted = this.gammaAtLeastOne(shape + 1);
      return boosted * Math.pow(this.uniform(), 1 / shape);
    }
    return this.gammaAtLeastOne(shape);
  }

  /**
   * Marsaglia & Tsang (2000), "A simple method for generating gamma variables",
   * ACM TOMS 26(3): d = a − 1/3, c = 1/√(9d); accept d·v with v = (1 + c·x)³, x ~ N(0,1),
   * by the squeeze u < 1 − 0.0331x⁴ or log u < x²/2 + d(1 − v + log v).
   */
  private gammaAtLeastOne(shape: number): number {
    const d = shape - 1 / 3;
    const c = 1 / Math.sqrt(9 * d);
    for (;;) {
      let x = 0;
      let v = 0;
      do {
        x = this.normal();
        v = 1 + c * x;
      } while (v <= 0);
      v = v * v * v;
      const u = this.uniform();
      const x2 = x * x;
      if (u < 1 - 0.0331 * x2 * x2) return d * v;
      if (Math.log(u) < 0.5 * x2 + d * (1 - v + Math.log(v))) return d * v;
    }
  }

  chiSquare(df: number): number {
    if (!(df > 0) || !Number.isFinite(df)) throw new RangeError(`chi-square df must be positive and finite, got ${df}`);
    return 2 * this.gamma(df / 2);
  }

  integer(n: number): number {
    if (!Number.isInteger(n) || n < 1 || n > TWO_POW_32) {
      throw new RangeError(`integer(n) needs an integer 1 ≤ n ≤ 2^32, got ${n}`);
    }
    // Rejection keeps the result exactly uniform: accept r only below the largest multiple of n.
    const limit = TWO_POW_32 - (TWO_POW_32 % n);
    for (;;) {
      const r = this.nextInt32() >>> 0;
      if (r < limit) return r % n;
    }
  }

  geometric(p: number): number {
    if (!(p > 0) || !(p <= 1)) throw new RangeError(`geometric p must lie in (0, 1], got ${p}`);
    if (p === 1) return 1;
    // Inversion: P(⌈log U / log(1−p)⌉ ≤ k) = P(U ≥ (1−p)^k) = 1 − (1−p)^k.
    const k = Math.ceil(Math.log(this.uniform()) / Math.log1p(-p));
    return k < 1 ? 1 : k;
  }
}

/**
 * The stream for draw `draw` of a run seeded with `seed`, for one purpose
 * (see STREAM_PURPOSE). The same triple always gives the same numbers, whatever else has been
 * drawn before; different triples give independent-looking streams.
 */
export function createDrawStream(seed: Seed, draw: number, purpose: string = 'main'): RandomStream {
  return new Xor4096Stream(streamKey(seed, draw, purpose));
}
