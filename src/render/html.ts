import type { MethodReport, Report, Stat } from '../schema/report.js';
import {
  bandPosition,
  formatBasisPoints,
  formatCount,
  formatFixed,
  formatPercent,
  formatPercentileRank,
  formatPercentRange,
  formatPercentWithError,
  formatScientific,
  medianError,
  methodDraws,
  methodLabel,
  proposalMethod,
  trimNumber,
  formatRuleFigure,
  formatRuleValue,
} from './format.js';
import { LABELS, METHOD_STABILITY_COLUMNS } from './labels.js';
import { otherFindings } from '../stress/headline.js';

/**
 * The report as one self-contained HTML document: inline CSS and inline SVG, no scripts, no
 * external resources, so it can be mailed, archived or shown in a sandboxed frame.
 * Every piece of caller-supplied text goes through `escapeHtml`; a Content-Security-Policy
 * that forbids scripts is a second line of defence should an escape ever be missed.
 */

const HTML_ESCAPES: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/**
 * Escape text for HTML element content and quoted attribute values (OWASP Cross Site Scripting
 * Prevention Cheat Sheet, rule 1: encode & < > " '). The same rule is safe inside inline SVG.
 */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (ch) => HTML_ESCAPES[ch]);
}

/** Markup fragments, one per line; every fragment must already be escaped. */
function join(parts: readonly string[]): string {
  return parts.join('\n');
}

/**
 * Every rule is scoped to `.report` so the reviewer page can carry the same stylesheet next to
 * its own (one inline style block, allowed by its hash in the page's Content-Security-Policy).
 */
export const REPORT_CSS = `
.report { color-scheme: light; --ink: #1d2433; --muted: #566176; --line: #d7dce5; --soft: #f4f6fa; --accent: #1f4e8c; --warn: #9a4a00; --bad: #a4262c; --good: #1b6b3a; color: var(--ink); }
body.report-page { margin: 0; font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif; background: #fff; }
body.report-page * { box-sizing: border-box; }
main.report { max-width: 1120px; margin: 0 auto; padding: 24px 20px 48px; }
.report h1 { font-size: 1.6rem; margin: 0 0 4px; }
.report h2 { font-size: 1.2rem; margin: 28px 0 8px; padding-bottom: 4px; border-bottom: 1px solid var(--line); }
.report h3 { font-size: 1.05rem; margin: 20px 0 6px; }
.report p { margin: 6px 0; }
.report .sub, .report .note { color: var(--muted); }
.report .note { font-size: 0.9rem; }
.report .answer { border-left: 4px solid var(--accent); background: #f3f7fc; padding: 10px 16px; margin: 14px 0; border-radius: 0 6px 6px 0; }
.report .answer h2 { border: 0; margin: 0 0 4px; padding: 0; font-size: 1.05rem; color: var(--accent); }
.report .headline { font-size: 1.05rem; margin: 0; }
.report .headline span { display: inline; }
.report .cautions { border: 1px solid #e2c27a; background: #fff8e6; border-radius: 6px; padding: 10px 16px; margin: 16px 0; }
.report .cautions h2 { border: 0; margin: 0 0 4px; padding: 0; font-size: 1rem; }
.report .cautions ul { margin: 0; padding-left: 20px; }
.report .verdict { border-radius: 6px; padding: 10px 16px; margin: 16px 0; border: 1px solid; }
.report .verdict.pass { border-color: #9cc9ab; background: #eef8f1; }
.report .verdict.fail { border-color: #e0a3a6; background: #fcf0f0; }
.report .verdict h2 { margin: 0 0 4px; padding: 0; border: 0; }
.report .verdict strong { font-size: 1.05rem; }
.report .badge { display: inline-block; padding: 0 6px; border-radius: 4px; font-size: 0.85rem; font-weight: 600; }
.report .badge.pass { background: #d9efe0; color: var(--good); }
.report .badge.fail { background: #f6d6d7; color: var(--bad); }
.report .badge.outside { background: #fbe3cc; color: var(--warn); }
.report .table-wrap { overflow-x: auto; max-width: 100%; }
.report table { border-collapse: collapse; margin: 8px 0; font-size: 0.875rem; }
.report caption { text-align: left; color: var(--muted); padding: 2px 0 6px; }
.report th, .report td { padding: 4px 8px; border-bottom: 1px solid var(--line); vertical-align: top; text-align: left; }
.report th { background: var(--soft); font-weight: 600; }
.report td.num, .report th.num { text-align: right; font-variant-numeric: tabular-nums; }
.report td.num, .report td:first-child { white-space: nowrap; }
.report th { white-space: nowrap; }
.report td:last-child:not(.num) { min-width: 18em; }
.report tbody tr:nth-child(even) td { background: #fafbfd; }
.report tr.outside td { background: #fff4ea; }
.report table.positions tbody th { font-weight: normal; white-space: nowrap; background: none; }
.report table.positions tbody.asset tr td, .report table.positions tbody.asset tr:nth-child(even) td { background: none; }
.report table.positions tbody.asset:nth-of-type(even) th, .report table.positions tbody.asset:nth-of-type(even) td { background: #fafbfd; }
.report table.positions tbody.outside th, .report table.positions tbody.outside td { background: #fff4ea; }
.report table.positions tr.note-row td { border-bottom: 1px solid var(--line); color: var(--ink); font-size: 0.85rem; padding-top: 0; min-width: 0; white-space: normal; }
.report table.positions .note-text { position: sticky; left: 8px; max-width: calc(100vw - 56px); }
.report table.positions tbody.asset tr:first-child:not(:last-child) > * { border-bottom: 0; }
.report ul.findings li { margin: 4px 0; }
.report details { margin: 10px 0; border: 1px solid var(--line); border-radius: 6px; padding: 6px 12px; }
.report details > summary { cursor: pointer; font-weight: 600; }
.report dl.meta { display: grid; grid-template-columns: max-content 1fr; gap: 4px 16px; font-size: 0.9rem; }
.report dl.meta dt { color: var(--muted); }
.report dl.meta dd { margin: 0; word-break: break-all; }
.report .chart-wrap { overflow-x: auto; max-width: 100%; }
.report svg.bands { display: block; width: 100%; min-width: 600px; max-width: 820px; height: auto; font: 13px system-ui, sans-serif; }
.report .legend { display: flex; flex-wrap: wrap; gap: 4px 16px; font-size: 0.85rem; color: var(--muted); margin: 4px 0 8px; }
.report .legend svg { vertical-align: middle; }
@media (max-width: 600px) { .report dl.meta { grid-template-columns: 1fr; } main.report { padding: 16px 12px 32px; } }
@media print {
  .report .cautions, .report .verdict, .report .answer, .report svg.bands { break-inside: avoid; }
  .report details { border: 0; }
  .report .table-wrap { overflow: visible; }
}
`;

