import type { ConstraintSet } from './types.js';

/**
 * Arbitrage among scenarios: is there a direction d in which every allowed portfolio may move
 * without limit (d in the recession cone of the constraint set) and which never loses in any
 * scenario and gains in at least one (r_sᵀd ≥ 0 for all s, > 0 for some)? If so, expected log
 * (or any increasing) utility of 1 + r_sᵀw grows without bound along w + t·d and the Kelly problem
 * has no optimum: it is unbounded (the classic no-arbitrage condition for growth-optimal
 * portfolios; e.g. Cover & Thomas, Elements of Information Theory, 2nd ed. 2006, ch. 16; from memory).
 *
 * The recession cone of {w : Σw = budget, lower ≤ w ≤ upper, group limits} is
 * {d : Σd = 0, d_i ≥ 0 where lower_i is finite, d_i ≤ 0 where upper_i is finite, Σ_g d ≤ 0 where
 * the group's max is finite, ≥ 0 where its min is finite}. The linear programme
 *
 *   maximise Σ_s r_sᵀd   subject to  r_sᵀd ≥ 0 (every s), d in the cone, −1 ≤ d_i ≤ 1
 *
 * has value > 0 exactly when an arbitrage exists. With d = u − v (u, v ≥ 0) every constraint
 * has a right-hand side of 0 or 1, so the slack basis is feasible at once (no phase 1); it is
 * solved by the dense tableau simplex method with Bland's rule, which cannot cycle (Bland 1977,
 * "New finite pivoting rules for the simplex method", Math. Oper. Res. 2(2)).
 *
 * Cost: a tableau of (S + 2 + 2G + 2N) × (2N + rows) doubles, allocated per call — callers run it
 * once at the base and only on draws whose Kelly solve did not converge, never in the normal path.
 */

/** LP values at or below this multiple of Σ_s |r_s|₁ count as 0 (rounding, not arbitrage). */
const ARBITRAGE_TOLERANCE = 1e-9;
/** Simplex pivots allowed (Bland's rule terminates; this only guards against a bug). */
const MAX_PIVOTS = 100_000;

export interface Arbitrage {
  /** A direction with r_sᵀd ≥ 0 in every scenario (|d_i| ≤ 1). */
  readonly direction: Float64Array;
  /** Σ_s r_sᵀd, > 0. */
  readonly gain: number;
}

/** Whether the constraint set lets weights grow without bound in some direction (the cone is not {0}). */
export function hasUnboundedDirections(constraints: ConstraintSet): boolean {
  let free = 0;
  let up = 0;
  let down = 0;
  for (let i = 0; i < constraints.n; i++) {
    const lowerFinite = Number.isFinite(constraints.lower[i]);
    const upperFinite = Number.isFinite(constraints.upper[i]);
    if (lowerFinite && upperFinite) continue;
    if (!lowerFinite && !upperFinite) free++;
    else if (lowerFinite) up++;
    else down++;
  }
  // Σd = 0 needs a move up balanced by a move down (group rows may still rule it out: the LP decides).
  return free >= 2 || (free >= 1 && up + down >= 1) || (up >= 1 && down >= 1);
}

/**
 * Finds an arbitrage among S scenarios (rows of an S×N row-major matrix) within the constraint
 * set's recession cone, or undefined when there is none.
 */
