import { CAUTIONS } from '../schema/cautions.js';
import type { MethodReport, OptimizeResponse, Report } from '../schema/report.js';
import {
  bandPosition,
  formatBasisPoints,
  formatFixed,
  formatPercent,
  formatPercentileRank,
  formatPercentWithError,
  formatScientific,
  medianError,
  methodDraws,
  methodLabel,
  proposalMethod,
  shareStdErr,
  formatRuleFigure,
  formatRuleValue,
} from './format.js';
import { otherFindings } from '../stress/headline.js';

/**
 * Plain-text terminal tables. Fixed column widths so a reviewer can scan a column; every line
 * of the report table fits in 120 columns. Caller-supplied text (asset ids, messages) has
 * control characters replaced, so an id cannot move the cursor or recolour the terminal.
 */

const SCREEN_WIDTH = 120;
const ASSET_WIDTH = 24;
const GAP = '  ';

/** Replace C0/C1 control characters (ESC, newlines, …) with a visible placeholder. */
function terminalText(text: string): string {
  // eslint-disable-next-line no-control-regex
  return text.replace(/[\u0000-\u001f\u007f-\u009f]/g, '\ufffd');
}

/** Cut to `width` characters, marking the cut with an ellipsis. */
function fit(text: string, width: number): string {
  const clean = terminalText(text);
  return clean.length <= width ? clean : `${clean.slice(0, Math.max(0, width - 1))}…`;
}

function left(text: string, width: number): string {
  return fit(text, width).padEnd(width);
}

function right(text: string, width: number): string {
  return fit(text, width).padStart(width);
}

/** Greedy word wrap of one paragraph; the first line gets `firstPrefix`, later lines `restPrefix`. */
function wrap(text: string, width: number, firstPrefix = '', restPrefix = firstPrefix): string[] {
  const words = terminalText(text).split(/\s+/).filter((w) => w !== '');
  const lines: string[] = [];
  let line = firstPrefix;
  let lineHasWord = false;
  for (const word of words) {
    const candidate = lineHasWord ? `${line} ${word}` : `${line}${word}`;
    if (candidate.length > width && lineHasWord) {
      lines.push(line);
      line = `${restPrefix}${word}`;
    } else {
      line = candidate;
    }
    lineHasWord = true;
  }
  lines.push(line);
  return lines.map((l) => fit(l, width));
}

/**
 * Whole items (each wrapped to one or more lines) while they fit in `maxLines`; then one line
 * saying how many were left out, so no sentence is cut in the middle.
 */
function fitItems(items: readonly string[][], maxLines: number, what: string): string[] {
  const out: string[] = [];
  let shown = 0;
  for (const item of items) {
    const roomLeft = maxLines - out.length - (shown + 1 < items.length ? 1 : 0);
    if (item.length > roomLeft) break;
    out.push(...item);
    shown++;
  }
  if (shown < items.length) out.push(`  … ${items.length - shown} more ${what}; the markdown and HTML reports list them all.`);
  return out;
}

/** One-line forms of the standard cautions; any other caution is printed in full. */
const SHORT_CAUTIONS = new Map<string, string>([
  [CAUTIONS[0], 'estimates from resampled inputs, not investment advice'],
  [CAUTIONS[1], 'past returns do not predict future returns'],
  [CAUTIONS[2], 'Monte Carlo figures carry sampling error'],
  [CAUTIONS[3], "defer to your firm's policies and licensed professionals"],
]);

function cautionLines(cautions: readonly string[], short: boolean): string[] {
  if (!short) return cautions.flatMap((c) => wrap(c, SCREEN_WIDTH, '  - ', '    '));
  const known = cautions.filter((c) => SHORT_CAUTIONS.has(c)).map((c) => SHORT_CAUTIONS.get(c) as string);
  const other = cautions.filter((c) => !SHORT_CAUTIONS.has(c));
  const lines = known.length > 0 ? wrap(`Cautions: ${known.join('; ')}.`, SCREEN_WIDTH, '', '  ') : ['Cautions:'];
  return [...lines, ...other.flatMap((c) => wrap(c, SCREEN_WIDTH, '  - ', '    '))];
}

// ---------------------------------------------------------------------------------------------
// Optimize response: columns = methods, rows = assets.

/** Split `mean-variance (λ = 4)` into a name line and a parameter line for a two-line header. */
function headerLines(label: string): [string, string] {
  const cut = label.indexOf(' (');
  return cut < 0 ? [label, ''] : [label.slice(0, cut), label.slice(cut + 1)];
}

