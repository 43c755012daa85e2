import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { LIMITS } from '../../src/schema/limits.js';
import { limitShapes } from '../bench/limit-shapes.js';

// The worst accepted shapes (sized to the limits by the cost models themselves) run in a child
// Node process whose JS heap is capped near the memory budget (--max-old-space-size). Stress
// shapes allocate every accumulator for all their draws up front but compute only a few draws
// (maxDrawsToRun), so the peak is the full request's at a fraction of its CPU. The child reports
// the heap + ArrayBuffer high-water mark (typed arrays live outside the old space), which must
// stay inside a 128 MB Workers isolate.

const ISOLATE_BYTES = 128 * 1024 * 1024;
const HEAP_CAP_MB = Math.round(LIMITS.maxMemoryBytes / 1024 / 1024) + 16;
const dir = mkdtempSync(join(tmpdir(), 'wobble-memory-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const child = new URL('../bench/limits-child.ts', import.meta.url).pathname;
// Cheap enough for CI: the memory-bound stress shapes, and the check (two runs held at once). The
// check's draws are bound by work, not memory (its stored draws are ~1 % of its peak, the N×N
// matrices and group rows are the rest) and it runs every draw, so it runs a fifth of them.
const shapes = [...limitShapes(1, ['history', 'factor']), ...limitShapes(0.2, ['check'])];

describe(`worst accepted shapes under node --max-old-space-size=${HEAP_CAP_MB}`, () => {
  for (const shape of shapes) {
    it(shape.name, () => {
      const file = join(dir, `${shape.job}.json`);
      writeFileSync(file, JSON.stringify({ job: shape.job, body: shape.body, baseline: shape.baseline, maxDrawsToRun: shape.job === 'check' ? undefined : 3 }));
      const run = spawnSync(process.execPath, [`--max-old-space-size=${HEAP_CAP_MB}`, '--import', 'tsx', child, file], { encoding: 'utf8', maxBuffer: 1 << 24 });
      expect(run.status, run.stderr.slice(0, 2000)).toBe(0);
      const result = JSON.parse(run.stdout.trim().split('\n').pop() ?? '{}') as { refused?: string; heapAndBuffersHigh: number; estimatedBytes: number; responseBytes: number };
      expect(result.refused).toBeUndefined();
      expect(result.estimatedBytes).toBeLessThanOrEqual(LIMITS.maxMemoryBytes);
      expect(result.heapAndBuffersHigh).toBeLessThan(ISOLATE_BYTES - 16 * 1024 * 1024);
      expect(result.responseBytes).toBeLessThanOrEqual(LIMITS.maxResponseBytes);
    }, 180_000);
  }
});
