import { crraUtility } from './kelly-utility.js';
import { symmetricCrossProducts } from '../linalg/cross-products.js';
import type { QpProblem } from './qp-types.js';
import { OptimizationError, type ConstraintSet } from './types.js';

/** Wealth every scenario must keep (a small margin above 0, so rounding cannot fake a solvent start). */
export const WEALTH_MARGIN = 1e-9;

/**
 * Buffers of the scenario Kelly method, reused across solves of the same shape (N assets, S
 * scenarios) and resized when the shape changes. The stress engine solves Kelly thousands of
 * times per request; one workspace per method keeps those solves free of N×N and S×N allocations.
 * Results never alias these buffers (the weights kelly returns are fresh arrays). Not safe to
 * share between solves that run at the same time.
 */
export class KellyWorkspace {
  private n = -1;
  private count = -1;
  /** Scenario returns transposed: asset i's returns at [i·S, (i+1)·S). */
  columns = new Float64Array(0);
  /** b_s·r_si, same layout (the Hessian's left factor). */
  weighted = new Float64Array(0);
  /** Normalised scenario probabilities p_s. */
  probabilities = new Float64Array(0);
  /** W_s = 1 + r_sᵀw at the current iterate. */
  wealth = new Float64Array(0);
  /** a_s = p_s·W_s^{−γ} at the current iterate (∇φ = Σ a_s r_s). */
  marginal = new Float64Array(0);
  /** b_s = γ·a_s/W_s at the current iterate (H = Σ b_s r_s r_sᵀ). */
  curvature = new Float64Array(0);
  /** r_sᵀd along the current Newton direction. */
  stepReturns = new Float64Array(0);
  gradient = new Float64Array(0);
  hessian = new Float64Array(0);
  linear = new Float64Array(0);
  direction = new Float64Array(0);
  trial = new Float64Array(0);

  ensure(n: number, count: number): void {
    if (n !== this.n) {
      this.gradient = new Float64Array(n);
      this.hessian = new Float64Array(n * n);
      this.linear = new Float64Array(n);
      this.direction = new Float64Array(n);
      this.trial = new Float64Array(n);
    }
    if (count !== this.count) {
      this.probabilities = new Float64Array(count);
      this.wealth = new Float64Array(count);
      this.marginal = new Float64Array(count);
      this.curvature = new Float64Array(count);
      this.stepReturns = new Float64Array(count);
    }
    if (n !== this.n || count !== this.count) {
      this.columns = new Float64Array(n * count);
      this.weighted = new Float64Array(n * count);
    }
    this.n = n;
    this.count = count;
  }
}

/**
 * Per-iterate quantities of the Newton method over one scenario matrix (S×N row-major), in the
 * buffers of a KellyWorkspace:
 *   φ(w) = Σ p_s u(W_s),  ∇φ = Σ a_s r_s with a_s = p_s W_s^{−γ},
 *   H = −∇²φ = Σ b_s r_s r_sᵀ with b_s = γ·a_s/W_s   (CRRA u, W_s = 1 + r_sᵀw).
 * The first-order part (wealth, φ, ∇φ: O(S·N)) and the Hessian (O(S·N²)) are separate steps, so
 * the convergence test in kelly.ts can use the gradient of a new iterate without its Hessian.
 */
export class NewtonState {
  value = 0;
  /** min_s W_s at the point of the last computeWealth. */
  private lowestWealth = Infinity;
  readonly gradient: Float64Array;
  readonly hessian: Float64Array;
  readonly linear: Float64Array;
  readonly wealth: Float64Array;
  readonly p: Float64Array;

  constructor(
    private readonly scenarios: Float64Array,
    private readonly count: number,
    private readonly n: number,
    private readonly gamma: number,
    private readonly ws: KellyWorkspace,
  ) {
    this.gradient = ws.gradient;
    this.hessian = ws.hessian;
    this.linear = ws.linear;
    this.wealth = ws.wealth;
    this.p = ws.probabilities;
  }

