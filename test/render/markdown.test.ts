import { describe, expect, it } from 'vitest';
import { formatRuleFigure, methodLabel } from '../../src/render/format.js';
import { escapeMarkdown, renderReportMarkdown } from '../../src/render/markdown.js';
import { SAMPLE_ASSETS, sampleReport } from '../helpers/sample-report.js';

/**
 * Split a GFM table row into cells the way GitHub does: cells are separated by `|`, a `\|`
 * is a literal pipe inside a cell, and the leading/trailing pipes are optional
 * (GitHub Flavored Markdown spec 0.29-gfm, §4.10 Tables; from memory).
 */
function cells(row: string): string[] {
  const parts: string[] = [];
  let current = '';
  for (let i = 0; i < row.length; i++) {
    if (row[i] === '\\' && row[i + 1] === '|') {
      current += '|';
      i++;
    } else if (row[i] === '|') {
      parts.push(current);
      current = '';
    } else current += row[i];
  }
  parts.push(current);
  return parts.slice(row.trimStart().startsWith('|') ? 1 : 0, row.trimEnd().endsWith('|') ? -1 : undefined).map((c) => c.trim());
}

/** Every table in the document: header cells and body rows' cells. */
function tables(markdown: string): { header: string[]; rows: string[][] }[] {
  const out: { header: string[]; rows: string[][] }[] = [];
  const lines = markdown.split('\n');
  for (let i = 0; i + 1 < lines.length; i++) {
    if (lines[i].startsWith('|') && /^\|( *:?-{3,}:? *\|)+$/.test(lines[i + 1])) {
      const table = { header: cells(lines[i]), rows: [] as string[][] };
      let j = i + 2;
      for (; j < lines.length && lines[j].startsWith('|'); j++) table.rows.push(cells(lines[j]));
      out.push(table);
      i = j;
    }
  }
  return out;
}

