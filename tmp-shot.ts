import { serve } from '@hono/node-server';
import { chromium } from 'playwright-core';
import demo from './schemas/examples/demo-proposal.json';
import { createApp } from './src/http/app.js';
const server = serve({ fetch: createApp().fetch, port: 8913, hostname: '127.0.0.1' });
const browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ['--headless', '--no-sandbox', '--disable-gpu'] });
for (const [name, w, h] of [['phone', 390, 844], ['desktop', 1280, 900]] as const) {
  const page = await browser.newPage({ viewport: { width: w, height: h } });
  await page.goto('http://127.0.0.1:8913/');
  const before = await page.locator('#result').boundingBox();
  console.log(name, 'result box before run y=', before?.y);
  await page.fill('#proposal', JSON.stringify({ ...demo, policy: { rules: [{ metric: 'turnover-from-proposal.p50', max: 0.5 }, { metric: 'outside-band-share', max: 0.2 }] } }));
  await page.click('#run-stress');
  await page.locator('#report .answer').waitFor({ timeout: 60000 });
  await page.waitForTimeout(300);
  await page.screenshot({ path: `/tmp/i13-${name}-0.png` });
  for (let k = 1; k <= 4; k++) {
    await page.evaluate((y) => window.scrollBy(0, y), h - 60);
    await page.screenshot({ path: `/tmp/i13-${name}-${k}.png` });
  }
  await page.emulateMedia({ media: 'print' });
  await page.pdf({ path: `/tmp/i13-${name}.pdf`, format: 'A4' });
  await page.close();
}
await browser.close();
server.close();
