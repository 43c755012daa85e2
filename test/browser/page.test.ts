import { existsSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { serve, type ServerType } from '@hono/node-server';
import { Hono, type Context } from 'hono';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import { methodLabel } from '../../src/render/format.js';
import { renderReportHtml } from '../../src/render/html.js';
import { renderVerdictJunit } from '../../src/render/junit.js';
import { renderPage } from '../../src/render/page.js';
import { CAUTIONS } from '../../src/schema/cautions.js';
import { momentsProposal } from '../helpers/proposals.js';
import { SAMPLE_ASSETS, sampleOptimizeResponse, sampleReport } from '../helpers/sample-report.js';

/**
 * The reviewer page in a real browser (Debian Chromium driven by playwright-core). The API is
 * stubbed with fixed sample content: this tests the page, the real routes are tested elsewhere.
 */

const CHROMIUM = '/usr/bin/chromium';
const CHROMIUM_ARGS = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'];
const SCREENSHOT = '/tmp/wobble-page.png';

interface SeenRequest {
  method: string;
  path: string;
  contentType: string | undefined;
  body: string;
}

/** A problem+json answer shaped like the real API's (RFC 9457 with JSON paths). */
function problem(c: Context, detail: string, errors: { path: string; message: string }[]) {
  return c.body(JSON.stringify({ type: 'https://wobble.invalid/problems/invalid-request', title: 'The request is not a valid proposal', status: 400, detail, errors }), 400, {
    'content-type': 'application/problem+json; charset=utf-8',
  });
}

/** Parse the stub's request body; a problem response when it is not a proposal-like object. */
function readProposal(c: Context, body: string): { assets?: string[] } | Response {
  let parsed: unknown;
  try {
    parsed = JSON.parse(body);
  } catch {
    return problem(c, 'the body is not valid JSON', [{ path: '', message: 'not valid JSON' }]);
  }
  const value = parsed as { weights?: unknown; assets?: unknown };
  if (!Array.isArray(value.weights)) {
    return problem(c, 'weights: expected an array of numbers', [
      { path: 'weights', message: 'expected an array of numbers (one per asset), got nothing' },
      { path: 'inputs', message: 'required' },
    ]);
  }
  return { assets: Array.isArray(value.assets) ? (value.assets as string[]) : undefined };
}

function stubApp(seen: SeenRequest[]): Hono {
  const app = new Hono();
  app.use('*', async (c, next) => {
    const url = new URL(c.req.url);
    seen.push({ method: c.req.method, path: url.pathname + url.search, contentType: c.req.header('content-type'), body: c.req.method === 'POST' ? await c.req.raw.clone().text() : '' });
    await next();
  });
  app.get('/', (c) => c.html(renderPage()));
  app.get('/v1/examples/demo', (c) => c.json(momentsProposal()));
  app.post('/v1/optimize', async (c) => {
    const proposal = readProposal(c, await c.req.text());
    return proposal instanceof Response ? proposal : c.json(sampleOptimizeResponse());
  });
  app.post('/v1/stress', async (c) => {
    const proposal = readProposal(c, await c.req.text());
    if (proposal instanceof Response) return proposal;
    // Ten caller-supplied ids are echoed into the report, as the real service does.
    const report = sampleReport(proposal.assets?.length === SAMPLE_ASSETS.length ? { assets: proposal.assets } : {});
    return c.req.query('format') === 'html' ? c.html(renderReportHtml(report)) : c.json(report);
  });
  return app;
}

describe.skipIf(!existsSync(CHROMIUM))('reviewer page in Chromium', () => {
  const seen: SeenRequest[] = [];
  const offsite: string[] = [];
  const dialogs: string[] = [];
  let server: ServerType;
  let baseUrl = '';
  let browser: Browser;
  let context: BrowserContext;
  let page: Page;

  beforeAll(async () => {
    const port = await new Promise<number>((resolve) => {
      server = serve({ fetch: stubApp(seen).fetch, port: 0, hostname: '127.0.0.1' }, (info: AddressInfo) => resolve(info.port));
    });
    baseUrl = `http://127.0.0.1:${port}`;
    browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
    context = await browser.newContext({ viewport: { width: 1280, height: 900 } });
    // Anything not served by the stub would be an external resource: record it and refuse it.
    await context.route('**/*', (route) => {
      const url = route.request().url();
      if (url.startsWith(baseUrl) || url.startsWith('blob:') || url.startsWith('data:') || url === 'about:srcdoc') return route.continue();
      offsite.push(url);
      return route.abort();
    });
    page = await context.newPage();
    page.on('dialog', (d) => {
      dialogs.push(d.message());
      void d.dismiss();
    });
  });

  afterAll(async () => {
    await browser?.close();
    await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
  });

  beforeEach(async () => {
    seen.length = 0;
    await page.goto(`${baseUrl}/`);
  });

  it('shows the cautions above the form', async () => {
    const cautions = page.locator('#cautions');
    await expect.poll(() => cautions.isVisible()).toBe(true);
    const items = await cautions.locator('li').allTextContents();
    expect(items).toEqual([...CAUTIONS]);
    const cautionsBox = await cautions.boundingBox();
    const textareaBox = await page.locator('#proposal').boundingBox();
    expect(cautionsBox!.y + cautionsBox!.height).toBeLessThanOrEqual(textareaBox!.y);
    expect(await page.locator('#errors').isVisible()).toBe(false);
  });

  it('loads the demo, runs Stress and shows the report in a sandboxed frame', async () => {
    await page.click('#load-demo');
    await expect.poll(() => page.inputValue('#proposal')).not.toBe('');
    expect(JSON.parse(await page.inputValue('#proposal'))).toEqual(momentsProposal());

    await page.click('#run-stress');
    const frameElement = page.locator('#report-frame');
    await frameElement.waitFor({ state: 'attached' });
    expect(await frameElement.getAttribute('sandbox')).toBe('allow-same-origin');
    const frame = page.frameLocator('#report-frame');
    await frame.locator('h1').waitFor();
    const text = await frame.locator('body').innerText();
    for (const asset of SAMPLE_ASSETS) expect(text).toContain(asset);
    expect(text).toContain('Verdict: fail');
    for (const caution of CAUTIONS) expect(text).toContain(caution);
    expect(await frame.locator('svg.bands g title').count()).toBe(SAMPLE_ASSETS.length);
    await expect.poll(() => page.textContent('#status')).toBe('Report ready.');

    // The page sent the textarea content to the HTML form of the stress route.
    const stress = seen.find((r) => r.method === 'POST' && r.path.startsWith('/v1/stress'));
    expect(stress?.path).toBe('/v1/stress?format=html');
    expect(stress?.contentType).toContain('application/json');
    expect(JSON.parse(stress!.body)).toEqual(momentsProposal());

    // The frame is sized to its content, so the whole report scrolls with the page.
    const frameHeight = (await frameElement.boundingBox())!.height;
    expect(frameHeight).toBeGreaterThan(1500);
    await page.screenshot({ path: SCREENSHOT, fullPage: true });
    expect(existsSync(SCREENSHOT)).toBe(true);
    expect(offsite).toEqual([]);
  });

  it('runs Optimize and renders the weights of every method per asset', async () => {
    await page.click('#load-demo');
    await expect.poll(() => page.inputValue('#proposal')).not.toBe('');
    await page.click('#run-optimize');
    const table = page.locator('#optimize-table');
    await table.waitFor();
    const expected = sampleOptimizeResponse();
    expect(await table.locator('thead th').allTextContents()).toEqual(['Asset', ...expected.methods.map((m) => methodLabel(m.method))]);
    const rows = table.locator('tbody tr');
    expect(await rows.count()).toBe(SAMPLE_ASSETS.length + 5);
    for (const [i, asset] of SAMPLE_ASSETS.entries()) {
      const cells = await rows.nth(i).locator('th, td').allTextContents();
      expect(cells).toEqual([asset, ...expected.methods.map((m) => `${(m.base.weights[i] * 100).toFixed(1)}%`)]);
    }
    expect(await page.textContent('#result')).toContain('short-history');
    expect(seen.some((r) => r.method === 'POST' && r.path === '/v1/optimize')).toBe(true);
  });

  it('shows a readable error for invalid JSON without calling the service', async () => {
    await page.fill('#proposal', '{"assets": ["a", "b"], "weights": [0.5, ');
    await page.click('#run-stress');
    const errors = page.locator('#errors');
    await errors.waitFor({ state: 'visible' });
    expect(await errors.locator('h2').textContent()).toBe('The proposal is not valid JSON');
    // The browser's own parser message follows (its wording varies between engines).
    expect((await errors.locator('p').textContent())!.length).toBeGreaterThan(0);
    expect(seen.filter((r) => r.method === 'POST')).toEqual([]);
  });

  it('lists each problem+json error with its JSON path', async () => {
    await page.fill('#proposal', '{"assets": ["a", "b"]}');
    await page.click('#run-optimize');
    const errors = page.locator('#errors');
    await errors.waitFor({ state: 'visible' });
    expect(await errors.locator('h2').textContent()).toBe('400 · The request is not a valid proposal');
    expect(await errors.locator('li').allTextContents()).toEqual(['weights: expected an array of numbers (one per asset), got nothing', 'inputs: required']);
    expect(await errors.locator('li code').allTextContents()).toEqual(['weights', 'inputs']);
    // A later successful run clears the error box.
    await page.click('#load-demo');
    await expect.poll(() => errors.isVisible()).toBe(false);
  });

  it('keeps hostile asset ids inert in the report frame', async () => {
    const hostile = ['<script>alert(1)</script>', '"><img src=x onerror=alert(2)>', ...SAMPLE_ASSETS.slice(2)];
    await page.fill('#proposal', JSON.stringify({ ...momentsProposal(), assets: hostile, weights: hostile.map(() => 0.1) }));
    await page.click('#run-stress');
    const frame = page.frameLocator('#report-frame');
    await frame.locator('h1').waitFor();
    expect(await frame.locator('script, img').count()).toBe(0);
    const firstColumn = await frame.locator('section[aria-labelledby="positions-title"] tbody tr td:first-child').allTextContents();
    expect(firstColumn[0]).toBe(hostile[0]);
    expect(firstColumn[1]).toBe(hostile[1]);
    // Give any injected handler a moment to fire; none may.
    await page.waitForTimeout(200);
    expect(dialogs).toEqual([]);
  });

  it('writes JUnit XML that a browser XML parser accepts', async () => {
    const r = sampleReport();
    r.verdict!.rules[0] = { ...r.verdict!.rules[0], id: `<id & "quotes" 'x'>`, message: 'a < b & c' };
    const parsed = await page.evaluate((xml) => {
      const doc = new DOMParser().parseFromString(xml, 'application/xml');
      return {
        errors: doc.getElementsByTagName('parsererror').length,
        suite: doc.documentElement.getAttribute('name'),
        cases: Array.from(doc.getElementsByTagName('testcase')).map((t) => [t.getAttribute('classname'), t.getAttribute('name'), t.getElementsByTagName('failure').length]),
      };
    }, renderVerdictJunit(r));
    expect(parsed.errors).toBe(0);
    expect(parsed.suite).toBe('wobble');
    expect(parsed.cases).toEqual([
      ['mean-variance', `<id & "quotes" 'x'>`, 1],
      ['mean-variance', 'outside-band', 0],
    ]);
  });
});
