/**
 * Stress-engine benchmark. Plain script, not a vitest test:
 *
 *   npm run bench:stress        (tsx test/bench/stress.bench.ts)
 *
 * Cases (invented data):
 *   A  the demo proposal (schemas/examples/demo-proposal.json: 10 assets, 180 months, six methods), 500 draws;
 *   B  the target: a 30-asset, 240-month synthetic history (test/bench/problems.ts), long-only, each asset
 *      ≤ 15 %, first ten ≤ 50 %, sample covariance, stationary bootstrap (mean block length 3), 500 draws,
 *      mean-variance (λ = 4) + minimum variance + risk parity, three channels. Target: < 1 s of compute;
 *   C  the same history with all six methods.
 * Each case is run once to warm the JIT, once with memory sampling in onProgress, then RUNS times
 * timed (no sampling); the medians are reported. Compute = process.cpuUsage() user + system.
 *
 * Reference: test/bench/fixtures/stress-reference.json, written by
 * scripts/reference/stress_bench_reference.py (numpy + cvxpy, DPP-compiled problems, the same solves
 * per draw as case B) on this machine. The ratio is reference time / wobble time (> 1: wobble is
 * faster). The history checksum printed here must equal the fixture's, or the ratio is not shown.
 * The bootstrap random numbers differ (numpy's generator vs wobble's streams): same scheme, same
 * data, same problems, different draws. As a check that both solve the same problem, wobble's base
 * optima are compared with the reference's (max |Δw|).
 *
 * Then a breakdown of cases B and C: each piece of the draw loop timed on its own, plus the report.
 * The whole script takes about 40 s on the 2-core development machine.
 */
import { readFileSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { EstimationWorkspace } from '../../src/estimate/workspace.js';
import { riskContributionSharesInto } from '../../src/optimize/risk-decomposition.js';
import type { MethodResult } from '../../src/optimize/types.js';
import { drawBootstrapIndices } from '../../src/resample/bootstrap.js';
import type { Proposal, ProposalInput } from '../../src/schema/proposal.js';
import { validateProposal, type Warning } from '../../src/schema/validate.js';
import { inputDigest } from '../../src/stress/digest.js';
import { createAccumulators, planStress, runDraws, SHORTFALL_LEVEL } from '../../src/stress/engine.js';
import { estimateFromHistory } from '../../src/stress/estimate-inputs.js';
import type { SolveInputs } from '../../src/stress/method-interface.js';
import { buildReport } from '../../src/stress/report.js';
import { optimizeProposal, stressProposal } from '../../src/stress/run.js';
import { difference, expectedShortfall, shiftedRows } from '../../src/stress/scenarios.js';
import { demoProposal } from '../helpers/proposals.js';
import { factorHistory, TARGET_CASE, targetStressProposal } from './problems.js';

const RUNS = 3;
const DRAWS = 500;
/** Target for case B, seconds of CPU (the brief of the stress engine). */
const TARGET_SECONDS = 1;
const MIB = 1024 * 1024;

interface ReferenceConfiguration {
  readonly name: string;
  readonly qpSolver: string;
  readonly riskParitySolver: string;
  readonly cpuSeconds: number;
  readonly wallSeconds: number;
  readonly partsWallSeconds: Record<string, number>;
  readonly baseWeights: Record<string, number[]>;
}

interface StressReference {
  readonly measuredOn: string;
  readonly historyChecksum: { sum: number; hash: number };
  readonly case: { draws: number };
  readonly best: string;
  readonly cpuSeconds: number;
  readonly wallSeconds: number;
  readonly configurations: readonly ReferenceConfiguration[];
  readonly versions: Record<string, string | null>;
  readonly machine: { nproc: number; cpuModel: string | null; loadAverage1mBeforeAfter?: number[] };
}

function readReference(): StressReference | undefined {
  try {
    const json = JSON.parse(readFileSync(new URL('./fixtures/stress-reference.json', import.meta.url), 'utf8')) as StressReference;
    if (typeof json.cpuSeconds !== 'number' || !Array.isArray(json.configurations)) throw new Error('unexpected shape');
    return json;
  } catch (e) {
    console.log(`(no usable reference fixture: ${(e as Error).message})`);
    return undefined;
  }
}

function validated(input: ProposalInput): { proposal: Proposal; warnings: Warning[] } {
  const v = validateProposal(input);
  if (!v.ok) throw new Error(`bench proposal is invalid: ${JSON.stringify(v.problems)}`);
  return { proposal: v.proposal, warnings: v.warnings };
}

function median(values: readonly number[]): number {
  const s = [...values].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m]);
}

