import { ActiveSetEngine, AT_LOWER, AT_UPPER, FREE, type LinearRow } from './qp-active-set.js';
import { DiagonalReducedHessian } from './qp-hessian.js';
import { OptimizationError, type ConstraintSet } from './types.js';

/**
 * Phase 1 of the QP: a feasible start, or a plain-language reason why none exists.
 *
 * 1. Necessary conditions checked directly (each names the constraint that fails): bounds in the
 *    right order, Σlower ≤ budget ≤ Σupper, and for every group: its own limits in order, its
 *    limits reachable from its members' bounds, and from the budget minus what the other assets'
 *    bounds allow.
 * 2. The nearest point to a guess on {bounds, Σx = budget}: x_i = clip(x⁰_i + τ, l_i, u_i) with τ
 *    found by bisection then made exact on the unclipped set (the projection onto a box ∩
 *    hyperplane has this form; e.g. Held, Wolfe & Crowder 1974 for the simplex).
 * 3. If group limits still fail and the groups are disjoint, the same projection one level up
 *    (block sums first, then each block) — exact and cheap; see projectOntoDisjointGroups.
 * 4. Otherwise (overlapping groups) the elastic problem ("elastic mode", Gill, Murray & Saunders,
 *    SNOPT, SIAM Review 47(1), 2005): minimise Σ_g (e⁺_g + e⁻_g) + (δ/2)(‖x − x⁰‖² + ‖e‖²) with
 *    min_g ≤ Σ_{i∈g} x_i + e⁺_g − e⁻_g ≤ max_g, e ≥ 0, bounds and budget kept exactly, solved by
 *    the same active-set engine with H = δI. With a small δ the exact-penalty property of the ℓ1
 *    penalty (Nocedal & Wright §17.2) makes e = 0 whenever the constraints are consistent; a
 *    positive Σe proves they are not.
 */

/** Tolerance (relative to the weight scale) for calling the constraints inconsistent. */
const FEASIBILITY_TOLERANCE = 1e-9;
/**
 * δ values of the elastic problem, tried in turn. A larger δ keeps the steps (∝ 1/δ) short and
 * their rounding small; a smaller δ makes the penalty exact for wider problems (exactness needs
 * the multipliers of min (δ/2)‖x − x⁰‖² over the feasible set, ∝ δ, below 1). Only when the
 * smallest still leaves Σe > 0 are the constraints declared inconsistent.
 */
const ELASTIC_PROXIMAL_WEIGHTS = [1e-2, 1e-4, 1e-6];

/** Throws OptimizationError('infeasible' | 'invalid-input') naming the first failed necessary condition. */
export function checkNecessaryFeasibility(constraints: ConstraintSet): void {
  const { n, lower, upper, budget, groups } = constraints;
  if (!Number.isFinite(budget)) throw new OptimizationError('invalid-input', `the budget must be a finite number, got ${budget}`);
  const scale = weightScale(constraints);
  const tol = FEASIBILITY_TOLERANCE * scale;
  let sumLower = 0;
  let sumUpper = 0;
  for (let i = 0; i < n; i++) {
    const l = lower[i];
    const u = upper[i];
    if (Number.isNaN(l) || Number.isNaN(u) || l === Infinity || u === -Infinity) {
      throw new OptimizationError('invalid-input', `asset ${i} has an invalid bound [${l}, ${u}]`);
    }
    if (l > u) throw new OptimizationError('infeasible', `asset ${i}: its lower bound ${l} is above its upper bound ${u}`);
    sumLower += l;
    sumUpper += u;
  }
  if (sumLower > budget + tol) {
    throw new OptimizationError('infeasible', `the lower bounds sum to ${fmt(sumLower)}, above the budget ${fmt(budget)}`);
  }
  if (sumUpper < budget - tol) {
    throw new OptimizationError('infeasible', `the upper bounds sum to ${fmt(sumUpper)}, below the budget ${fmt(budget)}`);
  }
  for (const group of groups) {
    const { name, members, min, max } = group;
    if (Number.isNaN(min) || Number.isNaN(max) || min === Infinity || max === -Infinity) {
      throw new OptimizationError('invalid-input', `group "${name}" has invalid limits [${min}, ${max}]`);
    }
    if (min > max) throw new OptimizationError('infeasible', `group "${name}": its minimum ${fmt(min)} is above its maximum ${fmt(max)}`);
    let inLower = 0;
    let inUpper = 0;
    const member = new Uint8Array(n);
    for (let k = 0; k < members.length; k++) {
      const i = members[k];
      if (!(i >= 0 && i < n) || member[i]) {
        throw new OptimizationError('invalid-input', `group "${name}" lists asset index ${i} more than once or out of range`);
      }
      member[i] = 1;
      inLower += lower[i];
      inUpper += upper[i];
    }
    if (inLower > max + tol) {
      throw new OptimizationError(
        'infeasible',
        `group "${name}": its assets' lower bounds sum to ${fmt(inLower)}, above the group maximum ${fmt(max)}`,
      );
    }
    if (inUpper < min - tol) {
      throw new OptimizationError(
        'infeasible',
        `group "${name}": its assets' upper bounds sum to ${fmt(inUpper)}, below the group minimum ${fmt(min)}`,
      );
    }
    // What the budget forces onto the group: budget − (the rest's range).
    const restLower = sumLower - inLower;
    const restUpper = sumUpper - inUpper;
    if (budget - restUpper > max + tol) {
      throw new OptimizationError(
        'infeasible',
        `group "${name}": the other assets can hold at most ${fmt(restUpper)}, so the group needs at least ` +
          `${fmt(budget - restUpper)} of the budget ${fmt(budget)}, above its maximum ${fmt(max)}`,
      );
    }
    if (budget - restLower < min - tol) {
      throw new OptimizationError(
        'infeasible',
        `group "${name}": the other assets must hold at least ${fmt(restLower)}, leaving at most ` +
          `${fmt(budget - restLower)} of the budget ${fmt(budget)}, below the group minimum ${fmt(min)}`,
      );
    }
  }
}

