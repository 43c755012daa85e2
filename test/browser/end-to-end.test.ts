import { existsSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { serve, type ServerType } from '@hono/node-server';
import { chromium, type Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createApp } from '../../src/http/app.js';
import { CAUTIONS } from '../../src/schema/cautions.js';
import { demoProposal } from '../helpers/proposals.js';

// A reviewer's whole path against the real service (no stubs): open the page, load the demo,
// run Optimize and Stress, read the results, and see a malformed proposal explained.
const CHROMIUM = '/usr/bin/chromium';
const CHROMIUM_ARGS = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'];

describe.skipIf(!existsSync(CHROMIUM))('reviewer page against the real service', () => {
  let server: ServerType;
  let baseUrl = '';
  let browser: Browser;

  beforeAll(async () => {
    const port = await new Promise<number>((resolve) => {
      server = serve({ fetch: createApp().fetch, port: 0, hostname: '127.0.0.1' }, (info: AddressInfo) => resolve(info.port));
    });
    baseUrl = `http://127.0.0.1:${port}`;
    browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  });

  afterAll(async () => {
    await browser?.close();
    await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
  });

  it('loads the demo, optimizes, stresses and shows the report with its cautions', async () => {
    const page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    await page.goto(`${baseUrl}/`);
    await page.click('#load-demo');
    await expect.poll(() => page.inputValue('#proposal')).not.toBe('');
    expect(JSON.parse(await page.inputValue('#proposal'))).toEqual(demoProposal());

    await page.click('#run-optimize');
    const table = page.locator('#optimize-table');
    await table.waitFor();
    expect(await table.locator('thead th').allTextContents()).toContain('minimum-variance');
    expect(await table.locator('tbody').innerText()).toContain('emerging-equity');

    await page.click('#run-stress');
    await page.locator('#report .answer').waitFor({ timeout: 60_000 });
    const text = await page.locator('#report').innerText();
    expect(text).toContain('domestic-equity');
    expect(await page.locator('#report .headline').innerText()).toMatch(/of the variability of the re-optimised weights comes from the return forecasts/);
    // The cautions show once on the page (above the form), not again inside the report.
    const pageText = await page.locator('body').innerText();
    for (const caution of CAUTIONS) expect(pageText.split(caution).length - 1).toBe(1);
    await page.screenshot({ path: '/tmp/wobble-e2e.png', fullPage: true });
    await page.close();
  });

  it('explains a malformed proposal with the JSON path', async () => {
    const page = await browser.newPage();
    await page.goto(`${baseUrl}/`);
    const demo = demoProposal();
    await page.fill('#proposal', JSON.stringify({ ...demo, weights: demo.weights.slice(1) }));
    await page.click('#run-stress');
    const errors = page.locator('#errors');
    await errors.waitFor({ state: 'visible' });
    expect(await errors.innerText()).toMatch(/weights: expected 10 numbers/);
    await page.close();
  });
});