export function renderOptimizeTable(r: OptimizeResponse): string {
  const headers = r.methods.map((m) => headerLines(methodLabel(m.method)));
  const body: [string, string[]][] = [
    ...r.assets.map((asset, i): [string, string[]] => [asset, r.methods.map((m) => formatPercent(m.base.weights[i]))]),
    ['sum of weights', r.methods.map((m) => formatPercent(m.base.weights.reduce((s, w) => s + w, 0)))],
  ];
  const metrics: [string, string[]][] = [
    ['expected return (annual)', r.methods.map((m) => formatPercent(m.base.expectedReturn, 2))],
    ['volatility (annual)', r.methods.map((m) => formatPercent(m.base.volatility, 2))],
    ['diversification ratio', r.methods.map((m) => formatFixed(m.base.diversificationRatio, 2))],
    ['effective holdings', r.methods.map((m) => formatFixed(m.base.effectiveHoldings, 1))],
    ['KKT residual', r.methods.map((m) => formatScientific(m.base.diagnostics.kktResidual))],
    ['iterations', r.methods.map((m) => String(m.base.diagnostics.iterations))],
    ['converged', r.methods.map((m) => (m.base.diagnostics.converged ? 'yes' : 'NO'))],
    ['solver', r.methods.map((m) => m.base.diagnostics.solver)],
  ];
  // Each column is as wide as its widest cell (at most 22), so nothing is cut in the usual case.
  const widths = headers.map(([a, b], j) =>
    Math.min(22, Math.max(8, a.length, b.length, ...[...body, ...metrics].map(([, cells]) => cells[j].length))),
  );
  const row = (label: string, cells: readonly string[]) =>
    [left(label, ASSET_WIDTH), ...cells.map((c, j) => right(c, widths[j]))].join(GAP).trimEnd();
  const rule = row('', widths.map((w) => '-'.repeat(w)));

  const out: string[] = [];
  out.push(
    ...wrap(
      `wobble optimize · ${r.assets.length} assets · ${r.methods.length} method(s) · the optimum of each method on the unperturbed inputs (no resampling)`,
      SCREEN_WIDTH,
    ),
  );
  out.push('');
  out.push(row('', headers.map(([a]) => a)));
  out.push(row('weights', headers.map(([, b]) => b)));
  out.push(rule);
  for (const [label, cells] of body) out.push(row(label, cells));
  out.push(rule);
  for (const [label, cells] of metrics) out.push(row(label, cells));

  const warnings = [
    ...r.warnings.map((w) => `${w.code}: ${w.message}`),
    ...r.methods.flatMap((m) => m.base.warnings.map((w) => `${methodLabel(m.method)} — ${w.code}: ${w.message}`)),
  ];
  if (warnings.length > 0) {
    out.push('', 'Warnings');
    for (const w of warnings) out.push(...wrap(w, SCREEN_WIDTH, '  - ', '    '));
  }
  out.push('', 'Cautions');
  out.push(...cautionLines(r.cautions, false));
  return `${out.join('\n')}\n`;
}

// ---------------------------------------------------------------------------------------------
// Report: one screen that shows which positions are fragile and why.

const POSITION_COLUMNS = { proposal: 8, band: 15, bandErr: 6, percentile: 6, selected: 8, meanDriven: 11 } as const;
const NOTE_WIDTH =
  SCREEN_WIDTH -
  ASSET_WIDTH -
  Object.values(POSITION_COLUMNS).reduce((s, w) => s + w, 0) -
  GAP.length * (Object.keys(POSITION_COLUMNS).length + 1);

/** `  2.1% –  25.3%`: both ends right-aligned so the dashes line up down the column. */
function bandText(low: number, high: number): string {
  return `${formatPercent(low).padStart(6)} – ${formatPercent(high).padStart(6)}`;
}

/** Why a position looks fragile, most important first: outside its band, then often dropped. */
function positionNote(proposalWeight: number, position: ReturnType<typeof bandPosition>, selectionRate: number): string {
  const notes: string[] = [];
  if (position === 'above') notes.push('above band');
  if (position === 'below') notes.push('below band');
  if (proposalWeight !== 0 && selectionRate < 0.5) notes.push(`dropped ${formatPercent(1 - selectionRate, 0)}`);
  return notes.join(', ');
}