function cell(text: string, numeric = false): string {
  return numeric ? `<td class="num">${text}</td>` : `<td>${text}</td>`;
}

/** Numeric columns are right-aligned; by default every column after the first. */
function headerRow(labels: readonly string[], isNumeric: (column: number) => boolean): string {
  return `<tr>${labels.map((l, i) => `<th scope="col"${isNumeric(i) ? ' class="num"' : ''}>${escapeHtml(l)}</th>`).join('')}</tr>`;
}

/** `caption` is markup (escape any caller text in it); header labels are escaped here. */
function htmlTable(caption: string, header: readonly string[], rows: readonly string[], isNumeric: (column: number) => boolean = (c) => c > 0): string {
  return `<div class="table-wrap"><table><caption>${caption}</caption><thead>${headerRow(header, isNumeric)}</thead><tbody>${rows.join('')}</tbody></table></div>`;
}

function medianText(stat: Stat, decimals = 1): string {
  const e = medianError(stat);
  return escapeHtml(`${formatPercentWithError(stat.p50, e.stdErr, decimals)}${e.isMeanError ? ' †' : ''}`);
}

// ---------------------------------------------------------------------------------------------
// The band chart: one row per asset for the proposal's method.

const CHART = { width: 820, labelWidth: 200, right: 24, top: 34, rowHeight: 26, maxRows: 60 } as const;
const CHART_COLOURS = { band: '#9fb6d6', core: '#3a6aa8', median: '#0d1f3c', inside: '#1f4e8c', outside: '#c0561a' } as const;

