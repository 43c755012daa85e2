import type { AddressInfo } from 'node:net';
import { serve, type ServerType } from '@hono/node-server';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { remoteRunner } from '../../src/cli/remote.js';
import { scaleFailureExit } from '../../src/cli/scale-options.js';
import { createApp } from '../../src/http/app.js';
import { RangeCancelledError, ShardFailedError } from '../../src/scale/errors.js';
import { splitDraws } from '../../src/scale/ranges.js';
import { stressProposal } from '../../src/stress/run.js';
import { historyProposal } from '../helpers/proposals.js';
import { valid } from '../scale/helpers.js';

// `wobble stress --remote URL --shards N` against the service over real HTTP (the Hono app on
// @hono/node-server, port 0): aborting a fetch closes its connection, the server aborts that
// request's signal, and the range route stops at its next chunk of draws. The wrapper below
// records how every range ended on the service.
const app = createApp();
let answers: { start: number; status: number; detail?: string }[] = [];
let arrived = 0;

async function service(request: Request): Promise<Response> {
  const { start } = (await request.clone().json()) as { start: number };
  arrived++;
  const response = await app.fetch(request);
  const detail = response.status === 409 ? ((await response.clone().json()) as { detail: string }).detail : undefined;
  answers.push({ start, status: response.status, detail });
  return response;
}

let server: ServerType;
let baseUrl = '';
let closedPortUrl = '';
beforeAll(async () => {
  // A port that was just free and is closed again: connecting to it is refused.
  const closed = await new Promise<number>((resolve) => {
    const probe = serve({ fetch: () => new Response(), port: 0, hostname: '127.0.0.1' }, (info: AddressInfo) => probe.close(() => resolve(info.port)));
  });
  closedPortUrl = `http://127.0.0.1:${closed}`;
  const port = await new Promise<number>((resolve) => {
    server = serve({ fetch: service, port: 0, hostname: '127.0.0.1' }, (info: AddressInfo) => resolve(info.port));
  });
  baseUrl = `http://127.0.0.1:${port}`;
});
afterAll(async () => {
  await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
});

/** Waits until the server has answered `count` ranges (they stop at their next chunk); at most 30 s. */
async function answered(count: number) {
  for (let waited = 0; answers.length < count && waited < 30_000; waited += 20) await new Promise((resolve) => setTimeout(resolve, 20));
  return answers;
}
/** Waits until every range has reached the service and is computing. */
async function allArrived(count: number) {
  while (arrived < count) await new Promise((resolve) => setTimeout(resolve, 10));
}
const doneOf = (detail = ''): number => Number((/cancelled after (\d+) of/.exec(detail) ?? [])[1] ?? NaN);

describe('--remote fan-out: stopping the other ranges', () => {
  const draws = 1500;
  const v = valid(historyProposal(120, { resampling: { draws, seed: 'remote-cancel' } }));
  const ranges = splitDraws(draws, 3);
  // Longer ranges where the stop comes from the caller: every range reaches the service (its
  // arrival takes a few chunks of the others' draws on one event loop) well before its end.
  const long = valid(historyProposal(120, { resampling: { draws: 3000, seed: 'remote-cancel' } }));

  it('aborts the other fetches when one range fails for good, and the service stops them mid-range', async () => {
    answers = [];
    arrived = 0;
    // Range 1 goes to a port where nothing listens (a service that cannot be reached): both of
    // its tries fail at once with a real connection error, while ranges 0 and 2 compute.
    const unreachable = (async (url: string | URL | Request, init?: RequestInit) => {
      const { start } = JSON.parse(String(init?.body)) as { start: number };
      return fetch(start === ranges[1].start ? String(url).replace(baseUrl, closedPortUrl) : url, init);
    }) as typeof fetch;
    const error = await stressProposal(v.proposal, v.warnings, { drawRunner: remoteRunner(baseUrl, 3, undefined, { fetchImpl: unreachable }) }).catch((e: unknown) => e);
    expect(error).toBeInstanceOf(ShardFailedError);
    expect((error as ShardFailedError).message).toMatch(/^shard 1 \(draws 500–999\) failed on 2 attempts: fetch failed$/);
    const others = await answered(2);
    expect(others.map((a) => a.start).sort((a, b) => a - b)).toEqual([ranges[0].start, ranges[2].start]);
    for (const answer of others) {
      expect(answer.status).toBe(409);
      expect(answer.detail).toMatch(/\(its caller went away\)$/);
      expect(doneOf(answer.detail)).toBeLessThan(500);
    }
    console.info(`remote ranges stopped after ${others.map((a) => `${doneOf(a.detail)}/500`).join(', ')} draws`);
  });

  it('aborts every fetch when the run is aborted (Ctrl-C), and fails with RangeCancelledError, exit 130', async () => {
    answers = [];
    arrived = 0;
    const user = new AbortController();
    const run = stressProposal(long.proposal, long.warnings, { drawRunner: remoteRunner(baseUrl, 3, undefined, { signal: user.signal }) }).catch((e: unknown) => e);
    await allArrived(3);
    user.abort();
    const error = await run;
    expect(error).toBeInstanceOf(RangeCancelledError);
    const stopped = await answered(3);
    for (const answer of stopped) {
      expect(answer.status).toBe(409);
      expect(doneOf(answer.detail)).toBeLessThan(1000);
    }
    console.info(`remote ranges stopped after ${stopped.map((a) => `${doneOf(a.detail)}/1000`).join(', ')} draws`);
    const stderr = vi.spyOn(process.stderr, 'write').mockImplementation(() => true);
    try {
      expect(scaleFailureExit(error)).toBe(130);
      expect(String(stderr.mock.calls[0]?.[0])).toMatch(/interrupted; the ranges still running were stopped/);
    } finally {
      stderr.mockRestore();
    }
  });

  it('Ctrl-C (SIGINT) aborts an interruptible run the same way and removes its handler afterwards', async () => {
    answers = [];
    arrived = 0;
    const before = process.listenerCount('SIGINT');
    const run = stressProposal(long.proposal, long.warnings, { drawRunner: remoteRunner(baseUrl, 3, undefined, { interruptible: true }) }).catch((e: unknown) => e);
    await allArrived(3);
    expect(process.listenerCount('SIGINT')).toBe(before + 1);
    process.emit('SIGINT');
    expect(await run).toBeInstanceOf(RangeCancelledError);
    expect(process.listenerCount('SIGINT')).toBe(before);
    expect((await answered(3)).every((a) => a.status === 409)).toBe(true);
  });
});
