/**
 * Scale-out benchmark. Plain script, not a vitest test:
 *
 *   npm run bench:scale                 (tsx test/bench/scale.bench.ts)
 *   BENCH_SCALE_QUICK=1 npm run bench:scale   smaller draws everywhere (a few minutes on a busy machine)
 *   BENCH_SCALE_PARTS=threads npm run bench:scale   only some parts (wire, threads, workerd)
 *
 * 1. Wire form of a partial result: binary (src/scale/wire.ts) against the same content as JSON
 *    (numbers as JSON arrays, NaN as null): bytes, encode and decode time (medians of 5).
 * 2. Worker threads (CLI --threads): wall time of the 30-asset, 1000-draw case (all six methods; 1500 draws are priced over the work limit by the cost model)
 *    with 1, 2 and 4 threads; goal ≥ 1.6× with 2 threads on 2 cores. Thread start-up (loading the
 *    TypeScript sources through tsx in every thread) is inside the timing, as a user sees it.
 * 3. Durable Object shards in local workerd (Miniflare over the wrangler bundle): the 2000-asset,
 *    8-factor case with 1, 4 and 8 shards. Local workerd runs every object in one process on one
 *    thread, so this shows that sharding is correct and what it costs (planning in each shard,
 *    encoding, merging), never a speed-up.
 * 4. The modelled deployed time for that case: plan + draws / shards + transfer + merge + report,
 *    from the pieces measured here (see the printed assumptions).
 * The load average is printed before each part: the numbers mean little on a busy machine.
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readdirSync } from 'node:fs';
import { availableParallelism, loadavg, tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { Miniflare } from 'miniflare';
import { RangeThreadPool, threadExecutor, threadRunner } from '../../src/cli/threads.js';
import { fanOutRunner } from '../../src/scale/runner.js';
import { PartialMerger } from '../../src/scale/merge.js';
import { WIRE_FIELDS, type WireCursor } from '../../src/scale/wire-fields.js';
import { decodePartial, encodePartial } from '../../src/scale/wire.js';
import { LIMITS } from '../../src/schema/limits.js';
import type { ProposalInput } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import { inputDigest } from '../../src/stress/digest.js';
import { createAccumulators, planStress, runDraws, type StressAccumulators, type StressPlan } from '../../src/stress/engine.js';
import { buildReport } from '../../src/stress/report.js';
import { stressProposal } from '../../src/stress/run.js';
import { demoProposal } from '../helpers/proposals.js';
import { factorCase, threadsCase } from './scale-problems.js';

const QUICK = process.env.BENCH_SCALE_QUICK === '1';
/** BENCH_SCALE_PARTS=wire,threads,workerd runs only those parts (default: all). */
const PARTS = new Set((process.env.BENCH_SCALE_PARTS ?? 'wire,threads,workerd').split(','));
const root = new URL('../..', import.meta.url).pathname;
const MB = 1e6;

function load(): string {
  return loadavg()
    .map((x) => x.toFixed(1))
    .join(' / ');
}

