import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { historyProposal } from '../helpers/proposals.js';
import { UsageError } from '../../src/cli/io.js';
import { scaleRunner } from '../../src/cli/scale-options.js';
import { RangeThreadPool, threadRunner } from '../../src/cli/threads.js';
import { stressProposal } from '../../src/stress/run.js';
import { RangeCancelledError } from '../../src/scale/errors.js';
import { valid } from '../scale/helpers.js';
import { comparable } from '../scale/helpers.js';

// Runs the CLI as a user does, with the draws split over worker threads.
const root = new URL('../..', import.meta.url).pathname;
function wobble(args: string[], input: string) {
  const r = spawnSync(process.execPath, ['--import', 'tsx', 'src/cli/main.ts', ...args], { cwd: root, input, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

describe('wobble --threads', () => {
  it('gives the same report bytes with 1 and 4 threads (and records meta.threads)', () => {
    const input = JSON.stringify(historyProposal(60, { resampling: { draws: 60, seed: 'threads' } }));
    const one = wobble(['stress', '-', '--threads', '1'], input);
    const four = wobble(['stress', '-', '--threads', '4'], input);
    expect(one.code, one.stderr).toBe(0);
    expect(four.code, four.stderr).toBe(0);
    const a = JSON.parse(one.stdout);
    const b = JSON.parse(four.stdout);
    expect(a.meta.threads).toBeUndefined();
    expect(b.meta.threads).toBe(4);
    expect(comparable(b)).toBe(comparable(a));
  });

  it('starts its threads early and keeps them warm between requests (same bytes every time)', async () => {
    const v = valid(historyProposal(60, { resampling: { draws: 30, seed: 'pool' } }));
    const pool = new RangeThreadPool();
    try {
      const runner = threadRunner(3, false, { pool });
      // Asked for explicitly, the two worker threads start before any request (cold: one range each).
      expect(pool.idleThreads).toBe(2);
      expect(pool.warmIdleThreads).toBe(0);
      const expected = comparable(await stressProposal(v.proposal, v.warnings));
      for (let round = 0; round < 2; round++) {
        const report = await stressProposal(v.proposal, v.warnings, { drawRunner: runner });
        expect(report.meta.threads).toBe(3);
        expect(comparable(report)).toBe(expected);
        // Both threads finished cleanly and wait for the next request, warm (fine chunks next time).
        expect(pool.idleThreads).toBe(2);
        expect(pool.warmIdleThreads).toBe(2);
      }
    } finally {
      await pool.close();
    }
  }, 60_000);

  it('refuses bad combinations as usage errors (exit 2)', () => {
    expect(() => scaleRunner({ threads: '0' })).toThrow(UsageError);
    expect(() => scaleRunner({ shards: '3' })).toThrow(/--shards needs --remote/);
    expect(() => scaleRunner({ remote: 'not a url' })).toThrow(/--remote must be a URL/);
    expect(() => scaleRunner({ remote: 'https://example.invalid', threads: '2' })).toThrow(/cannot be combined/);
    expect(() => scaleRunner({ remote: 'https://example.invalid', shards: '0' })).toThrow(/--shards must be an integer/);
    expect(scaleRunner({ threads: '1' })).toBeUndefined();
  });
});

describe('worker threads that fail or are cancelled', () => {
  it('computes on this thread the chunks a failing worker thread could not, and the report is exact', async () => {
    const v = valid(historyProposal(60, { resampling: { draws: 24, seed: 'failing-thread' } }));
    const entry = new URL('../fixtures/threads/failing-thread.mjs', import.meta.url);
    const pool = new RangeThreadPool(entry);
    try {
      const report = await stressProposal(v.proposal, v.warnings, { drawRunner: threadRunner(2, false, { pool }) });
      expect(report.meta.threads).toBe(2);
      expect(comparable(report)).toBe(comparable(await stressProposal(v.proposal, v.warnings)));
      // The failed thread was terminated, not put back in the pool.
      expect(pool.idleThreads).toBe(0);
    } finally {
      await pool.close();
    }
  }, 60_000);

  it('stops the worker threads when the run is cancelled (no report; the threads are not reused)', async () => {
    const v = valid(historyProposal(60, { resampling: { draws: 400, seed: 'cancel-threads' } }));
    const pool = new RangeThreadPool();
    const controller = new AbortController();
    try {
      const runner = threadRunner(3, false, { pool, signal: controller.signal });
      let seen = 0;
      const run = stressProposal(v.proposal, v.warnings, {
        drawRunner: runner,
        onProgress: (done) => {
          seen = done;
          if (done >= 5) controller.abort();
        },
      });
      await expect(run).rejects.toThrow(RangeCancelledError);
      expect(seen).toBeLessThan(400);
      expect(pool.idleThreads).toBe(0);
    } finally {
      await pool.close();
    }
  }, 60_000);
});