/** max(1, |budget|, finite |bounds|, finite |group limits|): the weight scale for tolerances. */
export function weightScale(constraints: ConstraintSet): number {
  let s = Math.max(1, Math.abs(constraints.budget));
  for (let i = 0; i < constraints.n; i++) {
    const l = Math.abs(constraints.lower[i]);
    const u = Math.abs(constraints.upper[i]);
    if (Number.isFinite(l) && l > s) s = l;
    if (Number.isFinite(u) && u > s) s = u;
  }
  for (const g of constraints.groups) {
    if (Number.isFinite(g.min)) s = Math.max(s, Math.abs(g.min));
    if (Number.isFinite(g.max)) s = Math.max(s, Math.abs(g.max));
  }
  return s;
}

/**
 * out_i = clip(guess_i + τ, lower_i, upper_i) with Σ out = budget (the Euclidean projection of the
 * guess onto bounds ∩ budget). Needs Σlower ≤ budget ≤ Σupper (checked by the caller).
 */
export function projectOntoBoundsAndBudget(
  guess: Float64Array,
  lower: Float64Array,
  upper: Float64Array,
  budget: number,
  out: Float64Array,
): Float64Array {
  const n = guess.length;
  const total = (tau: number): number => {
    let s = 0;
    for (let i = 0; i < n; i++) s += Math.min(upper[i], Math.max(lower[i], guess[i] + tau));
    return s;
  };
  // Bracket τ: Σ is non-decreasing in τ, so widen until it straddles the budget.
  let lo = -1;
  let hi = 1;
  for (let k = 0; k < 1100 && total(lo) > budget; k++) lo *= 2;
  for (let k = 0; k < 1100 && total(hi) < budget; k++) hi *= 2;
  for (let k = 0; k < 200; k++) {
    const mid = 0.5 * (lo + hi);
    if (mid === lo || mid === hi) break;
    if (total(mid) < budget) lo = mid;
    else hi = mid;
  }
  // Exact τ on the set left unclipped at the bracket's midpoint.
  const tau0 = 0.5 * (lo + hi);
  let clippedSum = 0;
  let freeSum = 0;
  let freeCount = 0;
  for (let i = 0; i < n; i++) {
    const v = guess[i] + tau0;
    if (v <= lower[i]) clippedSum += lower[i];
    else if (v >= upper[i]) clippedSum += upper[i];
    else {
      freeSum += guess[i];
      freeCount++;
    }
  }
  const tau = freeCount > 0 ? (budget - clippedSum - freeSum) / freeCount : tau0;
  for (let i = 0; i < n; i++) out[i] = Math.min(upper[i], Math.max(lower[i], guess[i] + tau));
  // Any remaining rounding discrepancy goes to the variable with the most room.
  let s = 0;
  for (let i = 0; i < n; i++) s += out[i];
  const gap = budget - s;
  if (gap !== 0) {
    let best = -1;
    let room = 0;
    for (let i = 0; i < n; i++) {
      const r = gap > 0 ? upper[i] - out[i] : out[i] - lower[i];
      if (r > room) {
        room = r;
        best = i;
      }
    }
    if (best >= 0) out[best] += gap > 0 ? Math.min(gap, room) : -Math.min(-gap, room);
  }
  return out;
}

