/**
 * `npm run bench:work-model -- --shape <name>`: splits one stress request's CPU into the cold part
 * (validation, estimation, every method's base optimum: planStress) and the per-draw part, per
 * method (each method's solves timed apart), next to what the work model charges for each part.
 * The numbers the warm-start and group terms of src/cost/work-model.ts were fitted to
 * (DEVELOPERS.md, "Request cost"). Not a test: timings depend on the machine.
 *
 *   npm run bench:work-model                      every calibration shape
 *   npm run bench:work-model -- --only groups     shapes whose name contains "groups"
 *   npm run bench:work-model -- --draws 100       draws per shape (default 200)
 */
import { parseArgs } from 'node:util';
import { requestShape } from '../../src/cost/request-shape.js';
import { perDrawMethodUnits, stressBreakdown } from '../../src/cost/work-model.js';
import { validateProposal } from '../../src/schema/validate.js';
import type { MethodSolver } from '../../src/stress/method-interface.js';
import { createAccumulators, planStress, runDraws } from '../../src/stress/engine.js';
import { methodList } from '../../src/stress/problem.js';
import { calibrationShapes } from './limit-shapes.js';

const { values } = parseArgs({ options: { only: { type: 'string' }, draws: { type: 'string', default: '200' } } });
const draws = Number(values.draws);
const cpuMs = (): number => {
  const c = process.cpuUsage();
  return (c.user + c.system) / 1000;
};

console.log(`work-model calibration: ${draws} draws per shape; CPU ms split by each method's share of wall time`);
console.log('| shape | part | units | CPU ms | ns/unit |');
console.log('|---|---|---:|---:|---:|');
for (const shape of calibrationShapes()) {
  if (values.only && !shape.name.includes(values.only)) continue;
  const body = { ...shape.body, resampling: { ...shape.body.resampling, draws, seed: 'calibration' } };
  const v = validateProposal(body);
  if (!v.ok) throw new Error(`${shape.name}: ${v.problems[0]?.message}`);
  const s = requestShape(v.proposal, methodList(v.proposal));
  const priced = stressBreakdown(s);
  const t0 = cpuMs();
  // workShares lifts the work limit: calibration must measure shapes the model refuses too.
  const plan = planStress(v.proposal, v.warnings, { workShares: 1e6 });
  const coldMs = cpuMs() - t0;
  const wall = new Array<number>(plan.solvers.length).fill(0);
  const iterations = new Array<number>(plan.solvers.length).fill(0);
  const calls = new Array<number>(plan.solvers.length).fill(0);
  const timed: MethodSolver[] = plan.solvers.map((solver, k) => ({
    usesMean: solver.usesMean,
    solve: (inputs, warm) => {
      const start = performance.now();
      try {
        const result = solver.solve(inputs, warm);
        calls[k]++;
        // Kelly: Newton steps (each a scenario Hessian and a QP); the QPs: active-set iterations.
        const newton = (result as { newtonIterations?: number }).newtonIterations;
        iterations[k] += newton ?? result.diagnostics.iterations;
        return result;
      } finally {
        wall[k] += performance.now() - start;
      }
    },
  }));
  const acc = createAccumulators(plan);
  const w0 = performance.now();
  const t1 = cpuMs();
  runDraws({ ...plan, solvers: timed }, 0, draws, acc);
  const drawMs = cpuMs() - t1;
  const drawWall = performance.now() - w0;
  const row = (part: string, units: number, ms: number): void =>
    console.log(`| ${shape.name} | ${part} | ${units.toExponential(2)} | ${ms.toFixed(0)} | ${((ms * 1e6) / units).toFixed(2)} |`);
  row('cold: validation, preparation, base optima', priced.validation + priced.preparation + priced.baseSolves, coldMs);
  let solveWall = 0;
  s.methods.forEach((m, k) => {
    solveWall += wall[k];
    row(`draws: ${m.name} solves (${calls[k]}, ${(iterations[k] / Math.max(1, calls[k])).toFixed(1)} iterations each)`, draws * perDrawMethodUnits(m, s), (drawMs * wall[k]) / drawWall);
  });
  row('draws: all (estimation, figures, solves)', priced.draws, drawMs);
  row('draws: outside the solves', priced.draws - draws * s.methods.reduce((t, m) => t + perDrawMethodUnits(m, s), 0), (drawMs * (drawWall - solveWall)) / drawWall);
}
