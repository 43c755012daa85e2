import { describe, expect, it } from 'vitest';
import { methodLabel } from '../../src/render/format.js';
import { renderOptimizeTable, renderReportTable } from '../../src/render/table.js';
import { CAUTIONS } from '../../src/schema/cautions.js';
import { SAMPLE_ASSETS, sampleOptimizeResponse, sampleReport } from '../helpers/sample-report.js';

const lines = (text: string) => text.replace(/\n$/, '').split('\n');
const pct = (x: number, d = 1) => `${(x * 100).toFixed(d)}%`;

describe('renderOptimizeTable', () => {
  const response = sampleOptimizeResponse();
  const text = renderOptimizeTable(response);
  const rows = lines(text);

  it('has one row per asset and one column per method, in order', () => {
    for (const [i, asset] of SAMPLE_ASSETS.entries()) {
      const row = rows.find((l) => l.startsWith(`${asset} `));
      expect(row, asset).toBeDefined();
      const cells = row!.slice(24).trim().split(/\s+/);
      expect(cells).toEqual(response.methods.map((m) => pct(m.base.weights[i])));
    }
    // The header names every method; parameters go on the second header line.
    expect(rows[2]).toContain('mean-variance');
    expect(rows[3]).toContain('(λ = 4)');
    expect(rows[3]).toContain('(f = 0.5)');
    for (const name of ['minimum-variance', 'kelly', 'risk-parity', 'equal-weight', 'inverse-volatility']) expect(rows[2]).toContain(name);
  });

  it('adds the portfolio figures and solver diagnostics under the weights', () => {
    const cellsOf = (label: string) => rows.find((l) => l.startsWith(label))!.slice(24).trim().split(/\s{2,}/);
    expect(cellsOf('sum of weights')).toEqual(response.methods.map(() => '100.0%'));
    expect(cellsOf('volatility (annual)')).toEqual(response.methods.map((m) => pct(m.base.volatility, 2)));
    expect(cellsOf('expected return (annual)')).toEqual(response.methods.map((m) => pct(m.base.expectedReturn, 2)));
    expect(cellsOf('diversification ratio')).toEqual(response.methods.map((m) => m.base.diversificationRatio.toFixed(2)));
    expect(cellsOf('effective holdings')).toEqual(response.methods.map((m) => m.base.effectiveHoldings.toFixed(1)));
    expect(cellsOf('KKT residual')).toEqual(response.methods.map((m) => (m.base.diagnostics.kktResidual === 0 ? '0' : m.base.diagnostics.kktResidual.toExponential(1))));
    expect(cellsOf('iterations')).toEqual(response.methods.map((m) => String(m.base.diagnostics.iterations)));
  });

  it('aligns every column: each cell ends where its header ends', () => {
    const header = rows[2];
    const ends = response.methods.map((m) => {
      const name = methodLabel(m.method).split(' (')[0];
      return header.indexOf(name) + name.length;
    });
    // Header names are right-aligned, so their end positions are the column edges.
    for (const asset of SAMPLE_ASSETS) {
      const row = rows.find((l) => l.startsWith(`${asset} `))!;
      for (const end of ends) expect(row[end - 1], `${asset} @${end}`).toBe('%');
    }
  });

  it('prints warnings and every caution in full', () => {
    expect(text).toContain('short-history');
    const flat = text.replace(/\n\s+/g, ' ');
    for (const caution of CAUTIONS) expect(flat).toContain(caution);
  });
});

