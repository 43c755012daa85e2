import { bandPosition, formatFixed, formatPercent, formatPercentileRank, formatPercentRange, methodLabel, proposalMethod } from '../render/format.js';
import type { MethodReport, Report, ReportSummary } from '../schema/report.js';
import { clean } from './base-optimum.js';
import { FINDING_THRESHOLDS, MEAN_FREE_METHODS } from './findings.js';

/**
 * The answer first: one or two sentences a reviewer can read aloud, built once here so the JSON
 * `summary`, the HTML, the markdown and the terminal table all say the same thing in the same
 * words. Every draw-based number carries its Monte Carlo error (±); figures computed on the base
 * inputs (the distance to the stated optimum, forecast sensitivity) are exact and carry none.
 */

/** Rules of thumb behind the headline's words (chosen by us, common practice; stated in the README). */
export const HEADLINE_THRESHOLDS = {
  /**
   * One-way turnover between the proposal and its stated method's optimum on the base inputs
   * above which the proposal "is not that method's optimum" (1 point: rounding of a genuinely
   * optimal allocation stays well below it).
   */
  statedOptimumTurnover: 0.01,
  /**
   * Risk is called stable when the proposal's volatility band (p95 − p05 over draws) is at most
   * this share of its volatility on the base inputs.
   */
  stableVolatilityBand: 0.25,
  /** A simpler method "would have lost less" only when its certainty-equivalent loss is lower by more than this many combined standard errors. */
  lossDifferenceStdErrs: 2,
} as const;

type ReportBody = Omit<Report, 'verdict' | 'summary'>;

/**
 * The smallest forecast change, in standard errors of that forecast, that changes the optimum's
 * active pattern (which positions sit at a bound); null when the report has no such figure. The
 * same minimum as the `forecast-break-even-std-errs` policy metric, without its cap.
 */
export function forecastBreakEven(method: MethodReport): ReportSummary['forecastBreakEven'] {
  let best: ReportSummary['forecastBreakEven'] = null;
  for (const e of method.forecastSensitivity ?? []) {
    for (const [direction, value] of [
      ['up', e.shiftUpStdErrs],
      ['down', e.shiftDownStdErrs],
    ] as const) {
      if (typeof value === 'number' && Number.isFinite(value) && (best === null || value < best.stdErrs)) {
        best = { asset: e.asset, direction, stdErrs: value, turnoverPerStdErr: e.turnoverPerStdErr[direction] };
      }
    }
  }
  return best;
}

/** One-way turnover ½Σ|a_i − b_i| (the contract's definition). */
function turnover(a: readonly number[], b: readonly number[]): number {
  let sum = 0;
  for (let i = 0; i < a.length; i++) sum += Math.abs(a[i] - (b[i] ?? 0));
  return sum / 2;
}

/** The sentence about the re-optimised weights: how much the forecasts drive them, the median turnover, the smallest decisive forecast change. */
function stabilitySentence(own: MethodReport, shift: ReportSummary['forecastBreakEven']): string {
  const label = methodLabel(own.method);
  const t = own.turnoverFromProposal;
  const turnoverText = `re-optimising on resampled inputs would trade a median ${percentWithError(t.p50, t.p50StdErr ?? t.stdErr)} of the portfolio`;
  if (MEAN_FREE_METHODS.has(own.method.name)) {
    return `${capitalise(label)} ignores the return forecasts, so all the variability of its re-optimised weights comes from the covariance estimates; ${turnoverText}.`;
  }
  const share = own.meanDrivenShare;
  // The size of the change matters as much as how soon it comes: a one-standard-error move says how much would trade.
  const shiftText = shift
    ? `, and moving ${shift.asset}'s return forecast ${shift.direction} by ${formatFixed(shift.stdErrs, 2)} standard errors already changes which positions of the optimum sit at a bound ` +
      `(a one-standard-error move would trade ${formatPercent(shift.turnoverPerStdErr)})`
    : '';
  return `Under ${label}, ${percentWithError(share.overall, share.stdErr, 0)} of the variability of the re-optimised weights comes from the return forecasts; ${turnoverText}${shiftText}.`;
}

