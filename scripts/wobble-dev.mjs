#!/usr/bin/env node
// `npm run -s wobble -- …` from a checkout: runs the built CLI, rebuilding its JavaScript first
// (esbuild, well under a second) when any source file is newer than the build, so the command is
// always current and starts as fast as the installed one.
import { statSync, readdirSync } from 'node:fs';
import { execFileSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';

const root = fileURLToPath(new URL('..', import.meta.url));
const built = `${root}dist/cli.js`;

function newestMtime(dir) {
  let newest = 0;
  for (const entry of readdirSync(dir, { withFileTypes: true })) {
    const path = `${dir}/${entry.name}`;
    newest = Math.max(newest, entry.isDirectory() ? newestMtime(path) : statSync(path).mtimeMs);
  }
  return newest;
}

let builtAt = 0;
try {
  builtAt = statSync(built).mtimeMs;
} catch {
  // Not built yet (e.g. installed with --ignore-scripts).
}
const sourcesAt = Math.max(newestMtime(`${root}src`), newestMtime(`${root}schemas/examples`), statSync(`${root}package.json`).mtimeMs);
if (sourcesAt > builtAt) {
  execFileSync(process.execPath, [`${root}scripts/build.mjs`, '--js-only'], { stdio: ['ignore', 'ignore', 'inherit'] });
}
const { run } = await import(new URL('../dist/cli.js', import.meta.url).href);
await run();
