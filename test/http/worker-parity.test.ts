import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Miniflare } from 'miniflare';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../src/http/app.js';
import { demoProposal, historyProposal, momentsProposal } from '../helpers/proposals.js';

// The contract promises byte-identical reports (apart from meta.elapsedMs) on Node and in the Workers
// runtime. Bundle the Worker exactly as `wrangler deploy` would, run it in workerd through Miniflare,
// and compare with the same request answered by the app in Node.
const root = new URL('../..', import.meta.url).pathname;
let dir: string;
let mf: Miniflare;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'wobble-bundle-'));
  execFileSync('npx', ['wrangler', 'deploy', '--dry-run', '--outdir', dir], {
    cwd: root,
    env: { ...process.env, WRANGLER_SEND_METRICS: 'false', CLOUDFLARE_CF_FETCH_ENABLED: 'false' },
    stdio: 'pipe',
  });
  mf = new Miniflare({ modules: true, modulesRoot: dir, scriptPath: join(dir, 'worker.js'), compatibilityDate: '2026-04-01', cf: false });
}, 120_000);

afterAll(async () => {
  await mf?.dispose();
  if (dir) rmSync(dir, { recursive: true, force: true });
});

function normalise(text: string): string {
  return text.replace(/"elapsedMs":\s*[\d.]+/, '"elapsedMs":0');
}

describe('Node and the Workers runtime give the same report', () => {
  const app = createApp();
  it.each([
    ['a bootstrapped history', () => historyProposal(60, { resampling: { draws: 60, seed: 'parity' } })],
    ['parametric moments', () => momentsProposal({ resampling: { draws: 60, seed: 11 } })],
    ['the demo (40 draws)', () => ({ ...demoProposal(), resampling: { draws: 40, scheme: 'stationary-bootstrap' as const, meanBlockLength: 'auto' as const, seed: 'demo' } })],
  ])('%s', async (_name, make) => {
    const body = JSON.stringify(make());
    const init = { method: 'POST', headers: { 'content-type': 'application/json' }, body };
    const node = await app.request('/v1/stress', init);
    const worker = await mf.dispatchFetch('http://wobble.test/v1/stress', init);
    expect(worker.status).toBe(200);
    expect(node.status).toBe(200);
    expect(normalise(await worker.text())).toBe(normalise(await node.text()));
  });
});