/** A round axis step so the axis has at most ~8 ticks. */
function axisStep(span: number): number {
  const steps = [0.005, 0.01, 0.02, 0.025, 0.05, 0.1, 0.2, 0.25, 0.5, 1, 2, 5];
  return steps.find((s) => span / s <= 8) ?? Math.max(1, Math.ceil(span / 8));
}

/** Rows to chart: all assets when few; else the ones furthest outside their band, then the most variable. */
function chartRows(r: Report, pm: MethodReport): number[] {
  const indices = r.assets.map((_, i) => i);
  if (indices.length <= CHART.maxRows) return indices;
  const distance = (i: number) => {
    const b = pm.weights[i];
    const w = r.proposal.weights[i];
    return Math.max(0, b.p05 - w, w - b.p95);
  };
  return indices
    .sort((a, b) => distance(b) - distance(a) || pm.weights[b].sd - pm.weights[a].sd || a - b)
    .slice(0, CHART.maxRows)
    .sort((a, b) => a - b);
}

function truncateLabel(text: string, max: number): string {
  return text.length <= max ? text : `${text.slice(0, max - 1)}…`;
}

export function bandChartSvg(r: Report, pm: MethodReport): string {
  const rows = chartRows(r, pm);
  const values = rows.flatMap((i) => [pm.weights[i].p05, pm.weights[i].p95, r.proposal.weights[i]]);
  const step = axisStep(Math.max(1e-9, Math.max(0, ...values) - Math.min(0, ...values)));
  const lo = Math.floor(Math.min(0, ...values) / step) * step;
  const hi = Math.max(lo + step, Math.ceil(Math.max(0, ...values) / step) * step);
  const x0 = CHART.labelWidth;
  const x1 = CHART.width - CHART.right;
  const x = (v: number) => x0 + ((v - lo) / (hi - lo)) * (x1 - x0);
  const height = CHART.top + rows.length * CHART.rowHeight + 8;
  const px = (v: number) => formatFixed(v, 1);

  const grid: string[] = [];
  for (let k = 0, t = lo; t <= hi + step / 2; k++, t = lo + k * step) {
    const gx = px(x(t));
    grid.push(
      `<line x1="${gx}" y1="${CHART.top - 6}" x2="${gx}" y2="${height - 8}" stroke="${t === 0 ? '#8a94a6' : '#e3e7ee'}" stroke-width="1"/>`,
      `<text x="${gx}" y="${CHART.top - 12}" text-anchor="middle" fill="#566176">${escapeHtml(formatPercent(t, step < 0.01 ? 1 : 0))}</text>`,
    );
  }

  const rowMarkup = rows.map((i, row) => {
    const b = pm.weights[i];
    const w = r.proposal.weights[i];
    const cy = CHART.top + row * CHART.rowHeight + CHART.rowHeight / 2;
    const position = bandPosition(w, b.p05, b.p95);
    const outside = position !== 'inside';
    const summary =
      `${b.asset}: proposal ${formatPercent(w)}; ${methodLabel(pm.method)} band p05–p95 ${formatPercentRange(b.p05, b.p95)}, ` +
      `p25–p75 ${formatPercentRange(b.p25, b.p75)}, median ${formatPercent(b.p50)}` +
      (outside ? `; the proposal is ${position} the band` : '');
    const mx = x(w);
    const marker = outside
      ? `<polygon points="${px(mx)},${px(cy - 7)} ${px(mx + 7)},${px(cy)} ${px(mx)},${px(cy + 7)} ${px(mx - 7)},${px(cy)}" fill="${CHART_COLOURS.outside}" stroke="#fff" stroke-width="1.5"/>`
      : `<circle cx="${px(mx)}" cy="${px(cy)}" r="5" fill="#fff" stroke="${CHART_COLOURS.inside}" stroke-width="2.5"/>`;
    return join([
      `<g><title>${escapeHtml(summary)}</title>`,
      `<text x="${x0 - 10}" y="${px(cy + 4)}" text-anchor="end" fill="#1d2433">${escapeHtml(truncateLabel(b.asset, 28))}</text>`,
      `<rect x="${px(x(b.p05))}" y="${px(cy - 2)}" width="${px(Math.max(1, x(b.p95) - x(b.p05)))}" height="4" fill="${CHART_COLOURS.band}"/>`,
      `<rect x="${px(x(b.p25))}" y="${px(cy - 6)}" width="${px(Math.max(1, x(b.p75) - x(b.p25)))}" height="12" rx="2" fill="${CHART_COLOURS.core}"/>`,
      `<line x1="${px(x(b.p50))}" y1="${px(cy - 9)}" x2="${px(x(b.p50))}" y2="${px(cy + 9)}" stroke="${CHART_COLOURS.median}" stroke-width="2"/>`,
      marker,
      '</g>',
    ]);
  });

  const title = `Weight bands of ${methodLabel(pm.method)} over ${methodDraws(r, pm)} draws, with the proposal's weights`;
  return join([
    `<svg class="bands" xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${CHART.width} ${height}" width="${CHART.width}" height="${height}" role="img" aria-labelledby="band-chart-title band-chart-desc">`,
    `<title id="band-chart-title">${escapeHtml(title)}</title>`,
    `<desc id="band-chart-desc">${escapeHtml(
      'For each asset: a thin bar from the 5th to the 95th percentile of the re-optimised weight, a thick bar from the 25th to the 75th, a tick at the median, ' +
        'and a marker at the proposed weight (an open circle inside the band, a filled diamond outside it). The table below gives the same figures.',
    )}</desc>`,
    ...grid,
    ...rowMarkup,
    '</svg>',
  ]);
}