export function findArbitrage(scenarios: Float64Array, scenarioCount: number, constraints: ConstraintSet): Arbitrage | undefined {
  const n = constraints.n;
  if (!hasUnboundedDirections(constraints)) return undefined;
  // Columns: u_i where d_i may rise (upper infinite), v_i where it may fall (lower infinite).
  const sign: number[] = [];
  const asset: number[] = [];
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(constraints.upper[i])) {
      sign.push(1);
      asset.push(i);
    }
    if (!Number.isFinite(constraints.lower[i])) {
      sign.push(-1);
      asset.push(i);
    }
  }
  const columns = sign.length;
  // Rows (each "a·x ≤ b"): scenarios, budget both ways, group limits, boxes.
  const rowCoefficients: Float64Array[] = [];
  const rowBounds: number[] = [];
  const coefficientOf = (weights: (i: number) => number): Float64Array => {
    const row = new Float64Array(columns);
    for (let j = 0; j < columns; j++) row[j] = sign[j] * weights(asset[j]);
    return row;
  };
  let scale = 0;
  for (let s = 0; s < scenarioCount; s++) {
    rowCoefficients.push(coefficientOf((i) => -scenarios[s * n + i]));
    rowBounds.push(0);
    for (let i = 0; i < n; i++) scale += Math.abs(scenarios[s * n + i]);
  }
  rowCoefficients.push(coefficientOf(() => 1), coefficientOf(() => -1));
  rowBounds.push(0, 0);
  for (const g of constraints.groups) {
    const inGroup = new Uint8Array(n);
    for (let k = 0; k < g.members.length; k++) inGroup[g.members[k]] = 1;
    if (Number.isFinite(g.max)) {
      rowCoefficients.push(coefficientOf((i) => inGroup[i]));
      rowBounds.push(0);
    }
    if (Number.isFinite(g.min)) {
      rowCoefficients.push(coefficientOf((i) => -inGroup[i]));
      rowBounds.push(0);
    }
  }
  for (let j = 0; j < columns; j++) {
    const row = new Float64Array(columns);
    row[j] = 1;
    rowCoefficients.push(row);
    rowBounds.push(1);
  }
  const objective = coefficientOf((i) => {
    let total = 0;
    for (let s = 0; s < scenarioCount; s++) total += scenarios[s * n + i];
    return total;
  });
  const x = maximiseFromSlackBasis(rowCoefficients, rowBounds, objective);
  const direction = new Float64Array(n);
  for (let j = 0; j < columns; j++) direction[asset[j]] += sign[j] * x[j];
  let gain = 0;
  for (let s = 0; s < scenarioCount; s++) {
    let r = 0;
    for (let i = 0; i < n; i++) r += scenarios[s * n + i] * direction[i];
    // Recheck feasibility from scratch: a scenario with a clear loss means no arbitrage was shown.
    if (r < -ARBITRAGE_TOLERANCE * Math.max(1, scale)) return undefined;
    gain += r;
  }
  return gain > ARBITRAGE_TOLERANCE * Math.max(scale, 1e-300) ? { direction, gain } : undefined;
}

/**
 * Maximises cᵀx subject to A x ≤ b, x ≥ 0 with b ≥ 0 (the slack basis is feasible), by the
 * tableau simplex method with Bland's rule. Returns x (bounded here: the caller's boxes bound it).
 */
function maximiseFromSlackBasis(rows: readonly Float64Array[], bounds: readonly number[], objective: Float64Array): Float64Array {
  const m = rows.length;
  const columns = objective.length;
  const width = columns + m + 1;
  const tableau = new Float64Array((m + 1) * width);
  const basis = new Int32Array(m);
  for (let r = 0; r < m; r++) {
    tableau.set(rows[r], r * width);
    tableau[r * width + columns + r] = 1;
    tableau[r * width + width - 1] = bounds[r];
    basis[r] = columns + r;
  }
  // Objective row holds −c (reduced costs); optimal when none is negative.
  const top = m * width;
  for (let j = 0; j < columns; j++) tableau[top + j] = -objective[j];
  let scale = 0;
  for (let j = 0; j < columns; j++) scale = Math.max(scale, Math.abs(objective[j]));
  const eps = 1e-12 * Math.max(1, scale);
  for (let pivot = 0; pivot < MAX_PIVOTS; pivot++) {
    let entering = -1;
    for (let j = 0; j < columns + m; j++) {
      if (tableau[top + j] < -eps) {
        entering = j; // Bland: the lowest index with a negative reduced cost.
        break;
      }
    }
    if (entering < 0) break;
    let leaving = -1;
    let bestRatio = Infinity;
    for (let r = 0; r < m; r++) {
      const a = tableau[r * width + entering];
      if (a > 1e-12) {
        const ratio = tableau[r * width + width - 1] / a;
        // Bland: ties broken by the lowest basic variable index.
        if (ratio < bestRatio - 1e-15 || (Math.abs(ratio - bestRatio) <= 1e-15 && basis[r] < basis[leaving])) {
          bestRatio = ratio;
          leaving = r;
        }
      }
    }
    if (leaving < 0) break; // unbounded direction: cannot happen with the boxes; stop safely
    const p = tableau[leaving * width + entering];
    for (let j = 0; j < width; j++) tableau[leaving * width + j] /= p;
    for (let r = 0; r <= m; r++) {
      if (r === leaving) continue;
      const f = tableau[r * width + entering];
      if (f === 0) continue;
      for (let j = 0; j < width; j++) tableau[r * width + j] -= f * tableau[leaving * width + j];
    }
    basis[leaving] = entering;
  }
  const x = new Float64Array(columns);
  for (let r = 0; r < m; r++) if (basis[r] < columns) x[basis[r]] = Math.max(0, tableau[r * width + width - 1]);
  return x;
}