function positionSection(r: Report, pm: MethodReport | undefined): string[] {
  const c = POSITION_COLUMNS;
  const out: string[] = [];
  const label = pm ? methodLabel(pm.method) : methodLabel(r.proposal.method);
  if (!pm) {
    out.push(`Positions (the proposal's method ${label} was not re-optimised, so there is no band to compare with)`);
    out.push([left('asset', ASSET_WIDTH), right('proposal', c.proposal)].join(GAP));
    r.assets.forEach((asset, i) => out.push([left(asset, ASSET_WIDTH), right(formatPercent(r.proposal.weights[i]), c.proposal)].join(GAP)));
    return out.map((l) => fit(l, SCREEN_WIDTH));
  }
  const n = methodDraws(r, pm);
  out.push(fit(`Positions against ${label} re-optimised in ${n} draws (band: 5th–95th percentile of its weights)`, SCREEN_WIDTH));
  out.push(
    [
      left('asset', ASSET_WIDTH),
      right('proposal', c.proposal),
      right('p05 – p95 band', c.band),
      right('±se', c.bandErr),
      right('pctile', c.percentile),
      right('selected', c.selected),
      right('mean-driven', c.meanDriven),
      left('note', NOTE_WIDTH),
    ]
      .join(GAP)
      .trimEnd(),
  );
  r.assets.forEach((asset, i) => {
    const w = r.proposal.weights[i];
    const band = pm.weights[i];
    const meanDriven = pm.meanDrivenShare.perAsset[i] ?? 0;
    out.push(
      [
        left(asset, ASSET_WIDTH),
        right(formatPercent(w), c.proposal),
        right(bandText(band.p05, band.p95), c.band),
        right(formatPercent(band.bandStdErr), c.bandErr),
        right(formatPercentileRank(band.proposalPercentile), c.percentile),
        right(formatPercent(band.selectionRate), c.selected),
        right(formatPercent(meanDriven), c.meanDriven),
        left(positionNote(w, bandPosition(w, band.p05, band.p95), band.selectionRate), NOTE_WIDTH),
      ]
        .join(GAP)
        .trimEnd(),
    );
  });
  const worstSelectionError = Math.max(0, ...pm.weights.map((b) => shareStdErr(b.selectionRate, n)));
  const outside = pm.outsideBandShare;
  out.push(
    ...wrap(
      `Outside band share: ${formatPercentWithError(outside.value, outside.stdErr)} of positions · ±se: error of band edges · ` +
        `pctile: proposal's rank in the draws (0–100) · selected: share of draws holding it ` +
        `(±${formatPercent(worstSelectionError)} at most) · mean-driven: share of instability from noisy means.`,
      SCREEN_WIDTH,
    ),
  );
  return out;
}

/** Widths fit the widest values, e.g. `100.0% ± 10.0%` (14) and `100.0% – 100.0%` (15). */
const METHOD_COLUMNS = { method: 22, turnover: 15, turnoverBand: 15, volatility: 15, ceLoss: 12, meanDriven: 14, outside: 14 } as const;

function methodSection(r: Report): string[] {
  const c = METHOD_COLUMNS;
  const out: string[] = [];
  out.push('Methods (annualised; bands are p05–p95; ± = Monte Carlo standard error; turnover is one-way, from the proposal)');
  out.push(
    [
      left('method', c.method),
      right('turnover p50', c.turnover),
      right('turnover p05–95', c.turnoverBand),
      right('volatility band', c.volatility),
      right('CE loss', c.ceLoss),
      right('mean-driven', c.meanDriven),
      right('outside band', c.outside),
    ].join(GAP),
  );
  let usedMeanError = false;
  for (const m of r.methods) {
    const t = m.turnoverFromProposal;
    const median = medianError(t);
    usedMeanError ||= median.isMeanError;
    const ce = m.certaintyEquivalentLoss;
    out.push(
      [
        left(methodLabel(m.method), c.method),
        right(`${formatPercentWithError(t.p50, median.stdErr)}${median.isMeanError ? '†' : ' '}`, c.turnover),
        right(bandText(t.p05, t.p95), c.turnoverBand),
        right(bandText(m.volatility.p05, m.volatility.p95), c.volatility),
        right(`${formatBasisPoints(ce.mean)} ± ${formatFixed(ce.stdErr === null ? null : ce.stdErr * 10_000, 0)}`, c.ceLoss),
        right(formatPercentWithError(m.meanDrivenShare.overall, m.meanDrivenShare.stdErr), c.meanDriven),
        right(formatPercentWithError(m.outsideBandShare.value, m.outsideBandShare.stdErr), c.outside),
      ].join(GAP),
    );
  }
  const failed = r.methods.filter((m) => m.failedDraws > 0).map((m) => `${methodLabel(m.method)} failed in ${m.failedDraws} draw(s), excluded`);
  out.push(
    ...wrap(
      `CE loss: mean certainty-equivalent loss against the base mean-variance optimum, at the base inputs (bp per year).` +
        (usedMeanError ? ' †: ± is the error of the mean (the median’s is not in the report).' : '') +
        (failed.length > 0 ? ` ${failed.join('; ')}.` : ''),
      SCREEN_WIDTH,
    ),
  );
  return out;
}

