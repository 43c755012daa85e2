import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { createApp } from '../../src/http/app.js';
import { historyProposal, momentsProposal } from '../helpers/proposals.js';

// "Never a 500 for anything a caller sends": mutate valid proposals at random places with odd
// values and check every answer is a success or a 4xx problem+json.
const app = createApp();
const odd = fc.oneof(
  fc.constant(0),
  fc.constant(-1),
  fc.constant(1e308),
  fc.constant(-1e-300),
  fc.constant(''),
  fc.constant(null),
  fc.constant([]),
  fc.constant({}),
  fc.constant([[0]]),
  fc.double({ min: -10, max: 10, noNaN: true }),
  fc.integer({ min: -5, max: 5000 }),
  fc.string({ maxLength: 5 }),
);

function paths(value: unknown, prefix: (string | number)[] = [], out: (string | number)[][] = []): (string | number)[][] {
  out.push(prefix);
  if (Array.isArray(value)) value.slice(0, 3).forEach((v, i) => paths(v, [...prefix, i], out));
  else if (value && typeof value === 'object') for (const [k, v] of Object.entries(value)) paths(v, [...prefix, k], out);
  return out;
}

function setAt(root: unknown, path: (string | number)[], value: unknown): unknown {
  if (path.length === 0) return value;
  const copy = structuredClone(root) as Record<string | number, unknown>;
  let node = copy;
  for (const key of path.slice(0, -1)) node = node[key] as Record<string | number, unknown>;
  node[path[path.length - 1]] = value;
  return copy;
}

describe('no 500s for odd requests', () => {
  for (const [name, base] of [
    ['moments', momentsProposal({ resampling: { draws: 12, seed: 1 } })],
    ['history', historyProposal(30, { resampling: { draws: 12, seed: 1 } })],
  ] as const) {
    const places = paths(base).filter((p) => !(p.length >= 3 && p[1] === 'returns' && typeof p[2] === 'number' && p[2] > 0));
    it(`${name}: every mutation answers 2xx or 4xx`, async () => {
      await fc.assert(
        fc.asyncProperty(fc.constantFrom(...places), odd, fc.constantFrom('/v1/optimize', '/v1/stress'), async (path, value, route) => {
          const body = JSON.stringify(setAt(base, path, value));
          const res = await app.request(route, { method: 'POST', headers: { 'content-type': 'application/json' }, body });
          if (res.status >= 500) throw new Error(`${route} ${JSON.stringify(path)} = ${JSON.stringify(value)} → ${res.status}: ${await res.text()}`);
          if (res.status >= 400) expect(res.headers.get('content-type')).toContain('application/problem+json');
        }),
        { numRuns: 150 },
      );
    });
  }
});