describe('renderReportTable', () => {
  const report = sampleReport();
  const text = renderReportTable(report);
  const rows = lines(text);

  it('fits one screen: at most 120 columns and about 50 lines for ten assets (the headline takes up to 7)', () => {
    for (const line of rows) expect(line.length, line).toBeLessThanOrEqual(120);
    expect(rows.length).toBeLessThanOrEqual(55);
  });

  it('shows each position with its weight, band, band error, percentile, selection rate and mean-driven share', () => {
    const mv = report.methods[0];
    for (const [i, asset] of SAMPLE_ASSETS.entries()) {
      const row = rows.find((l) => l.startsWith(`${asset} `));
      expect(row, asset).toBeDefined();
      const b = mv.weights[i];
      const cells = row!.slice(24).trim().split(/\s+/);
      expect(cells.slice(0, 8)).toEqual([
        pct(report.proposal.weights[i]),
        pct(b.p05),
        '–',
        pct(b.p95),
        pct(b.bandStdErr!),
        b.proposalPercentile.toFixed(0),
        pct(b.selectionRate),
        pct(mv.meanDrivenShare.perAsset[i]),
      ]);
    }
  });

  it('flags the one position outside its band, and only that one', () => {
    const flagged = rows.filter((l) => /(above|below) band/.test(l) && SAMPLE_ASSETS.some((a) => l.startsWith(`${a} `)));
    expect(flagged).toHaveLength(1);
    expect(flagged[0]).toMatch(/^emerging-equity .*above band/);
    // Selection rate 48.3 % → dropped in 52 % of draws.
    expect(flagged[0]).toContain('dropped 52%');
  });

  it('shows every method with turnover p50 ± its Monte Carlo error, bands, CE loss and mean-driven share', () => {
    for (const m of report.methods) {
      const row = rows.find((l) => l.startsWith(`${methodLabel(m.method)} `));
      expect(row, methodLabel(m.method)).toBeDefined();
      const t = m.turnoverFromProposal;
      expect(row).toContain(`${pct(t.p50)} ± ${pct((t.p50StdErr ?? t.stdErr)!)}`);
      expect(row).toContain(pct(m.volatility.p05));
      expect(row).toContain(`${(m.certaintyEquivalentLoss.mean * 1e4).toFixed(0)} bp ± ${(m.certaintyEquivalentLoss.stdErr! * 1e4).toFixed(0)}`);
      expect(row).toContain(`${pct(m.meanDrivenShare.overall)} ± ${pct(m.meanDrivenShare.stdErr!)}`);
    }
    // Equal weight carries no median error in the sample: marked with † and explained.
    expect(rows.find((l) => l.startsWith('equal-weight '))).toContain('†');
    expect(text.replace(/\n\s*/g, ' ')).toContain('†: ± is the error of the mean');
  });

  it('shows the proposal volatility band with its width and errors', () => {
    const v = report.proposal.volatility;
    expect(text).toContain(`p05–p95 ${pct(v.p05)} – ${pct(v.p95)}`);
    expect(text).toContain(`width ${pct(report.proposal.volatilityBandWidth.value)} ± ${pct(report.proposal.volatilityBandWidth.stdErr!)}`);
  });

  it('lists findings, warnings, the verdict and a short cautions line', () => {
    const flat = text.replace(/\n\s+/g, ' ');
    for (const f of report.findings) expect(flat).toContain(f.message);
    for (const w of report.warnings) expect(flat).toContain(w.message);
    expect(text).toMatch(/^Verdict: FAIL — 1 of 2 rule\(s\) failed at 95% confidence$/m);
    expect(text).toMatch(/^ {2}\[FAIL\] median-turnover \(mean-variance\): 27\.0% ± 0\.3%, bound 26\.5% vs max 10\.0%/m);
    expect(text).toMatch(/^ {2}\[pass\] outside-band$/m);
    expect(flat).toContain('Cautions: estimates from resampled inputs, not investment advice; past returns do not predict future returns;');
    expect(flat).toContain("defer to your firm's policies and licensed professionals");
  });

  it('prints a caution it has no short form for in full', () => {
    const r = sampleReport();
    r.cautions = [...r.cautions, 'A caution added by a deployment.'];
    expect(renderReportTable(r)).toContain('A caution added by a deployment.');
  });

  it('keeps to one screen with many findings: whole findings only, then how many were left out', () => {
    const r = sampleReport();
    r.findings = Array.from({ length: 12 }, (_, i) => ({ code: 'unstable', message: `Finding number ${i} ${'is long enough to wrap onto a second line of the terminal table. '.repeat(2)}` }));
    const out = lines(renderReportTable(r));
    const start = out.indexOf('More findings');
    const end = out.indexOf('Warnings');
    const block = out.slice(start + 1, end);
    expect(block.length).toBeLessThanOrEqual(6);
    // Each finding takes two lines here: two whole findings fit before the note line.
    expect(block.filter((l) => l.startsWith('  - Finding number'))).toHaveLength(2);
    expect(block[block.length - 1]).toBe('  … 10 more finding(s); the markdown and HTML reports list them all.');
  });

  it('opens with the headline sentences from the core, before any table', () => {
    const r = sampleReport();
    const out = renderReportTable(r).replace(/\s+/g, ' ');
    const at = out.indexOf(r.summary.sentences[0]);
    expect(at).toBeGreaterThan(0);
    expect(at).toBeLessThan(out.indexOf('Verdict:'));
    expect(at).toBeLessThan(out.indexOf('Positions against'));
    for (const sentence of r.summary.sentences) expect(out).toContain(sentence);
  });

  it('has no verdict lines when the report has no verdict', () => {
    expect(renderReportTable(sampleReport({ withVerdict: false }))).not.toMatch(/Verdict/);
  });

  it('keeps alignment and the terminal safe with long or hostile asset ids', () => {
    const ids = SAMPLE_ASSETS.map((a, i) => (i === 0 ? 'a-very-long-asset-identifier-that-overflows' : i === 1 ? 'evil\u001b[31mred\u001b[0m' : a));
    const out = renderReportTable(sampleReport({ assets: ids }));
    // No escape character reaches the terminal (ECMA-48 control functions start with ESC, 0x1b).
    expect(out).not.toContain('\u001b');
    for (const line of lines(out)) expect(line.length).toBeLessThanOrEqual(120);
    const first = lines(out).find((l) => l.startsWith('a-very-long-asset-ident…'))!;
    expect(first.slice(0, 24)).toBe('a-very-long-asset-ident…');
    expect(first.slice(24, 34).trim()).toBe('10.0%');
  });

  it('still shows the proposal weights when its method was not re-optimised', () => {
    const r = sampleReport();
    r.methods = r.methods.filter((m) => m.method.name !== 'mean-variance');
    const out = renderReportTable(r);
    expect(out).toContain('was not re-optimised');
    expect(lines(out).find((l) => l.startsWith('emerging-equity '))).toContain('12.0%');
  });
});
