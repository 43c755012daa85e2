import { existsSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { serve, type ServerType } from '@hono/node-server';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../src/http/app.js';
import { momentsProposal } from '../helpers/proposals.js';

// An integrator's page on another origin calling a token-protected deployment from a real browser:
// the preflight, the Authorization header and the readable 401 all have to work as the Fetch
// standard says, and a page from an origin that is not listed must be blocked by the browser.
const CHROMIUM = '/usr/bin/chromium';
const CHROMIUM_ARGS = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'];
const TOKEN = 'browser-test-token-0123456789';

function listen(fetch: (request: Request) => Response | Promise<Response>): Promise<{ server: ServerType; port: number }> {
  return new Promise((resolve) => {
    const server = serve({ fetch, port: 0, hostname: '127.0.0.1' }, (info: AddressInfo) => resolve({ server, port: info.port }));
  });
}

describe.skipIf(!existsSync(CHROMIUM))('CORS from a page on another origin, in Chromium', () => {
  const servers: ServerType[] = [];
  let apiUrl = '';
  let allowedSite = '';
  let otherSite = '';
  let browser: Browser;

  beforeAll(async () => {
    const blank = () => new Response('<!doctype html><title>integrator</title>', { headers: { 'content-type': 'text/html' } });
    const allowed = await listen(blank);
    const other = await listen(blank);
    servers.push(allowed.server, other.server);
    allowedSite = `http://127.0.0.1:${allowed.port}`;
    otherSite = `http://127.0.0.1:${other.port}`;
    const app = createApp();
    const api = await listen((request) => app.fetch(request, { WOBBLE_API_TOKEN: TOKEN, WOBBLE_CORS_ORIGINS: allowedSite }));
    servers.push(api.server);
    apiUrl = `http://127.0.0.1:${api.port}`;
    browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  });

  afterAll(async () => {
    await browser?.close();
    await Promise.all(servers.map((s) => new Promise<void>((resolve) => s.close(() => resolve()))));
  });

  /** Runs fetch in the page; a network-level (CORS) failure comes back as { error }. */
  async function fetchFrom(page: Page, path: string, init: { method?: string; headers?: Record<string, string>; body?: string }) {
    return page.evaluate(
      async ({ url, init }) => {
        try {
          const res = await fetch(url, init);
          return { status: res.status, body: await res.text(), challenge: res.headers.get('www-authenticate') };
        } catch (e) {
          return { error: String(e) };
        }
      },
      { url: apiUrl + path, init },
    );
  }

  it('a listed origin gets the report with its token, and can read the 401 without it', async () => {
    const page = await browser.newPage();
    await page.goto(allowedSite);
    const body = JSON.stringify(momentsProposal({ resampling: { draws: 20, seed: 1 } }));
    const ok = await fetchFrom(page, '/v1/stress', { method: 'POST', headers: { 'content-type': 'application/json', authorization: `Bearer ${TOKEN}` }, body });
    expect(ok).toMatchObject({ status: 200 });
    expect(JSON.parse((ok as { body: string }).body).meta.drawsCompleted).toBe(20);
    const refused = await fetchFrom(page, '/v1/stress', { method: 'POST', headers: { 'content-type': 'application/json' }, body });
    expect(refused).toMatchObject({ status: 401, challenge: 'Bearer realm="wobble"' });
    await page.close();
  });

  it('an origin that is not listed is blocked by the browser, even with the token', async () => {
    const page = await browser.newPage();
    await page.goto(otherSite);
    const body = JSON.stringify(momentsProposal());
    const blocked = await fetchFrom(page, '/v1/stress', { method: 'POST', headers: { 'content-type': 'application/json', authorization: `Bearer ${TOKEN}` }, body });
    expect(blocked).toHaveProperty('error');
    // Open routes are still fetched but unreadable cross-origin without an allowed origin.
    expect(await fetchFrom(page, '/healthz', {})).toHaveProperty('error');
    await page.close();
  });
});
