/**
 * Deterministic benchmark problems (invented test data, for timing only).
 *
 * The generator is deliberately primitive so that scripts/reference/stress_bench_reference.py can
 * rebuild the very same history in Python:
 * - uniforms: Park & Miller (1988) "minimal standard" LCG, s ← 16807·s mod (2³¹ − 1), u = s/(2³¹ − 1).
 *   16807·s < 2⁵³, so the product is exact in doubles in both languages;
 * - normals: Box & Muller (1958), cosine branch only, z = √(−2 ln u₁)·cos(2π u₂) (one normal per two
 *   uniforms, so no cached second value to keep in step);
 * - every return is rounded to 1e-6 as floor(x·1e6 + 0.5)/1e6, which hides last-ulp differences
 *   between V8's and glibc's log/cos (neither promises correct rounding), and gives integer
 *   "micro-returns" for a checksum both sides print.
 */
import type { ProposalInput } from '../../src/schema/proposal.js';

/** Park–Miller modulus 2³¹ − 1 and multiplier 7⁵ (Park & Miller 1988, CACM 31(10)). */
const PM_MODULUS = 2147483647;
const PM_MULTIPLIER = 16807;

export class ParkMillerNormals {
  private state: number;

  constructor(seed: number) {
    if (!Number.isInteger(seed) || seed < 1 || seed >= PM_MODULUS) throw new RangeError(`seed must be an integer in [1, 2^31 − 2], got ${seed}`);
    this.state = seed;
  }

  /** Uniform on (0, 1): never 0 (the state is never 0) nor 1. */
  uniform(): number {
    this.state = (PM_MULTIPLIER * this.state) % PM_MODULUS;
    return this.state / PM_MODULUS;
  }

  /** Standard normal, Box–Muller cosine branch. */
  normal(): number {
    const u1 = this.uniform();
    const u2 = this.uniform();
    return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
  }
}

/** A synthetic T×N monthly return history and the parameters it was drawn from. */
export interface FactorHistory {
  readonly n: number;
  readonly periods: number;
  /** T rows of N returns, each rounded to 1e-6. */
  readonly returns: number[][];
  /** Target monthly volatility per asset (2–7 %). */
  readonly volatility: number[];
  /** "Micro-returns" checksum: see historyChecksum. */
  readonly checksum: HistoryChecksum;
}

export interface HistoryChecksum {
  /** Σ of round(1e6·r) over all cells. */
  readonly sum: number;
  /** Polynomial hash of the integer micro-returns, row-major: h ← (h·31 + (k mod M)) mod M, M = 2³¹ − 1. */
  readonly hash: number;
}

/** Both sides compute this on the integer micro-returns, so it is exact. */
export function historyChecksum(micro: readonly number[]): HistoryChecksum {
  let sum = 0;
  let hash = 0;
  for (const k of micro) {
    sum += k;
    const r = ((k % PM_MODULUS) + PM_MODULUS) % PM_MODULUS;
    hash = (hash * 31 + r) % PM_MODULUS; // hash·31 + r < 2⁵³: exact
  }
  return { sum, hash };
}

/** Number of latent factors in the synthetic history. */
export const HISTORY_FACTORS = 3;

/**
 * T×N returns with a 3-factor structure: r_ti = μ_i + Σ_k L_ik f_tk + e_i z_ti, f and z iid N(0,1).
 * Per asset (drawn in this order): target volatility σ_i = 2 % + 5 %·u, factor share of variance
 * ρ_i = 0.3 + 0.5·u, raw loadings (0.5 + 0.7u, 1.4u − 0.7, 1.2u − 0.6) rescaled so that the factor
 * variance is ρ_i σ_i², specific volatility e_i = σ_i √(1 − ρ_i), mean μ_i = σ_i (0.05 + 0.15u)
 * (monthly Sharpe ratios 0.05–0.2). Then per row: the 3 factor normals, then the N specific ones.
 */