/** The sentence about risk and, for methods that use the forecasts, whether a simpler method would have lost less. */
function riskSentence(r: ReportBody, own: MethodReport | undefined): { text: string; stable: boolean; simpler: MethodReport | null } {
  const vol = r.proposal.volatility;
  const width = r.proposal.volatilityBandWidth;
  const stable = width.value <= HEADLINE_THRESHOLDS.stableVolatilityBand * vol.base;
  const riskText =
    `Risk is ${stable ? 'stable' : 'not stable'}: the proposal's volatility spans ${formatPercentRange(vol.p05, vol.p95)} (p05–p95, ` +
    `width ${points(width.value, width.stdErr)}) around ${formatPercent(vol.base)}`;
  const simpler = own ? simplerMethodThatLosesLess(r, own) : null;
  if (!own || MEAN_FREE_METHODS.has(own.method.name)) return { text: `${riskText}.`, stable, simpler: null };
  const ownLoss = own.certaintyEquivalentLoss;
  const lossText = simpler
    ? `; at this sample size ${methodLabel(simpler.method)}, which ignores the forecasts, would have lost less: ` +
      `${basisPoints(simpler.certaintyEquivalentLoss)} a year of certainty-equivalent return against ${basisPoints(ownLoss)}`
    : hasSimplerMethods(r)
      ? `; no method that ignores the forecasts would have lost clearly less at this sample size (certainty-equivalent loss ${basisPoints(ownLoss)} a year)`
      : '';
  return { text: `${riskText}${lossText}.`, stable, simpler };
}

/**
 * Decimals so a non-zero error does not print as 0 (at most two more than asked): a reader told
 * "± 0.0" would take the figure as exact.
 */
function decimalsFor(scaledStdErr: number, decimals: number): number {
  let d = decimals;
  while (d < decimals + 2 && scaledStdErr > 0 && Number(scaledStdErr.toFixed(d)) === 0) d++;
  return d;
}

/** Said in place of "± se" when the Monte Carlo error could not be estimated (a warning says why). */
const NO_ERROR = '(error not estimable)';

/** A percentage with its Monte Carlo error, e.g. `86% ± 1%`, `1.4 ± 0.03`. */
function percentWithError(value: number, stdErr: number | null, decimals = 1): string {
  if (stdErr === null) return `${formatPercent(value, decimals)} ${NO_ERROR}`;
  const d = decimalsFor(stdErr * 100, decimals);
  return `${formatPercent(value, d)} ± ${formatPercent(stdErr, d)}`;
}

/** A width of percentages in percentage points with its error: `2.5 ± 0.1 points`. */
function points(value: number, stdErr: number | null): string {
  if (stdErr === null) return `${formatFixed(value * 100, 1)} points ${NO_ERROR}`;
  const d = decimalsFor(stdErr * 100, 1);
  return `${formatFixed(value * 100, d)} ± ${formatFixed(stdErr * 100, d)} points`;
}

/** An annual loss in basis points with its error: `61 ± 2 bp`. */
function basisPoints(stat: { mean: number; stdErr: number | null }): string {
  if (stat.stdErr === null) return `${formatFixed(stat.mean * 10_000, 0)} bp ${NO_ERROR}`;
  const d = decimalsFor(stat.stdErr * 10_000, 0);
  return `${formatFixed(stat.mean * 10_000, d)} ± ${formatFixed(stat.stdErr * 10_000, d)} bp`;
}

function hasSimplerMethods(r: ReportBody): boolean {
  return r.methods.some((m) => MEAN_FREE_METHODS.has(m.method.name) && Number.isFinite(m.certaintyEquivalentLoss.mean));
}

/**
 * The method that ignores the forecasts and loses least to estimation error, scored at the base
 * inputs (DeMiguel, Garlappi & Uppal 2009 compare methods this way) — when it beats the proposal's
 * method by more than the combined Monte Carlo error allows.
 */