interface Timing {
  readonly cpuSeconds: number;
  readonly wallSeconds: number;
}

async function timed(run: () => Promise<unknown> | unknown): Promise<Timing> {
  const cpu0 = process.cpuUsage();
  const wall0 = performance.now();
  await run();
  const cpu = process.cpuUsage(cpu0);
  return { cpuSeconds: (cpu.user + cpu.system) / 1e6, wallSeconds: (performance.now() - wall0) / 1000 };
}

interface Memory {
  readonly heapBeforeMiB: number;
  readonly heapPeakMiB: number;
  readonly rssBeforeMiB: number;
  readonly rssAfterMiB: number;
  readonly rssPeakMiB: number;
}

/**
 * A full garbage collection, so "before" is the live heap only. The npm script runs plain `tsx`
 * without --expose-gc, so the flag is set at run time and gc fetched from a fresh context (V8 API).
 */
function collectGarbage(): void {
  setFlagsFromString('--expose-gc');
  const gc = runInNewContext('gc') as () => void;
  gc();
}

/** One run with process.memoryUsage() sampled every `every` draws in onProgress (kept out of the timed runs). */
async function memoryRun(input: { proposal: Proposal; warnings: Warning[] }, every = 1): Promise<Memory> {
  collectGarbage();
  const before = process.memoryUsage();
  let heapPeak = before.heapUsed;
  let rssPeak = before.rss;
  const sample = (): void => {
    const m = process.memoryUsage();
    if (m.heapUsed > heapPeak) heapPeak = m.heapUsed;
    if (m.rss > rssPeak) rssPeak = m.rss;
  };
  await stressProposal(input.proposal, input.warnings, { draws: DRAWS, onProgress: (done) => (done % every === 0 ? sample() : undefined) });
  sample();
  const after = process.memoryUsage();
  return {
    heapBeforeMiB: before.heapUsed / MIB,
    heapPeakMiB: heapPeak / MIB,
    rssBeforeMiB: before.rss / MIB,
    rssAfterMiB: after.rss / MIB,
    rssPeakMiB: rssPeak / MIB,
  };
}

interface CaseResult {
  readonly name: string;
  readonly label: string;
  readonly methods: string;
  readonly runs: readonly Timing[];
  readonly cpuSeconds: number;
  readonly wallSeconds: number;
  readonly memory: Memory;
}

async function benchCase(name: string, label: string, input: ProposalInput): Promise<CaseResult> {
  const v = validated(input);
  const warm = await stressProposal(v.proposal, v.warnings, { draws: DRAWS });
  const methods = warm.methods.map((m) => m.method.name).join(', ');
  const memory = await memoryRun(v);
  const runs: Timing[] = [];
  for (let k = 0; k < RUNS; k++) runs.push(await timed(() => stressProposal(v.proposal, v.warnings, { draws: DRAWS })));
  return {
    name,
    label,
    methods,
    runs,
    cpuSeconds: median(runs.map((r) => r.cpuSeconds)),
    wallSeconds: median(runs.map((r) => r.wallSeconds)),
    memory,
  };
}

const pad = (s: string, w: number): string => (s.length >= w ? s : s + ' '.repeat(w - s.length));
const lpad = (s: string, w: number): string => (s.length >= w ? s : ' '.repeat(w - s.length) + s);

