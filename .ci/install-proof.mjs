#!/usr/bin/env node
// Proves the package as a user gets it: packs the tarball (running the prepack build), installs it
// into a fresh temporary project without the registry (the dependency versions and integrity
// hashes come from this checkout's lockfile, the tarballs from the npm cache that `npm ci`
// filled), then runs the installed `wobble` (help, version, demo, exit codes 0/1/2, render, several
// outputs), imports the library and the client, and type-checks a TypeScript consumer against the
// shipped declarations. Prints one line per check; exits 1 if any failed.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { packAndInstall } from '../scripts/pack-install.mjs';

const root = fileURLToPath(new URL('..', import.meta.url));
const work = mkdtempSync(join(tmpdir(), 'wobble-install-proof-'));
const pkg = JSON.parse(readFileSync(join(root, 'package.json'), 'utf8'));
let failures = 0;

function check(name, ok, detail = '') {
  console.log(`${ok ? 'ok  ' : 'FAIL'} ${name}${ok || !detail ? '' : `: ${detail}`}`);
  if (!ok) failures += 1;
}

// 1. Pack, and install into a fresh project, offline.
const { packed, project, install, offline } = packAndInstall(root, work);
const files = packed.files.map((f) => f.path);
console.log(`packed ${packed.filename}: ${packed.size} bytes (${packed.unpackedSize} unpacked), ${files.length} files`);
check('the tarball ships no tests, sources or scripts', !files.some((f) => /^(test|src|scripts|\.ci)\//.test(f)), files.filter((f) => /^(test|src|scripts)\//.test(f)).join(', '));
for (const needed of ['bin/wobble.mjs', 'dist/index.js', 'dist/client.js', 'dist/cli.js', 'dist/types/src/index.d.ts', 'dist/types/src/client/index.d.ts', 'dist/THIRD-PARTY-LICENSES.txt', 'schemas/proposal.schema.json', 'README.md', 'LICENSE']) {
  check(`the tarball has ${needed}`, files.includes(needed));
}
check(`npm installs the tarball into a fresh project${offline ? ' (offline)' : ''}`, install.status === 0, install.stderr);
const installed = JSON.parse(readFileSync(join(project, 'node_modules/wobble/package.json'), 'utf8'));
check('no devDependency is installed with it', !Object.keys(pkg.devDependencies).some((d) => spawnSync('test', ['-e', join(project, 'node_modules', d)]).status === 0));

// 2. The installed CLI, as CI calls it.
const bin = join(project, 'node_modules/.bin/wobble');
function wobble(args, input) {
  const r = spawnSync(bin, args, { cwd: project, input, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}
const help = wobble(['--help']);
check('wobble --help exits 0 and documents exit code 3', help.code === 0 && help.stdout.includes('3  internal error'), help.stderr);
check('wobble --version prints the package version', wobble(['--version']).stdout.trim() === installed.version);
const demo = wobble(['demo', '--out', 'demo.json']);
check('wobble demo exits 0', demo.code === 0, demo.stderr);
check('wobble validate demo.json exits 0', wobble(['validate', 'demo.json']).code === 0);
const demoJson = JSON.parse(readFileSync(join(project, 'demo.json'), 'utf8'));
const invalid = wobble(['validate', '-'], JSON.stringify({ ...demoJson, weights: demoJson.weights.slice(1) }));
check('an invalid proposal exits 2 naming its path', invalid.code === 2 && invalid.stderr.includes('weights'), invalid.stderr);
const stressed = wobble(['stress', 'demo.json', '--draws', '100', '--out', 'report.json', '--markdown', 'report.md']);
check('wobble stress exits 0 with two outputs', stressed.code === 0 && JSON.parse(readFileSync(join(project, 'report.json'), 'utf8')).meta.drawsCompleted === 100, stressed.stderr);
writeFileSync(join(project, 'pass.json'), JSON.stringify({ rules: [{ metric: 'turnover-from-proposal.p50', max: 1 }] }));
writeFileSync(join(project, 'fail.json'), JSON.stringify({ rules: [{ metric: 'turnover-from-proposal.p50', max: 0 }] }));
check('check: a policy the demo meets exits 0', wobble(['check', 'demo.json', '--policy', 'pass.json', '--draws', '100']).code === 0);
const failed = wobble(['check', 'demo.json', '--policy', 'fail.json', '--draws', '100', '--junit', 'wobble.xml', '--format', 'markdown']);
check('check: a failed gate exits 1 and writes JUnit beside the markdown', failed.code === 1 && readFileSync(join(project, 'wobble.xml'), 'utf8').includes('<failure') && failed.stdout.length > 0, failed.stderr);
const inapplicable = wobble(['stress', 'demo.json', '--policy', 'pass.json']);
check('an option that does not apply exits 2 with a one-line hint', inapplicable.code === 2 && inapplicable.stderr.trim().split('\n').length === 1, inapplicable.stderr);
check('a missing file exits 2', wobble(['check', 'missing.json', '--policy', 'pass.json']).code === 2);
check('wobble render exits 0', wobble(['render', 'report.json', '--format', 'table']).code === 0);

// 3. The library and the client, imported by name from the installed package.
writeFileSync(
  join(project, 'library.mjs'),
  `import { readFileSync } from 'node:fs';
import { validateProposal, optimize, stress, check, WobbleProblemError, VERSION } from 'wobble';
import { createClient, WobbleProblemError as ClientProblemError } from 'wobble/client';
const demo = JSON.parse(readFileSync('demo.json', 'utf8'));
if (!validateProposal(demo).ok) throw new Error('demo invalid');
const optima = await optimize(demo);
const report = await stress(demo, { draws: 20 });
const judged = await check({ proposal: demo, policy: { rules: [{ metric: 'turnover-from-proposal.p50', max: 0 }] } }, { draws: 20 });
let status = 0;
try { await stress({ ...demo, weights: [1] }); } catch (e) { if (e instanceof WobbleProblemError) status = e.status; }
if (typeof createClient({ baseUrl: 'http://127.0.0.1:1' }).stress !== 'function') throw new Error('no client');
console.log(JSON.stringify({ version: VERSION, methods: optima.methods.length, draws: report.meta.drawsCompleted, pass: judged.verdict.pass, status, sameErrorClass: WobbleProblemError === ClientProblemError }));
`,
);
const lib = spawnSync(process.execPath, ['library.mjs'], { cwd: project, encoding: 'utf8' });
let libResult = {};
try {
  libResult = JSON.parse(lib.stdout);
} catch {
  // reported below
}
check(
  "import { validateProposal, optimize, stress, check } from 'wobble' and createClient from 'wobble/client'",
  lib.status === 0 && libResult.methods === 6 && libResult.draws === 20 && libResult.pass === false && libResult.status === 400 && libResult.version === installed.version && libResult.sameErrorClass === true,
  lib.stderr || lib.stdout,
);

// 4. A TypeScript consumer type-checks against the shipped declarations (checkout's tsc, Node16 resolution).
writeFileSync(
  join(project, 'consumer.ts'),
  `import { stress, type Report, type Proposal, type Policy, type Verdict, type ProposalInput } from 'wobble';
import { createClient, WobbleProblemError } from 'wobble/client';
export async function gate(p: ProposalInput, policy: Policy): Promise<boolean> {
  const r: Report = await stress(p, { draws: 10 });
  const v: Verdict | undefined = r.verdict;
  const vol: number = r.proposal.volatility.p50;
  const client = createClient({ baseUrl: 'https://example.invalid', token: 't', timeoutMs: 1000 });
  try { await client.check({ proposal: p, policy }); } catch (e) { if (e instanceof WobbleProblemError) return e.errors.every((x) => typeof x.path === 'string'); }
  return v?.pass ?? vol >= 0;
}
export type Check = Proposal['weights'];
`,
);
writeFileSync(
  join(project, 'tsconfig.json'),
  JSON.stringify({ compilerOptions: { noEmit: true, strict: true, module: 'nodenext', moduleResolution: 'nodenext', target: 'es2022', lib: ['es2022', 'dom'], types: [] }, files: ['consumer.ts'] }),
);
const tsc = spawnSync(process.execPath, [join(root, 'node_modules/typescript/bin/tsc'), '-p', 'tsconfig.json'], { cwd: project, encoding: 'utf8' });
check('a strict TypeScript consumer type-checks against the installed .d.ts', tsc.status === 0, tsc.stdout + tsc.stderr);

console.log(failures === 0 ? `install proof passed (${work})` : `${failures} install check(s) failed (${work})`);
process.exit(failures === 0 ? 0 : 1);
