import type { MethodReport, Report, Stat } from '../schema/report.js';
import { canonicalJson } from '../schema/canonical-json.js';
import type { MethodSpec } from '../schema/proposal.js';

/**
 * Shared formatting for every renderer (terminal table, markdown, HTML, JUnit, page).
 * Pure string functions: no locale APIs (Intl output differs between runtimes and would make
 * renderings differ between Node, the Worker and the browser), no I/O.
 */

const NOT_AVAILABLE = 'n/a';

/** Fixed-point text of a finite number; `-0.0` becomes `0.0` so rounding never shows a sign that means nothing. */
export function formatFixed(value: number | null, decimals: number): string {
  if (value === null || !Number.isFinite(value)) return NOT_AVAILABLE;
  const text = value.toFixed(decimals);
  return /^-0(\.0*)?$/.test(text) ? text.slice(1) : text;
}

/** A fraction as a percentage: 0.1234 → `12.3%` (weights, shares, rates, returns). */
export function formatPercent(fraction: number | null, decimals = 1): string {
  if (fraction === null || !Number.isFinite(fraction)) return NOT_AVAILABLE;
  return `${formatFixed(fraction * 100, decimals)}%`;
}

/** A value with its Monte Carlo standard error, both as percentages: `12.3% ± 0.4%` (`± n/a` when the error cannot be estimated). */
export function formatPercentWithError(fraction: number, stdErr: number | null, decimals = 1): string {
  return `${formatPercent(fraction, decimals)} ± ${formatPercent(stdErr, decimals)}`;
}

/** Policy metrics measured in standard errors of a forecast rather than as fractions. */
const STD_ERR_METRICS: ReadonlySet<string> = new Set(['forecast-break-even-std-errs']);

/** A verdict figure in its metric's unit: `1.30 se` for break-even metrics, else a percentage. */
export function formatRuleFigure(metric: string, value: number | null, decimals = 2): string {
  if (!STD_ERR_METRICS.has(metric)) return formatPercent(value, decimals);
  return value === null || !Number.isFinite(value) ? NOT_AVAILABLE : `${formatFixed(value, decimals)} se`;
}

/** A verdict value with its error in its metric's unit (see formatRuleFigure). */
export function formatRuleValue(metric: string, value: number, stdErr: number | null, decimals = 2): string {
  return `${formatRuleFigure(metric, value, decimals)} ± ${formatRuleFigure(metric, stdErr, decimals)}`;
}

/** A fraction in basis points (1 bp = 0.0001): 0.01234 → `123 bp`. */
export function formatBasisPoints(fraction: number | null, decimals = 0): string {
  if (fraction === null || !Number.isFinite(fraction)) return NOT_AVAILABLE;
  return `${formatFixed(fraction * 10_000, decimals)} bp`;
}

/** A band p05–p95 of fractions: `2.1% – 25.3%`. */
export function formatPercentRange(low: number, high: number, decimals = 1): string {
  return `${formatPercent(low, decimals)} – ${formatPercent(high, decimals)}`;
}

/** A percentile rank on the 0–100 scale, rounded to a whole number: 73.4 → `73`. */
export function formatPercentileRank(rank: number): string {
  if (!Number.isFinite(rank)) return NOT_AVAILABLE;
  return formatFixed(rank, 0);
}

/** A small residual in scientific notation: 3.2e-12. */
export function formatScientific(value: number, digits = 1): string {
  if (!Number.isFinite(value)) return NOT_AVAILABLE;
  if (value === 0) return '0';
  return value.toExponential(digits);
}

/** An integer with thin grouping for readability: 12500 → `12,500` (fixed, locale-free). */
export function formatCount(value: number): string {
  if (!Number.isFinite(value)) return NOT_AVAILABLE;
  const rounded = Math.round(value);
  const digits = Math.abs(rounded).toString().replace(/\B(?=(\d{3})+(?!\d))/g, ',');
  return rounded < 0 ? `-${digits}` : digits;
}

/**
 * The Monte Carlo error that belongs to the median: `p50StdErr` when the report carries it,
 * else the mean's `stdErr` (flagged, because the median's error is usually somewhat larger: the
 * sample median's asymptotic variance is πσ²/(2n) for normal data, √(π/2) ≈ 1.25× the mean's
 * error — a standard large-sample result, quoted from memory).
 */
export function medianError(stat: Stat): { stdErr: number | null; isMeanError: boolean } {
  return stat.p50StdErr === undefined ? { stdErr: stat.stdErr, isMeanError: true } : { stdErr: stat.p50StdErr, isMeanError: false };
}

/** A short, readable label for a method spec: `mean-variance (λ = 4)`, `kelly (f = 0.5)`. */
export function methodLabel(spec: MethodSpec): string {
  switch (spec.name) {
    case 'mean-variance':
      return typeof spec.riskAversion === 'number'
        ? `mean-variance (λ = ${trimNumber(spec.riskAversion)})`
        : `mean-variance (λf = ${trimNumber(spec.riskAversion.factor)}, λs = ${trimNumber(spec.riskAversion.specific)})`;
    case 'kelly':
      return spec.fraction === undefined || spec.fraction === 1 ? 'kelly (full)' : `kelly (f = ${trimNumber(spec.fraction)})`;
    case 'risk-parity':
      return spec.budgets === undefined ? 'risk-parity' : 'risk-parity (budgets)';
    default:
      return spec.name;
  }
}

/** Shortest plain text of a number (no trailing zeros), at most 6 significant digits. */
export function trimNumber(value: number): string {
  if (!Number.isFinite(value)) return NOT_AVAILABLE;
  return String(Number(value.toPrecision(6)));
}


/**
 * The method section that re-optimised the proposal's own method: the exact spec if present,
 * else the first method with the same name (the proposal's figures are judged against it).
 */
export function proposalMethod(report: Report): MethodReport | undefined {
  const wanted = canonicalJson(report.proposal.method);
  return (
    report.methods.find((m) => canonicalJson(m.method) === wanted) ??
    report.methods.find((m) => m.method.name === report.proposal.method.name)
  );
}

/** Where the proposal's weight sits relative to a band: below p05, above p95, or inside. */
export function bandPosition(proposalWeight: number, p05: number, p95: number): 'below' | 'above' | 'inside' {
  if (proposalWeight < p05) return 'below';
  if (proposalWeight > p95) return 'above';
  return 'inside';
}

/**
 * Binomial standard error √(p(1−p)/n) of a share observed over n independent draws
 * (each draw has its own random stream, so draws are independent).
 */
export function shareStdErr(share: number, draws: number): number {
  if (!(draws > 0)) return Number.NaN;
  return Math.sqrt((share * (1 - share)) / draws);
}

/** Draws that count for a method: completed draws minus the ones where it failed to solve. */
export function methodDraws(report: Report, method: MethodReport): number {
  return Math.max(0, report.meta.drawsCompleted - method.failedDraws);
}