function printTable(results: readonly CaseResult[], reference: StressReference | undefined, referenceUsable: boolean): void {
  const header = ['case', 'draws/s', 'CPU s', 'wall s', 'runs (CPU s)', 'heap peak MiB', 'rss peak MiB', 'ref CPU s', 'ref/wobble CPU', 'ref/wobble wall'];
  const widths = [6, 9, 7, 7, 20, 14, 13, 10, 15, 16];
  console.log(header.map((h, i) => pad(h, widths[i])).join(' '));
  console.log(widths.map((w) => '-'.repeat(w)).join(' '));
  for (const r of results) {
    const hasRef = r.name === 'B' && reference !== undefined && referenceUsable;
    const cells = [
      r.name,
      (DRAWS / r.cpuSeconds).toFixed(0),
      r.cpuSeconds.toFixed(3),
      r.wallSeconds.toFixed(3),
      r.runs.map((x) => x.cpuSeconds.toFixed(2)).join(' '),
      `${r.memory.heapPeakMiB.toFixed(1)} (+${(r.memory.heapPeakMiB - r.memory.heapBeforeMiB).toFixed(1)})`,
      r.memory.rssPeakMiB.toFixed(0),
      hasRef ? reference.cpuSeconds.toFixed(2) : '—',
      hasRef ? `${(reference.cpuSeconds / r.cpuSeconds).toFixed(1)}×` : '—',
      hasRef ? `${(reference.wallSeconds / r.wallSeconds).toFixed(1)}×` : '—',
    ];
    console.log(cells.map((c, i) => (i === 0 || i === 4 ? pad(c, widths[i]) : lpad(c, widths[i]))).join(' '));
  }
  console.log('');
  for (const r of results) console.log(`  ${r.name}: ${r.label}; methods: ${r.methods}`);
  console.log(
    '  draws/s = draws ÷ median CPU s. heap peak: largest process.memoryUsage().heapUsed sampled after every draw and at the end,' +
      ' (+ above the live heap after a full GC just before the run); rss: the whole process (Node, tsx, the bench).',
  );
}

/** Milliseconds per piece of one pass over the draws. */
interface PassTimes {
  indices: number;
  estimation: number;
  scenarios: number;
  proposal: number;
  methods: number[];
}

/**
 * Where a case's time goes (B and C). The same work as runDraws, piece by piece, each timed on its own:
 * bootstrap indices, re-estimation, the scenario rows the engine builds for scenario Kelly, the
 * proposal's risk shares and shortfall, and every solve of every method (three channels for the
 * methods that use the means, one solve for the others). Then the whole runDraws, buildReport and
 * the input digest. Each is repeated `repeats` times, interleaved, and the medians are
 * printed; "other" is runDraws minus the pieces (accumulators, turnover, volatility, CE loss).
 */
