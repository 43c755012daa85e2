import seedrandom from 'seedrandom';
import { describe, expect, it } from 'vitest';
import type { FactorRiskModel } from '../../src/linalg/risk-model.js';
import { toDenseCovariance } from '../../src/linalg/risk-ops.js';
import { kktReport, qpObjective } from '../../src/optimize/kkt.js';
import { solveQp, QpWorkspace, type QpProblem, type QpWarmStart } from '../../src/optimize/qp.js';
import type { ConstraintSet, GroupConstraint } from '../../src/optimize/types.js';
import { solveWithQuadprog } from '../helpers/quadprog.js';

// Independent reference solver: quadprog (Goldfarb & Idnani 1983; see test/helpers/quadprog.ts).
// Goldfarb–Idnani needs D positive definite and stumbles on degenerate (dependent) active
// constraints, so equality groups and fixed assets are exercised against the KKT checker in
// test/optimize/qp.test.ts instead of here.

interface Generated {
  problem: QpProblem;
  denseH: Float64Array;
}

/** Seeded random constrained problems: dense or factor H, bounds of three kinds, 0–3 groups. */
function generate(rng: seedrandom.PRNG, factor: boolean): Generated {
  const normal = (): number => {
    let u = 0;
    while (u === 0) u = rng();
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng());
  };
  const n = 2 + Math.floor(rng() * 59);
  let problem: Omit<QpProblem, 'constraints'>;
  let denseH: Float64Array;
  if (factor) {
    const k = 1 + Math.floor(rng() * 5);
    const loadings = Float64Array.from({ length: n * k }, () => 0.2 * normal() + (rng() < 0.5 ? 0.3 : 0));
    const g = Float64Array.from({ length: k * k }, () => 0.1 * normal());
    const factorCov = new Float64Array(k * k);
    for (let a = 0; a < k; a++) {
      for (let b = 0; b < k; b++) {
        for (let c = 0; c < k; c++) factorCov[a * k + b] += g[a * k + c] * g[b * k + c];
        if (a === b) factorCov[a * k + b] += 0.002;
      }
    }
    const model: FactorRiskModel = {
      kind: 'factor',
      n,
      k,
      factorNames: Array.from({ length: k }, (_, a) => `f${a}`),
      loadings,
      factorCov,
      specificVar: Float64Array.from({ length: n }, () => 0.001 + 0.01 * rng()),
    };
    const factorScale = 1 + 9 * rng();
    const specificScale = 1 + 9 * rng();
    problem = { hessian: { kind: 'factor', model, factorScale, specificScale }, linear: new Float64Array(n) };
    denseH = toDenseCovariance({ ...model, factorCov: factorCov.map((v) => v * factorScale), specificVar: model.specificVar.map((v) => v * specificScale) });
  } else {
    const m = n + 3;
    const x = Float64Array.from({ length: n * m }, () => 0.05 * normal());
    const cov = new Float64Array(n * n);
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        let s = 0;
        for (let c = 0; c < m; c++) s += x[i * m + c] * x[j * m + c];
        cov[i * n + j] = (20 * s) / m + (i === j ? 1e-4 : 0);
      }
    }
    const scale = 1 + 9 * rng();
    problem = { hessian: { kind: 'dense', n, matrix: cov, scale }, linear: new Float64Array(n) };
    denseH = cov.map((v) => v * scale);
  }
  problem.linear.set(Array.from({ length: n }, () => 0.05 + 0.05 * normal()));
  const kind = rng();
  const lower = new Float64Array(n);
  const upper = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    if (kind < 0.5) {
      lower[i] = 0; // long-only, capped or not
      upper[i] = rng() < 0.3 ? Infinity : Math.max(2 / n, Math.min(1, (1.5 + 3 * rng()) / n));
    } else if (kind < 0.85) {
      lower[i] = -0.2 * rng();
      upper[i] = Math.max(2 / n, 0.1 + 0.5 * rng());
    } else {
      lower[i] = -Infinity;
      upper[i] = Infinity;
    }
  }
  // Group limits around a point that satisfies bounds and budget, so every problem is feasible.
  const point = feasiblePoint(lower, upper, rng);
  const groups: GroupConstraint[] = [];
  const groupCount = Math.floor(rng() * 4);
  for (let g = 0; g < groupCount; g++) {
    const members: number[] = [];
    for (let i = 0; i < n; i++) if (rng() < 0.3) members.push(i);
    if (members.length === 0) members.push(Math.floor(rng() * n));
    const s = members.reduce((acc, i) => acc + point[i], 0);
    groups.push({
      name: `g${g}`,
      members: Int32Array.from(members),
      min: rng() < 0.7 ? s - 0.1 * rng() : -Infinity,
      max: rng() < 0.7 ? s + 0.1 * rng() : Infinity,
    });
  }
  const constraints: ConstraintSet = { n, lower, upper, budget: 1, groups };
  return { problem: { ...problem, constraints }, denseH };
}

