import { describe, expect, it } from 'vitest';
import { RangeCancelledError, RangeRefusedError, ShardFailedError } from '../../src/scale/errors.js';
import { computeRange, type RangeRequest } from '../../src/scale/range-job.js';
import { fanOutRunner, type RangeExecutor } from '../../src/scale/runner.js';
import { PolicySchema, type ProposalInput } from '../../src/schema/proposal.js';
import { checkProposal, stressProposal } from '../../src/stress/run.js';
import { historyProposal, momentsProposal } from '../helpers/proposals.js';
import { comparable, valid } from './helpers.js';

const local: RangeExecutor = (request) => computeRange(JSON.parse(JSON.stringify(request)) as RangeRequest);

async function sharded(p: ProposalInput, parts: number, execute: RangeExecutor = local, signal?: AbortSignal) {
  const v = valid(p);
  return stressProposal(v.proposal, v.warnings, { drawRunner: fanOutRunner({ parts, execute, unit: 'shard', signal }) });
}

describe('fan-out over ranges', () => {
  it('gives the same report bytes with 1, 4 and 7 shards as one loop (bootstrap history with scenario Kelly; parametric moments)', async () => {
    for (const p of [historyProposal(60, { resampling: { draws: 70, seed: 'split' } }), momentsProposal({ resampling: { draws: 50, seed: 3 } })]) {
      const v = valid(p);
      const whole = comparable(await stressProposal(v.proposal, v.warnings));
      for (const parts of [1, 4, 7]) {
        const report = await sharded(p, parts);
        expect(report.meta.shards).toBe(parts);
        expect(comparable(report)).toBe(whole);
      }
    }
  });

  it('splits the baseline run of a gate check the same way (paired errors need every draw)', async () => {
    const p = historyProposal(60, { resampling: { draws: 40, seed: 'gate' } });
    const v = valid(p);
    const baseline = valid(historyProposal(60, { resampling: { draws: 40, seed: 'gate' }, constraints: { longOnly: true, upper: 0.6 } }));
    const policy = PolicySchema.parse({ rules: [{ metric: 'turnover-from-proposal.p50', maxIncrease: 0.05 }] });
    const whole = await checkProposal(v.proposal, v.warnings, policy, { kind: 'proposal', proposal: baseline.proposal, warnings: baseline.warnings });
    const split = await checkProposal(v.proposal, v.warnings, policy, { kind: 'proposal', proposal: baseline.proposal, warnings: baseline.warnings }, {
      drawRunner: fanOutRunner({ parts: 3, execute: local, unit: 'thread' }),
    });
    expect(split.meta.threads).toBe(3);
    expect(comparable(split)).toBe(comparable(whole));
  });

  it('retries a failed shard once and still gives the exact report', async () => {
    const p = historyProposal(60, { resampling: { draws: 40, seed: 'retry' } });
    const attempts: string[] = [];
    const flaky: RangeExecutor = async (request, context) => {
      const { range, attempt } = context;
      attempts.push(`${range.index}:${attempt}`);
      if (range.index === 2 && attempt === 1) throw new Error('connection reset');
      return local(request, context);
    };
    const v = valid(p);
    expect(comparable(await sharded(p, 4, flaky))).toBe(comparable(await stressProposal(v.proposal, v.warnings)));
    expect(attempts.filter((a) => a.startsWith('2:'))).toEqual(['2:1', '2:2']);
  });

  it('fails the whole request, naming the shard, when a shard fails twice; the other shards are stopped', async () => {
    const p = historyProposal(60, { resampling: { draws: 40, seed: 'fail' } });
    const stopped: number[] = [];
    const failing: RangeExecutor = (_request, { range, signal }) => {
      if (range.index === 1) return Promise.reject(new Error('out of memory'));
      // The other shards wait until told to stop: they are never merged into a report.
      return new Promise((_resolve, reject) => {
        signal.addEventListener('abort', () => {
          stopped.push(range.index);
          reject(new RangeCancelledError());
        });
      });
    };
    const error = await sharded(p, 3, failing).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(ShardFailedError);
    expect((error as ShardFailedError).message).toBe('shard 1 (draws 13–25) failed on 2 attempts: out of memory');
    expect((error as ShardFailedError).status).toBe(502);
    expect(stopped.sort()).toEqual([0, 2]);
  });

  it('does not retry a refusal (a 4xx answer cannot change) and passes its status on', async () => {
    let calls = 0;
    const refusing: RangeExecutor = async (request, ctx) => {
      if (ctx.range.index === 0) {
        calls++;
        throw new RangeRefusedError(401, 'missing bearer token');
      }
      return local(request, ctx);
    };
    const error = (await sharded(historyProposal(60, { resampling: { draws: 20, seed: 1 } }), 2, refusing).catch((e: unknown) => e)) as ShardFailedError;
    expect(error.status).toBe(401);
    expect(calls).toBe(1);
  });

  it('stops every shard when the caller cancels', async () => {
    const p = historyProposal(60, { resampling: { draws: 40, seed: 'cancel' } });
    const client = new AbortController();
    const started: number[] = [];
    const stopped: number[] = [];
    const slow: RangeExecutor = (_request, { range, signal }) =>
      new Promise((_resolve, reject) => {
        started.push(range.index);
        if (started.length === 4) setTimeout(() => client.abort(), 5);
        signal.addEventListener('abort', () => {
          stopped.push(range.index);
          reject(new RangeCancelledError());
        });
      });
    const error = await sharded(p, 4, slow, client.signal).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(RangeCancelledError);
    expect(stopped.sort()).toEqual([0, 1, 2, 3]);
  });

  it('reports progress over all ranges', async () => {
    const p = historyProposal(60, { resampling: { draws: 30, seed: 'progress' } });
    const v = valid(p);
    const seen: number[] = [];
    await stressProposal(v.proposal, v.warnings, {
      onProgress: (done, total) => {
        expect(total).toBe(30);
        seen.push(done);
      },
      drawRunner: fanOutRunner({ parts: 3, unit: 'thread', execute: (request, ctx) => computeRange(request, { onProgress: ctx.onProgress }) }),
    });
    expect(seen.at(-1)).toBe(30);
    expect(Math.max(...seen)).toBe(30);
  });
});
