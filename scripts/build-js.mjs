// The esbuild step of the package build, shared by scripts/build.mjs and the tests that run the
// built CLI (test/helpers/built-cli.ts), so both always use the same options.
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { build } from 'esbuild';

/**
 * Bundles the library (index.js), the HTTP client (client.js) and the CLI (cli.js) into `outdir`,
 * split so that `wobble --help` loads only the CLI's front module. Runtime dependencies stay
 * external: they are installed from package.json, never copied into the output. Returns the
 * absolute paths of the files written.
 */
export async function buildJavaScript(root, outdir) {
  const pkg = JSON.parse(readFileSync(`${root}package.json`, 'utf8'));
  const result = await build({
    metafile: true,
    absWorkingDir: root,
    entryPoints: { index: 'src/index.ts', client: 'src/client/index.ts', cli: 'src/cli/main.ts' },
    outdir,
    chunkNames: 'chunks/[name]-[hash]',
    bundle: true,
    splitting: true,
    format: 'esm',
    // Node 20 and current browsers and Workers all run ES2022; nothing platform-specific is assumed.
    platform: 'neutral',
    target: 'es2022',
    mainFields: ['module', 'main'],
    external: [...Object.keys(pkg.dependencies ?? {}), 'node:*'],
    minifySyntax: true,
    minifyWhitespace: true,
    legalComments: 'none',
    logLevel: 'warning',
  });
  return Object.keys(result.metafile.outputs).map((file) => resolve(root, file));
}