  /**
   * Copies the scenarios column-major into the workspace. The same pass checks finiteness:
   * v − v is 0 for finite v and NaN for ±Infinity or NaN, so one comparison covers the matrix.
   */
  loadScenarios(): void {
    const { scenarios, count, n } = this;
    const columns = this.ws.columns;
    let check = 0;
    for (let s = 0; s < count; s++) {
      const row = s * n;
      for (let i = 0; i < n; i++) {
        const v = scenarios[row + i];
        check += v - v;
        columns[i * count + s] = v;
      }
    }
    if (check !== 0) throw new OptimizationError('invalid-input', 'scenario returns must be finite');
  }

  /** p ← the given weights normalised to sum 1, or equal weights. */
  loadProbabilities(weights: Float64Array | undefined): void {
    const { count, p } = this;
    if (!weights) {
      p.fill(1 / count);
      return;
    }
    if (weights.length !== count) throw new OptimizationError('invalid-input', `expected ${count} scenario weights, got ${weights.length}`);
    let total = 0;
    for (let s = 0; s < count; s++) {
      const v = weights[s];
      if (!(v >= 0) || !Number.isFinite(v)) throw new OptimizationError('invalid-input', `scenario weight ${s} must be ≥ 0, got ${v}`);
      total += v;
    }
    if (!(total > 0)) throw new OptimizationError('invalid-input', 'scenario weights must not all be zero');
    for (let s = 0; s < count; s++) p[s] = weights[s] / total;
  }

  /**
   * W_s = 1 + r_sᵀw into the wealth buffer; returns min_s W_s. Column by column: each W_s is
   * summed in the same order as the row dot product 1 + Σ_i r_si·w_i, and assets with w_i = 0
   * are skipped (adding ±0 leaves a sum unchanged), which long-only optima with many zero
   * weights make cheap.
   */
  computeWealth(w: Float64Array): number {
    const { n, count, wealth } = this;
    const columns = this.ws.columns;
    wealth.fill(1);
    for (let i = 0; i < n; i++) {
      const wi = w[i];
      if (wi === 0) continue;
      const c = i * count;
      for (let s = 0; s < count; s++) wealth[s] += columns[c + s] * wi;
    }
    // Math.min keeps a NaN (from a non-finite warm start), which then fails every wealth test.
    let lowest = Infinity;
    for (let s = 0; s < count; s++) lowest = Math.min(lowest, wealth[s]);
    this.lowestWealth = lowest;
    return lowest;
  }

  /** Wealth, φ(w), ∇φ(w) and the curvature weights b_s at w (not the Hessian: see addHessian). */
  evaluateFirstOrder(w: Float64Array): void {
    this.computeWealth(w);
    this.evaluateAtWealth();
  }

  /** φ, ∇φ and b_s from the wealth of the last computeWealth. */
  evaluateAtWealth(): void {
    const { n, count, gamma, p, wealth } = this;
    const { columns, marginal: a, curvature: b } = this.ws;
    const g = this.gradient;
    let value = 0;
    for (let s = 0; s < count; s++) {
      const v = wealth[s];
      const ps = p[s];
      if (ps === 0) {
        a[s] = 0;
        b[s] = 0;
        continue;
      }
      value += ps * crraUtility(v, gamma);
      // log utility (γ = 1) and half Kelly (γ = 2) avoid Math.pow.
      const as = gamma === 1 ? ps / v : gamma === 2 ? ps / (v * v) : ps * Math.pow(v, -gamma);
      a[s] = as;
      b[s] = (gamma * as) / v;
    }
    for (let i = 0; i < n; i++) {
      const c = i * count;
      let gi = 0;
      for (let s = 0; s < count; s++) gi += a[s] * columns[c + s];
      g[i] = gi;
    }
    this.value = value;
  }

