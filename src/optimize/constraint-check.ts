import type { ConstraintSet } from './types.js';

/**
 * Checks a weight vector against the caller's constraint set and reports every violation with
 * its size. Methods that do not take constraints into account (risk parity, equal weight,
 * inverse volatility) use this to *say* which constraints they ignored instead of clipping
 * weights silently: clipping would destroy the very property (equal risk, 1/N, 1/σ) the method
 * exists to deliver.
 */

/** Absolute tolerance, in weight units, below which a breach is treated as rounding. */
export const DEFAULT_CONSTRAINT_TOLERANCE = 1e-9;

export type ConstraintViolationKind = 'lower-bound' | 'upper-bound' | 'group-min' | 'group-max' | 'budget';

export interface ConstraintViolation {
  readonly kind: ConstraintViolationKind;
  /** Asset index for per-asset bounds. */
  readonly assetIndex?: number;
  /** Group position in `constraints.groups` and its name, for group limits. */
  readonly groupIndex?: number;
  readonly groupName?: string;
  /** The weight (or group / budget sum) that was found. */
  readonly value: number;
  /** The limit it should respect. */
  readonly limit: number;
  /** How far beyond the limit the value lies (always > tolerance). */
  readonly amount: number;
}

export interface ConstraintCheckReport {
  readonly violations: readonly ConstraintViolation[];
  /** Absolute tolerance (weight units) that was applied. */
  readonly tolerance: number;
  readonly satisfied: boolean;
}

export interface ConstraintCheckOptions {
  readonly tolerance?: number;
  /** Check Σw = budget as well (off for methods that choose their own budget). */
  readonly checkBudget?: boolean;
}

/** Lists every per-asset bound, group limit (and optionally budget) that `weights` violates. */
export function checkConstraints(
  weights: ArrayLike<number>,
  constraints: ConstraintSet,
  options: ConstraintCheckOptions = {},
): ConstraintCheckReport {
  const tolerance = options.tolerance ?? DEFAULT_CONSTRAINT_TOLERANCE;
  if (!(tolerance >= 0)) throw new RangeError(`tolerance must be ≥ 0, got ${tolerance}`);
  if (weights.length !== constraints.n) {
    throw new RangeError(`weights have length ${weights.length}, constraints are for ${constraints.n} assets`);
  }
  const violations: ConstraintViolation[] = [];
  for (let i = 0; i < constraints.n; i++) {
    const w = weights[i];
    const lo = constraints.lower[i];
    const hi = constraints.upper[i];
    if (lo - w > tolerance) violations.push({ kind: 'lower-bound', assetIndex: i, value: w, limit: lo, amount: lo - w });
    if (w - hi > tolerance) violations.push({ kind: 'upper-bound', assetIndex: i, value: w, limit: hi, amount: w - hi });
  }
  constraints.groups.forEach((group, g) => {
    let sum = 0;
    for (let m = 0; m < group.members.length; m++) sum += weights[group.members[m]];
    if (group.min - sum > tolerance) {
      violations.push({ kind: 'group-min', groupIndex: g, groupName: group.name, value: sum, limit: group.min, amount: group.min - sum });
    }
    if (sum - group.max > tolerance) {
      violations.push({ kind: 'group-max', groupIndex: g, groupName: group.name, value: sum, limit: group.max, amount: sum - group.max });
    }
  });
  if (options.checkBudget) {
    let sum = 0;
    for (let i = 0; i < constraints.n; i++) sum += weights[i];
    const gap = Math.abs(sum - constraints.budget);
    if (gap > tolerance) violations.push({ kind: 'budget', value: sum, limit: constraints.budget, amount: gap });
  }
  return { violations, tolerance, satisfied: violations.length === 0 };
}

function assetLabel(index: number, assetNames?: readonly string[]): string {
  const name = assetNames?.[index];
  return name === undefined ? `asset ${index}` : `asset '${name}' (index ${index})`;
}

function fmt(x: number): string {
  return Number.isFinite(x) ? Number(x.toPrecision(6)).toString() : String(x);
}

