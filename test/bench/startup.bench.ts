/**
 * Start-up benchmark. Plain script, not a vitest test:
 *
 *   npm run bench:startup       (tsx test/bench/startup.bench.ts)
 *
 * 1. The installed CLI: packs this checkout, installs the tarball into a fresh project (offline,
 *    scripts/pack-install.mjs), then times whole processes (spawn to exit, wall clock) against a
 *    bare `node -e 0` on the same machine: `wobble --help`, `wobble --version`,
 *    `wobble validate demo.json` and `wobble stress demo.json --draws 500`. Medians of RUNS runs
 *    after one warm-up (file cache). For comparison, the checkout's TypeScript through tsx (how the
 *    CLI ran before it was built). Goals on this machine class: --help ≤ 4× bare node; the demo
 *    stress ≤ 1 s whole process.
 * 2. The Worker's module start-up: the bundle wrangler uploads (`wrangler deploy --dry-run`, offline)
 *    — its size, gzip size — and, in a fresh Node process per run (V8 like workerd), the time to
 *    evaluate the module (global scope: imports, zod schema construction, createApp) and to answer
 *    the first /healthz, with the same for zod alone and the schemas alone to show where it goes.
 *    Node's fetch classes are touched before timing (Node loads them lazily; workerd has them built in).
 *
 * The machine is shared: the load average is printed, and ratios against bare node (measured in
 * the same minutes) are the figures to compare.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { build } from 'esbuild';
import { packAndInstall } from '../../scripts/pack-install.mjs';

const root = new URL('../..', import.meta.url).pathname;
const RUNS = Number(process.env.RUNS ?? 9);
const work = mkdtempSync(join(tmpdir(), 'wobble-startup-'));

function median(values: number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const mid = sorted.length >> 1;
  return sorted.length % 2 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
}

interface Timing {
  wall: number;
  cpu: number;
}

/**
 * Whole processes, after one warm-up run (file cache): median wall-clock milliseconds, and median
 * CPU milliseconds (user + system of the child, from bash's `times`), which a busy shared machine
 * inflates far less than the wall clock. Throws if the exit code is not the expected one.
 */
function timeProcess(command: string, args: string[], runs: number, cwd: string, expectedExit = 0): Timing {
  const script = '"$@" >/dev/null 2>/tmp/wobble-bench-stderr; code=$?; times; exit $code';
  const once = (): Timing => {
    const started = process.hrtime.bigint();
    const r = spawnSync('bash', ['-c', script, 'bench', command, ...args], { cwd, encoding: 'utf8' });
    const wall = Number(process.hrtime.bigint() - started) / 1e6;
    if (r.status !== expectedExit) throw new Error(`${command} ${args.join(' ')} exited ${r.status}: ${readFileSync('/tmp/wobble-bench-stderr', 'utf8')}`);
    // `times` prints the shell's own user/sys, then its children's: "0m0.052s 0m0.012s".
    const children = r.stdout.trim().split('\n').at(-1) ?? '';
    const cpu = [...children.matchAll(/(\d+)m([\d.]+)s/g)].reduce((sum, m) => sum + (Number(m[1]) * 60 + Number(m[2])) * 1000, 0);
    return { wall, cpu };
  };
  once();
  const all = Array.from({ length: runs }, once);
  return { wall: median(all.map((t) => t.wall)), cpu: median(all.map((t) => t.cpu)) };
}

const fmt = (ms: number): string => `${ms.toFixed(0).padStart(6)} ms`;

console.log(`wobble start-up benchmark · Node ${process.version} · ${cpus().length} cores · load average ${loadavg().map((x) => x.toFixed(1)).join(' ')} · median of ${RUNS}`);

// 1. The installed CLI.
const { packed, project, install, offline } = packAndInstall(root, work);
if (install.status !== 0) throw new Error(`install failed: ${install.stderr}`);
console.log(`\npackage ${packed.filename}: ${(packed.size / 1024).toFixed(0)} KiB packed, ${(packed.unpackedSize / 1024).toFixed(0)} KiB unpacked, ${packed.files.length} files; installed ${offline ? 'offline' : 'with the registry'}`);
const bin = join(project, 'node_modules/wobble/bin/wobble.mjs');
execFileSync(process.execPath, [bin, 'demo', '--out', 'demo.json'], { cwd: project });

const bare = timeProcess(process.execPath, ['-e', '0'], RUNS, project);
const help = timeProcess(process.execPath, [bin, '--help'], RUNS, project);
const version = timeProcess(process.execPath, [bin, '--version'], RUNS, project);
const validate = timeProcess(process.execPath, [bin, 'validate', 'demo.json'], RUNS, project);
const stressRuns = Math.max(3, Math.ceil(RUNS / 2));
const stress = timeProcess(process.execPath, [bin, 'stress', 'demo.json', '--draws', '500'], stressRuns, project);
const tsxRuns = Math.max(3, Math.ceil(RUNS / 3));
const tsxHelp = timeProcess(process.execPath, ['--import', 'tsx', join(root, 'src/cli/main.ts'), '--help'], tsxRuns, root);

