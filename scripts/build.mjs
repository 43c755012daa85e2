#!/usr/bin/env node
// Builds the package into dist/ (gitignored): plain JavaScript bundled by esbuild (library, HTTP
// client, CLI; see build-js.mjs), then the .d.ts files with tsc.
// Usage: node scripts/build.mjs [--js-only]   (--js-only: the JavaScript alone, about a second,
// keeping any existing dist/types; `prepare` uses it so `npm ci` stays quick, `prepack` builds all).
import { execFileSync } from 'node:child_process';
import { existsSync, readdirSync, rmSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { buildJavaScript } from './build-js.mjs';

const root = fileURLToPath(new URL('..', import.meta.url));
const jsOnly = process.argv.includes('--js-only');

// Stale chunks (their names carry content hashes) must not pile up or be shipped.
if (jsOnly && existsSync(`${root}dist`)) {
  for (const entry of readdirSync(`${root}dist`, { withFileTypes: true }).filter((e) => e.name !== 'types')) {
    rmSync(`${root}dist/${entry.name}`, { recursive: true, force: true });
  }
} else {
  rmSync(`${root}dist`, { recursive: true, force: true });
}
await buildJavaScript(root, `${root}dist`);
if (!jsOnly) {
  execFileSync(process.execPath, [`${root}node_modules/typescript/bin/tsc`, '-p', `${root}tsconfig.build.json`], { stdio: 'inherit' });
}
