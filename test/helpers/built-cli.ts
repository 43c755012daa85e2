import { spawnSync } from 'node:child_process';
import { chmodSync, mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { buildJavaScript } from '../../scripts/build-js.mjs';

/**
 * Builds the CLI from the current source exactly as the package build does, into a private
 * folder under node_modules/.cache (so the runtime dependencies resolve as they do when
 * installed), and runs it as a whole process. Tests of the CLI therefore run the shipped
 * JavaScript, never a stale build.
 */
export const root = new URL('../..', import.meta.url).pathname;

export interface BuiltCli {
  /** Folder holding a `wobble` executable shim (for PATH). */
  readonly binDir: string;
  /** The built entry, as `node <entry> …` runs it. */
  readonly entry: string;
  run(args: readonly string[], options?: { input?: string; cwd?: string }): { code: number | null; stdout: string; stderr: string };
  remove(): void;
}

export async function buildCli(): Promise<BuiltCli> {
  const dir = join(root, 'node_modules', '.cache', `wobble-cli-test-${process.pid}-${Math.random().toString(36).slice(2)}`);
  await buildJavaScript(root, dir);
  const entry = join(dir, 'wobble.mjs');
  writeFileSync(entry, "import { run } from './cli.js';\nawait run();\n");
  const binDir = join(dir, 'bin');
  mkdirSync(binDir);
  writeFileSync(join(binDir, 'wobble'), `#!/bin/sh\nexec "${process.execPath}" "${entry}" "$@"\n`);
  chmodSync(join(binDir, 'wobble'), 0o755);
  return {
    binDir,
    entry,
    run(args, options = {}) {
      const r = spawnSync(process.execPath, [entry, ...args], { cwd: options.cwd ?? root, input: options.input, encoding: 'utf8' });
      return { code: r.status, stdout: r.stdout, stderr: r.stderr };
    },
    remove: () => rmSync(dir, { recursive: true, force: true }),
  };
}