function legend(): string {
  const swatch = (inner: string) => `<svg width="30" height="16" aria-hidden="true">${inner}</svg>`;
  return `<div class="legend" aria-hidden="true">
<span>${swatch(`<rect x="2" y="6" width="26" height="4" fill="${CHART_COLOURS.band}"/>`)} p05 – p95</span>
<span>${swatch(`<rect x="6" y="2" width="18" height="12" rx="2" fill="${CHART_COLOURS.core}"/>`)} p25 – p75</span>
<span>${swatch(`<line x1="15" y1="0" x2="15" y2="16" stroke="${CHART_COLOURS.median}" stroke-width="2"/>`)} median</span>
<span>${swatch(`<circle cx="15" cy="8" r="5" fill="#fff" stroke="${CHART_COLOURS.inside}" stroke-width="2.5"/>`)} proposal, inside the band</span>
<span>${swatch(`<polygon points="15,1 22,8 15,15 8,8" fill="${CHART_COLOURS.outside}"/>`)} proposal, outside the band</span>
</div>`;
}

// ---------------------------------------------------------------------------------------------
// Sections.

function cautionsSection(r: Report): string {
  const items = r.cautions.length > 0 ? r.cautions.map((c) => `<li>${escapeHtml(c)}</li>`).join('') : '<li>No cautions were supplied with this report.</li>';
  return `<section class="cautions" aria-labelledby="cautions-title"><h2 id="cautions-title">Please read first</h2><ul>${items}</ul></section>`;
}

function verdictSection(r: Report): string {
  const v = r.verdict;
  if (!v) return '';
  const failed = v.rules.filter((rule) => !rule.pass).length;
  const rows = v.rules.map(
    (rule) =>
      `<tr>${cell(escapeHtml(rule.id))}${cell(escapeHtml(rule.method))}${cell(escapeHtml(rule.metric))}` +
      cell(escapeHtml(formatRuleValue(rule.metric, rule.value, rule.stdErr) + (rule.baselineValue === undefined ? '' : ` (baseline ${formatRuleFigure(rule.metric, rule.baselineValue)})`)), true) +
      cell(escapeHtml(formatRuleFigure(rule.metric, rule.bound)), true) +
      cell(escapeHtml(`${rule.kind} ${formatRuleFigure(rule.metric, rule.threshold)}`), true) +
      cell(`<span class="badge ${rule.pass ? 'pass' : 'fail'}">${rule.pass ? 'pass' : 'FAIL'}</span>`) +
      cell(escapeHtml(rule.message)) +
      '</tr>',
  );
  return join([
    `<section class="verdict ${v.pass ? 'pass' : 'fail'}" aria-labelledby="verdict-title">`,
    `<h2 id="verdict-title">Verdict: ${v.pass ? 'pass' : 'fail'}</h2>`,
    `<p><strong>${failed} of ${v.rules.length} rule(s) failed.</strong> A rule fails only when its one-sided confidence bound at ${escapeHtml(formatPercent(v.confidence, 0))} (column Bound) is beyond the threshold: the value ∓ its Monte Carlo error, or, for the outside-band share and the max weight sd, a bound over all assets at once.</p>`,
    htmlTable('Policy rules', ['Rule', 'Method', 'Metric', 'Value ± se', 'Bound', 'Threshold', 'Result', 'Explanation'], rows, (c) => c >= 3 && c <= 5),
    '</section>',
  ]);
}