export function factorHistory(n: number, periods: number, seed = 20260501): FactorHistory {
  const g = new ParkMillerNormals(seed);
  const volatility: number[] = [];
  const mean: number[] = [];
  const specific: number[] = [];
  const loadings: number[][] = [];
  for (let i = 0; i < n; i++) {
    const sigma = 0.02 + 0.05 * g.uniform();
    const share = 0.3 + 0.5 * g.uniform();
    const raw = [0.5 + 0.7 * g.uniform(), 1.4 * g.uniform() - 0.7, 1.2 * g.uniform() - 0.6];
    const rawVariance = raw[0] * raw[0] + raw[1] * raw[1] + raw[2] * raw[2];
    const scale = Math.sqrt((share * sigma * sigma) / rawVariance);
    loadings.push(raw.map((l) => l * scale));
    specific.push(sigma * Math.sqrt(1 - share));
    mean.push(sigma * (0.05 + 0.15 * g.uniform()));
    volatility.push(sigma);
  }
  const returns: number[][] = [];
  const micro: number[] = [];
  const f = new Array<number>(HISTORY_FACTORS);
  for (let t = 0; t < periods; t++) {
    for (let k = 0; k < HISTORY_FACTORS; k++) f[k] = g.normal();
    const row: number[] = [];
    for (let i = 0; i < n; i++) {
      let r = mean[i] + specific[i] * g.normal();
      for (let k = 0; k < HISTORY_FACTORS; k++) r += loadings[i][k] * f[k];
      const k6 = Math.floor(r * 1e6 + 0.5);
      micro.push(k6);
      row.push(k6 / 1e6);
    }
    returns.push(row);
  }
  return { n, periods, returns, volatility, checksum: historyChecksum(micro) };
}

/** Asset ids a01, a02, … (zero-padded so they sort). */
export function assetIds(n: number): string[] {
  return Array.from({ length: n }, (_, i) => `a${String(i + 1).padStart(2, '0')}`);
}

/** Settings of the stress target case (case B); the Python reference reads the same numbers from its own copy. */
export const TARGET_CASE = {
  assets: 30,
  periods: 240,
  seed: 20260501,
  riskAversion: 4,
  upper: 0.15,
  groupSize: 10,
  groupMax: 0.5,
  meanBlockLength: 3,
  draws: 500,
} as const;

export type MethodSet = 'target' | 'all';

/**
 * The 30-asset stress proposal: equal weights, long-only, each asset ≤ 15 %, the first 10 assets
 * together ≤ 50 %, sample covariance, stationary bootstrap with mean block length 3.
 * `methods`: 'target' compares mean-variance (λ = 4) with minimum variance and risk parity;
 * 'all' leaves `compare` out, which means all six methods.
 */
export function targetStressProposal(methods: MethodSet, history: FactorHistory = factorHistory(TARGET_CASE.assets, TARGET_CASE.periods, TARGET_CASE.seed)): ProposalInput {
  const c = TARGET_CASE;
  const assets = assetIds(history.n);
  return {
    assets,
    weights: assets.map(() => 1 / history.n),
    inputs: { returns: history.returns, periodsPerYear: 12 },
    method: { name: 'mean-variance', riskAversion: c.riskAversion },
    ...(methods === 'target'
      ? { compare: [{ name: 'mean-variance', riskAversion: c.riskAversion }, { name: 'minimum-variance' }, { name: 'risk-parity' }] }
      : {}),
    constraints: {
      longOnly: true,
      budget: 1,
      upper: c.upper,
      groups: [{ name: 'first-ten', assets: assets.slice(0, c.groupSize), max: c.groupMax }],
    },
    estimation: { covariance: 'sample' },
    resampling: { draws: c.draws, scheme: 'stationary-bootstrap', meanBlockLength: c.meanBlockLength, seed: 'bench-target' },
  };
}
