// The esbuild step of the package build, shared by scripts/build.mjs and the tests that run the
// built CLI (test/helpers/built-cli.ts), so both always use the same options.
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { build } from 'esbuild';

const common = {
  bundle: true,
  splitting: true,
  format: 'esm',
  // Node 20 and current browsers and Workers all run ES2022.
  target: 'es2022',
  minifySyntax: true,
  minifyWhitespace: true,
  legalComments: 'none',
  logLevel: 'warning',
  metafile: true,
};

/**
 * Two builds into `outdir`:
 * - the library (index.js) and the HTTP client (client.js), chunks in chunks/: runtime
 *   dependencies stay external (installed from package.json, shared with the caller's own zod);
 *   nothing platform-specific, so they run in Node, browsers and Workers;
 * - the CLI (cli.js, chunks in cli-chunks/): an application, so its dependencies are bundled in —
 *   one file per command instead of a hundred package modules to resolve and load, about a
 *   quarter less start-up for `wobble validate` (bench:startup) — and split so that
 *   `wobble --help` loads only the CLI's front module.
 * Returns the absolute paths of the files written.
 */
export async function buildJavaScript(root, outdir) {
  const pkg = JSON.parse(readFileSync(`${root}package.json`, 'utf8'));
  const library = await build({
    ...common,
    absWorkingDir: root,
    entryPoints: { index: 'src/index.ts', client: 'src/client/index.ts' },
    outdir,
    chunkNames: 'chunks/[name]-[hash]',
    platform: 'neutral',
    mainFields: ['module', 'main'],
    external: [...Object.keys(pkg.dependencies ?? {}), 'node:*'],
  });
  const cli = await build({
    ...common,
    absWorkingDir: root,
    // The thread entry sits beside the chunks: threads.ts (in a chunk) loads ./range-thread.js next to itself.
    entryPoints: { cli: 'src/cli/main.ts', 'cli-chunks/range-thread': 'src/cli/range-thread.ts' },
    outdir,
    chunkNames: 'cli-chunks/[name]-[hash]',
    platform: 'node',
    external: ['node:*'],
  });
  const notices = join(outdir, 'THIRD-PARTY-LICENSES.txt');
  writeFileSync(notices, thirdPartyNotices(root, Object.keys(cli.metafile.inputs)));
  return [...Object.keys(library.metafile.outputs), ...Object.keys(cli.metafile.outputs)].map((file) => resolve(root, file)).concat(notices);
}

/** The licence texts of the packages bundled into the CLI, as their licences ask to be kept with copies. */
function thirdPartyNotices(root, inputs) {
  const packages = [...new Set(inputs.flatMap((file) => /node_modules\/((?:@[^/]+\/)?[^/]+)\//.exec(file)?.[1] ?? []))].sort();
  const sections = packages.map((name) => {
    const dir = join(root, 'node_modules', name);
    const meta = JSON.parse(readFileSync(join(dir, 'package.json'), 'utf8'));
    const licenceFile = readdirSync(dir).find((f) => /^(licen[cs]e|copying)(\.|$)/i.test(f));
    // Some packages (seedrandom) carry their MIT notice only in the README.
    const readme = existsSync(join(dir, 'README.md')) ? readFileSync(join(dir, 'README.md'), 'utf8') : '';
    const text = licenceFile ? readFileSync(join(dir, licenceFile), 'utf8').trim() : /Copyright[^\n]*\n[\s\S]*?Permission is hereby granted[\s\S]*?IN THE SOFTWARE\./.exec(readme)?.[0];
    if (!text) throw new Error(`no licence text found for the bundled package ${name}: add it to scripts/build-js.mjs`);
    return `${name}@${meta.version} (${meta.license})\n${'-'.repeat(60)}\n${text}\n`;
  });
  return `The wobble CLI (dist/cli.js, dist/cli-chunks/) bundles these packages; their licences follow.\n\n${sections.join('\n')}`;
}
