import { describe, expect, it } from 'vitest';
import { RangeCancelledError, ShardFailedError } from '../../src/scale/errors.js';
import { runLanes, type Lane, type LaneContext } from '../../src/scale/lanes.js';
import { computePlannedRange } from '../../src/scale/range-job.js';
import { splitDraws, type DrawRange } from '../../src/scale/ranges.js';
import { inputDigest } from '../../src/stress/digest.js';
import { planStress, type StressPlan } from '../../src/stress/engine.js';
import { stressProposal, type DrawRunner } from '../../src/stress/run.js';
import { historyProposal } from '../helpers/proposals.js';
import { comparable, valid } from './helpers.js';

const compute = async (plan: StressPlan, digest: string, chunk: DrawRange): Promise<Uint8Array> => computePlannedRange(plan, digest, chunk);

/** A lane on this thread that claims chunks until none is left; `onChunk` may fail it or cancel the run. */
const localLane =
  (plan: StressPlan, digest: string, log: number[], onChunk?: (k: number, context: LaneContext) => void): Lane =>
  async (context) => {
    for (let k = context.claims.claim(); k !== undefined; k = context.claims.claim()) {
      await new Promise((resolve) => setImmediate(resolve));
      if (context.signal.aborted) return {};
      onChunk?.(k, context);
      log.push(k);
      context.deliver(k, await compute(plan, digest, context.chunks[k]));
    }
    return {};
  };

/** A DrawRunner over runLanes with `lanes` built for the plan (as src/cli/threads.ts does with threads). */
function lanesRunner(makeLanes: (plan: StressPlan, digest: string) => Lane[], retries: number[] = [], signal?: AbortSignal): DrawRunner {
  return {
    record: { threads: 2 },
    async run(plan, proposal, onProgress) {
      const digest = await inputDigest(proposal);
      const retry = (chunk: DrawRange) => {
        retries.push(chunk.index);
        return compute(plan, digest, chunk);
      };
      return runLanes(plan, digest, splitDraws(plan.draws, 8), makeLanes(plan, digest), retry, { signal, onProgress });
    },
  };
}

const proposal = historyProposal(60, { resampling: { draws: 48, seed: 'lanes' } });
const v = valid(proposal);
/** The report of one loop over every draw: what every split must reproduce byte for byte. */
let wholeReport: string | undefined;
const whole = async (): Promise<string> => (wholeReport ??= comparable(await stressProposal(v.proposal, v.warnings)));

describe('lanes claiming chunks', () => {
  it('gives the report of one loop, every chunk computed once, however the lanes share them', async () => {
    const logs: number[][] = [[], [], []];
    const progress: number[] = [];
    const report = await stressProposal(v.proposal, v.warnings, {
      drawRunner: lanesRunner((plan, digest) => logs.map((log) => localLane(plan, digest, log))),
      onProgress: (done) => progress.push(done),
    });
    expect(comparable(report)).toBe(await whole());
    const all = logs.flat().sort((a, b) => a - b);
    expect(all).toEqual([...Array(8).keys()]);
    // Every lane took some (they interleave at each yield).
    for (const log of logs) expect(log.length).toBeGreaterThan(0);
    expect(progress.at(-1)).toBe(48);
    for (let i = 1; i < progress.length; i++) expect(progress[i]).toBeGreaterThanOrEqual(progress[i - 1]);
  });

  it('computes again the chunks a failed lane left behind, and the report is still exact', async () => {
    const retries: number[] = [];
    const lost: number[] = [];
    const runner = lanesRunner(
      (plan, digest) => [
        localLane(plan, digest, []),
        // Fails on its second chunk: that chunk was claimed and never delivered.
        async (context) => {
          const first = context.claims.claim();
          if (first !== undefined) context.deliver(first, await compute(plan, digest, context.chunks[first]));
          const second = context.claims.claim();
          if (second !== undefined) lost.push(second);
          return { failure: `thread died while computing chunk ${second}` };
        },
      ],
      retries,
    );
    expect(comparable(await stressProposal(v.proposal, v.warnings, { drawRunner: runner }))).toBe(await whole());
    // Exactly the chunk it claimed and never delivered was computed again.
    expect(lost).toHaveLength(1);
    expect(retries).toEqual(lost);
  });

  it("recomputes a chunk whose partial does not fit (another request's data)", async () => {
    const retries: number[] = [];
    const runner = lanesRunner(
      (plan, digest) => [
        async (context) => {
          for (let k = context.claims.claim(); k !== undefined; k = context.claims.claim()) {
            // Chunk 3 arrives with a wrong input digest.
            context.deliver(k, await compute(plan, k === 3 ? 'sha256:0000' : digest, context.chunks[k]));
          }
          return {};
        },
      ],
      retries,
    );
    expect(comparable(await stressProposal(v.proposal, v.warnings, { drawRunner: runner }))).toBe(await whole());
    expect(retries).toEqual([3]);
  });

  it('fails the whole request, naming the chunk and its draws, when a retry fails too', async () => {
    const plan = planStress(v.proposal, v.warnings);
    const digest = await inputDigest(v.proposal);
    const chunks = splitDraws(plan.draws, 8);
    const failing: Lane = async (context) => {
      const k = context.claims.claim();
      return { failure: `chunk ${k} hit a bug` };
    };
    const run = runLanes(plan, digest, chunks, [failing], async () => {
      throw new Error('the same bug again');
    });
    await expect(run).rejects.toThrow(ShardFailedError);
    await expect(run).rejects.toThrow(/^chunk 0 \(draws 0–5\) failed on 2 attempts: chunk 0 hit a bug; on its retry: the same bug again$/);
  });

  it('stops every lane when the request is cancelled, and reports no figures', async () => {
    const controller = new AbortController();
    const logs: number[][] = [[], []];
    const retries: number[] = [];
    const runner = lanesRunner(
      (plan, digest) => logs.map((log) => localLane(plan, digest, log, (k) => (k === 2 ? controller.abort() : undefined))),
      retries,
      controller.signal,
    );
    await expect(stressProposal(v.proposal, v.warnings, { drawRunner: runner })).rejects.toThrow(RangeCancelledError);
    // Claims stopped at the cancel: chunks after the few in flight were never computed, nor retried.
    expect(logs.flat().length).toBeLessThanOrEqual(4);
    expect(retries).toEqual([]);
  });
});
