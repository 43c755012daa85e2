import { runInDurableObject } from 'cloudflare:test';
import type { ShardNamespace, ShardStub } from '../../src/http/shards.js';
import type { ShardStatus } from '../../src/shard-object.js';

/** One /range call the app made through the wrapped namespace. */
export interface RangeCall {
  readonly start: number;
  readonly end: number;
  /** 1 for the first try of this range, 2 for its retry. */
  readonly attempt: number;
  /** The real Durable Object that got the call. */
  readonly stub: ShardStub;
  /** Whether this wrapper reset the object while it computed. */
  readonly reset: boolean;
}

/**
 * The STRESS_SHARD namespace the tests hand to the app in place of wrangler.toml's binding (as
 * the rate-limit tests hand it TIGHT_RATE_LIMITER): every call goes to a real Durable Object in
 * workerd, and `resetWhen` picks the tries whose object is reset while it computes, through
 * DurableObjectState.abort() — what happens to an object that exceeds its memory or that the
 * runtime restarts: its in-flight request fails with an error, like a lost shard in production.
 *
 * Why a wrapper in the test and not a switch in the service: a "fail this shard" setting in the
 * Worker or its env would be a back door that a deployment could turn on by mistake (or an
 * attacker by guessing). Here the production code — app, fan-out, executor, StressShard — runs
 * unchanged; only the test decides, deterministically by range and attempt, which object is lost.
 */
export function faultyShards(real: ShardNamespace, resetWhen: (start: number, attempt: number) => boolean = () => false) {
  const calls: RangeCall[] = [];
  const attempts = new Map<number, number>();
  const namespace: ShardNamespace = {
    newUniqueId: () => real.newUniqueId(),
    get: (id: never) => {
      const stub = real.get(id);
      return {
        fetch: async (input: string, init?: RequestInit) => {
          if (new URL(input).pathname !== '/range') return stub.fetch(input, init);
          const { start, end } = JSON.parse(String(init?.body)) as { start: number; end: number };
          const attempt = (attempts.get(start) ?? 0) + 1;
          attempts.set(start, attempt);
          const reset = resetWhen(start, attempt);
          calls.push({ start, end, attempt, stub, reset });
          const answer = stub.fetch(input, init);
          if (reset) {
            // The answer rejects before it is returned to the caller: mark it handled meanwhile.
            answer.catch(() => undefined);
            // Delivered between two chunks of the range's draws, so the object is mid-range.
            await runInDurableObject(stub, (_object, state) => state.abort('shard object reset (injected by the test)')).catch(() => undefined);
          }
          return answer;
        },
      };
    },
  };
  return { namespace, calls };
}

export async function shardStatus(stub: ShardStub): Promise<ShardStatus> {
  return (await (await stub.fetch('https://shard/status', { method: 'GET' })).json()) as ShardStatus;
}

/** Waits until the object no longer computes (it heard a cancel, finished or failed); at most 30 s. */
export async function settledStatus(stub: ShardStub): Promise<ShardStatus> {
  for (let waited = 0; ; waited += 50) {
    const status = await shardStatus(stub);
    if (status.state !== 'running' || waited > 30_000) return status;
    await new Promise((resolve) => setTimeout(resolve, 50));
  }
}
