/**
 * `npm run bench:limits`: the worst accepted request of each kind (test/bench/limit-shapes.ts),
 * and ordinary requests (the 30-asset, six-method, 1500-draw history; the demo; many groups), each
 * run in a fresh Node process, printing CPU ms and peak memory next to the cost models'
 * estimates: ns per counted unit (the calibration of LIMITS.maxWorkUnits), its ratio to the worst
 * rate of the run, and measured/estimated memory. Not a test: timings depend on the machine.
 * Run it under `nice -n 10` on a shared machine.
 *
 *   npm run bench:limits                 every shape at its largest accepted draws
 *   npm run bench:limits -- --fraction 0.1   draws of the worst shapes scaled down (ns/unit holds; quicker; ordinary shapes keep theirs)
 *   npm run bench:limits -- --only check,ordinary     shapes whose name contains "check" or "ordinary"
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { LIMITS } from '../../src/schema/limits.js';
import { limitShapes, ordinaryShapes } from './limit-shapes.js';

const { values } = parseArgs({ options: { fraction: { type: 'string', default: '1' }, only: { type: 'string' } } });
const fraction = Number(values.fraction);
const dir = mkdtempSync(join(tmpdir(), 'wobble-limits-'));
const child = new URL('./limits-child.ts', import.meta.url).pathname;
const mb = (b: number): string => (b / 1024 / 1024).toFixed(1);

console.log(`limits: maxWorkUnits ${LIMITS.maxWorkUnits.toExponential(1)}, maxMemoryBytes ${mb(LIMITS.maxMemoryBytes)} MB, draws fraction ${fraction}`);
const rows: { name: string; text?: string; units?: number; cpuMs?: number; rest?: string }[] = [];
let worst = 0;
try {
  for (const shape of [...limitShapes(fraction), ...ordinaryShapes()]) {
    if (values.only && !values.only.split(',').some((part) => shape.name.includes(part))) continue;
    const file = join(dir, 'request.json');
    writeFileSync(file, JSON.stringify({ job: shape.job, body: shape.body, baseline: shape.baseline }));
    const run = spawnSync(process.execPath, ['--expose-gc', '--import', 'tsx', child, file], { encoding: 'utf8', maxBuffer: 1 << 26 });
    if (run.status !== 0) {
      rows.push({ name: shape.name, text: `failed: ${run.stderr.split('\n').slice(0, 3).join(' ')}` });
      continue;
    }
    const r = JSON.parse(run.stdout.trim().split('\n').pop() ?? '{}') as Record<string, number> & { refused?: string };
    if (r.refused) {
      rows.push({ name: shape.name, text: `refused: ${r.refused}` });
      continue;
    }
    const ns = (r.cpuMs * 1e6) / r.units;
    worst = Math.max(worst, ns);
    rows.push({ name: shape.name, units: r.units, cpuMs: r.cpuMs, rest: `${mb(r.estimatedBytes)} | ${mb(r.peakRssGrowth)} | ${mb(r.heapAndBuffersHigh)} | ${mb(r.responseBytes)}` });
    console.error(`${shape.name}: ${r.units.toExponential(2)} units, ${Math.round(r.cpuMs)} ms`);
  }
} finally {
  rmSync(dir, { recursive: true, force: true });
}
console.log('| request | units | CPU ms | ns/unit | ÷ worst rate | est. MB | peak RSS growth MB | heap+buffers MB | response MB |');
console.log('|---|---:|---:|---:|---:|---:|---:|---:|---:|');
for (const row of rows) {
  if (row.text) console.log(`| ${row.name} | ${row.text} |`);
  else {
    const ns = ((row.cpuMs ?? 0) * 1e6) / (row.units ?? 1);
    console.log(`| ${row.name} | ${(row.units ?? 0).toExponential(2)} | ${Math.round(row.cpuMs ?? 0)} | ${ns.toFixed(2)} | ${(ns / worst).toFixed(2)} | ${row.rest} |`);
  }
}
console.log(`worst ns per unit: ${worst.toFixed(2)} → the work limit is at most ${((worst * LIMITS.maxWorkUnits) / 1e9).toFixed(0)} s of CPU on this machine`);