/** The headline, built once in the core (summary.sentences), as the first thing after the title. */
function answerSection(r: Report): string {
  return join([
    '<section class="answer" aria-labelledby="answer-title">',
    '<h2 id="answer-title" tabindex="-1">The answer</h2>',
    `<p class="headline">${r.summary.sentences.map((s) => `<span>${escapeHtml(s)}</span>`).join(' ')}</p>`,
    '</section>',
  ]);
}

/** Findings the headline and the per-asset notes do not already say, one bullet each. */
function findingsSection(r: Report): string {
  const items = otherFindings(r).map((f) => `<li>${escapeHtml(f.message)}</li>`);
  if (items.length === 0) return '';
  return `<section aria-labelledby="findings-title"><h2 id="findings-title">More findings</h2><ul class="findings">${items.join('')}</ul></section>`;
}

function bandRow(label: string, band: Stat & { base: number }): string {
  return (
    `<tr>${cell(escapeHtml(label))}${cell(escapeHtml(formatPercent(band.base, 2)), true)}` +
    `${cell(escapeHtml(formatPercentWithError(band.mean, band.stdErr, 2)), true)}${cell(escapeHtml(formatPercent(band.p05, 2)), true)}` +
    `${cell(medianText(band, 2), true)}${cell(escapeHtml(formatPercent(band.p95, 2)), true)}</tr>`
  );
}

function proposalSection(r: Report): string {
  const p = r.proposal;
  const rows = [bandRow('Volatility (annualised)', p.volatility), bandRow('Expected return (annualised)', p.expectedReturn)];
  if (p.expectedShortfall95) rows.push(bandRow('Expected shortfall 95 % (per period, as a loss)', p.expectedShortfall95));
  return join([
    '<section aria-labelledby="proposal-title"><h2 id="proposal-title">The proposal under resampled inputs</h2>',
    `<p>Volatility band width (p95 − p05): <strong>${escapeHtml(formatPercentWithError(p.volatilityBandWidth.value, p.volatilityBandWidth.stdErr, 2))}</strong>. ± is the Monte Carlo standard error.</p>`,
    htmlTable(`Risk and return of the proposal over ${escapeHtml(formatCount(r.meta.drawsCompleted))} draws`, ['Figure', 'Base', 'Mean ± se', 'p05', 'p50 ± se', 'p95'], rows),
    htmlTable(
      'Euler risk contributions, shares of total risk (Tasche 2008)',
      ['Asset', 'Weight', 'Base', 'p05', 'p50', 'p95'],
      p.riskContributions.map(
        (rc, i) =>
          `<tr>${cell(escapeHtml(rc.asset))}${[p.weights[i], rc.base, rc.p05, rc.p50, rc.p95].map((v) => cell(escapeHtml(formatPercent(v)), true)).join('')}</tr>`,
      ),
    ),
    '</section>',
  ]);
}