function valid(p: ProposalInput) {
  const v = validateProposal(p);
  if (!v.ok) throw new Error(JSON.stringify(v.problems.slice(0, 3)));
  return v;
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

function timeMedian(runs: number, f: () => void): number {
  const times: number[] = [];
  for (let r = 0; r < runs; r++) {
    const t = performance.now();
    f();
    times.push(performance.now() - t);
  }
  return median(times);
}

// ---- 1. wire form --------------------------------------------------------------------------

/** The same content as the binary form, as JSON: header fields plus every section value in field order. */
function encodeJson(plan: StressPlan, acc: StressAccumulators, range: { start: number; end: number }, digest: string): string {
  const binary = decodePartial(encodePartial(plan, acc, range, digest));
  return JSON.stringify({ header: binary.header, f64: Array.from(binary.f64, (x) => (Number.isNaN(x) ? null : x)), u8: Array.from(binary.u8) });
}

function decodeJson(text: string): { f64: Float64Array; u8: Uint8Array } {
  const parsed = JSON.parse(text) as { f64: (number | null)[]; u8: number[] };
  return { f64: Float64Array.from(parsed.f64, (x) => (x === null ? Number.NaN : x)), u8: Uint8Array.from(parsed.u8) };
}

async function wireForm(): Promise<void> {
  console.log(`\n1. Wire form of one range's partial result (a quarter of the draws)   load ${load()}`);
  console.log('   case                               binary        JSON   size ×   encode bin/JSON ms   decode bin/JSON ms');
  const cases: [string, ProposalInput][] = [
    ['demo: 10 assets, 6 methods, 500 draws', { ...demoProposal(), resampling: { draws: 500, seed: 'wire' } } as ProposalInput],
    ['30 assets, 6 methods, 1000 draws', threadsCase(QUICK ? 400 : 1000)],
    ['500 assets, 8 factors, 1 method, 200', factorCase(500, 8, 200)],
  ];
  for (const [name, p] of cases) {
    const v = valid(p);
    const plan = planStress(v.proposal, v.warnings);
    const digest = await inputDigest(v.proposal);
    const range = { start: 0, end: Math.floor(plan.draws / 4) };
    const acc = createAccumulators(plan);
    runDraws(plan, range.start, range.end, acc);
    let bin: Uint8Array = new Uint8Array();
    let json = '';
    const encodeBinary = timeMedian(5, () => (bin = encodePartial(plan, acc, range, digest)));
    const encodeText = timeMedian(5, () => (json = encodeJson(plan, acc, range, digest)));
    const decodeBinary = timeMedian(5, () => {
      const d = decodePartial(bin);
      const cursor: WireCursor = { f64: d.f64, f64At: 0, u8: d.u8, u8At: 0 };
      const into = createAccumulators(plan);
      for (const f of WIRE_FIELDS) f.read(into, { draws: plan.draws, ...range }, cursor);
    });
    const decodeText = timeMedian(5, () => {
      const d = decodeJson(json);
      const cursor: WireCursor = { f64: d.f64, f64At: 0, u8: d.u8, u8At: 0 };
      const into = createAccumulators(plan);
      for (const f of WIRE_FIELDS) f.read(into, { draws: plan.draws, ...range }, cursor);
    });
    const jsonBytes = new TextEncoder().encode(json).length;
    console.log(
      `   ${name.padEnd(34)} ${(bin.length / MB).toFixed(3).padStart(7)} MB ${(jsonBytes / MB).toFixed(3).padStart(7)} MB ${(jsonBytes / bin.length).toFixed(2).padStart(7)}   ${encodeBinary.toFixed(1).padStart(8)} / ${encodeText.toFixed(1).padEnd(8)}   ${decodeBinary.toFixed(1).padStart(8)} / ${decodeText.toFixed(1)}`,
    );
  }
  console.log('   (decode includes recording the slots into fresh accumulators, the same work for both forms)');
}

// ---- 2. threads ----------------------------------------------------------------------------

/** The thread entry bundled into one JavaScript file, as an installed (built) wobble runs it. */
function bundleThreadEntry(): URL {
  const out = join(mkdtempSync(join(tmpdir(), 'wobble-bench-')), 'range-thread.mjs');
  execFileSync(join(root, 'node_modules/.bin/esbuild'), ['src/cli/range-thread.ts', '--bundle', '--platform=node', '--format=esm', `--outfile=${out}`, '--log-level=warning'], { cwd: root });
  return pathToFileURL(out);
}

async function threads(): Promise<void> {
  const draws = QUICK ? 400 : 1000;
  const v = valid(threadsCase(draws));
  const entry = bundleThreadEntry();
  console.log(`\n2. Worker threads: 30 assets, six methods, ${draws} draws; ${availableParallelism()} cores available   load ${load()}`);
  console.log('   (threads load a bundled range-thread.mjs, as a built install does; from TypeScript sources every thread also starts tsx)');
  let reference = 0;
  let referenceCpu = 0;
  let expected = '';
  // "1 (here)" runs on this thread (JIT warm after its first run); "1 (thread)" is one cold worker
  // thread, like a fresh CLI process. N threads = this thread (warm) + N − 1 cold worker threads,
  // so speed-ups are against "1 (here)".
  for (const [label, runner] of [
    ['1 (here)', undefined],
    ['1 (thread)', fanOutRunner({ parts: 1, execute: threadExecutor(new RangeThreadPool(entry)), unit: 'thread' })],
    ['2', threadRunner(2, false, entry)],
    ['4', threadRunner(4, false, entry)],
  ] as const) {
    const times: number[] = [];
    const cpus: number[] = [];
    let bytes = '';
    for (let r = 0; r < 2; r++) {
      const t = performance.now();
      const c = process.cpuUsage();
      const report = await stressProposal(v.proposal, v.warnings, runner ? { drawRunner: runner } : {});
      times.push(performance.now() - t);
      const used = process.cpuUsage(c);
      cpus.push((used.user + used.system) / 1e6);
      const { elapsedMs: _e, threads: _t, ...meta } = report.meta;
      bytes = JSON.stringify({ ...report, meta });
    }
    const best = times.indexOf(Math.min(...times));
    const wall = times[best] / 1000;
    const cpu = cpus[best];
    if (label === '1 (here)') {
      expected = bytes;
      reference = wall;
      referenceCpu = cpu;
    }
    const speedUp = reference > 0 ? `${(reference / wall).toFixed(2)}×` : '—';
    // On idle cores the wall time would be about CPU / threads: this bounds the speed-up the split allows.
    const threadsUsed = label.startsWith('1') ? 1 : Number(label);
    const idleBound = referenceCpu > 0 ? `${((referenceCpu / cpu) * Math.min(threadsUsed, availableParallelism())).toFixed(2)}×` : '—';
    console.log(
      `   threads ${label.padEnd(10)} ${wall.toFixed(2).padStart(6)} s wall, ${cpu.toFixed(1).padStart(5)} s CPU (best of 2)   speed-up ${speedUp.padStart(6)}   on idle cores ≈ ${idleBound.padStart(6)}   same report: ${bytes === expected ? 'yes' : 'NO'}   load ${load()}`,
    );
  }
  console.log('   goal: ≥ 1.6× with 2 threads on 2 otherwise idle cores. "on idle cores" = threads × CPU(1 thread) / CPU(n threads):');
  console.log('   the speed-up if every thread had a core to itself (what a busy shared machine cannot show in wall time).');
}

// ---- 3. workerd ----------------------------------------------------------------------------

function bundleWorker(): string {
  const out = mkdtempSync(join(tmpdir(), 'wobble-bench-'));
  execFileSync(join(root, 'node_modules/.bin/wrangler'), ['deploy', '--dry-run', '--outdir', out], {
    cwd: root,
    env: { ...process.env, WRANGLER_SEND_METRICS: 'false', WRANGLER_HIDE_BANNER: 'true', CLOUDFLARE_CF_FETCH_ENABLED: 'false' },
    stdio: 'ignore',
  });
  const file = readdirSync(out).find((f) => f.endsWith('.js'));
  if (!file) throw new Error('wrangler produced no bundle');
  return join(out, file);
}

interface Pieces {
  readonly planSeconds: number;
  readonly drawSeconds: number;
  readonly partialBytesPerDraw: number;
  /** Recording one partial: a fixed part (the channel sums of every batch) and a part per draw (its rows). */
  readonly mergeSecondsPerPartial: number;
  readonly mergeSecondsPerDraw: number;
  readonly reportSeconds: number;
}

async function workerd(p: ProposalInput, draws: number): Promise<Pieces> {
  console.log(`\n3. Durable Object shards in local workerd: 2000 assets, 8 factors, ${draws} draws, mean-variance   load ${load()}`);
  const v = valid(p);
  const stored = 2 * 2000 * 2000;
  console.log(
    `   note: 2000 draws × 2000 assets × (methods + 1) = ${stored.toExponential(1)} stored values even with one method, (the memory model, LIMITS.maxMemoryBytes = ${(LIMITS.maxMemoryBytes / 2 ** 20).toFixed(0)} MiB, decides what fits)`,
  );
  console.log(`         (the merge keeps every draw's slots in one 128 MB isolate), so 2000 draws are refused (413) sharded or not; ${draws} is what fits here.`);
  const script = bundleWorker();
  const mf = new Miniflare({ modules: true, scriptPath: script, modulesRoot: dirname(script), compatibilityDate: '2026-04-01', durableObjects: { STRESS_SHARD: 'StressShard' } });
  try {
    const body = JSON.stringify(p);
    for (const shards of [1, 4, 8]) {
      const t = performance.now();
      const res = await mf.dispatchFetch(`http://wobble.local/v1/stress?shards=${shards}`, { method: 'POST', headers: { 'content-type': 'application/json' }, body });
      const text = await res.text();
      const wall = (performance.now() - t) / 1000;
      const detail = res.status === 200 ? `meta.shards ${(JSON.parse(text) as { meta: { shards: number } }).meta.shards}` : (JSON.parse(text) as { detail: string }).detail.slice(0, 110);
      console.log(`   shards ${shards}: HTTP ${res.status} in ${wall.toFixed(1)} s   ${detail}   load ${load()}`);
    }
  } finally {
    await mf.dispose();
  }

  // Pieces for the model, measured in Node on the same case.
  const t0 = performance.now();
  const plan = planStress(v.proposal, v.warnings, { workShares: Number.POSITIVE_INFINITY });
  const planSeconds = (performance.now() - t0) / 1000;
  const sample = Math.min(20, draws);
  const acc = createAccumulators(plan);
  const t1 = performance.now();
  runDraws(plan, 0, sample, acc);
  const drawSeconds = (performance.now() - t1) / 1000 / sample;
  const digest = await inputDigest(v.proposal);
  const bytes = encodePartial(plan, acc, { start: 0, end: sample }, digest);
  const mergeTime = (draws: number): number => {
    const part = draws === sample ? bytes : encodePartial(plan, acc, { start: 0, end: draws }, digest);
    const ranges = [
      { index: 0, start: 0, end: draws },
      { index: 1, start: draws, end: plan.draws },
    ];
    const t = performance.now();
    new PartialMerger(plan, digest, ranges).add(ranges[0], part);
    return (performance.now() - t) / 1000;
  };
  const mergeOne = mergeTime(1);
  const mergeSample = mergeTime(sample);
  const mergeSecondsPerDraw = Math.max(0, (mergeSample - mergeOne) / (sample - 1));
  const mergeSecondsPerPartial = Math.max(0, mergeOne - mergeSecondsPerDraw);
  const full = createAccumulators(plan);
  runDraws(plan, 0, Math.min(plan.draws, 40), full);
  const t3 = performance.now();
  buildReport(plan, full, { version: 'bench', inputDigest: digest, elapsedMs: 0 });
  const reportSeconds = (performance.now() - t3) / 1000;
  return { planSeconds, drawSeconds, partialBytesPerDraw: bytes.length / sample, mergeSecondsPerPartial, mergeSecondsPerDraw, reportSeconds };
}

// ---- 4. model ------------------------------------------------------------------------------

function model(pieces: Pieces, draws: number): void {
  const bandwidth = 50 * MB; // assumption: bytes/s from an object to the coordinating Worker (same colo)
  const latency = 0.05; // assumption: s to start an object and route a request to it
  console.log(`\n4. Modelled deployed time, ${draws} draws (pieces measured in Node here; deployed CPUs differ)`);
  console.log(
    `   plan ${pieces.planSeconds.toFixed(2)} s (coordinator and every shard), ${(pieces.drawSeconds * 1000).toFixed(1)} ms/draw, partial ${(pieces.partialBytesPerDraw / 1e3).toFixed(1)} kB/draw, merge ${(pieces.mergeSecondsPerPartial * 1000).toFixed(0)} ms/partial + ${(pieces.mergeSecondsPerDraw * 1000).toFixed(2)} ms/draw, report ${pieces.reportSeconds.toFixed(2)} s`,
  );
  console.log(`   assumptions: ${bandwidth / MB} MB/s object → Worker, ${latency * 1000} ms to reach an object; objects on separate machines run truly in parallel`);
  for (const shards of [1, 4, 8]) {
    const perShard = Math.ceil(draws / shards);
    const shardTime = latency + pieces.planSeconds + perShard * pieces.drawSeconds;
    const transfer = (draws * pieces.partialBytesPerDraw) / bandwidth;
    const merge = shards * pieces.mergeSecondsPerPartial + draws * pieces.mergeSecondsPerDraw;
    const total = pieces.planSeconds + shardTime + transfer + merge + pieces.reportSeconds;
    const cpuPerShard = pieces.planSeconds + perShard * pieces.drawSeconds;
    console.log(`   shards ${shards}: ≈ ${total.toFixed(1)} s wall (merge ${merge.toFixed(1)} s), ${cpuPerShard.toFixed(1)} s CPU in each shard`);
  }
}

console.log(`wobble bench:scale${QUICK ? ' (quick: reduced draws)' : ''} — ${new Date().toISOString()}`);
if (PARTS.has('wire')) await wireForm();
if (PARTS.has('threads')) await threads();
if (PARTS.has('workerd')) {
  const factorDraws = QUICK ? 200 : 1500;
  const pieces = await workerd(factorCase(2000, 8, factorDraws), factorDraws);
  model(pieces, factorDraws);
  if (factorDraws !== 1500) model(pieces, 1500);
}