  /** H = Σ b_s r_s r_sᵀ at the point of the last evaluateFirstOrder. */
  addHessian(): void {
    const { n, count } = this;
    const { columns, weighted, curvature: b } = this.ws;
    for (let i = 0; i < n; i++) {
      const c = i * count;
      for (let s = 0; s < count; s++) weighted[c + s] = b[s] * columns[c + s];
    }
    symmetricCrossProducts(weighted, columns, n, count, 1, this.hessian);
  }

  /**
   * The Newton QP in the variable v = w + d: minimise ½vᵀHv − (∇φ + Hw)ᵀv, with the Hessian last
   * computed (which may belong to an earlier iterate: see the convergence test in kelly.ts).
   */
  newtonProblem(w: Float64Array, constraints: ConstraintSet): QpProblem {
    const { n, hessian } = this;
    for (let i = 0; i < n; i++) {
      let s = 0;
      const row = i * n;
      for (let j = 0; j < n; j++) s += hessian[row + j] * w[j];
      this.linear[i] = this.gradient[i] + s;
    }
    return { hessian: { kind: 'dense', n, matrix: hessian }, linear: this.linear, constraints };
  }

  /**
   * sup{α ≥ 0 : W_s + α·r_sᵀd > margin ∀s with p_s > 0} (Infinity when no wealth falls along d).
   * Keeps r_sᵀd for lineUtility.
   */
  maxStep(d: Float64Array): number {
    const { n, count, p, wealth } = this;
    const columns = this.ws.columns;
    const rd = this.ws.stepReturns;
    // Column by column, skipping d_i = 0 (assets that stay on a bound), as computeWealth.
    rd.fill(0);
    for (let i = 0; i < n; i++) {
      const di = d[i];
      if (di === 0) continue;
      const c = i * count;
      for (let s = 0; s < count; s++) rd[s] += columns[c + s] * di;
    }
    let alpha = Infinity;
    for (let s = 0; s < count; s++) {
      const v = rd[s];
      if (p[s] !== 0 && v < 0) alpha = Math.min(alpha, (wealth[s] - WEALTH_MARGIN) / -v);
    }
    return alpha;
  }

  /**
   * φ(w + αd) from W_s + α·r_sᵀd (after maxStep(d)): O(S) per trial step instead of O(S·N).
   * −Infinity when some wealth is ≤ 0, as expectedUtility.
   */
  lineUtility(alpha: number): number {
    const { count, p, gamma, wealth } = this;
    const rd = this.ws.stepReturns;
    let total = 0;
    for (let s = 0; s < count; s++) {
      const v = wealth[s] + alpha * rd[s];
      if (!(v > 0)) return -Infinity;
      total += p[s] * crraUtility(v, gamma);
    }
    return total;
  }

  /** Σ p_s log W_s at the point of the last evaluateFirstOrder (−Infinity when some W_s ≤ 0, as expectedUtility). */
  growthRate(): number {
    if (!(this.lowestWealth > 0)) return -Infinity;
    if (this.gamma === 1) return this.value;
    let total = 0;
    for (let s = 0; s < this.count; s++) total += this.p[s] * Math.log(this.wealth[s]);
    return total;
  }

  /** Scenario-weighted mean and covariance of the returns (for the starting point). */
  moments(): { mean: Float64Array; cov: Float64Array } {
    const { n, count, scenarios, p } = this;
    const mean = new Float64Array(n);
    for (let s = 0; s < count; s++) for (let i = 0; i < n; i++) mean[i] += p[s] * scenarios[s * n + i];
    const cov = new Float64Array(n * n);
    for (let s = 0; s < count; s++) {
      for (let i = 0; i < n; i++) {
        const di = scenarios[s * n + i] - mean[i];
        for (let j = 0; j <= i; j++) cov[i * n + j] += p[s] * di * (scenarios[s * n + j] - mean[j]);
      }
    }
    for (let i = 0; i < n; i++) for (let j = 0; j < i; j++) cov[j * n + i] = cov[i * n + j];
    return { mean, cov };
  }
}
