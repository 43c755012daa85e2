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
 * The full report as GitHub-flavoured markdown, for pull requests, tickets and committee packs.
 * Caller-supplied text is escaped so an asset id cannot break a table or inject markup.
 */

/**
 * Escape text for inline markdown and table cells (GitHub Flavored Markdown spec 0.29-gfm;
 * section numbers from memory). Tables split cells on `|`, and `\|` keeps a literal pipe
 * (§4.10 Tables); any ASCII punctuation may be backslash-escaped (§6.1), which neutralises
 * emphasis, links, code spans and raw HTML; `&` only where it would start an entity reference
 * (§6.2); a leading list marker (§5.2). Line breaks would end a table row, so they become spaces.
 */
export function escapeMarkdown(text: string): string {
  return text
    .replace(/\r\n|\r|\n/g, ' ')
    .replace(/[\\`*_[\]<>|#~]/g, (ch) => `\\${ch}`)
    .replace(/&(?=#?[A-Za-z0-9]+;)/g, '\\&')
    .replace(/^([-+])(?=\s|$)/, '\\$1')
    .replace(/^(\d{1,9})([.)])(?=\s|$)/, '$1\\$2');
}

function table(header: readonly string[], rows: readonly (readonly string[])[], align: readonly ('l' | 'r')[]): string[] {
  const marker = align.map((a) => (a === 'r' ? '---:' : ':---'));
  return [`| ${header.join(' | ')} |`, `| ${marker.join(' | ')} |`, ...rows.map((r) => `| ${r.join(' | ')} |`)];
}

/** The median with its error, flagged with † when only the mean's error is available. */
function medianCell(stat: Stat): string {
  const e = medianError(stat);
  return `${formatPercentWithError(stat.p50, e.stdErr)}${e.isMeanError ? ' †' : ''}`;
}

function runSection(r: Report, pm: MethodReport | undefined): string[] {
  const m = r.meta;
  const rows: string[][] = [
    ['Proposal method', escapeMarkdown(methodLabel(r.proposal.method)) + (pm ? '' : ' (not re-optimised in this report)')],
    ['Assets', String(r.assets.length)],
    ['Draws', `${formatCount(m.drawsCompleted)} of ${formatCount(m.drawsRequested)} completed; ${formatCount(m.failedDraws)} with a method that failed to solve`],
    ['Resampling', escapeMarkdown(m.scheme) + (m.meanBlockLength === null ? '' : `, mean block length ${trimNumber(m.meanBlockLength)} periods`)],
    ['Channels', escapeMarkdown(m.channels.join(', '))],
    ['Seed', escapeMarkdown(String(m.seed))],
    ['Periods per year', trimNumber(m.periodsPerYear)],
    ['Percentiles', escapeMarkdown(m.percentiles)],
    ['Monte Carlo error', escapeMarkdown(m.monteCarloError)],
    ['Input digest (sha-256)', escapeMarkdown(m.inputDigest)],
    ['wobble version', escapeMarkdown(m.version)],
  ];
  for (const f of m.failureReasons) {
    rows.push(['Failed draws', `${escapeMarkdown(f.method)}: ${formatCount(f.count)} (${escapeMarkdown(f.reason)})`]);
  }
  return ['## About this run', '', ...table(['', ''], rows, ['l', 'l'])];
}

/**
 * The top of the document, pasted into CI job summaries: the verdict (when there is a policy)
 * and the headline sentences from the core, nothing else.
 */
function answerSection(r: Report): string[] {
  const out: string[] = [];
  if (r.verdict) {
    const failed = r.verdict.rules.filter((rule) => !rule.pass).length;
    out.push(`**Verdict: ${r.verdict.pass ? 'PASS' : 'FAIL'}** — ${failed} of ${r.verdict.rules.length} rule(s) failed at ${formatPercent(r.verdict.confidence, 0)} confidence.`, '');
  }
  out.push(escapeMarkdown(r.summary.headline));
  return out;
}

/** The compact per-asset table: band against the proposal, with the per-asset notes. */
function assetSection(r: Report, pm: MethodReport | undefined): string[] {
  if (!pm) return [];
  const notes = r.summary.assetNotes;
  return [
    `## Weights against ${escapeMarkdown(methodLabel(pm.method))}, re-optimised ${formatCount(methodDraws(r, pm))} times`,
    '',
    `Band: where the re-optimised weights fall in 90 % of the resampled input sets (p05–p95), ± se the Monte Carlo error of its edges. ` +
      `${LABELS.proposalPercentile}: where the proposal falls among them. ${LABELS.outsideBandShare}: ${formatPercentWithError(pm.outsideBandShare.value, pm.outsideBandShare.stdErr)} of positions.`,
    '',
    ...table(
      ['Asset', 'Proposal', 'p05 – p95 ± se', LABELS.proposalPercentile, LABELS.meanDrivenShare, 'Note'],
      r.assets.map((asset, i) => {
        const b = pm.weights[i];
        const w = r.proposal.weights[i];
        const position = bandPosition(w, b.p05, b.p95);
        return [
          escapeMarkdown(asset) + (position === 'inside' ? '' : ` (${position} band)`),
          formatPercent(w),
          `${formatPercentRange(b.p05, b.p95)} ± ${formatPercent(b.bandStdErr)}`,
          formatPercentileRank(b.proposalPercentile),
          formatPercent(pm.meanDrivenShare.perAsset[i] ?? 0),
          escapeMarkdown(notes[i] ?? ''),
        ];
      }),
      ['l', 'r', 'r', 'r', 'r', 'l'],
    ),
  ];
}

function bandRow(label: string, band: Stat & { base: number }, decimals: number): string[] {
  return [
    label,
    formatPercent(band.base, decimals),
    formatPercentWithError(band.mean, band.stdErr, decimals),
    formatPercent(band.p05, decimals),
    `${formatPercentWithError(band.p50, medianError(band).stdErr, decimals)}${medianError(band).isMeanError ? ' †' : ''}`,
    formatPercent(band.p95, decimals),
  ];
}

function proposalSection(r: Report): string[] {
  const p = r.proposal;
  const rows = [bandRow('Volatility (annualised)', p.volatility, 2), bandRow('Expected return (annualised)', p.expectedReturn, 2)];
  if (p.expectedShortfall95) rows.push(bandRow('Expected shortfall 95 % (per period, as a loss)', p.expectedShortfall95, 2));
  const width = p.volatilityBandWidth;
  const out = [
    '## Proposal',
    '',
    `How the proposal's own risk and return move when the inputs are resampled (${formatCount(r.meta.drawsCompleted)} draws). ` +
      '± is the Monte Carlo standard error.',
    '',
    ...table(['Figure', 'Base', 'Mean ± se', 'p05', 'p50 ± se', 'p95'], rows, ['l', 'r', 'r', 'r', 'r', 'r']),
    '',
    `Volatility band width (p95 − p05): **${formatPercentWithError(width.value, width.stdErr, 2)}**.`,
    '',
    '### Risk contributions of the proposal',
    '',
    'Euler risk contributions w_i(Σw)_i / wᵀΣw, as shares of total risk (Tasche 2008).',
    '',
    ...table(
      ['Asset', 'Weight', 'Base', 'p05', 'p50', 'p95'],
      p.riskContributions.map((rc, i) => [
        escapeMarkdown(rc.asset),
        formatPercent(p.weights[i]),
        formatPercent(rc.base),
        formatPercent(rc.p05),
        formatPercent(rc.p50),
        formatPercent(rc.p95),
      ]),
      ['l', 'r', 'r', 'r', 'r', 'r'],
    ),
  ];
  return out;
}

function comparisonSection(r: Report, pm: MethodReport | undefined): string[] {
  const rows = r.methods.map((m) => [
    escapeMarkdown(methodLabel(m.method)) + (m === pm ? ' (proposal’s method)' : ''),
    medianCell(m.turnoverFromProposal),
    formatPercentRange(m.turnoverFromProposal.p05, m.turnoverFromProposal.p95),
    medianCell(m.turnoverFromBase),
    formatPercentRange(m.volatility.p05, m.volatility.p95),
    `${formatBasisPoints(m.certaintyEquivalentLoss.mean)} ± ${formatFixed(m.certaintyEquivalentLoss.stdErr === null ? null : m.certaintyEquivalentLoss.stdErr * 10_000, 0)}`,
    formatPercentWithError(m.meanDrivenShare.overall, m.meanDrivenShare.stdErr),
    formatPercentWithError(m.outsideBandShare.value, m.outsideBandShare.stdErr),
    formatPercentWithError(m.maxWeightSd.value, m.maxWeightSd.stdErr),
    formatCount(m.failedDraws),
  ]);
  return [
    '## Methods compared',
    '',
    'Each method re-optimised on every draw. Turnover is one-way (½Σ|Δw|). Volatilities are annualised. ' +
      'Certainty-equivalent loss is measured against the base mean-variance optimum, scored at the base inputs, in basis points per year ' +
      '(DeMiguel, Garlappi & Uppal 2009). ± se is the Monte Carlo standard error; † marks a median shown with the error of the mean because the report has no separate median error.',
    '',
    ...table(
      [...METHOD_STABILITY_COLUMNS],
      rows,
      ['l', 'r', 'r', 'r', 'r', 'r', 'r', 'r', 'r', 'r'],
    ),
  ];
}

function statRow(label: string, stat: Stat, percent: boolean): string[] {
  const fmt = (x: number) => (percent ? formatPercent(x, 2) : formatBasisPoints(x));
  const err = (x: number | null) => (percent ? formatPercent(x, 2) : formatBasisPoints(x));
  const median = medianError(stat);
  return [label, `${fmt(stat.mean)} ± ${err(stat.stdErr)}`, fmt(stat.p05), `${fmt(stat.p50)} ± ${err(median.stdErr)}${median.isMeanError ? ' †' : ''}`, fmt(stat.p95)];
}

function methodSection(r: Report, m: MethodReport, pm: MethodReport | undefined): string[] {
  const b = m.base;
  const d = b.diagnostics;
  const out = [
    `### ${escapeMarkdown(methodLabel(m.method))}${m === pm ? ' — the proposal’s method' : ''}`,
    '',
    `Base optimum: expected return ${formatPercent(b.expectedReturn, 2)}, volatility ${formatPercent(b.volatility, 2)}, ` +
      `diversification ratio ${formatFixed(b.diversificationRatio, 2)}, effective holdings ${formatFixed(b.effectiveHoldings, 1)}` +
      (b.factorRiskShare ? `, factor risk ${formatPercent(b.factorRiskShare.factor)} / specific ${formatPercent(b.factorRiskShare.specific)} of variance` : '') +
      `. Solver ${escapeMarkdown(d.solver)}: ${d.converged ? 'converged' : '**did not converge**'} in ${d.iterations} iteration(s), KKT residual ${formatScientific(d.kktResidual)}.`,
    '',
    `Draws used: ${formatCount(methodDraws(r, m))}${m.failedDraws > 0 ? ` (${formatCount(m.failedDraws)} failed and are excluded)` : ''}. ` +
      `${LABELS.meanDrivenShare}: ${formatPercentWithError(m.meanDrivenShare.overall, m.meanDrivenShare.stdErr)}. ` +
      `${LABELS.outsideBandShare}: ${formatPercentWithError(m.outsideBandShare.value, m.outsideBandShare.stdErr)} of positions. ` +
      `${LABELS.maxWeightSd}: ${formatPercentWithError(m.maxWeightSd.value, m.maxWeightSd.stdErr)}.`,
    '',
    ...table(
      ['Figure', 'Mean ± se', 'p05', 'p50 ± se', 'p95'],
      [
        statRow(LABELS.turnoverFromProposal, m.turnoverFromProposal, true),
        statRow(LABELS.turnoverFromBase, m.turnoverFromBase, true),
        statRow(`${LABELS.volatility} (annualised)`, m.volatility, true),
        statRow(`${LABELS.certaintyEquivalentLoss} (annualised)`, m.certaintyEquivalentLoss, false),
      ],
      ['l', 'r', 'r', 'r', 'r'],
    ),
    '',
    ...table(
      ['Asset', 'Proposal', 'Base', 'Mean', 'sd', 'p05', 'p25', 'p50', 'p75', 'p95', LABELS.bandStdErr, LABELS.selectionRate, LABELS.proposalPercentile, LABELS.meanDrivenShare, LABELS.meanOfOptima],
      m.weights.map((w, i) => [
        escapeMarkdown(w.asset),
        formatPercent(r.proposal.weights[i]),
        formatPercent(b.weights[i]),
        formatPercent(w.mean),
        formatPercent(w.sd),
        formatPercent(w.p05),
        formatPercent(w.p25),
        formatPercent(w.p50),
        formatPercent(w.p75),
        formatPercent(w.p95),
        formatPercent(w.bandStdErr),
        formatPercent(w.selectionRate),
        formatPercentileRank(w.proposalPercentile),
        formatPercent(m.meanDrivenShare.perAsset[i] ?? 0),
        formatPercent(m.meanOfOptima[i]),
      ]),
      ['l', 'r', 'r', 'r', 'r', 'r', 'r', 'r', 'r', 'r', 'r', 'r', 'r', 'r', 'r'],
    ),
  ];
  if (b.warnings.length > 0) {
    out.push('', ...b.warnings.map((w) => `- ${escapeMarkdown(w.code)}: ${escapeMarkdown(w.message)}`));
  }
  return out;
}

function verdictSection(r: Report): string[] {
  const v = r.verdict;
  if (!v) return [];
  const failed = v.rules.filter((rule) => !rule.pass).length;
  return [
    '## Policy rules',
    '',
    `**${v.pass ? 'PASS' : 'FAIL'}**: ${failed} of ${v.rules.length} rule(s) failed. A rule fails only when its one-sided confidence bound at ` +
      `${formatPercent(v.confidence, 0)} (column Bound) is beyond the threshold: the value ∓ its Monte Carlo error, or, for the outside-band share ` +
      'and the max weight sd, a bound over all assets at once.',
    '',
    ...table(
      ['Rule', 'Method', 'Metric', 'Value ± se', 'Bound', 'Threshold', 'Result', 'Explanation'],
      v.rules.map((rule) => [
        escapeMarkdown(rule.id),
        escapeMarkdown(rule.method),
        escapeMarkdown(rule.metric),
        formatRuleValue(rule.metric, rule.value, rule.stdErr) + (rule.baselineValue === undefined ? '' : ` (baseline ${formatRuleFigure(rule.metric, rule.baselineValue)})`),
        formatRuleFigure(rule.metric, rule.bound),
        `${rule.kind} ${formatRuleFigure(rule.metric, rule.threshold)}`,
        rule.pass ? 'pass' : '**FAIL**',
        escapeMarkdown(rule.message),
      ]),
      ['l', 'l', 'l', 'r', 'r', 'r', 'l', 'l'],
    ),
  ];
}

function listSection(title: string, items: readonly string[], empty: string): string[] {
  return [`## ${title}`, '', ...(items.length > 0 ? items.map((item) => `- ${item}`) : [empty])];
}

/** Verdict and headline first (CI job summaries show the top), then the per-asset table and the details. */
export function renderReportMarkdown(r: Report): string {
  const pm = proposalMethod(r);
  const sections: string[][] = [
    ['# wobble robustness report'],
    answerSection(r),
    assetSection(r, pm),
    verdictSection(r),
    listSection('Cautions', r.cautions.map(escapeMarkdown), 'No cautions were supplied.'),
    otherFindings(r).length > 0 ? listSection('More findings', otherFindings(r).map((f) => escapeMarkdown(f.message)), '') : [],
    proposalSection(r),
    comparisonSection(r, pm),
    ...r.methods.map((m) => methodSection(r, m, pm)),
    listSection('Warnings', r.warnings.map((w) => `**${escapeMarkdown(w.code)}**: ${escapeMarkdown(w.message)}`), 'No warnings.'),
    runSection(r, pm),
  ];
  return `${sections
    .filter((s) => s.length > 0)
    .map((s) => s.join('\n'))
    .join('\n\n')}\n`;
}