function positionsSection(r: Report, pm: MethodReport | undefined): string {
  if (!pm) {
    return `<section aria-labelledby="positions-title"><h2 id="positions-title">Positions</h2><p>The proposal's method (${escapeHtml(methodLabel(r.proposal.method))}) was not re-optimised in this report, so there are no bands to compare the proposal with.</p></section>`;
  }
  const n = methodDraws(r, pm);
  const charted = chartRows(r, pm).length;
  const notes = r.summary.assetNotes;
  // One row group per asset: its figures, then its note (if any) on a row of its own beneath
  // them, so a long note never widens the table. The asset name heads the whole group
  // (scope="rowgroup"), so a screen reader reads the note with its asset. On a narrow screen the
  // figures scroll inside the table's box while the note text stays in view (sticky at its left).
  const groups = r.assets.map((asset, i) => {
    const b = pm.weights[i];
    const w = r.proposal.weights[i];
    const position = bandPosition(w, b.p05, b.p95);
    const flag = position === 'inside' ? '' : ` <span class="badge outside">${position} band</span>`;
    const note = notes[i] ?? '';
    const figures = [formatPercent(w), `${formatPercentRange(b.p05, b.p95)} ± ${formatPercent(b.bandStdErr)}`, formatPercentileRank(b.proposalPercentile), formatPercent(pm.meanDrivenShare.perAsset[i] ?? 0)];
    return (
      `<tbody class="asset${position === 'inside' ? '' : ' outside'}"><tr><th scope="rowgroup">${escapeHtml(asset) + flag}</th>` +
      figures.map((t) => cell(escapeHtml(t), true)).join('') +
      '</tr>' +
      (note === '' ? '' : `<tr class="note-row"><td class="notes" colspan="${figures.length + 1}"><div class="note-text">${escapeHtml(note)}</div></td></tr>`) +
      '</tbody>'
    );
  });
  const header = ['Asset', 'Proposal', 'p05 – p95 ± se', LABELS.proposalPercentile, LABELS.meanDrivenShare];
  return join([
    `<section aria-labelledby="positions-title"><h2 id="positions-title">Weights against ${escapeHtml(methodLabel(pm.method))}, re-optimised ${escapeHtml(formatCount(n))} times</h2>`,
    `<p class="note">Each band is where the re-optimised weights fall in 90 % of the resampled input sets (p05–p95); the marker is the proposal. ` +
      `${escapeHtml(LABELS.outsideBandShare)}: <strong>${escapeHtml(formatPercentWithError(pm.outsideBandShare.value, pm.outsideBandShare.stdErr))}</strong> of positions.</p>`,
    charted < r.assets.length ? `<p class="note">The chart shows the ${charted} positions furthest outside their band (then the most variable); the table lists all ${r.assets.length}.</p>` : '',
    legend(),
    `<div class="chart-wrap">${bandChartSvg(r, pm)}</div>`,
    `<p class="note">${escapeHtml(LABELS.proposalPercentile)}: where the proposal falls among the re-optimised weights (0–100). ${escapeHtml(LABELS.meanDrivenShare)}: the share of a weight’s variability caused by noise in the return forecasts. ± se: Monte Carlo standard error of the band edges. The note under an asset's figures uses the thresholds in the README.</p>`,
    `<div class="table-wrap"><table class="positions"><caption>Per asset</caption>` +
      `<thead>${headerRow(header, (c) => c > 0)}</thead>${groups.join('')}</table></div>`,
    '</section>',
  ]);
}

function comparisonSection(r: Report, pm: MethodReport | undefined): string {
  const rows = r.methods.map(
    (m) =>
      `<tr>${cell(escapeHtml(methodLabel(m.method)) + (m === pm ? ' <span class="note">(proposal’s method)</span>' : ''))}` +
      cell(medianText(m.turnoverFromProposal), true) +
      cell(escapeHtml(formatPercentRange(m.turnoverFromProposal.p05, m.turnoverFromProposal.p95)), true) +
      cell(medianText(m.turnoverFromBase), true) +
      cell(escapeHtml(formatPercentRange(m.volatility.p05, m.volatility.p95)), true) +
      cell(escapeHtml(`${formatBasisPoints(m.certaintyEquivalentLoss.mean)} ± ${formatFixed(m.certaintyEquivalentLoss.stdErr === null ? null : m.certaintyEquivalentLoss.stdErr * 10_000, 0)}`), true) +
      cell(escapeHtml(formatPercentWithError(m.meanDrivenShare.overall, m.meanDrivenShare.stdErr)), true) +
      cell(escapeHtml(formatPercentWithError(m.outsideBandShare.value, m.outsideBandShare.stdErr)), true) +
      cell(escapeHtml(formatPercentWithError(m.maxWeightSd.value, m.maxWeightSd.stdErr)), true) +
      cell(escapeHtml(formatCount(m.failedDraws)), true) +
      '</tr>',
  );
  return join([
    '<section aria-labelledby="methods-title"><h2 id="methods-title">Methods compared</h2>',
    '<p>Turnover is one-way (½Σ|Δw|). Volatilities are annualised. Certainty-equivalent loss is measured against the base mean-variance optimum, scored at the base inputs, ' +
      'in basis points per year (DeMiguel, Garlappi &amp; Uppal 2009). ± se is the Monte Carlo standard error; † marks a median shown with the error of the mean because the report carries no separate median error.</p>',
    htmlTable(
      'Stability of each method under resampling',
      [...METHOD_STABILITY_COLUMNS],
      rows,
    ),
    '</section>',
  ]);
}

