import { existsSync, readFileSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { serve, type ServerType } from '@hono/node-server';
import { Hono } from 'hono';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import demo from '../../schemas/examples/demo-proposal.json';
import { createApp } from '../../src/http/app.js';
import { renderVerdictJunit } from '../../src/render/junit.js';
import { CAUTIONS } from '../../src/schema/cautions.js';
import { sampleReport } from '../helpers/sample-report.js';

/**
 * The reviewer page in a real browser (Debian Chromium driven by playwright-core) against the
 * real service (createApp), at a desktop and a phone viewport. A wrapper in front of the app can
 * demand a bearer token, to test the page's token prompt; it only checks the header and passes
 * every request on unchanged.
 */

const CHROMIUM = '/usr/bin/chromium';
const CHROMIUM_ARGS = ['--headless', '--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run'];
const SCREENSHOT_DIR = '/tmp';
const TOKEN = 'test-token-1234';

/** Fewer draws than the demo's 500 keep the suite quick; the page does not depend on the count. */
const DEMO = { ...demo, resampling: { ...demo.resampling, draws: 200 } };
const HOSTILE = ['<img src=x onerror="window.__pwned=1">', '<script>window.__pwned=2</script>', '"><svg onload="window.__pwned=3">'];

interface SeenRequest {
  method: string;
  path: string;
  authorization: string | undefined;
}

function wrapperApp(seen: SeenRequest[], requireToken: () => boolean): Hono {
  const app = createApp();
  const front = new Hono();
  front.all('*', async (c) => {
    const url = new URL(c.req.url);
    seen.push({ method: c.req.method, path: url.pathname + url.search, authorization: c.req.header('authorization') });
    if (requireToken() && c.req.method === 'POST' && url.pathname.startsWith('/v1/') && c.req.header('authorization') !== `Bearer ${TOKEN}`) {
      return c.body(JSON.stringify({ type: 'about:blank', title: 'Unauthorized', status: 401, detail: 'send Authorization: Bearer <token>' }), 401, {
        'content-type': 'application/problem+json',
      });
    }
    return app.fetch(c.req.raw);
  });
  return front;
}

const VIEWPORTS = [
  { name: 'desktop', width: 1280, height: 900 },
  { name: 'phone', width: 390, height: 844 },
] as const;

describe.skipIf(!existsSync(CHROMIUM))('reviewer page in Chromium', () => {
  const seen: SeenRequest[] = [];
  let tokenRequired = false;
  let server: ServerType;
  let baseUrl = '';
  let browser: Browser;

  beforeAll(async () => {
    const port = await new Promise<number>((resolve) => {
      server = serve({ fetch: wrapperApp(seen, () => tokenRequired).fetch, port: 0, hostname: '127.0.0.1' }, (info: AddressInfo) => resolve(info.port));
    });
    baseUrl = `http://127.0.0.1:${port}`;
    browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  });

  afterAll(async () => {
    await browser?.close();
    await new Promise<void>((resolve) => (server ? server.close(() => resolve()) : resolve()));
  });

  for (const viewport of VIEWPORTS) {
    describe(`at ${viewport.width}×${viewport.height}`, () => {
      let context: BrowserContext;
      let page: Page;
      const offsite: string[] = [];
      const dialogs: string[] = [];
      const consoleErrors: string[] = [];

      beforeAll(async () => {
        context = await browser.newContext({ viewport: { width: viewport.width, height: viewport.height }, acceptDownloads: true });
        // Anything not served by the app would be an external resource: record it and refuse it.
        await context.route('**/*', (route) => {
          const url = route.request().url();
          if (url.startsWith(baseUrl) || url.startsWith('blob:') || url.startsWith('data:')) return route.continue();
          offsite.push(url);
          return route.abort();
        });
        page = await context.newPage();
        page.on('dialog', (d) => {
          dialogs.push(d.message());
          void d.dismiss();
        });
        page.on('console', (m) => {
          if (m.type() === 'error') consoleErrors.push(m.text());
        });
      });

      afterAll(async () => {
        await context?.close();
      });

      beforeEach(async () => {
        seen.length = 0;
        consoleErrors.length = 0;
        tokenRequired = false;
        await page.goto(`${baseUrl}/`);
      });

      async function stressDemo(proposal: unknown = DEMO): Promise<void> {
        await page.fill('#proposal', JSON.stringify(proposal));
        await page.click('#run-stress');
        await page.locator('#report .answer').waitFor();
        await expect.poll(() => page.textContent('#status')).toBe('Report ready.');
      }

      const horizontalOverflow = () => page.evaluate(() => document.scrollingElement!.scrollWidth - window.innerWidth);

      it('sends a Content-Security-Policy that lets the page script run and nothing else', async () => {
        const response = await page.goto(`${baseUrl}/`);
        const csp = response!.headers()['content-security-policy'];
        expect(csp).toMatch(/script-src 'sha256-[A-Za-z0-9+/=]+'/);
        expect(csp).toContain("frame-ancestors 'none'");
        expect(response!.headers()['x-content-type-options']).toBe('nosniff');
        // The hashed script runs under that policy: Load demo works.
        await page.click('#load-demo');
        await expect.poll(() => page.inputValue('#proposal')).not.toBe('');
        expect(consoleErrors.filter((e) => /Content Security Policy/i.test(e))).toEqual([]);
      });

      it('brings the answer into view after Stress, headline first, focus on the result heading, cautions once', async () => {
        await page.click('#load-demo');
        await expect.poll(() => page.inputValue('#proposal')).not.toBe('');
        await page.fill('#proposal', JSON.stringify(DEMO));
        await page.click('#run-stress');
        await page.locator('#report .answer').waitFor();
        await expect.poll(() => page.textContent('#status')).toBe('Report ready.');

        const heading = await page.locator('#result-title').boundingBox();
        const answer = await page.locator('#report .answer').boundingBox();
        expect(heading!.y).toBeGreaterThanOrEqual(0);
        expect(heading!.y + heading!.height).toBeLessThanOrEqual(viewport.height);
        // The headline itself starts on screen, right under the result heading.
        expect(answer!.y).toBeGreaterThan(0);
        expect(answer!.y).toBeLessThan(viewport.height / 2);
        console.info(`[${viewport.name}] result heading at y=${heading!.y.toFixed(0)} px, answer at y=${answer!.y.toFixed(0)} px of ${viewport.height} (${((100 * answer!.y) / viewport.height).toFixed(0)} %)`);
        expect(await page.evaluate(() => document.activeElement?.id)).toBe('result-title');

        // The headline is the first thing in the report after its title.
        const firstSection = await page.evaluate(() => document.querySelector('#report section')?.className);
        expect(firstSection).toBe('answer');
        const headline = await page.locator('#report .answer .headline').innerText();
        expect(headline).toMatch(/of the variability of the re-optimised weights comes from the return forecasts/);
        expect(headline).toMatch(/±/);

        // Cautions: once on the page, not repeated by the embedded report.
        const bodyText = await page.locator('body').innerText();
        for (const caution of CAUTIONS) expect(bodyText.split(caution).length - 1).toBe(1);
        expect(await page.locator('#report .cautions').count()).toBe(0);

        expect(await horizontalOverflow()).toBeLessThanOrEqual(0);
        // Every asset note is readable without scrolling sideways: it sits on its own row under the
        // asset's figures, inside the visible part of the table's box (on a phone too).
        const notes = await page.evaluate(() =>
          Array.from(document.querySelectorAll('#report table.positions .note-text')).map((td) => {
            const box = td.getBoundingClientRect();
            const wrap = td.closest('.table-wrap')!.getBoundingClientRect();
            return { left: box.left - wrap.left, right: wrap.right - box.right, width: box.width };
          }),
        );
        expect(notes.length).toBeGreaterThan(0);
        for (const n of notes) {
          expect(n.left).toBeGreaterThanOrEqual(0);
          expect(n.right).toBeGreaterThanOrEqual(-1);
        }
        await page.screenshot({ path: `${SCREENSHOT_DIR}/wobble-${viewport.name}-after-stress.png` });
        await page.screenshot({ path: `${SCREENSHOT_DIR}/wobble-${viewport.name}-full.png`, fullPage: true });
        expect(offsite).toEqual([]);
        expect(dialogs).toEqual([]);
      });

      it('has no sideways scrolling on load and after Optimize; wide tables scroll inside their own box', async () => {
        expect(await horizontalOverflow()).toBeLessThanOrEqual(0);
        await page.fill('#proposal', JSON.stringify(DEMO));
        await page.click('#run-optimize');
        await page.locator('#optimize-table').waitFor();
        expect(await page.evaluate(() => document.activeElement?.id)).toBe('result-title');
        const heading = await page.locator('#result-title').boundingBox();
        expect(heading!.y + heading!.height).toBeLessThanOrEqual(viewport.height);
        expect(await horizontalOverflow()).toBeLessThanOrEqual(0);
        const wrap = await page.evaluate(() => {
          const box = document.querySelector('#result .table-wrap') as HTMLElement;
          return { client: box.clientWidth, scroll: box.scrollWidth, overflowX: getComputedStyle(box).overflowX };
        });
        expect(wrap.overflowX).toBe('auto');
        if (viewport.width < 600) expect(wrap.scroll).toBeGreaterThan(wrap.client);
        await page.screenshot({ path: `${SCREENSHOT_DIR}/wobble-${viewport.name}-after-optimize.png` });
      });

      it('opens a proposal from a file and from a drop on the text box', async () => {
        const text = JSON.stringify(DEMO, null, 2);
        await page.setInputFiles('#proposal-file', { name: 'proposal.json', mimeType: 'application/json', buffer: Buffer.from(text) });
        await expect.poll(() => page.inputValue('#proposal')).toBe(text);
        expect(await page.textContent('#status')).toBe('Loaded proposal.json. Press Stress or Optimize.');

        await page.fill('#proposal', '');
        const dropped = JSON.stringify({ ...DEMO, weights: DEMO.weights });
        const transfer = await page.evaluateHandle((content) => {
          const dt = new DataTransfer();
          dt.items.add(new File([content], 'dropped.json', { type: 'application/json' }));
          return dt;
        }, dropped);
        await page.dispatchEvent('#proposal', 'drop', { dataTransfer: transfer });
        await expect.poll(() => page.inputValue('#proposal')).toBe(dropped);

        // A file that is not JSON is refused with a message, and the text box keeps what it had.
        await page.setInputFiles('#proposal-file', { name: 'notes.txt', mimeType: 'text/plain', buffer: Buffer.from('not json') });
        await page.locator('#errors').waitFor({ state: 'visible' });
        expect(await page.locator('#errors h2').textContent()).toBe('The file notes.txt is not valid JSON');
        expect(await page.inputValue('#proposal')).toBe(dropped);
      });

      it('keeps hostile asset names inert: shown as text, nothing runs', async () => {
        const assets = [...HOSTILE, ...DEMO.assets.slice(HOSTILE.length)];
        // The demo's group constraint names the assets being renamed: leave it out here.
        await stressDemo({ ...DEMO, assets, constraints: { ...DEMO.constraints, groups: undefined } });
        expect(await page.locator('#report script, #report img, #report iframe').count()).toBe(0);
        expect(await page.locator('#report [onerror], #report [onload]').count()).toBe(0);
        const firstColumn = await page.locator('section[aria-labelledby="positions-title"] tbody th[scope="rowgroup"]').allTextContents();
        for (const [i, name] of HOSTILE.entries()) expect(firstColumn[i].startsWith(name)).toBe(true);
        await page.waitForTimeout(200);
        expect(await page.evaluate(() => (window as unknown as { __pwned?: number }).__pwned)).toBeUndefined();
        expect(dialogs).toEqual([]);
        expect(await horizontalOverflow()).toBeLessThanOrEqual(0);
      });

      it('offers the report as HTML, JSON and markdown downloads', async () => {
        await stressDemo();
        const read = async (id: string) => {
          const [download] = await Promise.all([page.waitForEvent('download'), page.click(`#${id}`)]);
          return { name: download.suggestedFilename(), text: readFileSync((await download.path())!, 'utf8') };
        };
        const json = await read('download-json');
        expect(json.name).toBe('wobble-report.json');
        const report = JSON.parse(json.text) as { summary: { headline: string }; cautions: string[] };
        expect(Object.keys(report)[0]).toBe('summary');
        expect(await page.locator('#report .answer .headline').innerText()).toBe(report.summary.headline);
        const markdown = await read('download-markdown');
        expect(markdown.name).toBe('wobble-report.md');
        expect(markdown.text.split('\n')[2]).toBe(report.summary.headline.replace(/[\\`*_[\]<>|#~]/g, (c) => `\\${c}`));
        const html = await read('download-html');
        expect(html.name).toBe('wobble-report.html');
        // The standalone report keeps its cautions.
        expect(html.text).toContain('Please read first');
      });

      it('shows pass or fail when the proposal carries a policy (via /v1/check)', async () => {
        await stressDemo({ ...DEMO, policy: { rules: [{ id: 'turnover', metric: 'turnover-from-proposal.p50', max: 0.0001 }] } });
        expect(seen.some((r) => r.method === 'POST' && r.path === '/v1/check')).toBe(true);
        expect(await page.locator('#result-title .outcome').textContent()).toBe('policy: FAIL');
        expect(await page.locator('#report .verdict.fail').count()).toBe(1);
      });

      it('clears the previous result when a new error shows', async () => {
        await stressDemo();
        await page.fill('#proposal', '{"assets": ["a", "b"], "weights": [0.5, ');
        await page.click('#run-stress');
        await page.locator('#errors').waitFor({ state: 'visible' });
        expect(await page.locator('#errors h2').textContent()).toBe('The proposal is not valid JSON');
        expect(await page.locator('#result').innerText()).toBe('');
        // The message is brought into view and focused, as a result would be.
        expect(await page.evaluate(() => document.activeElement?.id)).toBe('errors');
        const box = await page.locator('#errors').boundingBox();
        expect(box!.y).toBeGreaterThanOrEqual(0);
        expect(box!.y).toBeLessThan(viewport.height);
        // A problem+json answer lists each bad field with its JSON path.
        await page.fill('#proposal', JSON.stringify({ ...DEMO, weights: [1] }));
        await page.click('#run-stress');
        await expect.poll(() => page.locator('#errors h2').textContent()).toMatch(/^400 · /);
        expect(await page.locator('#errors li code').allTextContents()).toContain('weights');
      });

      it('asks for the access token on 401, keeps it for the tab, and sends it from then on', async () => {
        tokenRequired = true;
        await page.fill('#proposal', JSON.stringify(DEMO));
        await page.click('#run-stress');
        await page.locator('#token').waitFor({ state: 'visible' });
        expect(await page.evaluate(() => document.activeElement?.id)).toBe('token-input');
        await page.fill('#token-input', TOKEN);
        await page.click('#token-submit');
        await page.locator('#report .answer').waitFor();
        expect(await page.evaluate(() => sessionStorage.getItem('wobble-token'))).toBe(TOKEN);
        expect(await page.evaluate(() => localStorage.length)).toBe(0);
        const posts = seen.filter((r) => r.method === 'POST');
        expect(posts[0].authorization).toBeUndefined();
        expect(posts.slice(1).every((r) => r.authorization === `Bearer ${TOKEN}`)).toBe(true);
        // A new tab (a fresh session) starts without it.
        const other = await context.newPage();
        await other.goto(`${baseUrl}/`);
        expect(await other.evaluate(() => sessionStorage.getItem('wobble-token'))).toBeNull();
        await other.close();
        await page.evaluate(() => sessionStorage.clear());
      });

      it('prints the whole report: no clipped frame, the form and downloads left out', async () => {
        await stressDemo();
        await page.emulateMedia({ media: 'print' });
        try {
          expect(await page.locator('#proposal-form').isVisible()).toBe(false);
          expect(await page.locator('.downloads').isVisible()).toBe(false);
          expect(await page.locator('#cautions').isVisible()).toBe(true);
          // The report is part of the page (no frame) and its last section is laid out.
          expect(await page.locator('iframe').count()).toBe(0);
          expect(await page.locator('#report #about-title').isVisible()).toBe(true);
          if (viewport.name === 'desktop') {
            const pdf = await page.pdf({ format: 'A4' });
            // Count page objects in the PDF: the report runs to several pages, not one clipped page.
            const pages = (pdf.toString('latin1').match(/\/Type\s*\/Page[^s]/g) ?? []).length;
            console.info(`[print] ${pages} A4 pages`);
            expect(pages).toBeGreaterThan(2);
          }
        } finally {
          await page.emulateMedia({ media: 'screen' });
        }
      });
    });
  }

  it('writes JUnit XML that a browser XML parser accepts', async () => {
    const page = await browser.newPage();
    await page.goto(`${baseUrl}/`);
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
    await page.close();
    expect(parsed.errors).toBe(0);
    expect(parsed.suite).toBe('wobble');
    expect(parsed.cases).toEqual([
      ['mean-variance', `<id & "quotes" 'x'>`, 1],
      ['mean-variance', 'outside-band', 0],
    ]);
  });
});