/** A point with lower ≤ x ≤ upper and Σx = 1: a random box point, its excess spread by room. */
function feasiblePoint(lower: Float64Array, upper: Float64Array, rng: seedrandom.PRNG): Float64Array {
  const n = lower.length;
  const lo = Float64Array.from(lower, (v) => (Number.isFinite(v) ? v : -0.5));
  const hi = Float64Array.from(upper, (v) => (Number.isFinite(v) ? v : 1));
  const x = Float64Array.from({ length: n }, (_, i) => lo[i] + (hi[i] - lo[i]) * rng());
  const excess = x.reduce((a, b) => a + b, 0) - 1;
  // Move each asset towards the bound on the side of the excess, in proportion to its room;
  // Σlo ≤ 1 ≤ Σhi holds for every generated box, so the box is never left.
  const room = Float64Array.from(x, (v, i) => (excess > 0 ? v - lo[i] : hi[i] - v));
  const totalRoom = room.reduce((a, b) => a + b, 0);
  for (let i = 0; i < n; i++) x[i] -= (excess * room[i]) / totalRoom;
  return x;
}

/** ½|xᵀHx| + |cᵀx|: the scale against which objective agreement is measured. */
function objectiveScale(problem: QpProblem, denseH: Float64Array, x: Float64Array): number {
  const n = x.length;
  let quad = 0;
  let lin = 0;
  for (let i = 0; i < n; i++) {
    lin += problem.linear[i] * x[i];
    for (let j = 0; j < n; j++) quad += x[i] * denseH[i * n + j] * x[j];
  }
  return 0.5 * Math.abs(quad) + Math.abs(lin);
}

describe('active-set QP against quadprog (Goldfarb–Idnani) on seeded random problems', () => {
  const rng = seedrandom('wobble-qp-vs-quadprog');
  const cases = Array.from({ length: 240 }, (_, t) => generate(rng, t % 5 >= 3));

  it('objectives agree to 1e-9 (relative) and KKT residuals are ≤ 1e-9 on 240 problems (N = 2…60)', () => {
    let worstObjective = 0;
    let worstKkt = 0;
    let factorCount = 0;
    const workspace = new QpWorkspace();
    for (const { problem, denseH } of cases) {
      const ours = solveQp(problem, { workspace });
      const reference = solveWithQuadprog(problem, denseH);
      const scale = objectiveScale(problem, denseH, ours.x);
      const gap = Math.abs(qpObjective(problem, ours.x) - qpObjective(problem, reference)) / scale;
      const kkt = kktReport(problem, ours.x, ours.multipliers).max;
      worstObjective = Math.max(worstObjective, gap);
      worstKkt = Math.max(worstKkt, kkt, ours.kktResidual);
      expect(ours.converged).toBe(true);
      if (problem.hessian.kind === 'factor') {
        factorCount++;
        expect(ours.hessianForm).toBe('factor');
      }
    }
    expect(factorCount).toBeGreaterThan(80);
    expect(worstObjective).toBeLessThan(1e-9);
    expect(worstKkt).toBeLessThan(1e-9);
  });

  it('warm starts from a nearby problem give the cold answer, in fewer iterations', () => {
    const perturb = seedrandom('perturb');
    let warmIterations = 0;
    let coldIterations = 0;
    let worst = 0;
    for (const { problem, denseH } of cases) {
      const base = solveQp(problem);
      // Nearby problem: means moved by ~1 % and the risk aversion by up to ±10 %.
      const linear = problem.linear.map((v) => v + 0.01 * (perturb() - 0.5));
      const h = problem.hessian;
      const factor = 0.9 + 0.2 * perturb();
      const hessian: QpProblem['hessian'] =
        h.kind === 'dense' ? { ...h, scale: (h.scale ?? 1) * factor } : { ...h, factorScale: h.factorScale * factor };
      const nearby: QpProblem = { hessian, linear, constraints: problem.constraints };
      const warm = solveQp(nearby, { warmStart: base.warmStart });
      const cold = solveQp(nearby);
      const scale = objectiveScale(nearby, denseH, cold.x);
      worst = Math.max(worst, Math.abs(warm.objective - cold.objective) / scale);
      expect(warm.kktResidual).toBeLessThan(1e-9);
      warmIterations += warm.iterations + warm.phase1Iterations;
      coldIterations += cold.iterations + cold.phase1Iterations;
    }
    expect(worst).toBeLessThan(1e-9);
    expect(warmIterations).toBeLessThan(0.5 * coldIterations);
  });

  it('an inconsistent warm start (wrong states, infeasible point) still gives the right answer', () => {
    const garbage = seedrandom('garbage');
    for (const { problem } of cases.slice(0, 60)) {
      const { n, groups } = problem.constraints;
      const cold = solveQp(problem);
      const states = [-1, 0, 1] as const;
      const warmStart: QpWarmStart = {
        x: Float64Array.from({ length: n }, () => garbage() * 3 - 1),
        assetState: Int8Array.from({ length: n }, () => states[Math.floor(garbage() * 3)]),
        groupState: Int8Array.from({ length: groups.length }, () => states[Math.floor(garbage() * 3)]),
      };
      const warm = solveQp(problem, { warmStart });
      expect(Math.abs(warm.objective - cold.objective)).toBeLessThan(1e-9 * Math.max(1, Math.abs(cold.objective)));
      expect(warm.kktResidual).toBeLessThan(1e-9);
      // A feasible point with a nonsense working set: members inconsistent with x are dropped.
      const feasibleWrongSet = solveQp(problem, { warmStart: { ...warmStart, x: cold.x } });
      expect(Math.abs(feasibleWrongSet.objective - cold.objective)).toBeLessThan(1e-9 * Math.max(1, Math.abs(cold.objective)));
    }
  });
});