function statRow(label: string, stat: Stat, inBasisPoints: boolean): string {
  const fmt = (v: number | null) => (inBasisPoints ? formatBasisPoints(v) : formatPercent(v, 2));
  const median = medianError(stat);
  return (
    `<tr>${cell(escapeHtml(label))}` +
    [`${fmt(stat.mean)} ± ${fmt(stat.stdErr)}`, fmt(stat.p05), `${fmt(stat.p50)} ± ${fmt(median.stdErr)}${median.isMeanError ? ' †' : ''}`, fmt(stat.p95)]
      .map((t) => cell(escapeHtml(t), true))
      .join('') +
    '</tr>'
  );
}

function methodDetails(r: Report, m: MethodReport, pm: MethodReport | undefined): string {
  const b = m.base;
  const d = b.diagnostics;
  const weightRows = m.weights.map(
    (w, i) =>
      `<tr>${cell(escapeHtml(w.asset))}` +
      [
        r.proposal.weights[i],
        b.weights[i],
        w.mean,
        w.sd,
        w.p05,
        w.p25,
        w.p50,
        w.p75,
        w.p95,
        w.bandStdErr,
        w.selectionRate,
      ]
        .map((v) => cell(escapeHtml(formatPercent(v)), true))
        .join('') +
      cell(escapeHtml(formatPercentileRank(w.proposalPercentile)), true) +
      cell(escapeHtml(formatPercent(m.meanDrivenShare.perAsset[i] ?? 0)), true) +
      cell(escapeHtml(formatPercent(m.meanOfOptima[i])), true) +
      '</tr>',
  );
  const warnings = b.warnings.length > 0 ? `<ul>${b.warnings.map((w) => `<li><strong>${escapeHtml(w.code)}</strong>: ${escapeHtml(w.message)}</li>`).join('')}</ul>` : '';
  return join([
    `<details${m === pm ? ' open' : ''}><summary>${escapeHtml(methodLabel(m.method))}${m === pm ? ' — the proposal’s method' : ''}</summary>`,
    `<p>Base optimum: expected return ${escapeHtml(formatPercent(b.expectedReturn, 2))}, volatility ${escapeHtml(formatPercent(b.volatility, 2))}, ` +
      `diversification ratio ${escapeHtml(formatFixed(b.diversificationRatio, 2))}, effective holdings ${escapeHtml(formatFixed(b.effectiveHoldings, 1))}` +
      (b.factorRiskShare ? `, factor risk ${escapeHtml(formatPercent(b.factorRiskShare.factor))} / specific ${escapeHtml(formatPercent(b.factorRiskShare.specific))} of variance` : '') +
      `. Solver ${escapeHtml(d.solver)}: ${d.converged ? 'converged' : '<strong>did not converge</strong>'} in ${d.iterations} iteration(s), KKT residual ${escapeHtml(formatScientific(d.kktResidual))}.</p>`,
    `<p>Draws used: ${escapeHtml(formatCount(methodDraws(r, m)))}${m.failedDraws > 0 ? ` (${escapeHtml(formatCount(m.failedDraws))} failed and are excluded)` : ''}. ` +
      `${LABELS.meanDrivenShare}: ${escapeHtml(formatPercentWithError(m.meanDrivenShare.overall, m.meanDrivenShare.stdErr))}. ` +
      `${LABELS.maxWeightSd}: ${escapeHtml(formatPercentWithError(m.maxWeightSd.value, m.maxWeightSd.stdErr))}.</p>`,
    warnings,
    htmlTable(
      'Summary over draws (± is the Monte Carlo standard error)',
      ['Figure', 'Mean ± se', 'p05', 'p50 ± se', 'p95'],
      [
        statRow(LABELS.turnoverFromProposal, m.turnoverFromProposal, false),
        statRow(LABELS.turnoverFromBase, m.turnoverFromBase, false),
        statRow(`${LABELS.volatility} (annualised)`, m.volatility, false),
        statRow(`${LABELS.certaintyEquivalentLoss} (annualised)`, m.certaintyEquivalentLoss, true),
      ],
    ),
    htmlTable(
      'Weights over draws',
      ['Asset', 'Proposal', 'Base', 'Mean', 'sd', 'p05', 'p25', 'p50', 'p75', 'p95', LABELS.bandStdErr, LABELS.selectionRate, LABELS.proposalPercentile, LABELS.meanDrivenShare, LABELS.meanOfOptima],
      weightRows,
    ),
    '</details>',
  ]);
}