function simplerMethodThatLosesLess(r: ReportBody, own: MethodReport): MethodReport | null {
  if (MEAN_FREE_METHODS.has(own.method.name)) return null;
  const candidates = r.methods.filter((m) => MEAN_FREE_METHODS.has(m.method.name) && Number.isFinite(m.certaintyEquivalentLoss.mean));
  if (candidates.length === 0) return null;
  const best = candidates.reduce((a, b) => (b.certaintyEquivalentLoss.mean < a.certaintyEquivalentLoss.mean ? b : a));
  // Without both errors the difference cannot be shown to exceed the noise: claim nothing.
  if (best.certaintyEquivalentLoss.stdErr === null || own.certaintyEquivalentLoss.stdErr === null) return null;
  const se = Math.hypot(best.certaintyEquivalentLoss.stdErr, own.certaintyEquivalentLoss.stdErr);
  return own.certaintyEquivalentLoss.mean - best.certaintyEquivalentLoss.mean > HEADLINE_THRESHOLDS.lossDifferenceStdErrs * se ? best : null;
}

/**
 * A short note per asset for the compact table, worded about what was measured: the
 * re-optimised weights depend on the forecasts; the proposal sits at a percentile of them.
 * Empty when nothing is notable (thresholds: FINDING_THRESHOLDS).
 */
export function assetNotes(r: ReportBody, own: MethodReport | undefined): string[] {
  if (!own) return r.assets.map(() => '');
  return r.assets.map((_, i) => {
    const band = own.weights[i];
    const proposed = r.proposal.weights[i];
    const notes: string[] = [];
    const width = band.p95 - band.p05;
    const share = own.meanDrivenShare.perAsset[i] ?? 0;
    if (width > FINDING_THRESHOLDS.wideBand && share > FINDING_THRESHOLDS.meanDriven) {
      notes.push('re-optimised weight driven by the forecasts');
    } else if (width > FINDING_THRESHOLDS.wideBand) {
      notes.push(`re-optimised weight unstable (band ${formatFixed(width * 100, 1)} points wide)`);
    }
    if (Math.abs(proposed) >= 1e-4 && band.selectionRate < FINDING_THRESHOLDS.rarelySelected) notes.push(`held in only ${formatPercent(band.selectionRate, 0)} of draws`);
    const position = bandPosition(proposed, band.p05, band.p95);
    if (position !== 'inside') notes.push(`proposal ${position} the band, at percentile ${formatPercentileRank(band.proposalPercentile)} of the re-optimised weights`);
    return notes.join('; ');
  });
}

function capitalise(text: string): string {
  return text.length === 0 ? text : text[0].toUpperCase() + text.slice(1);
}

/** The report's `summary`: the headline sentences and the figures behind them. */
export function summarise(r: ReportBody): ReportSummary {
  const own = proposalMethod(r as Report);
  const sentences: string[] = [];
  let statedOptimumTurnover: number | null = null;
  if (!own) {
    sentences.push(`The proposal's method (${methodLabel(r.proposal.method)}) was not re-optimised in this report, so its weights cannot be compared with re-optimised ones.`);
  } else {
    statedOptimumTurnover = clean(turnover(r.proposal.weights, own.base.weights));
    if (statedOptimumTurnover > HEADLINE_THRESHOLDS.statedOptimumTurnover) {
      sentences.push(
        `The proposal is not the ${methodLabel(own.method)} optimum on its own inputs (it is ${formatPercent(statedOptimumTurnover)} one-way turnover away from it), ` +
          'so what follows describes the re-optimised weights and where the proposal sits among them.',
      );
    }
  }
  const shift = own ? forecastBreakEven(own) : null;
  if (own) sentences.push(stabilitySentence(own, shift));
  const risk = riskSentence(r, own);
  sentences.push(risk.text);
  return {
    headline: sentences.join(' '),
    sentences,
    statedOptimumTurnover,
    riskStable: risk.stable,
    simplerMethod: risk.simpler ? risk.simpler.method.name : null,
    forecastBreakEven: shift,
    assetNotes: assetNotes(r, own),
  };
}

/** Finding codes whose content the headline or the per-asset notes already carry. */
const SAID_IN_HEADLINE_OR_NOTES: ReadonlySet<string> = new Set([
  'turnover',
  'proposal-volatility-band',
  'simpler-method-loses-less',
  'weight-driven-by-mean-forecast',
  'weight-unstable',
  'position-rarely-selected',
  'proposal-outside-band',
]);

/** The findings a renderer still lists after the headline and the per-asset notes (no sentence said twice). */
export function otherFindings(r: Pick<Report, 'findings'>): Report['findings'] {
  return r.findings.filter((f) => !SAID_IN_HEADLINE_OR_NOTES.has(f.code));
}