async function breakdown(name: string, input: ProposalInput, repeats: number): Promise<void> {
  const v = validated(input);
  const plan = planStress(v.proposal, v.warnings, { draws: DRAWS });
  const p = plan.problem;
  const history = p.history;
  const estimation = p.plan;
  if (!history || !estimation) throw new Error(`case ${name} needs a history`);
  const t = history.assets.periods;
  const n = p.n;
  const rows = new Int32Array(t);
  const buffers = { mean: new Float64Array(n), cov: new Float64Array(n * n), workspace: new EstimationWorkspace() };
  const scenarioBuffers = plan.baseScenarios ? [0, 1, 2].map(() => new Float64Array(t * n)) : [];
  const shift = new Float64Array(n);
  const shares = new Float64Array(n);
  const shortfallScratch = new Float64Array(t);
  const solveCounts = plan.solvers.map((solver) => (solver.usesMean ? 3 : 1) * plan.draws);
  const sink: MethodResult[] = [];
  let statistic = 0;

  const pass = (): PassTimes => {
    const times: PassTimes = { indices: 0, estimation: 0, scenarios: 0, proposal: 0, methods: plan.solvers.map(() => 0) };
    for (let b = 0; b < plan.draws; b++) {
      const t0 = performance.now();
      drawBootstrapIndices(plan.seed, b, 'stationary-bootstrap', t, plan.meanBlockLength ?? 1, rows);
      const t1 = performance.now();
      const est = estimateFromHistory(history, estimation, rows, buffers);
      const t2 = performance.now();
      if (plan.baseScenarios) {
        // As the engine does for scenario Kelly: the draw's rows at the draw's mean, base rows at the draw's mean,
        // the draw's rows at the base mean.
        const x = history.assets.values;
        shiftedRows(x, n, t, rows, difference(est.mean, est.mean, shift), scenarioBuffers[0]);
        shiftedRows(plan.baseScenarios, n, t, undefined, difference(est.mean, p.mean, shift), scenarioBuffers[1]);
        shiftedRows(x, n, t, rows, difference(p.mean, est.mean, shift), scenarioBuffers[2]);
      }
      const t3 = performance.now();
      statistic += riskContributionSharesInto(est.riskModel, p.proposalWeights, shares);
      statistic += expectedShortfall(history.assets.values, n, t, rows, p.proposalWeights, SHORTFALL_LEVEL, shortfallScratch);
      const t4 = performance.now();
      times.indices += t1 - t0;
      times.estimation += t2 - t1;
      times.scenarios += t3 - t2;
      times.proposal += t4 - t3;
      const scenarios = (i: number): Partial<SolveInputs> => (plan.baseScenarios ? { scenarios: scenarioBuffers[i], scenarioCount: t } : {});
      const joint: SolveInputs = { mean: est.mean, riskModel: est.riskModel, ...scenarios(0) };
      const meanOnly: SolveInputs = { mean: est.mean, riskModel: p.riskModel, ...scenarios(1) };
      const covOnly: SolveInputs = { mean: p.mean, riskModel: est.riskModel, ...scenarios(2) };
      plan.solvers.forEach((solver, k) => {
        const warm = plan.base[k].warmStart;
        const s0 = performance.now();
        sink[k] = solver.solve(joint, warm);
        if (solver.usesMean) {
          sink[k] = solver.solve(meanOnly, warm);
          sink[k] = solver.solve(covOnly, warm);
        }
        times.methods[k] += performance.now() - s0;
      });
    }
    return times;
  };

  pass(); // warm-up
  const passes: PassTimes[] = [];
  const drawLoop: number[] = [];
  const report: number[] = [];
  const digest: number[] = [];
  for (let r = 0; r < repeats; r++) {
    passes.push(pass());
    const acc = createAccumulators(plan);
    const s0 = performance.now();
    runDraws(plan, 0, plan.draws, acc);
    const s1 = performance.now();
    buildReport(plan, acc, { version: 'bench', inputDigest: '', elapsedMs: 0 });
    const s2 = performance.now();
    await inputDigest(v.proposal);
    drawLoop.push(s1 - s0);
    report.push(s2 - s1);
    digest.push(performance.now() - s2);
  }
  const full = median(drawLoop);
  const hasKelly = p.methods.some((m) => m.name === 'kelly');
  const rowsMs: [string, number, number][] = [
    ['bootstrap indices (per-draw stream + stationary blocks)', median(passes.map((x) => x.indices)), plan.draws],
    ['mean + sample covariance re-estimation', median(passes.map((x) => x.estimation)), plan.draws],
    [`scenario rows for Kelly (3 × ${t}×${n} per draw${hasKelly ? '' : '; no Kelly in this case'})`, median(passes.map((x) => x.scenarios)), plan.baseScenarios ? plan.draws : 0],
    ['proposal risk shares + expected shortfall', median(passes.map((x) => x.proposal)), plan.draws],
    ...plan.solvers.map((_, k): [string, number, number] => [`${p.methods[k].name} solves`, median(passes.map((x) => x.methods[k])), solveCounts[k]]),
  ];
  const partSum = rowsMs.reduce((sum, [, ms]) => sum + ms, 0);
  const total = full + median(report) + median(digest);
  const line = (what: string, ms: number, count?: number): void => {
    const each = count ? `   (${count} calls, ${((1000 * ms) / count).toFixed(1)} µs each)` : '';
    console.log(`  ${pad(what, 66)} ${lpad(ms.toFixed(1), 7)} ms ${lpad(((100 * ms) / total).toFixed(0), 4)} %${each}`);
  };
  console.log(`\nWhere case ${name}'s time goes (wall ms, median of ${repeats} interleaved repeats, ${plan.draws} draws; % of draw loop + report + digest):`);
  for (const [what, ms, count] of rowsMs) line(what, ms, count);
  const other = full - partSum;
  if (other >= 0) line('other in the draw loop (accumulators, turnover, volatility, CE loss)', other);
  else console.log(`  ${pad('other in the draw loop (accumulators, turnover, volatility, CE loss)', 66)}  ≈ 0: the pieces sum to ${(-other).toFixed(1)} ms more than runDraws (timing noise)`);
  line('buildReport (quantiles, bands, batch-means errors, findings)', median(report));
  line('inputDigest (canonical JSON + SHA-256 of the proposal)', median(digest));
  console.log(`  ${pad('total', 66)} ${lpad(total.toFixed(1), 7)} ms   (runDraws alone ${full.toFixed(1)} ms)`);
  if (!Number.isFinite(statistic)) console.log('  (non-finite proposal statistics)');
}

