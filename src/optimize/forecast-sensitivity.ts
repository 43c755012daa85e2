import type { ConstraintSet } from './types.js';

/**
 * Shared shapes of the break-even forecast shifts: how far one asset's mean forecast must move
 * before the optimum's active pattern changes. Everything here is per period, in the units of
 * the optimiser's linear term (the mean); annualising is the report's job.
 *
 * The active pattern: each asset at its lower bound (−1), strictly inside its bounds (0) or at
 * its upper bound (+1); each group at its min (−1), inside (0) or at its max (+1). Assets whose
 * bounds are equal and groups whose min equals their max never change state and are left out.
 */
export type PatternState = -1 | 0 | 1;

export interface ActivePattern {
  readonly assets: Int8Array;
  readonly groups: Int8Array;
}

/** One constraint changing state at a breakpoint. */
export interface PatternChangeAt {
  readonly kind: 'asset' | 'group';
  /** Asset index or group index. */
  readonly index: number;
  readonly from: PatternState;
  readonly to: PatternState;
}

/** The first breakpoints of one asset's forecast, both ways (per period; null: never). */
export interface BreakEven {
  /** Smallest increase of the mean at which the pattern changes. */
  readonly up: number | null;
  /** Smallest decrease (a positive number) at which the pattern changes. */
  readonly down: number | null;
  readonly changesUp: readonly PatternChangeAt[];
  readonly changesDown: readonly PatternChangeAt[];
  /** Absolute accuracy of up/down (0: exact up to rounding). */
  readonly tolerance: number;
}

/**
 * Tolerance for reading a pattern off weights alone (used where no solver working set is at hand,
 * e.g. Kelly): a weight within PATTERN_TOLERANCE·W of a bound (W = max(1, |budget|, ‖w‖∞)) is at
 * that bound; a group sum within the same distance of a limit is at that limit. 1e-9 sits well
 * above the solvers' convergence (KKT residual ≤ 1e-12) and well below any weight a reader sees.
 */
export const PATTERN_TOLERANCE = 1e-9;

/** The active pattern of `w`, by distance to the limits (see PATTERN_TOLERANCE). */
export function patternOf(constraints: ConstraintSet, w: Float64Array, tolerance = PATTERN_TOLERANCE): ActivePattern {
  const { n, lower, upper, budget, groups } = constraints;
  let scale = Math.max(1, Math.abs(budget));
  for (let i = 0; i < n; i++) scale = Math.max(scale, Math.abs(w[i]));
  const tol = tolerance * scale;
  const assets = new Int8Array(n);
  for (let i = 0; i < n; i++) {
    if (lower[i] === upper[i]) continue;
    assets[i] = w[i] - lower[i] <= tol ? -1 : upper[i] - w[i] <= tol ? 1 : 0;
  }
  const groupStates = new Int8Array(groups.length);
  groups.forEach((g, k) => {
    if (g.min === g.max) return;
    let s = 0;
    for (let m = 0; m < g.members.length; m++) s += w[g.members[m]];
    groupStates[k] = s - g.min <= tol ? -1 : g.max - s <= tol ? 1 : 0;
  });
  return { assets, groups: groupStates };
}

/** The constraints whose state differs between two patterns (empty when equal). */
export function patternDifferences(before: ActivePattern, after: ActivePattern): PatternChangeAt[] {
  const out: PatternChangeAt[] = [];
  for (let i = 0; i < before.assets.length; i++) {
    if (before.assets[i] !== after.assets[i]) out.push({ kind: 'asset', index: i, from: before.assets[i] as PatternState, to: after.assets[i] as PatternState });
  }
  for (let g = 0; g < before.groups.length; g++) {
    if (before.groups[g] !== after.groups[g]) out.push({ kind: 'group', index: g, from: before.groups[g] as PatternState, to: after.groups[g] as PatternState });
  }
  return out;
}

/** Rates of change below this fraction of their scale are rounding of an exact zero (parametric steps). */
export const RATE_TOLERANCE = 1e-10;

/** One-way turnover ½Σ|a_i − b_i| (CONTRACT.md). */
export function oneWayTurnover(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += Math.abs(a[i] - b[i]);
  return 0.5 * s;
}

/** The budget-relative scale of weights used by the tolerances above. */
export function weightScaleOf(constraints: ConstraintSet, w: Float64Array): number {
  let scale = Math.max(1, Math.abs(constraints.budget));
  for (let i = 0; i < w.length; i++) scale = Math.max(scale, Math.abs(w[i]));
  return scale;
}