/** Largest violation of a group limit at x (0 when all hold). */
export function groupViolation(constraints: ConstraintSet, x: Float64Array): number {
  let worst = 0;
  for (const g of constraints.groups) {
    let s = 0;
    for (let k = 0; k < g.members.length; k++) s += x[g.members[k]];
    worst = Math.max(worst, g.min - s, s - g.max);
  }
  return worst;
}

/**
 * When the groups are pairwise disjoint (sectors, regions — the common case), a feasible point
 * near `guess` in closed form: the blocks (each group, and the assets in no group) get target
 * sums t_b by the same clip-and-shift projection one level up — block sums clipped to what the
 * block can hold (its members' bounds ∩ the group limits), shifted so Σt_b = budget — then each
 * block is projected onto {its bounds, Σ = t_b}. Writes x and returns true; returns false for
 * overlapping groups (the elastic phase handles those). Throws 'infeasible' when the blocks
 * cannot share the budget.
 */
export function projectOntoDisjointGroups(constraints: ConstraintSet, guess: Float64Array, x: Float64Array): boolean {
  const { n, lower, upper, budget, groups } = constraints;
  const blockOf = new Int32Array(n).fill(-1);
  for (let g = 0; g < groups.length; g++) {
    for (let k = 0; k < groups[g].members.length; k++) {
      const i = groups[g].members[k];
      if (blockOf[i] !== -1) return false;
      blockOf[i] = g;
    }
  }
  const blocks = groups.length + 1; // the last block holds the assets in no group
  const blockMembers: number[][] = Array.from({ length: blocks }, () => []);
  for (let i = 0; i < n; i++) blockMembers[blockOf[i] === -1 ? groups.length : blockOf[i]].push(i);
  const sums = new Float64Array(blocks);
  const lo = new Float64Array(blocks);
  const hi = new Float64Array(blocks);
  for (let b = 0; b < blocks; b++) {
    for (const i of blockMembers[b]) {
      sums[b] += guess[i];
      lo[b] += lower[i];
      hi[b] += upper[i];
    }
    if (b < groups.length) {
      lo[b] = Math.max(lo[b], groups[b].min);
      hi[b] = Math.min(hi[b], groups[b].max);
    }
  }
  const scale = weightScale(constraints);
  let totalLo = 0;
  let totalHi = 0;
  for (let b = 0; b < blocks; b++) {
    totalLo += lo[b];
    totalHi += hi[b];
  }
  if (totalLo > budget + FEASIBILITY_TOLERANCE * scale || totalHi < budget - FEASIBILITY_TOLERANCE * scale) {
    const names = groups.map((g) => `"${g.name}"`).join(', ');
    const side = totalLo > budget ? `at least ${fmt(totalLo)}, above` : `at most ${fmt(totalHi)}, below`;
    throw new OptimizationError(
      'infeasible',
      `the groups ${names} and the ungrouped assets can together hold ${side} the budget ${fmt(budget)}`,
    );
  }
  const targets = projectOntoBoundsAndBudget(sums, lo, hi, budget, new Float64Array(blocks));
  for (let b = 0; b < blocks; b++) {
    const members = blockMembers[b];
    if (members.length === 0) continue;
    const sub = Float64Array.from(members, (i) => guess[i]);
    const subLower = Float64Array.from(members, (i) => lower[i]);
    const subUpper = Float64Array.from(members, (i) => upper[i]);
    const projected = projectOntoBoundsAndBudget(sub, subLower, subUpper, targets[b], new Float64Array(members.length));
    members.forEach((i, k) => (x[i] = projected[k]));
  }
  return true;
}

/** Result of the elastic phase: a feasible x and working-set hints for the main phase. */
export interface PhaseOneResult {
  readonly iterations: number;
}

/**
 * Moves x (which satisfies bounds and budget) onto the group limits by the elastic problem.
 * Writes feasible x, variable-state hints and group-row hints (groupState[g] for row 1 + g).
 * Throws OptimizationError('infeasible') naming the group that cannot be met.
 */
export function elasticPhaseOne(
  constraints: ConstraintSet,
  x: Float64Array,
  varState: Int8Array,
  groupState: Int8Array,
  maxIterations: number,
  engine: ActiveSetEngine = new ActiveSetEngine(),
): PhaseOneResult {
  let iterations = 0;
  for (let attempt = 0; ; attempt++) {
    const delta = ELASTIC_PROXIMAL_WEIGHTS[attempt];
    const last = attempt === ELASTIC_PROXIMAL_WEIGHTS.length - 1;
    const result = elasticAttempt(constraints, x, varState, groupState, maxIterations, delta, last, engine);
    iterations += result.iterations;
    if (result.feasible) return { iterations };
  }
}