/** wobble's base optima against the reference's (same history, full sample): checks both benchmark the same problem. */
async function crossCheck(input: ProposalInput, reference: StressReference): Promise<void> {
  const v = validated(input);
  const optimum = await optimizeProposal(v.proposal, v.warnings);
  console.log('\nSame problem? max |w_wobble − w_reference| of the base optima (full sample):');
  for (const config of reference.configurations) {
    const diffs = optimum.methods.map((m) => {
      const ref = config.baseWeights[m.method.name];
      if (!ref) return `${m.method.name} —`;
      let d = 0;
      for (let i = 0; i < ref.length; i++) d = Math.max(d, Math.abs(ref[i] - m.base.weights[i]));
      return `${m.method.name} ${d.toExponential(1)}`;
    });
    console.log(`  vs ${pad(config.name, 16)} ${diffs.join(', ')}`);
  }
}

async function main(): Promise<void> {
  const reference = readReference();
  const history = factorHistory(TARGET_CASE.assets, TARGET_CASE.periods, TARGET_CASE.seed);
  const cpu = cpus();
  console.log('wobble stress benchmark');
  console.log(`node ${process.version}; ${cpu.length} CPUs (${cpu[0]?.model ?? 'unknown'}); load average (1 min) ${loadavg()[0].toFixed(2)}`);
  console.log(`case B history: ${TARGET_CASE.periods}×${TARGET_CASE.assets}, checksum sum=${history.checksum.sum} hash=${history.checksum.hash}`);
  let referenceUsable = false;
  if (reference) {
    const same = reference.historyChecksum.sum === history.checksum.sum && reference.historyChecksum.hash === history.checksum.hash;
    referenceUsable = same && reference.case.draws === DRAWS;
    console.log(
      same
        ? `reference fixture: same history (checksums match); measured ${reference.measuredOn} on ${reference.machine.nproc} × ${reference.machine.cpuModel ?? '?'}` +
            ` with numpy ${reference.versions.numpy}, cvxpy ${reference.versions.cvxpy}, clarabel ${reference.versions.clarabel}, osqp ${reference.versions.osqp}`
        : `reference fixture: DIFFERENT history (checksum sum=${reference.historyChecksum.sum} hash=${reference.historyChecksum.hash}); ratios not shown`,
    );
  }
  console.log(`each case: 1 warm-up run, 1 run with memory sampling, ${RUNS} timed runs (median); ${DRAWS} draws\n`);

  const results: CaseResult[] = [];
  results.push(await benchCase('A', 'demo proposal (10 assets, 180 months, Ledoit–Wolf, auto block length)', demoProposal()));
  results.push(await benchCase('B', '30 assets, 240 months, sample covariance, block length 3 — the target', targetStressProposal('target', history)));
  results.push(await benchCase('C', '30 assets, 240 months, all six methods', targetStressProposal('all', history)));
  printTable(results, reference, referenceUsable);

  const b = results[1];
  console.log(
    `\nCase B target (< ${TARGET_SECONDS} s of compute for ${DRAWS} draws): ${b.cpuSeconds < TARGET_SECONDS ? 'MET' : 'NOT MET'} — ${b.cpuSeconds.toFixed(3)} s CPU, ${b.wallSeconds.toFixed(3)} s wall.`,
  );
  if (reference && referenceUsable) {
    console.log(`Reference configurations (CPU s, median; draw loop only, compilation excluded):`);
    for (const c of reference.configurations) {
      const parts = Object.entries(c.partsWallSeconds)
        .map(([k, s]) => `${k} ${s.toFixed(2)}`)
        .join(', ');
      console.log(`  ${pad(c.name, 16)} ${lpad(c.cpuSeconds.toFixed(2), 6)} s  ratio ${lpad((c.cpuSeconds / b.cpuSeconds).toFixed(1), 5)}×   (${c.qpSolver}; risk parity: ${c.riskParitySolver}; wall parts s: ${parts})`);
    }
    const load = reference.machine.loadAverage1mBeforeAfter;
    if (load) console.log(`  (reference measured with a 1-min load average of ${load.map((x) => x.toFixed(2)).join(' → ')} on ${reference.machine.nproc} cores)`);
  }
  await breakdown('B', targetStressProposal('target', history), 5);
  await breakdown('C', targetStressProposal('all', history), 3);
  if (reference && referenceUsable) await crossCheck(targetStressProposal('target', history), reference);
  console.log(`\nload average (1 min) at the end: ${loadavg()[0].toFixed(2)}`);
}

await main();
