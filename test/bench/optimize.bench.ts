/**
 * Benchmark of the shared active-set QP (src/optimize/qp.ts) against the npm package `quadprog`
 * (Goldfarb–Idnani dual method) on the same problems. Plain script, not a vitest test:
 *
 *   npx tsx test/bench/optimize.bench.ts
 *
 * Problems (invented data, seeded): long-only mean-variance with per-asset caps and one group
 * limit, N = 10, 50, 200. Each "draw" is a nearby problem of the kind the stress engine solves:
 * the covariance re-estimated from bootstrap-resampled rows of a synthetic return history and
 * the means from the same rows. Cold solves start from nothing; warm solves start from the base
 * optimum's working set. The last block times the stress-engine target case (N = 30, 500 draws of
 * mean-variance + minimum-variance, warm-started).
 */
import { createRequire } from 'node:module';
import seedrandom from 'seedrandom';
import type { DenseRiskModel, RiskModel } from '../../src/linalg/risk-model.js';
import { qpObjective } from '../../src/optimize/kkt.js';
import { QpForecastSensitivity } from '../../src/optimize/forecast-sensitivity-qp.js';
import { meanVariance, meanVarianceProblem } from '../../src/optimize/mean-variance.js';
import { minimumVariance } from '../../src/optimize/minimum-variance.js';
import { solveQp, QpWorkspace, type QpProblem } from '../../src/optimize/qp.js';
import type { ConstraintSet } from '../../src/optimize/types.js';

interface QuadprogResult {
  solution: number[];
  message: string;
}
interface QuadprogModule {
  solveQP(dmat: number[][], dvec: number[], amat: number[][], bvec: number[], meq: number): QuadprogResult;
}
const quadprog = createRequire(import.meta.url)('quadprog') as QuadprogModule;

const rng = seedrandom('wobble-optimize-bench');
function normal(): number {
  let u = 0;
  while (u === 0) u = rng();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * rng());
}

/** T×N synthetic monthly returns with a market factor (invented, for timing only). */
function history(n: number, t: number): Float64Array {
  const beta = Float64Array.from({ length: n }, () => 0.6 + 0.8 * rng());
  const drift = Float64Array.from({ length: n }, () => 0.004 + 0.006 * rng());
  const vol = Float64Array.from({ length: n }, () => 0.03 + 0.05 * rng());
  const r = new Float64Array(t * n);
  for (let s = 0; s < t; s++) {
    const m = 0.04 * normal();
    for (let i = 0; i < n; i++) r[s * n + i] = drift[i] + beta[i] * m + vol[i] * normal();
  }
  return r;
}

/** Mean and sample covariance of the rows `rows` of the T×N matrix. */
function moments(r: Float64Array, n: number, rows: Int32Array): { mean: Float64Array; cov: Float64Array } {
  const t = rows.length;
  const mean = new Float64Array(n);
  for (const s of rows) for (let i = 0; i < n; i++) mean[i] += r[s * n + i] / t;
  const cov = new Float64Array(n * n);
  for (const s of rows) {
    for (let i = 0; i < n; i++) {
      const di = r[s * n + i] - mean[i];
      for (let j = 0; j <= i; j++) cov[i * n + j] += (di * (r[s * n + j] - mean[j])) / (t - 1);
    }
  }
  for (let i = 0; i < n; i++) for (let j = 0; j < i; j++) cov[j * n + i] = cov[i * n + j];
  return { mean, cov };
}

function constraintsFor(n: number): ConstraintSet {
  const members = Int32Array.from({ length: Math.floor(n / 3) }, (_, i) => i);
  return {
    n,
    lower: new Float64Array(n),
    upper: new Float64Array(n).fill(Math.max(0.1, 3 / n)),
    budget: 1,
    groups: [{ name: 'first third', members, min: 0.1, max: 0.3 }],
  };
}

function quadprogSolve(problem: QpProblem, scale: number, matrix: Float64Array): Float64Array {
  const { n, lower, upper, budget, groups } = problem.constraints;
  const dmat: number[][] = [[]];
  const dvec: number[] = [0];
  for (let i = 1; i <= n; i++) {
    const row = [0];
    for (let j = 0; j < n; j++) row.push(scale * matrix[(i - 1) * n + j]);
    dmat.push(row);
    dvec.push(problem.linear[i - 1]);
  }
  const q = 1 + 2 * n + 2;
  const amat: number[][] = [[]];
  for (let i = 1; i <= n; i++) {
    const col = new Array<number>(q + 1).fill(0);
    col[1] = 1;
    col[1 + i] = 1;
    col[1 + n + i] = -1;
    amat.push(col);
  }
  for (const i of groups[0].members) {
    amat[i + 1][2 * n + 2] = 1;
    amat[i + 1][2 * n + 3] = -1;
  }
  const bvec = [0, budget, ...Array.from(lower), ...Array.from(upper, (u) => -u), groups[0].min, -groups[0].max];
  const result = quadprog.solveQP(dmat, dvec, amat, bvec, 1);
  if (result.message) throw new Error(result.message);
  return Float64Array.from(result.solution.slice(1));
}