const row = (label: string, t: Timing, goal = ''): void =>
  console.log(`${label.padEnd(42)} ${fmt(t.wall)} ${(t.wall / bare.wall).toFixed(1).padStart(6)}×   ${fmt(t.cpu)} ${(t.cpu / bare.cpu).toFixed(1).padStart(6)}×   ${goal}`);
console.log('\nwhole process (spawn to exit), medians          wall  × node         CPU  × node   goal');
row('node -e 0', bare);
row('wobble --help', help, `≤ 4× bare node: wall ${help.wall <= 4 * bare.wall ? 'met' : 'NOT met'}, CPU ${help.cpu <= 4 * bare.cpu ? 'met' : 'NOT met'}`);
row('wobble --version', version);
row('wobble validate demo.json', validate);
row(`wobble stress demo.json --draws 500 (${stressRuns} runs)`, stress, `≤ 1000 ms: wall ${stress.wall <= 1000 ? 'met' : 'NOT met'}, CPU ${stress.cpu <= 1000 ? 'met' : 'NOT met'}`);
row(`before: checkout via tsx, --help (${tsxRuns} runs)`, tsxHelp);

// 2. The Worker's module start-up.
const workerDir = join(work, 'worker');
execFileSync('npx', ['wrangler', 'deploy', '--dry-run', '--outdir', workerDir], {
  cwd: root,
  env: { ...process.env, WRANGLER_SEND_METRICS: 'false', WRANGLER_HIDE_BANNER: 'true', CLOUDFLARE_CF_FETCH_ENABLED: 'false' },
  stdio: 'ignore',
});
const workerFile = join(workerDir, 'worker.js');
const workerBytes = statSync(workerFile).size;
const workerGzip = gzipSync(readFileSync(workerFile)).length;

// Parts, bundled the same way, to see where evaluation time goes.
const partsDir = join(root, 'node_modules/.cache/wobble-startup-bench');
writeFileSync(join(work, 'zod-only.ts'), "import { z } from 'zod';\nexport default z;\n");
writeFileSync(join(work, 'schemas-only.ts'), `export * from '${root}src/schema/proposal.js';\nexport * from '${root}src/schema/report.js';\n`);
for (const [name, entry] of [
  ['zod', join(work, 'zod-only.ts')],
  ['schemas', join(work, 'schemas-only.ts')],
] as const) {
  await build({ absWorkingDir: root, entryPoints: [entry], nodePaths: [join(root, 'node_modules')], bundle: true, format: 'esm', platform: 'neutral', mainFields: ['module', 'main'], target: 'es2022', outfile: join(partsDir, `${name}.mjs`), logLevel: 'error' });
}

const probe = `
new Response('warm'); new Request('http://warm/'); // Node builds its fetch classes lazily; workerd has them
const c0 = process.cpuUsage(); const t0 = performance.now();
const m = await import(process.argv[1]);
const evalWall = performance.now() - t0; const cu = process.cpuUsage(c0);
let firstWall = 0, firstCpu = 0;
if (m.default && typeof m.default.fetch === 'function') {
  const c1 = process.cpuUsage(); const t1 = performance.now();
  const r = await m.default.fetch(new Request('http://localhost/healthz')); await r.text();
  firstWall = performance.now() - t1; const cf = process.cpuUsage(c1); firstCpu = (cf.user + cf.system) / 1000;
}
console.log(JSON.stringify({ evalWall, evalCpu: (cu.user + cu.system) / 1000, firstWall, firstCpu }));`;

function evaluate(file: string): { evalWall: number; evalCpu: number; firstWall: number; firstCpu: number } {
  const runs = Array.from({ length: RUNS }, () => JSON.parse(execFileSync(process.execPath, ['--input-type=module', '-e', probe, file], { encoding: 'utf8' })) as Record<string, number>);
  return { evalWall: median(runs.map((r) => r.evalWall)), evalCpu: median(runs.map((r) => r.evalCpu)), firstWall: median(runs.map((r) => r.firstWall)), firstCpu: median(runs.map((r) => r.firstCpu)) };
}

const worker = evaluate(workerFile);
const zod = evaluate(join(partsDir, 'zod.mjs'));
const schemas = evaluate(join(partsDir, 'schemas.mjs'));
console.log(`\nWorker bundle (wrangler deploy --dry-run): ${(workerBytes / 1024).toFixed(0)} KiB, ${(workerGzip / 1024).toFixed(0)} KiB gzip (Workers limit: 64 MiB)`);
console.log('module evaluation in a fresh V8 (Node)     wall median   CPU median');
console.log(`whole Worker module (global scope)         ${fmt(worker.evalWall)}    ${fmt(worker.evalCpu)}`);
console.log(`  of which: zod alone                      ${fmt(zod.evalWall)}    ${fmt(zod.evalCpu)}`);
console.log(`  of which: zod + wobble's schemas         ${fmt(schemas.evalWall)}    ${fmt(schemas.evalCpu)}`);
console.log(`first request (GET /healthz)               ${fmt(worker.firstWall)}    ${fmt(worker.firstCpu)}`);
console.log(`\nFor scale: bare node start ${bare.wall.toFixed(0)} ms wall, ${bare.cpu.toFixed(0)} ms CPU. Files kept in ${work}.`);
