#!/usr/bin/env node
// Builds the package into dist/ (gitignored): plain JavaScript bundled by esbuild (library and HTTP
// client with external dependencies, the CLI self-contained; see build-js.mjs), then the .d.ts
// files with tsc.
// Usage: node scripts/build.mjs [--js-only]   (--js-only: the JavaScript alone, about a second,
// keeping any existing dist/types; `prepare` uses it so `npm ci` stays quick, `prepack` builds all).
import { execFileSync } from 'node:child_process';
import { readdirSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildJavaScript } from './build-js.mjs';

const root = fileURLToPath(new URL('..', import.meta.url));
const jsOnly = process.argv.includes('--js-only');

// Files are overwritten in place and only stale ones removed afterwards, so a CLI process running
// from dist/ while a rebuild of unchanged sources happens (chunk names carry content hashes) never
// finds a file missing.
const written = new Set(await buildJavaScript(root, join(root, 'dist')));
for (const dir of [join(root, 'dist'), join(root, 'dist/chunks'), join(root, 'dist/cli-chunks')]) {
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const path = join(dir, entry.name);
    if (entry.isFile() && !written.has(path)) rmSync(path, { force: true });
  }
}
if (!jsOnly) {
  rmSync(join(root, 'dist/types'), { recursive: true, force: true });
  execFileSync(process.execPath, [join(root, 'node_modules/typescript/bin/tsc'), '-p', join(root, 'tsconfig.build.json')], { stdio: 'inherit' });
}