describe('renderReportMarkdown', () => {
  const report = sampleReport();
  const md = renderReportMarkdown(report);

  it('has the sections in reading order', () => {
    const headings = md.split('\n').filter((l) => /^#{1,3} /.test(l));
    expect(headings).toEqual([
      '# wobble robustness report',
      `## Weights against ${methodLabel(report.methods[0].method)}, re-optimised 500 times`,
      '## Policy rules',
      '## Cautions',
      '## More findings',
      '## Proposal',
      '### Risk contributions of the proposal',
      '## Methods compared',
      ...report.methods.map((m, i) => `### ${methodLabel(m.method)}${i === 0 ? ' — the proposal’s method' : ''}`),
      '## Warnings',
      '## About this run',
    ]);
  });

  it('puts the verdict and the headline first (CI job summaries show the top)', () => {
    const lines = md.split('\n');
    expect(lines[2]).toBe('**Verdict: FAIL** — 1 of 2 rule(s) failed at 95% confidence.');
    expect(lines[4]).toBe(escapeMarkdown(report.summary.headline));
    const noVerdict = renderReportMarkdown(sampleReport({ withVerdict: false })).split('\n');
    expect(noVerdict[2]).toBe(escapeMarkdown(report.summary.headline));
  });

  it('writes well-formed tables: every row has as many cells as its header', () => {
    const all = tables(md);
    // per asset, verdict, proposal, risk contributions, comparison, 2 per method, about this run
    expect(all).toHaveLength(6 + 2 * report.methods.length);
    for (const t of all) for (const row of t.rows) expect(row.length).toBe(t.header.length);
  });

  it('shows every asset in every per-method weight table with its band', () => {
    const weightTables = tables(md).filter((t) => t.header[0] === 'Asset' && t.header.includes('p25'));
    expect(weightTables).toHaveLength(report.methods.length);
    weightTables.forEach((t, k) => {
      expect(t.rows.map((r) => r[0])).toEqual(SAMPLE_ASSETS);
      const m = report.methods[k];
      t.rows.forEach((row, i) => {
        expect(row[t.header.indexOf('p05')]).toBe(`${(m.weights[i].p05 * 100).toFixed(1)}%`);
        expect(row[t.header.indexOf('p95')]).toBe(`${(m.weights[i].p95 * 100).toFixed(1)}%`);
        expect(row[t.header.indexOf('Band ± se')]).toBe(`${(m.weights[i].bandStdErr! * 100).toFixed(1)}%`);
      });
    });
  });

  it('shows the proposal volatility band with Monte Carlo errors', () => {
    const proposal = tables(md).find((t) => t.header[0] === 'Figure' && t.rows[0][0].startsWith('Volatility'))!;
    const v = report.proposal.volatility;
    expect(proposal.rows[0]).toEqual([
      'Volatility (annualised)',
      `${(v.base * 100).toFixed(2)}%`,
      `${(v.mean * 100).toFixed(2)}% ± ${(v.stdErr! * 100).toFixed(2)}%`,
      `${(v.p05 * 100).toFixed(2)}%`,
      `${(v.p50 * 100).toFixed(2)}% ± ${(v.p50StdErr! * 100).toFixed(2)}%`,
      `${(v.p95 * 100).toFixed(2)}%`,
    ]);
    expect(md).toContain('Volatility band width (p95 − p05): **');
  });

  it('compares every method with errors beside each draw-based figure', () => {
    const comparison = tables(md).find((t) => t.header[0] === 'Method')!;
    expect(comparison.rows.map((r) => r[0])).toEqual(report.methods.map((m, i) => `${methodLabel(m.method)}${i === 0 ? ' (proposal’s method)' : ''}`));
    for (const row of comparison.rows) {
      for (const column of ['Turnover from proposal, p50 ± se', 'Mean-driven share ± se', 'Outside band share ± se', 'Max weight sd ± se', 'Certainty-equivalent loss, mean ± se']) {
        expect(row[comparison.header.indexOf(column)]).toContain('±');
      }
    }
  });

  it('lists findings, warnings, the verdict rules and every caution', () => {
    for (const f of report.findings) expect(md).toContain(escapeMarkdown(f.message));
    for (const w of report.warnings) expect(md).toContain(w.message);
    const verdict = tables(md).find((t) => t.header[0] === 'Rule')!;
    expect(verdict.rows.map((r) => [r[0], r[verdict.header.indexOf('Result')]])).toEqual([
      ['median-turnover', '**FAIL**'],
      ['outside-band', 'pass'],
    ]);
    // The bound each rule was judged on, in its own column.
    expect(verdict.rows[0][verdict.header.indexOf('Bound')]).toBe(formatRuleFigure('turnover-from-proposal.p50', report.verdict!.rules[0].bound));
    const cautions = md.slice(md.indexOf('## Cautions'));
    for (const c of report.cautions) expect(cautions).toContain(`- ${c}`);
  });

  it('omits the verdict section when there is none', () => {
    expect(renderReportMarkdown(sampleReport({ withVerdict: false }))).not.toMatch(/Verdict|## Policy rules/);
  });

  it('escapes pipes and markup in asset ids so tables keep their shape', () => {
    const ids = SAMPLE_ASSETS.map((a, i) => (i === 0 ? 'us|equity' : i === 1 ? '<script>alert(1)</script>' : i === 2 ? 'line\nbreak*bold*' : a));
    const out = renderReportMarkdown(sampleReport({ assets: ids }));
    for (const t of tables(out)) for (const row of t.rows) expect(row.length).toBe(t.header.length);
    const weights = tables(out).find((t) => t.header.includes('p25'))!;
    // After GFM cell splitting the pipe is back as a literal character.
    expect(weights.rows[0][0]).toBe('us|equity');
    expect(out).toContain('us\\|equity');
    expect(out).not.toContain('<script>');
    expect(out).toContain('\\<script\\>alert(1)\\</script\\>');
    expect(out).toContain('line break\\*bold\\*');
  });
});

describe('escapeMarkdown', () => {
  it('backslash-escapes the punctuation that starts markup (CommonMark/GFM backslash escapes)', () => {
    expect(escapeMarkdown('a|b')).toBe('a\\|b');
    expect(escapeMarkdown('*x* _y_ `z` [l](u) <b> #h ~s~ \\')).toBe('\\*x\\* \\_y\\_ \\`z\\` \\[l\\](u) \\<b\\> \\#h \\~s\\~ \\\\');
    expect(escapeMarkdown('&amp; and & alone')).toBe('\\&amp; and & alone');
    expect(escapeMarkdown('- not a list')).toBe('\\- not a list');
    expect(escapeMarkdown('1. not a list')).toBe('1\\. not a list');
    expect(escapeMarkdown('version 0.1.0')).toBe('version 0.1.0');
    expect(escapeMarkdown('two\r\nlines')).toBe('two lines');
  });
});