/** Mean wall time of run() in ms, after a few untimed runs so the JIT has compiled the code. */
function time(repeat: number, run: () => void, warmups = 3): number {
  for (let k = 0; k < warmups; k++) run();
  const start = performance.now();
  for (let k = 0; k < repeat; k++) run();
  return (performance.now() - start) / repeat;
}

function fmt(ms: number): string {
  return ms >= 1 ? `${ms.toFixed(2)} ms` : `${(ms * 1000).toFixed(1)} µs`;
}

console.log('wobble optimize benchmark — active-set QP vs quadprog (Goldfarb–Idnani), same problems');
console.log(`node ${process.version}; long-only, caps, one group limit; risk aversion 5\n`);
console.log('    N | draws | cold solve (its) | warm solve (its) | quadprog solve | cold ×faster | warm ×faster | max |Δf|/|f|');

for (const n of [10, 50, 200]) {
  const t = Math.max(60, 2 * n);
  const r = history(n, t);
  const all = Int32Array.from({ length: t }, (_, s) => s);
  const base = moments(r, n, all);
  const constraints = constraintsFor(n);
  const draws = n === 200 ? 20 : 100;
  const problems: { problem: QpProblem; cov: Float64Array }[] = [];
  for (let b = 0; b < draws; b++) {
    const rows = Int32Array.from({ length: t }, () => Math.floor(rng() * t));
    const { mean, cov } = moments(r, n, rows);
    problems.push({ problem: { hessian: { kind: 'dense', n, matrix: cov, scale: 5 }, linear: mean, constraints }, cov });
  }
  const workspace = new QpWorkspace(n, 1);
  const baseSolution = solveQp({ hessian: { kind: 'dense', n, matrix: base.cov, scale: 5 }, linear: base.mean, constraints }, { workspace });
  let coldIterations = 0;
  let warmIterations = 0;
  const repeats = n === 200 ? 3 : 20;
  const cold =
    time(repeats, () => {
      coldIterations = 0;
      for (const { problem } of problems) coldIterations += solveQp(problem, { workspace }).iterations;
    }) / draws;
  const warm =
    time(repeats, () => {
      warmIterations = 0;
      for (const { problem } of problems) warmIterations += solveQp(problem, { workspace, warmStart: baseSolution.warmStart }).iterations;
    }) / draws;
  const quadprogDraws = n === 200 ? problems.slice(0, 5) : problems;
  const reference = time(n === 200 ? 1 : 5, () => {
    for (const { problem, cov } of quadprogDraws) quadprogSolve(problem, 5, cov);
  }, n === 200 ? 1 : 3) / quadprogDraws.length;
  let worstGap = 0;
  for (const { problem, cov } of quadprogDraws) {
    const ours = solveQp(problem, { workspace, warmStart: baseSolution.warmStart });
    const theirs = quadprogSolve(problem, 5, cov);
    const f = qpObjective(problem, ours.x);
    worstGap = Math.max(worstGap, Math.abs(f - qpObjective(problem, theirs)) / Math.max(Math.abs(f), 1e-300));
  }
  console.log(
    `${String(n).padStart(5)} | ${String(draws).padStart(5)} | ${`${fmt(cold)} (${(coldIterations / draws).toFixed(1)})`.padStart(16)} | ` +
      `${`${fmt(warm)} (${(warmIterations / draws).toFixed(1)})`.padStart(16)} | ${fmt(reference).padStart(14)} | ` +
      `${(reference / cold).toFixed(1).padStart(12)} | ${(reference / warm).toFixed(1).padStart(12)} | ${worstGap.toExponential(1)}`,
  );
  console.log(
    `      solves/s: cold ${Math.round(1000 / cold)}, warm ${Math.round(1000 / warm)}, quadprog ${Math.round(1000 / reference)}`,
  );
}

