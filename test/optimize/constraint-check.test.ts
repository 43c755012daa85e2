import { describe, expect, it } from 'vitest';
import {
  checkConstraints,
  constraintsNotAppliedWarnings,
  DEFAULT_CONSTRAINT_TOLERANCE,
  describeViolation,
} from '../../src/optimize/constraint-check.js';
import type { ConstraintSet } from '../../src/optimize/types.js';

function set(partial: Partial<ConstraintSet> & { n: number }): ConstraintSet {
  return {
    lower: new Float64Array(partial.n),
    upper: new Float64Array(partial.n).fill(Infinity),
    budget: 1,
    groups: [],
    ...partial,
  };
}

describe('checkConstraints', () => {
  it('lists per-asset bound breaches with index, value, limit and amount', () => {
    const c = set({ n: 3, lower: Float64Array.of(0.1, 0, 0), upper: Float64Array.of(1, 0.4, 1) });
    const report = checkConstraints([0.05, 0.5, 0.45], c);
    expect(report.satisfied).toBe(false);
    expect(report.tolerance).toBe(DEFAULT_CONSTRAINT_TOLERANCE);
    expect(report.violations).toHaveLength(2);
    const [low, high] = report.violations;
    expect(low).toMatchObject({ kind: 'lower-bound', assetIndex: 0, value: 0.05, limit: 0.1 });
    expect(low.amount).toBeCloseTo(0.05, 15);
    expect(high).toMatchObject({ kind: 'upper-bound', assetIndex: 1, value: 0.5, limit: 0.4 });
    expect(high.amount).toBeCloseTo(0.1, 15);
  });

  it('lists group minimum and maximum breaches with the group name', () => {
    const groups = [
      { name: 'equity', members: Int32Array.of(0, 1), min: 0.7, max: Infinity },
      { name: 'credit', members: Int32Array.of(2), min: -Infinity, max: 0.2 },
      { name: 'fine', members: Int32Array.of(0, 2), min: 0, max: 1 },
    ];
    const report = checkConstraints([0.3, 0.3, 0.4], set({ n: 3, groups }));
    expect(report.violations.map((v) => [v.kind, v.groupName, v.groupIndex])).toEqual([
      ['group-min', 'equity', 0],
      ['group-max', 'credit', 1],
    ]);
    expect(report.violations[0].amount).toBeCloseTo(0.1, 15);
    expect(report.violations[1].amount).toBeCloseTo(0.2, 15);
  });

  it('checks the budget only when asked', () => {
    const c = set({ n: 2 });
    expect(checkConstraints([0.6, 0.6], c).satisfied).toBe(true);
    const report = checkConstraints([0.6, 0.6], c, { checkBudget: true });
    expect(report.violations).toHaveLength(1);
    expect(report.violations[0].kind).toBe('budget');
    expect(report.violations[0].amount).toBeCloseTo(0.2, 15);
  });

  it('ignores breaches within the tolerance and reports those just beyond it', () => {
    const c = set({ n: 1, upper: Float64Array.of(0.5) });
    expect(checkConstraints([0.5 + 0.5e-9], c).satisfied).toBe(true);
    expect(checkConstraints([0.5 + 2e-9], c).satisfied).toBe(false);
    expect(checkConstraints([0.5 + 2e-9], c, { tolerance: 1e-8 }).satisfied).toBe(true);
    expect(() => checkConstraints([0.5], c, { tolerance: -1 })).toThrow(RangeError);
    expect(() => checkConstraints([0.5, 0.5], c)).toThrow(RangeError);
  });

  it('describes each violation in one sentence, naming assets when names are given', () => {
    const c = set({ n: 2, upper: Float64Array.of(0.3, 1), lower: Float64Array.of(0, 0.5) });
    const [up, low] = checkConstraints([0.7, 0.3], c).violations;
    expect(describeViolation(up, ['AAA', 'BBB'])).toBe("upper bound on asset 'AAA' (index 0): 0.7 > 0.3 by 0.4");
    expect(describeViolation(low)).toBe('lower bound on asset 1: 0.3 < 0.5 by 0.2');
  });
});

describe('constraintsNotAppliedWarnings', () => {
  it('is empty without constraints, or with only long-only / unit-budget ones', () => {
    expect(constraintsNotAppliedWarnings('risk-parity', [0.5, 0.5], undefined)).toEqual([]);
    expect(constraintsNotAppliedWarnings('risk-parity', [0.5, 0.5], set({ n: 2 }), { budget: 1 })).toEqual([]);
    expect(constraintsNotAppliedWarnings('risk-parity', [0.5, 0.5], set({ n: 2, upper: Float64Array.of(1, 1) }), { budget: 1 })).toEqual([]);
  });

  it('lists at most ten violations and counts the rest', () => {
    const n = 15;
    const c = set({ n, upper: new Float64Array(n).fill(0.05) });
    const w = new Array(n).fill(1 / n);
    const [warning] = constraintsNotAppliedWarnings('equal-weight', w, c);
    expect(warning.code).toBe('constraints-not-applied');
    expect(warning.message.match(/upper bound on asset/g)).toHaveLength(10);
    expect(warning.message).toContain('and 5 more');
    expect(warning.message).toContain(`tolerance ${DEFAULT_CONSTRAINT_TOLERANCE}`);
  });
});