function warningsSection(r: Report): string {
  const items = r.warnings.length > 0 ? r.warnings.map((w) => `<li><strong>${escapeHtml(w.code)}</strong>: ${escapeHtml(w.message)}</li>`).join('') : '<li>No warnings.</li>';
  return `<section aria-labelledby="warnings-title"><h2 id="warnings-title">Warnings</h2><ul>${items}</ul></section>`;
}

function aboutSection(r: Report): string {
  const m = r.meta;
  const entries: [string, string][] = [
    ['Draws', `${formatCount(m.drawsCompleted)} of ${formatCount(m.drawsRequested)} completed; ${formatCount(m.failedDraws)} with a method that failed to solve`],
    ['Resampling', m.scheme + (m.meanBlockLength === null ? '' : `, mean block length ${trimNumber(m.meanBlockLength)} periods`)],
    ['Channels', m.channels.join(', ')],
    ['Seed', String(m.seed)],
    ['Periods per year', trimNumber(m.periodsPerYear)],
    ['Percentiles', m.percentiles],
    ['Monte Carlo error', m.monteCarloError],
    ['Input digest (sha-256)', m.inputDigest],
    ['Work units', formatCount(m.workUnits)],
    ['wobble version', m.version],
    ...m.failureReasons.map((f): [string, string] => [`Failures: ${f.method}`, `${formatCount(f.count)} draw(s): ${f.reason}`]),
  ];
  return `<section aria-labelledby="about-title"><h2 id="about-title">About this run</h2><dl class="meta">${entries
    .map(([k, v]) => `<dt>${escapeHtml(k)}</dt><dd>${escapeHtml(v)}</dd>`)
    .join('')}</dl></section>`;
}

export interface ReportHtmlOptions {
  /**
   * For a page that already shows the cautions once (the reviewer page): leave out the report's
   * own cautions box. Standalone reports (files, mail, the API's `format=html`) always keep it.
   */
  readonly embedded?: boolean;
}

/**
 * The answer first: title, headline, verdict, then one chart and the compact per-asset table,
 * then everything else for the reader who wants the detail.
 */
export function renderReportHtml(r: Report, options: ReportHtmlOptions = {}): string {
  const pm = proposalMethod(r);
  return join([
    '<!doctype html>',
    '<html lang="en">',
    '<head>',
    '<meta charset="utf-8">',
    '<meta name="viewport" content="width=device-width, initial-scale=1">',
    `<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">`,
    '<title>wobble robustness report</title>',
    `<style>${REPORT_CSS}</style>`,
    '</head>',
    '<body class="report-page">',
    '<main class="report">',
    '<header>',
    // Embedded, the page's own heading names the result; a second h1 would break its outline.
    options.embedded ? '' : '<h1>Robustness report</h1>',
    `<p class="sub">Proposal built with ${escapeHtml(methodLabel(r.proposal.method))} · ${r.assets.length} assets · ` +
      `${escapeHtml(formatCount(r.meta.drawsCompleted))} of ${escapeHtml(formatCount(r.meta.drawsRequested))} draws · ${escapeHtml(r.meta.scheme)} · seed ${escapeHtml(String(r.meta.seed))}</p>`,
    '</header>',
    answerSection(r),
    verdictSection(r),
    positionsSection(r, pm),
    options.embedded ? '' : cautionsSection(r),
    findingsSection(r),
    proposalSection(r),
    comparisonSection(r, pm),
    '<section aria-labelledby="details-title"><h2 id="details-title">Method details</h2>',
    ...r.methods.map((m) => methodDetails(r, m, pm)),
    '</section>',
    warningsSection(r),
    aboutSection(r),
    '</main>',
    '</body>',
    '</html>',
    '',
  ]);
}
