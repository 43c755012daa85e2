import { createRequire } from 'node:module';
import type { QpProblem } from '../../src/optimize/qp.js';

// Independent reference solver for the outside checks: the npm package `quadprog` 1.6.1 (a
// devDependency), a port of Turlach's R quadprog — the dual active-set method of Goldfarb &
// Idnani (1983, Mathematical Programming 27). It solves min −dᵀb + ½bᵀDb s.t. Aᵀb ≥ b0 (the first
// meq rows equalities) with 1-indexed arrays. It needs D positive definite and stumbles on
// degenerate (dependent) active constraints.

interface QuadprogModule {
  solveQP(dmat: number[][], dvec: number[], amat: number[][], bvec: number[], meq: number): { solution: number[]; message: string };
}
const quadprog = createRequire(import.meta.url)('quadprog') as QuadprogModule;

/** Solves the project's QP (budget, bounds, group limits) with quadprog, the Hessian given dense (N×N, row-major). */
export function solveWithQuadprog(problem: QpProblem, denseH: Float64Array): Float64Array {
  const { n, lower, upper, budget, groups } = problem.constraints;
  const dmat: number[][] = [[]];
  const dvec: number[] = [0];
  for (let i = 1; i <= n; i++) {
    dmat.push([0, ...Array.from(denseH.subarray((i - 1) * n, i * n))]);
    dvec.push(problem.linear[i - 1]);
  }
  const unit = (i: number, v: number): Float64Array => {
    const e = new Float64Array(n);
    e[i] = v;
    return e;
  };
  const columns: { a: Float64Array; b: number }[] = [{ a: new Float64Array(n).fill(1), b: budget }];
  for (let i = 0; i < n; i++) {
    if (lower[i] > -Infinity) columns.push({ a: unit(i, 1), b: lower[i] });
    if (upper[i] < Infinity) columns.push({ a: unit(i, -1), b: -upper[i] });
  }
  for (const g of groups) {
    const ind = new Float64Array(n);
    for (const i of g.members) ind[i] = 1;
    if (g.min > -Infinity) columns.push({ a: ind, b: g.min });
    if (g.max < Infinity) columns.push({ a: ind.map((v) => -v), b: -g.max });
  }
  const amat: number[][] = [[]];
  for (let i = 1; i <= n; i++) amat.push([0, ...columns.map((c) => c.a[i - 1])]);
  const result = quadprog.solveQP(dmat, dvec, amat, [0, ...columns.map((c) => c.b)], 1);
  if (result.message) throw new Error(`quadprog: ${result.message}`);
  return Float64Array.from(result.solution.slice(1));
}
