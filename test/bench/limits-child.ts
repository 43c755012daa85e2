/**
 * Runs one request in a fresh process and prints what it cost: CPU ms, peak RSS growth, the
 * heap + ArrayBuffer high-water mark at the steps between phases, the response size, and the
 * cost models' estimates. Used by `npm run bench:limits` and test/cost/memory-limit.test.ts
 * (spawned as `node --import tsx test/bench/limits-child.ts <request.json>`).
 *
 * The request file: { job, body, baseline?, maxDrawsToRun? }. With maxDrawsToRun the stress runs
 * only that many of its draws — every accumulator is still allocated for all of them up front,
 * so the memory peak is the full request's, at a fraction of its CPU.
 */
import { readFileSync } from 'node:fs';
import { memoryBreakdown, requestMemory } from '../../src/cost/memory-model.js';
import { requestShape, type Job } from '../../src/cost/request-shape.js';
import { requestWork } from '../../src/cost/work-model.js';
import type { Policy } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import { buildReport } from '../../src/stress/report.js';
import { createAccumulators, planStress, runDraws } from '../../src/stress/engine.js';
import { methodList } from '../../src/stress/problem.js';
import { checkProposal, optimizeProposal, stressProposal } from '../../src/stress/run.js';

interface ChildRequest {
  job: Job;
  body: unknown;
  baseline?: unknown;
  maxDrawsToRun?: number;
}

const text = readFileSync(process.argv[2], 'utf8');
let high = 0;
const sample = (): void => {
  const m = process.memoryUsage();
  high = Math.max(high, m.heapUsed + m.arrayBuffers);
};
globalThis.gc?.();
const rssBefore = process.memoryUsage().rss;
sample();
const cpu0 = process.cpuUsage();
const request = JSON.parse(text) as ChildRequest;
sample();
const v = validateProposal(request.body, { job: request.job });
sample();
if (!v.ok) {
  process.stdout.write(JSON.stringify({ refused: v.problems[0]?.message }) + '\n');
  process.exit(0);
}
const b = request.baseline === undefined ? undefined : validateProposal(request.baseline, { job: request.job });
if (b && !b.ok) throw new Error('baseline invalid');
const shape = requestShape(v.proposal, methodList(v.proposal));
const baselineShape = b?.ok ? requestShape(b.proposal, methodList(b.proposal), shape.draws) : undefined;
let response: string;
if (request.job === 'optimize') {
  response = JSON.stringify(await optimizeProposal(v.proposal, v.warnings));
} else if (request.maxDrawsToRun !== undefined) {
  const plan = planStress(v.proposal, v.warnings);
  sample();
  const acc = createAccumulators(plan);
  sample();
  runDraws(plan, 0, Math.min(plan.draws, request.maxDrawsToRun), acc);
  sample();
  response = JSON.stringify(buildReport(plan, acc, { version: 'bench', inputDigest: 'bench', elapsedMs: 0 }));
} else if (request.job === 'check') {
  const policy: Policy = { confidence: 0.95, rules: [{ metric: 'turnover-from-proposal.p50', maxIncrease: 0.5 }] };
  response = JSON.stringify(await checkProposal(v.proposal, v.warnings, policy, b?.ok ? { kind: 'proposal', proposal: b.proposal, warnings: b.warnings } : undefined));
} else {
  response = JSON.stringify(await stressProposal(v.proposal, v.warnings));
}
sample();
const cpu = process.cpuUsage(cpu0);
const maxRss = process.resourceUsage().maxRSS * 1024;
process.stdout.write(
  JSON.stringify({
    cpuMs: (cpu.user + cpu.system) / 1000,
    units: requestWork(request.job, shape, baselineShape),
    estimatedBytes: requestMemory(request.job, shape, baselineShape),
    breakdown: memoryBreakdown(request.job, shape),
    peakRssGrowth: maxRss - rssBefore,
    heapAndBuffersHigh: high,
    responseBytes: response.length,
    requestBytes: text.length,
  }) + '\n',
);
