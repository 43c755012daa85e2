import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildCli, type BuiltCli } from '../helpers/built-cli.js';

// What the built JavaScript loads, read from the bundles themselves: the client and the library
// must run in browsers and Workers (no node: imports anywhere in their module graphs, the client
// not even a package), and `wobble --help` must load no engine code (the CLI's static graph
// imports no package at all: zod, the solvers and the renderers come in only when a command runs).
let built: BuiltCli;
beforeAll(async () => {
  built = await buildCli();
});
afterAll(() => built?.remove());

interface Graph {
  files: string[];
  bare: Set<string>;
  bytes: number;
}

/** Follows static imports (`import … from "x"`, `export … from "x"`); dynamic import() is not followed. */
const STATIC_IMPORT = /(?:^|[;}\s])(?:import|export)\s*(?:[\w*{}\s,$]+from\s*)?["']([^"']+)["']/g;
/** Every import, dynamic ones included. Module specifiers have no spaces (this skips prose such as `JSON from "wobble stress"` in help texts). */
const ANY_IMPORT = /(?:from\s*|import\s*\(?\s*)["']([^"'\s]+)["']/g;

/** Every module reachable from `entry` through imports matching `pattern` (group 1 = the specifier). */
function importGraph(entry: string, pattern: RegExp): Graph {
  const graph: Graph = { files: [], bare: new Set(), bytes: 0 };
  const pending = [entry];
  while (pending.length > 0) {
    const file = pending.pop() as string;
    if (graph.files.includes(file)) continue;
    graph.files.push(file);
    const text = readFileSync(file, 'utf8');
    graph.bytes += text.length;
    for (const m of text.matchAll(pattern)) {
      if (m[1].startsWith('.')) pending.push(join(dirname(file), m[1]));
      else graph.bare.add(m[1]);
    }
  }
  return graph;
}
const staticGraph = (entry: string): Graph => importGraph(entry, STATIC_IMPORT);
const fullGraph = (entry: string): Graph => importGraph(entry, ANY_IMPORT);

describe('built bundles', () => {
  it('the client imports no package and no Node module', () => {
    const graph = fullGraph(join(dirname(built.entry), 'client.js'));
    expect([...graph.bare]).toEqual([]);
    expect(graph.bytes).toBeLessThan(20_000);
  });

  it('the library imports no Node module, only its declared runtime dependencies', () => {
    const graph = fullGraph(join(dirname(built.entry), 'index.js'));
    expect([...graph.bare].filter((s) => s.startsWith('node:'))).toEqual([]);
    expect([...graph.bare]).toContain('zod');
    const pkg = JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { dependencies: Record<string, string> };
    for (const spec of graph.bare) expect(Object.keys(pkg.dependencies), spec).toContain(spec.split('/').slice(0, spec.startsWith('@') ? 2 : 1).join('/'));
  });

  it('the CLI front (what --help loads) imports no package and no engine code; the whole CLI is self-contained', () => {
    const graph = staticGraph(join(dirname(built.entry), 'cli.js'));
    expect([...graph.bare].filter((s) => !s.startsWith('node:'))).toEqual([]);
    expect(graph.files.length).toBeGreaterThan(1);
    expect(graph.files.length).toBeLessThanOrEqual(6);
    expect(graph.bytes).toBeLessThan(30_000);
    // The commands, reached through dynamic imports, carry the engine and its bundled dependencies.
    const all = fullGraph(join(dirname(built.entry), 'cli.js'));
    expect([...all.bare].filter((s) => !s.startsWith('node:'))).toEqual([]);
    expect(all.bytes).toBeGreaterThan(20 * graph.bytes);
  });

  it('the licences of the packages bundled into the CLI ship beside it', () => {
    const notices = readFileSync(join(dirname(built.entry), 'THIRD-PARTY-LICENSES.txt'), 'utf8');
    for (const name of ['zod', 'ml-matrix', 'seedrandom']) expect(notices).toMatch(new RegExp(`^${name}@\\d`, 'm'));
    expect(notices).toContain('Permission is hereby granted');
  });
});
