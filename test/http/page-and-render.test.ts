import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { createApp } from '../../src/http/app.js';
import { CAUTIONS } from '../../src/schema/cautions.js';
import { escapeHtml } from '../../src/render/html.js';
import { historyProposal } from '../helpers/proposals.js';
import { sampleReport } from '../helpers/sample-report.js';

const app = createApp();
const post = (path: string, body: unknown) => app.request(path, { method: 'POST', headers: { 'content-type': 'application/json' }, body: typeof body === 'string' ? body : JSON.stringify(body) });

/** CSP hash-source of an inline block: base64 SHA-256 of its exact text (CSP Level 3, §8.4 "hash-source"), computed here with Node's own crypto. */
const hashSource = (text: string) => `'sha256-${createHash('sha256').update(text, 'utf8').digest('base64')}'`;

describe('GET / security headers', () => {
  it('allows only the page’s own inline script and stylesheet, by hash; no framing; nosniff', async () => {
    const res = await app.request('/');
    const html = await res.text();
    const csp = res.headers.get('content-security-policy') ?? '';
    const directives = new Map(csp.split(';').map((d) => d.trim().split(/\s+/)).map(([name, ...values]) => [name, values.join(' ')]));
    const scripts = [...html.matchAll(/<script>([\s\S]*?)<\/script>/g)].map((m) => m[1]);
    const styles = [...html.matchAll(/<style>([\s\S]*?)<\/style>/g)].map((m) => m[1]);
    expect(scripts).toHaveLength(1);
    expect(styles).toHaveLength(1);
    expect(directives.get('default-src')).toBe("'none'");
    expect(directives.get('script-src')).toBe(hashSource(scripts[0]));
    expect(directives.get('style-src')).toBe(hashSource(styles[0]));
    expect(directives.get('frame-ancestors')).toBe("'none'");
    expect(directives.get('connect-src')).toBe("'self'");
    expect(csp).not.toMatch(/unsafe-inline|unsafe-eval|\*/);
    expect(res.headers.get('x-content-type-options')).toBe('nosniff');
  });
});

describe('POST /v1/render', () => {
  const report = sampleReport();

  it('renders a report as standalone HTML with the cautions, or embedded without them', async () => {
    const standalone = await post('/v1/render?format=html', report);
    expect(standalone.status).toBe(200);
    expect(standalone.headers.get('content-type')).toContain('text/html');
    const full = await standalone.text();
    for (const c of CAUTIONS) expect(full).toContain(escapeHtml(c));
    const embedded = await (await post('/v1/render?format=html&embed=true', report)).text();
    expect(embedded).toContain(escapeHtml(report.summary.sentences[0]));
    for (const c of CAUTIONS) expect(embedded).not.toContain(escapeHtml(c));
  });

  it('renders markdown with the verdict and the headline first', async () => {
    const res = await post('/v1/render?format=markdown', report);
    expect(res.headers.get('content-type')).toContain('text/markdown');
    const lines = (await res.text()).split('\n');
    expect(lines[2]).toMatch(/^\*\*Verdict: FAIL\*\*/);
    expect(lines[4]).toContain('of the variability of the re-optimised weights comes from the return forecasts');
  });

  it('names what is wrong with a body that is not a report, and refuses unknown formats', async () => {
    const bad = await post('/v1/render', { ...report, summary: { ...report.summary, headline: 3 } });
    expect(bad.status).toBe(400);
    expect(((await bad.json()) as { errors: { path: string }[] }).errors.map((e) => e.path)).toContain('summary.headline');
    expect((await post('/v1/render?format=pdf', report)).status).toBe(400);
  });
});

describe('POST /v1/check with the policy inside the proposal', () => {
  it('judges proposal.policy when the envelope has none (the page sends it this way)', async () => {
    const res = await post('/v1/check', { proposal: { ...historyProposal(), policy: { rules: [{ metric: 'turnover-from-proposal.p50', max: 0 }] } } });
    expect(res.status).toBe(200);
    const body = (await res.json()) as { verdict: { pass: boolean }; summary: { headline: string } };
    expect(body.verdict.pass).toBe(false);
    expect(body.summary.headline.length).toBeGreaterThan(0);
  });
});