// The stress engine's target case: N = 30, 500 draws, mean-variance + minimum-variance, each draw
// warm-started from its method's base optimum (risk parity is timed by its own module).
{
  const n = 30;
  const t = 120;
  const r = history(n, t);
  const all = Int32Array.from({ length: t }, (_, s) => s);
  const base = moments(r, n, all);
  const constraints = constraintsFor(n);
  const baseModel: DenseRiskModel = { kind: 'dense', n, cov: base.cov };
  const mvWorkspace = new QpWorkspace(n, 1);
  const minWorkspace = new QpWorkspace(n, 1);
  const mvBase = meanVariance(baseModel, base.mean, constraints, 5, { workspace: mvWorkspace });
  const minBase = minimumVariance(baseModel, constraints, { workspace: minWorkspace });
  const inputs = Array.from({ length: 500 }, () => moments(r, n, Int32Array.from({ length: t }, () => Math.floor(rng() * t))));
  const ms = time(3, () => {
    for (const { mean, cov } of inputs) {
      const model: DenseRiskModel = { kind: 'dense', n, cov };
      meanVariance(model, mean, constraints, 5, { workspace: mvWorkspace, warmStart: mvBase.warmStart });
      minimumVariance(model, constraints, { workspace: minWorkspace, warmStart: minBase.warmStart });
    }
  });
  console.log(`\nstress target: N = 30, 500 draws × (mean-variance + minimum-variance), warm-started: ${fmt(ms)} of solver time`);
}

// Break-even forecast table (src/optimize/forecast-sensitivity-qp.ts): every asset's shifts both
// ways from one factorisation, and the exact turnover at ±1 standard error of the mean (σ_i/√T per
// period; re-solves warm-started from the base where a breakpoint lies within it). Reference: one
// cold solve of the same problem, and the 2N warm solves a finite-difference table would need.
{
  console.log('\nbreak-even forecast table (mean-variance, caps + group, risk aversion 5), against one solve of the same problem');
  console.log('        N | one cold solve | table: shifts | + turnover ±1 se (re-solves) | shifts ÷ solve | all ÷ solve | 2N warm solves ÷ solve');
  const cases: { n: number; factors: number }[] = [
    { n: 10, factors: 0 },
    { n: 50, factors: 0 },
    { n: 200, factors: 0 },
    { n: 200, factors: 5 },
  ];
  for (const { n, factors } of cases) {
    const t = Math.max(60, 2 * n);
    const r = history(n, t);
    const base = moments(r, n, Int32Array.from({ length: t }, (_, s) => s));
    const constraints = constraintsFor(n);
    // Factor case: an invented K-factor model with the history's variances (loadings seeded).
    const model: RiskModel =
      factors === 0
        ? { kind: 'dense', n, cov: base.cov }
        : {
            kind: 'factor',
            n,
            k: factors,
            factorNames: Array.from({ length: factors }, (_, a) => `f${a}`),
            loadings: Float64Array.from({ length: n * factors }, () => 0.03 * normal()),
            factorCov: Float64Array.from({ length: factors * factors }, (_, a) => (Math.floor(a / factors) === a % factors ? 1 : 0)),
            specificVar: Float64Array.from({ length: n }, (_, i) => 0.5 * base.cov[i * n + i]),
          };
    const problem = meanVarianceProblem(model, base.mean, constraints, 5);
    const workspace = new QpWorkspace(n, 1);
    let solution = meanVariance(model, base.mean, constraints, 5, { workspace }).solution;
    const repeats = n === 200 ? 5 : 30;
    const solve = time(repeats, () => {
      solution = meanVariance(model, base.mean, constraints, 5, { workspace }).solution;
    });
    const shifts = time(repeats, () => {
      const s = new QpForecastSensitivity(problem, solution);
      for (let i = 0; i < n; i++) s.shiftsOf(i);
    });
    let resolves = 0;
    const all = time(repeats, () => {
      const s = new QpForecastSensitivity(problem, solution);
      for (let i = 0; i < n; i++) {
        const row = s.shiftsOf(i);
        const se = Math.sqrt(base.cov[i * n + i] / t);
        s.weightsAt(i, se, row);
        s.weightsAt(i, -se, row);
      }
      resolves = s.resolves;
    });
    const fd = time(repeats, () => {
      for (let i = 0; i < n; i++) {
        for (const h of [1e-6, -1e-6]) {
          const linear = Float64Array.from(base.mean);
          linear[i] += h;
          solveQp({ ...problem, linear }, { workspace, warmStart: solution.warmStart });
        }
      }
    });
    console.log(
      `${`${n}${factors ? ` K=${factors}` : ''}`.padStart(9)} | ${fmt(solve).padStart(14)} | ${fmt(shifts).padStart(13)} | ${`${fmt(all)} (${resolves})`.padStart(28)} | ` +
        `${(shifts / solve).toFixed(2).padStart(14)} | ${(all / solve).toFixed(2).padStart(11)} | ${(fd / solve).toFixed(2).padStart(22)}`,
    );
  }
}
