import { describe, expect, it } from 'vitest';
import { methodLabel } from '../../src/render/format.js';
import { escapeHtml, renderReportHtml } from '../../src/render/html.js';
import { SAMPLE_ASSETS, sampleReport } from '../helpers/sample-report.js';

const HOSTILE_IDS = [
  '<script>alert(1)</script>',
  '"><img src=x onerror=alert(2)>',
  "' onmouseover='alert(3)",
  '</title><svg onload=alert(4)>',
  '&lt;already-escaped&gt;',
];

function hostileReport() {
  return sampleReport({ assets: SAMPLE_ASSETS.map((a, i) => HOSTILE_IDS[i] ?? a) });
}

/** Text of the band chart's SVG (the one with class "bands"). */
function chartOf(html: string): string {
  const start = html.indexOf('<svg class="bands"');
  return html.slice(start, html.indexOf('</svg>', start) + 6);
}

describe('escapeHtml', () => {
  it('encodes the five characters of OWASP XSS prevention rule 1', () => {
    // OWASP Cross Site Scripting Prevention Cheat Sheet: & < > " ' → entities.
    expect(escapeHtml(`& < > " '`)).toBe('&amp; &lt; &gt; &quot; &#39;');
    expect(escapeHtml('&amp;')).toBe('&amp;amp;');
    expect(escapeHtml('plain-id_1')).toBe('plain-id_1');
  });
});