function elasticAttempt(
  constraints: ConstraintSet,
  x: Float64Array,
  varState: Int8Array,
  groupState: Int8Array,
  maxIterations: number,
  delta: number,
  last: boolean,
  engine: ActiveSetEngine,
): { iterations: number; feasible: boolean } {
  const { n, lower, upper, budget, groups } = constraints;
  const gCount = groups.length;
  const total = n + 2 * gCount;
  const lo = new Float64Array(total);
  const hi = new Float64Array(total);
  lo.set(lower);
  hi.set(upper);
  for (let j = n; j < total; j++) hi[j] = Infinity;
  const linear = new Float64Array(total);
  for (let i = 0; i < n; i++) linear[i] = delta * x[i];
  for (let j = n; j < total; j++) linear[j] = -1;

  const rows: LinearRow[] = [];
  const allIdx = new Int32Array(n);
  for (let i = 0; i < n; i++) allIdx[i] = i;
  rows.push({ idx: allIdx, coef: new Float64Array(n).fill(1), lo: budget, hi: budget });
  const start = new Float64Array(total);
  start.set(x);
  const vs = new Int8Array(total);
  const rs = new Int8Array(gCount + 1);
  for (let i = 0; i < n; i++) vs[i] = x[i] === lower[i] ? AT_LOWER : x[i] === upper[i] ? AT_UPPER : FREE;
  for (let g = 0; g < gCount; g++) {
    const { members, min, max } = groups[g];
    const m = members.length;
    const idx = new Int32Array(m + 2);
    const coef = new Float64Array(m + 2);
    let s = 0;
    for (let k = 0; k < m; k++) {
      idx[k] = members[k];
      coef[k] = 1;
      s += x[members[k]];
    }
    const ePlus = n + 2 * g;
    const eMinus = ePlus + 1;
    idx[m] = ePlus;
    coef[m] = 1;
    idx[m + 1] = eMinus;
    coef[m + 1] = -1;
    rows.push({ idx, coef, lo: min, hi: max });
    vs[ePlus] = AT_LOWER;
    vs[eMinus] = AT_LOWER;
    if (s < min) {
      start[ePlus] = min - s;
      vs[ePlus] = FREE;
      rs[1 + g] = AT_LOWER;
    } else if (s > max) {
      start[eMinus] = s - max;
      vs[eMinus] = FREE;
      rs[1 + g] = AT_UPPER;
    }
  }
  const outcome = engine.run(
    { n: total, lower: lo, upper: hi, linear, rows, hessian: new DiagonalReducedHessian(new Float64Array(total).fill(delta)), budgetRow: 0 },
    start,
    vs,
    rs,
    new Float64Array(gCount + 1),
    new Float64Array(total),
    { maxIterations, tolerance: 1e-12 },
  );
  const tol = FEASIBILITY_TOLERANCE * weightScale(constraints);
  let worstGroup = -1;
  let worstGap = tol;
  for (let g = 0; g < gCount; g++) {
    const gap = start[n + 2 * g] + start[n + 2 * g + 1];
    if (gap > worstGap) {
      worstGap = gap;
      worstGroup = g;
    }
  }
  if (worstGroup >= 0 && !last) return { iterations: outcome.iterations, feasible: false };
  if (worstGroup >= 0) {
    const g = groups[worstGroup];
    throw new OptimizationError(
      'infeasible',
      `group "${g.name}" (min ${fmt(g.min)}, max ${fmt(g.max)}) cannot be met together with the budget, ` +
        `the asset bounds and the other groups: it stays ${fmt(worstGap)} outside its limits at best`,
    );
  }
  if (!outcome.converged && groupViolation(constraints, start) > tol) {
    throw new OptimizationError('not-converged', 'could not find a point that satisfies the group limits');
  }
  x.set(start.subarray(0, n));
  for (let i = 0; i < n; i++) varState[i] = vs[i];
  for (let g = 0; g < gCount; g++) {
    // A group row is tight for x alone only when both elastic variables ended at zero.
    const elasticAtZero = vs[n + 2 * g] !== FREE && vs[n + 2 * g + 1] !== FREE;
    groupState[g] = elasticAtZero ? rs[1 + g] : FREE;
  }
  return { iterations: outcome.iterations, feasible: true };
}

function fmt(v: number): string {
  return Number.isInteger(v) ? String(v) : String(Number(v.toPrecision(10)));
}