/** One sentence per violation, e.g. "upper bound on asset 'AAA' (index 0): 0.48 > 0.3 by 0.18". */
export function describeViolation(v: ConstraintViolation, assetNames?: readonly string[]): string {
  switch (v.kind) {
    case 'lower-bound':
      return `lower bound on ${assetLabel(v.assetIndex ?? -1, assetNames)}: ${fmt(v.value)} < ${fmt(v.limit)} by ${fmt(v.amount)}`;
    case 'upper-bound':
      return `upper bound on ${assetLabel(v.assetIndex ?? -1, assetNames)}: ${fmt(v.value)} > ${fmt(v.limit)} by ${fmt(v.amount)}`;
    case 'group-min':
      return `minimum of group '${v.groupName}' (index ${v.groupIndex}): sum ${fmt(v.value)} < ${fmt(v.limit)} by ${fmt(v.amount)}`;
    case 'group-max':
      return `maximum of group '${v.groupName}' (index ${v.groupIndex}): sum ${fmt(v.value)} > ${fmt(v.limit)} by ${fmt(v.amount)}`;
    case 'budget':
      return `budget: weights sum to ${fmt(v.value)}, not ${fmt(v.limit)} (off by ${fmt(v.amount)})`;
  }
}

/** What a constraint-blind method does honour, so that only the rest is reported as ignored. */
export interface HonouredConstraints {
  /** The budget the method's weights sum to (undefined: it follows the caller's budget). */
  readonly budget?: number;
}

/**
 * Constraints in the set that a method which ignores bounds and groups could break: per-asset
 * bounds tighter than "anything goes" on the method's side of zero, and groups with a limit
 * that is not implied by the budget. Long-only lower bounds of 0 are not listed: all three
 * constraint-blind methods return non-negative weights for a positive budget.
 */
function restrictiveConstraintNames(constraints: ConstraintSet, budget: number): string[] {
  const names: string[] = [];
  let lowerCount = 0;
  let upperCount = 0;
  for (let i = 0; i < constraints.n; i++) {
    if (constraints.lower[i] > 0) lowerCount++;
    if (constraints.upper[i] < Math.abs(budget)) upperCount++;
  }
  if (lowerCount > 0) names.push(`positive lower bounds on ${lowerCount} asset(s)`);
  if (upperCount > 0) names.push(`upper bounds on ${upperCount} asset(s)`);
  const groups = constraints.groups.filter((g) => g.min > 0 || g.max < Math.abs(budget)).map((g) => `'${g.name}'`);
  if (groups.length > 0) names.push(`group limits ${groups.join(', ')}`);
  return names;
}

/** Most violations listed in one warning message; the rest are counted. */
const MAX_LISTED_VIOLATIONS = 10;

/**
 * The warnings a constraint-blind method attaches to its result: code 'constraints-not-applied',
 * naming the caller's bounds / groups (and budget, when the method fixes its own) it did not
 * apply, and listing any the returned weights violate. Empty when nothing the caller asked for
 * was ignored. Weights are never modified here.
 */
export function constraintsNotAppliedWarnings(
  methodName: string,
  weights: ArrayLike<number>,
  constraints: ConstraintSet | undefined,
  honoured: HonouredConstraints = {},
  options: { readonly tolerance?: number; readonly assetNames?: readonly string[] } = {},
): { code: string; message: string }[] {
  if (constraints === undefined) return [];
  const tolerance = options.tolerance ?? DEFAULT_CONSTRAINT_TOLERANCE;
  const methodBudget = honoured.budget ?? constraints.budget;
  const ignored = restrictiveConstraintNames(constraints, methodBudget);
  const budgetIgnored = honoured.budget !== undefined && Math.abs(honoured.budget - constraints.budget) > tolerance;
  if (budgetIgnored) ignored.push(`budget ${fmt(constraints.budget)} (${methodName} always invests ${fmt(honoured.budget ?? 1)})`);
  const report = checkConstraints(weights, constraints, { tolerance, checkBudget: budgetIgnored });
  // Warn only when the result breaks something: constraints the weights happen to meet need no warning.
  if (report.satisfied) return [];
  const listed = report.violations.slice(0, MAX_LISTED_VIOLATIONS).map((v) => describeViolation(v, options.assetNames));
  const more = report.violations.length - listed.length;
  let message = `${methodName} does not apply the caller's constraints (${ignored.join('; ') || 'bounds and group limits'}); weights are not clipped.`;
  message += ` Violated (tolerance ${tolerance}): ${listed.join('; ')}${more > 0 ? `; and ${more} more` : ''}.`;
  return [{ code: 'constraints-not-applied', message }];
}
