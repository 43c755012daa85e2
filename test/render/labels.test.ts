import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { FIGURES, LABELS } from '../../src/render/labels.js';
import { PolicyRuleSchema } from '../../src/schema/proposal.js';
import { ReportSchema } from '../../src/schema/report.js';
import { renderReportHtml } from '../../src/render/html.js';
import { renderReportMarkdown } from '../../src/render/markdown.js';
import { renderReportTable } from '../../src/render/table.js';
import { sampleReport } from '../helpers/sample-report.js';

const README = readFileSync(new URL('../../README.md', import.meta.url), 'utf8');

describe('one name per figure', () => {
  it('maps every policy metric to exactly one figure', () => {
    const metrics = PolicyRuleSchema.shape.metric.options;
    for (const metric of metrics) expect(FIGURES.filter((f) => f.metric === metric)).toHaveLength(1);
  });

  it('keeps the README table in step with the labels module', () => {
    for (const f of FIGURES) {
      const row = `| ${LABELS[f.key]} | \`${f.json}\` | ${f.metric ? `\`${f.metric}\`` : '—'} |`;
      expect(README, row).toContain(row);
    }
  });

  it('a metric is the kebab-case of its JSON field’s words', () => {
    const kebab = (camel: string) => camel.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`);
    for (const f of FIGURES) {
      if (!f.metric) continue;
      const field = /\.(\w+)(?:\.(\w+))?/.exec(f.json.replace('methods[k]', ''))!;
      expect(f.metric.startsWith(kebab(field[1]))).toBe(true);
    }
  });

  it('the report schema has meanOfOptima and no longer resampledAverage', () => {
    const method = ReportSchema.shape.methods.element.shape;
    expect(Object.keys(method)).toContain('meanOfOptima');
    expect(Object.keys(method)).not.toContain('resampledAverage');
  });

  it('no renderer uses an old or second name for a figure', () => {
    const r = sampleReport();
    for (const text of [renderReportHtml(r), renderReportMarkdown(r), renderReportTable(r)]) {
      expect(text).not.toMatch(/Largest weight sd|Resampled average|resampledAverage|shown as stdErr/);
      expect(text).not.toMatch(/\bOutside band\b(?! share)/);
    }
  });
});
