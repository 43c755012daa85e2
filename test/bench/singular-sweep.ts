/**
 * `npm run bench:singular -- --cases <list>`: active-set solves on singular dense covariances
 * (invented data, for timing only), cold (a base optimum, from nothing) and warm (the per-draw
 * solves of a stress run, started from the base optimum's working set), with iterations and CPU
 * time (process.cpuUsage) per solve, next to what the work model charges for one solve. The
 * measurements the singular term of src/cost/work-model.ts was fitted to (DEVELOPERS.md,
 * "Request cost"). Not a test: timings depend on the machine.
 *
 * The dense reference (the N = 650 all-methods optimize of `npm run bench:limits`) is run at the
 * start and the end of each invocation, so every rate can be read against it.
 *
 * A case is `input:n:rank:method:constraints`, e.g. `moments:400:2:minvar:long` (test/bench/singular-cases.ts).
 *
 *   --draws 4      per-draw solves measured after the base optimum (0: cold only)
 *   --cold 2       cold solves repeated (fresh solver each; the median is printed)
 *   --reference 1  dense reference runs at the start and the end (0: none)
 *   --price-only   print what the work model charges one solve of each case (previous, current, no singular term), no solving
 */
import { parseArgs } from 'node:util';
import { requestShape, type RequestShape } from '../../src/cost/request-shape.js';
import { requestWork, solveUnits } from '../../src/cost/work-model.js';
import { ProposalSchema, type MethodSpec } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import type { MethodSolver, SolveInputs } from '../../src/stress/method-interface.js';
import { createMethodSolver } from '../../src/stress/method-solvers.js';
import { createAccumulators, planStress, runDraws } from '../../src/stress/engine.js';
import { methodList, prepareProblem } from '../../src/stress/problem.js';
import { optimizeProposal } from '../../src/stress/run.js';
import { limitShapes } from './limit-shapes.js';
import { buildCase, type Case } from './singular-cases.js';

const { values } = parseArgs({
  options: { 'price-only': { type: 'boolean', default: false }, cases: { type: 'string', default: '' }, draws: { type: 'string', default: '4' }, cold: { type: 'string', default: '2' }, reference: { type: 'string', default: '1' } },
});
const drawCount = Number(values.draws);
const coldRepeats = Math.max(0, Number(values.cold));

const cpuMs = (): number => {
  const c = process.cpuUsage();
  return (c.user + c.system) / 1000;
};
const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const m = Math.floor(s.length / 2);
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
};

interface SolveRecord {
  ms: number;
  iterations: number;
  ok: boolean;
}

function timedSolve(solver: MethodSolver, inputs: SolveInputs, warm?: unknown): SolveRecord {
  const t0 = cpuMs();
  try {
    const r = solver.solve(inputs, warm);
    const ms = cpuMs() - t0;
    return { ms, iterations: r.diagnostics.iterations, ok: r.diagnostics.converged !== false };
  } catch {
    return { ms: cpuMs() - t0, iterations: -1, ok: false };
  }
}

async function referenceRate(): Promise<number> {
  const shape = limitShapes(1, ['optimize'])[0];
  const v = validateProposal(shape.body, { job: 'optimize' });
  if (!v.ok) throw new Error('reference invalid');
  const units = requestWork('optimize', requestShape(v.proposal, methodList(v.proposal)));
  const t0 = cpuMs();
  await optimizeProposal(v.proposal, v.warnings);
  const ms = cpuMs() - t0;
  const ns = (ms * 1e6) / units;
  console.log(`reference: ${shape.name}: ${units.toExponential(2)} units, ${ms.toFixed(0)} ms CPU, ${ns.toFixed(2)} ns/unit`);
  return ns;
}

const fmt = (x: number): string => x.toExponential(2);
/**
 * The singular term before 2026-12-02: the QP's whole iteration cap at 8·N² units an iteration
 * (parametric draws of moments with observations ≤ N were not flagged singular then).
 */