describe('renderReportHtml', () => {
  const report = sampleReport();
  const html = renderReportHtml(report);

  it('is one self-contained document: no scripts, no external resources', () => {
    expect(html.startsWith('<!doctype html>')).toBe(true);
    expect(html).toContain('<html lang="en">');
    expect(html).not.toMatch(/<script/i);
    expect(html).not.toMatch(/<link\b/i);
    expect(html).not.toMatch(/\bsrc=/i);
    expect(html).not.toMatch(/@import|url\(/i);
    expect(html).not.toMatch(/href="(https?:)?\/\//i);
    // A Content-Security-Policy that allows no script at all backs up the escaping.
    expect(html).toContain(`content="default-src 'none'; style-src 'unsafe-inline'; img-src data:"`);
  });

  it('opens with the headline, then the verdict, the chart and the per-asset table; cautions follow in a standalone report', () => {
    const answerAt = html.indexOf('id="answer-title"');
    expect(answerAt).toBeGreaterThan(html.indexOf('<h1>'));
    // Nothing but the title and the sub-line comes before the answer.
    expect(html.slice(html.indexOf('<main'), html.indexOf('<section class="answer"'))).not.toMatch(/<section|<table|<svg/);
    for (const sentence of report.summary.sentences) expect(html).toContain(escapeHtml(sentence));
    const order = ['id="answer-title"', 'Verdict: fail', '<svg class="bands"', 'id="positions-title"', 'Please read first', 'id="proposal-title"', 'id="methods-title"'];
    const at = order.map((marker) => html.indexOf(marker));
    expect(at.every((x) => x > 0)).toBe(true);
    expect(at.slice(0, 3)).toEqual([...at.slice(0, 3)].sort((x, y) => x - y));
    expect(at[4]).toBeGreaterThan(at[2]);
    expect(at[5]).toBeGreaterThan(at[4]);
    for (const c of report.cautions) expect(html).toContain(`<li>${escapeHtml(c)}</li>`);
  });

  it('leaves the cautions box out only when embedded in a page that shows them', () => {
    const embedded = renderReportHtml(report, { embedded: true });
    expect(embedded).not.toContain('Please read first');
    for (const c of report.cautions) expect(embedded).not.toContain(escapeHtml(c));
    expect(embedded).toContain('id="answer-title"');
  });

  it('puts each asset note from the summary under its asset in the compact table', () => {
    const section = html.slice(html.indexOf('id="positions-title"'), html.indexOf('</section>', html.indexOf('id="positions-title"')));
    const groups = section.split('<tbody class="asset').slice(1);
    expect(groups.length).toBe(report.assets.length);
    report.summary.assetNotes.forEach((note, i) => {
      // Each asset is one row group headed by its name; a note is a row of its own beneath the figures.
      expect(groups[i]).toContain(`<th scope="rowgroup">${escapeHtml(report.assets[i])}`);
      if (note !== '') expect(groups[i]).toContain(`<td class="notes" colspan="5"><div class="note-text">${escapeHtml(note)}</div></td>`);
      else expect(groups[i]).not.toContain('class="notes"');
    });
    expect(report.summary.assetNotes.some((n) => n !== '')).toBe(true);
  });

  it('contains every asset, method, finding and warning', () => {
    for (const a of SAMPLE_ASSETS) expect(html).toContain(a);
    for (const m of report.methods) expect(html).toContain(escapeHtml(methodLabel(m.method)));
    for (const f of report.findings) expect(html).toContain(escapeHtml(f.message));
    for (const w of report.warnings) expect(html).toContain(escapeHtml(w.message));
    for (const rule of report.verdict!.rules) expect(html).toContain(escapeHtml(rule.message));
  });

  it('draws one band row per asset: p05–p95 bar, p25–p75 bar, median tick, proposal marker', () => {
    const svg = chartOf(html);
    expect(svg).toContain('role="img"');
    expect((svg.match(/<g><title>/g) ?? []).length).toBe(SAMPLE_ASSETS.length);
    expect((svg.match(/<rect /g) ?? []).length).toBe(2 * SAMPLE_ASSETS.length);
    // Markers: a diamond for the one position outside its band, open circles for the rest.
    expect((svg.match(/<polygon /g) ?? []).length).toBe(1);
    expect((svg.match(/<circle /g) ?? []).length).toBe(SAMPLE_ASSETS.length - 1);
  });

  it('places the proposal marker and the band on a linear axis', () => {
    // The sample's largest value is a 30 % band edge: an axis 0–30 % in steps of 5 %, plotted
    // from x = 200 to x = 820 − 24 = 796 (596 px). emerging-equity's proposal is 12 %:
    // x = 200 + 0.12/0.30 × 596 = 438.4. Its mean-variance band is 0 % … 4.1 %.
    const svg = chartOf(html);
    expect(svg).toMatch(/<polygon points="438\.4,\d+(\.\d)? 445\.4,/);
    const mv = report.methods[0].weights[2];
    const bandStart = 200;
    const bandWidth = ((mv.p95 - mv.p05) / 0.3) * 596;
    expect(svg).toContain(`<rect x="${bandStart.toFixed(1)}" y="`);
    expect(svg).toContain(`width="${bandWidth.toFixed(1)}" height="4"`);
    for (const tick of ['0%', '5%', '10%', '15%', '20%', '25%', '30%']) expect(svg).toContain(`>${tick}</text>`);
  });

  it('puts Monte Carlo errors beside draw-based figures', () => {
    const mv = report.methods[0];
    const t = mv.turnoverFromProposal;
    expect(html).toContain(`${(t.p50 * 100).toFixed(1)}% ± ${(t.p50StdErr! * 100).toFixed(1)}%`);
    const w = report.proposal.volatilityBandWidth;
    expect(html).toContain(`${(w.value * 100).toFixed(2)}% ± ${(w.stdErr! * 100).toFixed(2)}%`);
    expect(html).toContain(`${(mv.outsideBandShare.value * 100).toFixed(1)}% ± ${(mv.outsideBandShare.stdErr! * 100).toFixed(1)}%`);
  });

  it('marks the outside-band row and opens the proposal method details', () => {
    expect(html).toContain('emerging-equity <span class="badge outside">above band</span>');
    expect((html.match(/<tbody class="asset outside">/g) ?? []).length).toBe(1);
    expect(html).toMatch(/<details open><summary>mean-variance \(λ = 4\) — the proposal’s method<\/summary>/);
  });

  it('makes script injection through asset ids impossible', () => {
    const out = renderReportHtml(hostileReport());
    expect(out).not.toMatch(/<script/i);
    expect(out).not.toMatch(/<img/i);
    expect(out).not.toMatch(/<svg onload/i);
    // No tag carries an event handler or a source: the hostile text stays text.
    expect(out).not.toMatch(/<[^>]*\son(error|load|mouseover)=/i);
    expect(out).not.toMatch(/<[^>]*\ssrc=/i);
    expect(out).toContain('&lt;script&gt;alert(1)&lt;/script&gt;');
    expect(out).toContain('&quot;&gt;&lt;img src=x onerror=alert(2)&gt;');
    expect(out).toContain('&#39; onmouseover=&#39;alert(3)');
    expect(out).toContain('&amp;lt;already-escaped&amp;gt;');
  });

  it('caps the chart at 60 rows for large universes, keeping the positions outside their bands', () => {
    const r = sampleReport();
    const n = 150;
    const template = r.methods[0];
    r.assets = Array.from({ length: n }, (_, i) => `asset-${i}`);
    r.proposal.weights = r.assets.map((_, i) => (i === 140 ? 0.5 : 1 / n));
    r.proposal.riskContributions = r.assets.map((asset) => ({ asset, base: 1 / n, p05: 0, p50: 1 / n, p95: 2 / n }));
    r.methods = [
      {
        ...template,
        weights: r.assets.map((asset, i) => ({ ...template.weights[0], asset, p05: 0, p25: 0.002, p50: 0.005, p75: 0.008, p95: 0.01 + i * 1e-5 })),
        meanDrivenShare: { ...template.meanDrivenShare, perAsset: r.assets.map(() => 0.5) },
        meanOfOptima: r.assets.map(() => 1 / n),
        base: { ...template.base, weights: r.assets.map(() => 1 / n), riskContributions: r.assets.map(() => 1 / n) },
      },
    ];
    const svg = chartOf(renderReportHtml(r));
    expect((svg.match(/<g><title>/g) ?? []).length).toBe(60);
    expect(svg).toContain('>asset-140</text>');
  });

  it('says so when the proposal method was not re-optimised', () => {
    const r = sampleReport();
    r.methods = r.methods.filter((m) => m.method.name !== 'mean-variance');
    const out = renderReportHtml(r);
    expect(out).toContain('was not re-optimised in this report');
    expect(out).not.toContain('<svg class="bands"');
  });
});