function verdictLines(r: Report): string[] {
  const v = r.verdict;
  if (!v) return [];
  const failing = v.rules.filter((rule) => !rule.pass);
  const passing = v.rules.filter((rule) => rule.pass);
  const out = [
    `Verdict: ${v.pass ? 'PASS' : 'FAIL'} — ${failing.length} of ${v.rules.length} rule(s) failed at ${formatPercent(v.confidence, 0)} confidence`,
  ];
  // Failing rules get their numbers and sentence; passing ones are listed by id to keep one screen.
  const failLines = failing.map((rule) =>
    wrap(
      `[FAIL] ${rule.id} (${rule.method}): ${formatRuleValue(rule.metric, rule.value, rule.stdErr, 1)}, bound ${formatRuleFigure(rule.metric, rule.bound, 1)} vs ${rule.kind} ${formatRuleFigure(rule.metric, rule.threshold, 1)} — ${rule.message}`,
      SCREEN_WIDTH,
      '  ',
      '         ',
    ),
  );
  out.push(...fitItems(failLines, 6, 'failing rule(s)'));
  if (passing.length > 0) out.push(...wrap(`[pass] ${passing.map((rule) => rule.id).join(', ')}`, SCREEN_WIDTH, '  ', '         '));
  return out;
}

function proposalLines(r: Report): string[] {
  const vol = r.proposal.volatility;
  const ret = r.proposal.expectedReturn;
  const width = r.proposal.volatilityBandWidth;
  return [
    `Proposal volatility (annual): base ${formatPercent(vol.base)}, p05–p95 ${formatPercentRangeText(vol.p05, vol.p95)} ` +
      `(width ${formatPercentWithError(width.value, width.stdErr)}), mean ${formatPercentWithError(vol.mean, vol.stdErr, 2)}`,
    `Proposal expected return (annual): base ${formatPercent(ret.base)}, p05–p95 ${formatPercentRangeText(ret.p05, ret.p95)}, ` +
      `mean ${formatPercentWithError(ret.mean, ret.stdErr, 2)}`,
  ].flatMap((line) => wrap(line, SCREEN_WIDTH, '', '  '));
}

function formatPercentRangeText(low: number, high: number): string {
  return `${formatPercent(low)} – ${formatPercent(high)}`;
}

export function renderReportTable(r: Report): string {
  const pm = proposalMethod(r);
  const out: string[] = [];
  const blocks = r.meta.meanBlockLength === null ? '' : ` (block ${formatFixed(r.meta.meanBlockLength, 1)})`;
  out.push(
    ...wrap(
      `wobble report · proposal: ${methodLabel(r.proposal.method)} · ${r.meta.drawsCompleted}/${r.meta.drawsRequested} draws · ` +
        `seed ${fit(String(r.meta.seed), 24)} · ${r.meta.scheme}${blocks}`,
      SCREEN_WIDTH,
      '',
      '  ',
    ),
  );
  // The answer first: verdict (with a policy) and the headline sentences from the core.
  out.push('');
  out.push(...wrap(r.summary.headline, SCREEN_WIDTH));
  out.push(...verdictLines(r));
  out.push('');
  out.push(...proposalLines(r));
  out.push('');
  out.push(...positionSection(r, pm));
  out.push('');
  out.push(...methodSection(r));

  const findings = otherFindings(r).map((f) => wrap(f.message, SCREEN_WIDTH, '  - ', '    '));
  out.push('');
  if (findings.length > 0) out.push('More findings', ...fitItems(findings, 6, 'finding(s)'));
  const warnings = r.warnings.map((w) => wrap(`${w.code}: ${w.message}`, SCREEN_WIDTH, '  - ', '    '));
  if (warnings.length > 0) out.push('Warnings', ...fitItems(warnings, 4, 'warning(s)'));
  out.push(...cautionLines(r.cautions, true));
  return `${out.join('\n')}\n`;
}
