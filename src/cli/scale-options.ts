import { RangeCancelledError, ShardFailedError } from '../scale/errors.js';
import { MAX_SHARDS } from '../scale/limits.js';
import type { DrawRunner } from '../stress/run.js';
import { EXIT, UsageError } from './io.js';
import { remoteRunner } from './remote.js';
import { defaultThreads, threadRunner } from './threads.js';

function positiveInt(value: string, flag: string, max: number): number {
  const n = Number(value);
  if (!Number.isInteger(n) || n < 1 || n > max) throw new UsageError(`${flag} must be an integer in 1..${max}, got "${value}"`);
  return n;
}

/** The draw runner the flags ask for, or undefined for one loop on this thread. */
export function scaleRunner(values: { threads?: string; remote?: string; shards?: string }, env: NodeJS.ProcessEnv = process.env): DrawRunner | undefined {
  if (values.remote !== undefined) {
    if (values.threads !== undefined) throw new UsageError('--threads and --remote cannot be combined (remote ranges run on the service)');
    let url: URL;
    try {
      url = new URL(values.remote);
    } catch {
      throw new UsageError(`--remote must be a URL, got "${values.remote}"`);
    }
    if (url.protocol !== 'https:' && url.protocol !== 'http:') throw new UsageError(`--remote must be an http(s) URL, got "${values.remote}"`);
    const shards = values.shards === undefined ? 4 : positiveInt(values.shards, '--shards', MAX_SHARDS);
    return remoteRunner(values.remote, shards, env.WOBBLE_API_TOKEN || undefined, { interruptible: true });
  }
  if (values.shards !== undefined) throw new UsageError('--shards needs --remote URL (threads on this machine: --threads N)');
  if (values.threads === undefined) {
    const threads = defaultThreads();
    return threads > 1 ? threadRunner(threads, true) : undefined;
  }
  const threads = positiveInt(values.threads, '--threads', 256);
  return threads > 1 ? threadRunner(threads, false) : undefined;
}

/** Exit status after Ctrl-C: 128 + SIGINT (2), the shell convention. */
const EXIT_INTERRUPTED = 130;

/**
 * A failed or refused shard/thread: the message names it; refusals (4xx) are input errors, failures
 * exit 3. An interrupted run (Ctrl-C) says that its ranges were stopped and exits 130.
 */
export function scaleFailureExit(e: unknown): number | undefined {
  if (e instanceof RangeCancelledError) {
    process.stderr.write('wobble: interrupted; the ranges still running were stopped (no report)\n');
    return EXIT_INTERRUPTED;
  }
  if (!(e instanceof ShardFailedError)) return undefined;
  process.stderr.write(`wobble: ${e.message}\n`);
  return e.status >= 400 && e.status < 500 ? EXIT.usage : 3;
}