const previousSingularTerm = (s: RequestShape, c: Case): number => (s.singular && !c.label.startsWith('fewobs') ? Math.max(200, 10 * (s.n + s.groups)) * 8 * s.n * s.n : 0);
const rows: string[] = [];
if (values['price-only']) {
  console.log('| case | start | units, previous charge | units charged | units without the singular term |');
  for (const label of values.cases.split(',').filter(Boolean)) {
    const c = buildCase(label);
    const p = ProposalSchema.parse(c.body);
    const shape = requestShape(p, methodList(p), 1, c.singular);
    for (const start of ['cold', 'warm'] as const) {
      const plain = solveUnits(p.method, { ...shape, singular: false, singularDraws: false }, start);
      console.log(`| ${label} | ${start} | ${fmt(plain + previousSingularTerm(shape, c))} | ${fmt(solveUnits(p.method, shape, start))} | ${fmt(plain)} |`);
    }
  }
  process.exit(0);
}
if (Number(values.reference) > 0) await referenceRate();
for (const label of values.cases.split(',').filter(Boolean)) {
  const c = buildCase(label);
  const v = validateProposal(c.body, { job: 'optimize', workShares: 1e9 });
  if (!v.ok) {
    rows.push(`| ${label} | invalid: ${v.problems[0]?.message.slice(0, 120)} |`);
    continue;
  }
  const methods = methodList(v.proposal);
  const spec: MethodSpec = methods[0];
  const shape: RequestShape = requestShape(v.proposal, methods, Math.max(1, drawCount), c.singular);
  const n = shape.n;
  const prepared = prepareProblem(v.proposal, []);
  const inputs: SolveInputs = { mean: prepared.mean, riskModel: prepared.riskModel };
  const perIt = (ms: number, it: number): string => (it > 0 ? ((ms * 1e6) / it / (n * n)).toFixed(2) : '–');
  const cold: SolveRecord[] = [];
  for (let r = 0; r < coldRepeats; r++) cold.push(timedSolve(createMethodSolver(spec, prepared, { scenarioKelly: false }), inputs));
  if (coldRepeats > 0) {
    const coldMs = median(cold.map((x) => x.ms));
    const coldIt = median(cold.map((x) => x.iterations));
    const coldUnits = solveUnits(spec, shape, 'cold');
    const nonSingular = solveUnits(spec, { ...shape, singular: false, singularDraws: false }, 'cold');
    const previous = nonSingular + previousSingularTerm(shape, c);
    rows.push(
      `| ${label} | cold | ${cold.length} | ${cold.filter((x) => x.ok).length} | ${coldIt} | ${(coldIt / n).toFixed(2)} | ${coldMs.toFixed(1)} [${cold.map((x) => x.ms.toFixed(1)).join(', ')}] | ${perIt(coldMs, coldIt)} | ${fmt(previous)} | ${fmt(coldUnits)} | ${fmt(nonSingular)} |`,
    );
    console.error(rows[rows.length - 1]);
  }
  if (drawCount > 0) {
    const body = { ...c.body, resampling: { ...c.body.resampling, draws: drawCount, seed: 'singular' } };
    // workShares lifts the work limit: the sweep must measure shapes the model refuses too.
    const vv = validateProposal(body, { job: 'stress', workShares: 1e9 });
    if (!vv.ok) {
      rows.push(`| ${label} | warm | invalid: ${vv.problems[0]?.message.slice(0, 120)} |`);
      continue;
    }
    let plan;
    try {
      plan = planStress(vv.proposal, vv.warnings, { workShares: 1e9 });
    } catch (e) {
      rows.push(`| ${label} | warm | plan failed: ${(e as Error).message.slice(0, 100)} |`);
      continue;
    }
    const k = plan.problem.methods.findIndex((m) => JSON.stringify(m) === JSON.stringify(spec));
    const warm: SolveRecord[] = [];
    const solvers = plan.solvers.map((solver, j) => ({
      usesMean: solver.usesMean,
      solve: (x: SolveInputs, w?: unknown) => {
        if (j !== k) return solver.solve(x, w);
        const t0 = cpuMs();
        try {
          const r = solver.solve(x, w);
          warm.push({ ms: cpuMs() - t0, iterations: r.diagnostics.iterations, ok: r.diagnostics.converged !== false });
          return r;
        } catch (e) {
          warm.push({ ms: cpuMs() - t0, iterations: -1, ok: false });
          throw e;
        }
      },
    }));
    runDraws({ ...plan, solvers }, 0, drawCount, createAccumulators(plan));
    const ms = warm.map((x) => x.ms);
    const its = warm.map((x) => x.iterations);
    const wMs = median(ms);
    const wIt = median(its);
    const warmUnits = solveUnits(spec, shape, 'warm');
    const warmNonSingular = solveUnits(spec, { ...shape, singular: false, singularDraws: false }, 'warm');
    rows.push(
      `| ${label} | warm | ${warm.length} | ${warm.filter((x) => x.ok).length} | ${wIt} (max ${Math.max(...its)}) | ${(Math.max(...its) / n).toFixed(2)} | ${wMs.toFixed(1)} (max ${Math.max(...ms).toFixed(1)}) | ${perIt(Math.max(...ms), its[ms.indexOf(Math.max(...ms))])} | ${fmt(warmNonSingular + previousSingularTerm(shape, c))} | ${fmt(warmUnits)} | ${fmt(warmNonSingular)} |`,
    );
    console.error(rows[rows.length - 1]);
  }
}
if (Number(values.reference) > 0) await referenceRate();
console.log('| case | start | solves | converged | iterations | max iter. ÷ N | CPU ms per solve | ns per iteration ÷ N² | units, previous charge | units charged | units without the singular term |');
console.log('|---|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|');
for (const r of rows) console.log(r);
