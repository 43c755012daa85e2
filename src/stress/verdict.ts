import type { MethodName, MethodSpec, Policy, PolicyRule } from '../schema/proposal.js';
import { counterpartIndex } from './paired.js';
import type { Report, Verdict } from '../schema/report.js';
import { normalQuantile } from '../statistics/normal-quantile.js';
import { studentTQuantile } from '../statistics/student-t-quantile.js';
import { batchCount } from '../statistics/batch-means.js';
import { hasDrawBound, isPercentileMetric, isSimultaneousMetric, type FigureBoundSource } from './gate-bounds.js';

/** A report figure with its Monte Carlo standard error. */
export interface MetricEstimate {
  readonly value: number;
  /** null when the error cannot be estimated (too few successful draws). */
  readonly stdErr: number | null;
  /** The method the figure belongs to and its index in the report (absent for the proposal-level volatility band width). */
  readonly spec?: MethodSpec;
  readonly index?: number;
  /**
   * Degrees of freedom of stdErr when it is estimated from few groups (the mean-driven share's
   * jackknife over m groups: m − 1); its bounds then use Student's t instead of the normal.
   */
  readonly degreesOfFreedom?: number;
}

/**
 * Degrees of freedom of the mean-driven share's jackknife error: its m = batchCount(B) groups of
 * draws give m − 1 (undefined below 2 groups, where the error is the 0.5 bound).
 */
export function shareErrorDegreesOfFreedom(drawsRequested: number): number | undefined {
  const groups = batchCount(drawsRequested);
  return groups >= 2 ? groups - 1 : undefined;
}

/**
 * The one-sided quantile a smooth figure's bound uses at `confidence`: Φ⁻¹, or — for an error
 * estimated from few groups — Student's t with its degrees of freedom. A jackknife over m groups
 * estimates the variance with m − 1 degrees of freedom, so (value − truth)/se is t- rather than
 * normally distributed (Tukey's jackknife interval; e.g. Efron & Tibshirani 1993, An Introduction
 * to the Bootstrap, §11.5; from memory): at 200 draws (20 groups) t = 1.729 against z = 1.645.
 */
function boundQuantile(confidence: number, est: MetricEstimate): number {
  return est.degreesOfFreedom === undefined ? normalQuantile(confidence) : studentTQuantile(confidence, est.degreesOfFreedom);
}

type ReportBody = Omit<Report, 'verdict'>;

/**
 * Reads a policy metric from a report: for the named method (its first entry in the report;
 * default the proposal's), or — `counterpart` given — for the counterpart of the candidate's method
 * at that index (same full spec, so Kelly f = 1 and f = ½ are never confused; see counterpartIndex).
 */
export function metricOf(
  report: ReportBody,
  metric: PolicyRule['metric'],
  method: MethodName,
  counterpart?: { readonly spec: MethodSpec; readonly index: number },
): MetricEstimate | undefined {
  if (metric === 'volatility-band-width') return { value: report.proposal.volatilityBandWidth.value, stdErr: report.proposal.volatilityBandWidth.stdErr };
  const specs = report.methods.map((x) => x.method);
  const k = counterpart === undefined ? specs.findIndex((x) => x.name === method) : counterpartIndex(specs, counterpart.spec, counterpart.index);
  const m = k < 0 ? undefined : report.methods[k];
  if (!m) return undefined;
  const of = (value: number, stdErr: number | null | undefined): MetricEstimate => ({ value, stdErr: stdErr ?? null, spec: m.method, index: k });
  switch (metric) {
    case 'turnover-from-proposal.p50':
      return of(m.turnoverFromProposal.p50, m.turnoverFromProposal.p50StdErr);
    case 'turnover-from-proposal.mean':
      return of(m.turnoverFromProposal.mean, m.turnoverFromProposal.stdErr);
    case 'outside-band-share':
      return of(m.outsideBandShare.value, m.outsideBandShare.stdErr);
    case 'mean-driven-share': {
      const degreesOfFreedom = shareErrorDegreesOfFreedom(report.meta.drawsRequested);
      return { ...of(m.meanDrivenShare.overall, m.meanDrivenShare.stdErr), ...(degreesOfFreedom === undefined ? {} : { degreesOfFreedom }) };
    }
    case 'max-weight-sd':
      return of(m.maxWeightSd.value, m.maxWeightSd.stdErr);
    case 'forecast-break-even-std-errs': {
      const exact = smallestBreakEven(m);
      return of(exact.value, exact.stdErr);
    }
  }
}

/**
 * Break-even shifts beyond this many standard errors count as "never" for the policy metric: a
 * forecast that must move by a thousand standard errors is not fragile in any practical sense,
 * and a verdict value must stay a finite JSON number.
 */
export const BREAK_EVEN_CAP_STD_ERRS = 1000;

/**
 * The smallest break-even forecast shift of any asset, in standard errors of its forecast: a
 * pattern change within that many standard errors is a position that hinges on the forecast.
 * Exact (no draws), so its stdErr is 0. When no shift changes the pattern (or the method ignores
 * the means) the value is the cap, which passes any sensible min.
 */
export function smallestBreakEven(m: ReportBody['methods'][number]): MetricEstimate {
  let value = BREAK_EVEN_CAP_STD_ERRS;
  for (const row of m.forecastSensitivity ?? []) {
    for (const x of [row.shiftUpStdErrs, row.shiftDownStdErrs]) if (x !== null && x < value) value = x;
  }
  return { value, stdErr: 0 };
}

export class PolicyError extends Error {
  constructor(
    readonly path: (string | number)[],
    message: string,
  ) {
    super(message);
    this.name = 'PolicyError';
  }
}

const fmt = (x: number | null): string => (x === null ? 'n/a' : Math.abs(x) >= 1e-3 || x === 0 ? x.toFixed(4) : x.toExponential(3));
const percent = (confidence: number): string => `${Number((confidence * 100).toPrecision(6))} %`;
const NOT_ESTIMABLE = 'Monte Carlo error not estimable: judged on the value alone';
const NO_RUN_DATA = 'its per-draw data were not at hand (a saved report), so it is bounded by value ∓ z·se';
const noted = (note: string): string => (note === '' ? '' : ` (${note})`);

/** The one-sided bound of a figure that a max rule (side 'lower') or min rule (side 'upper') is judged on. */
interface JudgedBound {
  readonly bound: number;
  /** How the bound was formed, in words, for the rule's sentence. */
  readonly words: string;
  /** A note for the sentence (not estimable, or no per-draw data), else ''. */
  readonly note: string;
}

/**
 * The bound of one figure at level α on one side. Stepwise and maximum figures (outside-band
 * share, max weight sd) use their simultaneous bound over the assets from the run's per-draw data
 * (gate-bounds.ts) when a source is given, and the median turnover its order-statistic bound
 * (quantile-bound.ts); every other figure — and those when only a report is at hand — uses
 * value ∓ z_α·se. Not estimable: the value itself, with a note.
 */
function boundOf(metric: PolicyRule['metric'], est: MetricEstimate, side: 'lower' | 'upper', alpha: number, confidence: number, source: FigureBoundSource | undefined): JudgedBound {
  const sign = side === 'lower' ? -1 : 1;
  const atLeast = side === 'lower' ? 'at least' : 'at most';
  if (isPercentileMetric(metric) && source !== undefined) {
    // The band width is the proposal's own figure (no method index).
    const b = source(metric, est.index ?? 0, side, alpha);
    const how = metric === 'volatility-band-width' ? 'order statistics of the draws, each end at half the level' : 'an order statistic of the draws';
    // No order statistic reaches the level only with a handful of draws: then value ∓ z·se below.
    if (b !== undefined) return { bound: b.bound, words: `with ${percent(confidence)} confidence it is ${atLeast} ${fmt(b.bound)} (${how})`, note: '' };
  }
  if (isSimultaneousMetric(metric) && source !== undefined && est.index !== undefined) {
    const b = source(metric, est.index, side, alpha);
    if (b === undefined) return { bound: est.value, words: `it is ${fmt(est.value)}`, note: NOT_ESTIMABLE };
    if (metric === 'outside-band-share' && b.outside !== undefined && b.assets !== undefined) {
      return { bound: b.bound, words: `${atLeast} ${b.outside} of ${b.assets} assets are outside their band with ${percent(confidence)} confidence (bound ${fmt(b.bound)})`, note: '' };
    }
    return { bound: b.bound, words: `with ${percent(confidence)} confidence for all assets at once, the largest weight sd is ${atLeast} ${fmt(b.bound)}`, note: '' };
  }
  if (est.stdErr === null) return { bound: est.value, words: `it is ${fmt(est.value)}`, note: NOT_ESTIMABLE };
  // confidence = 1 − alpha, passed as given so z is the policy's own Φ⁻¹(confidence) (or t).
  const z = boundQuantile(confidence, est);
  if (metric === 'mean-driven-share' && est.value > 0 && est.value < 1 && est.stdErr > 0) {
    // A share confined to (0, 1): bounded on the logit scale, se_logit = se / (v(1 − v)) (delta
    // method), then mapped back — the usual interval for a proportion near its ends (e.g. Agresti,
    // Categorical Data Analysis, 3rd ed. 2013, §1.4; from memory). On the natural scale the error
    // shrinks as the share nears 1, so value − z·se failed a max rule at the truth 8.5 % of the
    // time (demo, 200 draws, K = 200; DEVELOPERS.md). The quantile is Student's t with the
    // jackknife's m − 1 degrees of freedom (boundQuantile).
    const v = est.value;
    const logit = Math.log(v / (1 - v)) + sign * z * (est.stdErr / (v * (1 - v)));
    const bound = 1 / (1 + Math.exp(-logit));
    return { bound, words: `with ${percent(confidence)} confidence it is ${atLeast} ${fmt(bound)} (logit scale, value ${side === 'lower' ? '−' : '+'} ${fmt(z)} × se${est.degreesOfFreedom === undefined ? '' : `, Student t with ${est.degreesOfFreedom} degrees of freedom`})`, note: '' };
  }
  const bound = est.value + sign * z * est.stdErr;
  const note = hasDrawBound(metric) && source === undefined ? NO_RUN_DATA : '';
  return { bound, words: `with ${percent(confidence)} confidence it is ${atLeast} ${fmt(bound)} (value ${side === 'lower' ? '−' : '+'} ${fmt(z)} × se)`, note };
}

/** Sources of simultaneous bounds (gate-bounds.ts) for the candidate's run and the baseline's, when their per-draw data are at hand. */
export interface GateBoundSources {
  readonly candidate?: FigureBoundSource;
  readonly baseline?: FigureBoundSource;
}

/**
 * Judges each rule by a one-sided confidence bound of its figure at the policy's confidence c
 * (α = 1 − c), reported as the rule's `bound`: a max rule fails when the lower bound exceeds the
 * maximum, a min rule when the upper bound is below the minimum.
 *
 * - Smooth figures: value ∓ z·se, z = Φ⁻¹(c) (mean turnover); the mean-driven share, a share in
 *   (0, 1), on the logit scale: expit(logit v ∓ z·se / (v(1 − v))).
 * - Median turnover: the distribution-free order-statistic bound of the median from the draws
 *   (quantile-bound.ts). Turnover piles up at corner portfolios, so the sample median jumps
 *   between clusters and value ∓ z·se failed a min rule at the true median 16 % of the time
 *   (demo, 200 draws; DEVELOPERS.md). maxIncrease with both runs' draws: as the two below.
 * - Volatility band width, max and min rules: order-statistic bounds of p95 and p05, each at α/2
 *   (value + z·se failed a min rule 15 % of the time at 500 draws on D1: the sample width is
 *   biased low). maxIncrease keeps the paired value − z·se.
 * - Outside-band share and max weight sd: a simultaneous bound over the assets from the per-draw
 *   data (stability.ts, max-sd-bound.ts). The share moves in whole-asset steps and the sample
 *   maximum of several sds is biased upward, so value ∓ z·se would fail a rule that holds far more
 *   often than 1 − c (27.5 % and 10 % at 95 %, measured; DEVELOPERS.md).
 * - maxIncrease, smooth figures: the increase ∓ z·se of the difference, with the paired error when
 *   both runs share their random numbers (`pairedStdErr`), else √(se² + se_baseline²) —
 *   conservative, since common random numbers make the runs positively correlated.
 * - maxIncrease, outside-band share, max weight sd (and median turnover, above): lower bound of the candidate's figure minus
 *   upper bound of the baseline's, each at α/2 (Bonferroni: both hold together with chance ≥ 1 − α,
 *   and then the true increase is at least their difference).
 */
export function judge(
  report: ReportBody,
  policy: Policy,
  baseline?: ReportBody,
  pairedStdErr?: (metric: PolicyRule['metric'], spec: MethodSpec) => number | undefined,
  bounds: GateBoundSources = {},
): Verdict {
  const confidence = policy.confidence;
  const alpha = 1 - confidence;
  const rules = policy.rules.map((rule, i) => {
    const method = rule.method ?? report.proposal.method.name;
    const id = rule.id ?? `${rule.metric}${rule.method ? `@${rule.method}` : ''}`;
    const path = ['policy', 'rules', i];
    const count = [rule.max, rule.min, rule.maxIncrease].filter((x) => x !== undefined).length;
    if (count !== 1) throw new PolicyError(path, 'each rule needs exactly one of max, min or maxIncrease');
    const est = metricOf(report, rule.metric, method);
    if (!est) throw new PolicyError([...path, 'method'], `method "${method}" was not re-optimised in this report; add it to compare`);
    const base = { id, metric: rule.metric, method, value: est.value, stdErr: est.stdErr };
    const figure = `${rule.metric} for ${method} is ${fmt(est.value)} ± ${fmt(est.stdErr)}`;
    if (rule.max !== undefined) {
      const b = boundOf(rule.metric, est, 'lower', alpha, confidence, bounds.candidate);
      const pass = !(b.bound > rule.max);
      return {
        ...base,
        bound: b.bound,
        threshold: rule.max,
        kind: 'max' as const,
        pass,
        message: `${figure}; ${b.words}; the maximum is ${fmt(rule.max)}: ${pass ? 'pass' : 'FAIL'}${pass && est.value > rule.max ? ' (above the maximum, but within Monte Carlo error)' : ''}${noted(b.note)}.`,
      };
    }
    if (rule.min !== undefined) {
      const b = boundOf(rule.metric, est, 'upper', alpha, confidence, bounds.candidate);
      const pass = !(b.bound < rule.min);
      return {
        ...base,
        bound: b.bound,
        threshold: rule.min,
        kind: 'min' as const,
        pass,
        message: `${figure}; ${b.words}; the minimum is ${fmt(rule.min)}: ${pass ? 'pass' : 'FAIL'}${pass && est.value < rule.min ? ' (below the minimum, but within Monte Carlo error)' : ''}${noted(b.note)}.`,
      };
    }
    const limit = rule.maxIncrease as number;
    if (!baseline) throw new PolicyError([...path, 'maxIncrease'], 'maxIncrease compares with a baseline: pass one (an earlier report or proposal)');
    // The baseline's figure for the counterpart of the candidate's method (same full spec, or the proposal's method it replaces).
    const before = metricOf(baseline, rule.metric, method, est.spec === undefined ? undefined : { spec: est.spec, index: est.index ?? -1 });
    if (!before) throw new PolicyError([...path, 'method'], `the baseline has no figures for method "${method}"`);
    const increase = est.value - before.value;
    const pairedRaw = est.spec === undefined && rule.metric !== 'volatility-band-width' ? undefined : pairedStdErr?.(rule.metric, est.spec ?? report.proposal.method);
    const paired = pairedRaw === undefined ? undefined : Number.isFinite(pairedRaw) ? pairedRaw : null;
    const unpaired = est.stdErr === null || before.stdErr === null ? null : Math.hypot(est.stdErr, before.stdErr);
    const se = paired === undefined ? unpaired : paired;
    const common = { ...base, stdErr: se, value: increase, threshold: limit, kind: 'maxIncrease' as const, baselineValue: before.value };
    const change = `${rule.metric} for ${method} went from ${fmt(before.value)} to ${fmt(est.value)}`;
    // The median turnover too, when both runs' draws are at hand: at atoms the paired value − z·se
    // failed a maxIncrease rule at the true increase 37 % of the time (demo, 2000 draws).
    if (isSimultaneousMetric(rule.metric) || (rule.metric === 'turnover-from-proposal.p50' && bounds.candidate !== undefined && bounds.baseline !== undefined)) {
      // Each side at α/2 (Bonferroni), so both bounds hold together with chance ≥ 1 − α.
      const after = boundOf(rule.metric, est, 'lower', alpha / 2, 1 - alpha / 2, bounds.candidate);
      const prior = boundOf(rule.metric, before, 'upper', alpha / 2, 1 - alpha / 2, bounds.baseline);
      const bound = after.bound - prior.bound;
      const pass = !(bound > limit);
      const notes = [after.note && `now: ${after.note}`, prior.note && `before: ${prior.note}`].filter((x) => x !== '').join('; ');
      return {
        ...common,
        bound,
        pass,
        message:
          `${change} (change ${fmt(increase)}); with ${percent(confidence)} confidence it rose by at least ${fmt(bound)} (now: ${after.words}; before: ${prior.words}); ` +
          `the largest allowed increase is ${fmt(limit)}: ${pass ? 'pass' : 'FAIL'}${noted(notes)}.`,
      };
    }
    // The mean-driven share's paired error is the jackknife of the difference over the same
    // groups: the same degrees of freedom (boundQuantile).
    const bound = se === null ? increase : increase - boundQuantile(confidence, est) * se;
    const pass = !(bound > limit);
    return {
      ...common,
      bound,
      pass,
      message: `${change} (change ${fmt(increase)} ± ${fmt(se)}, ${paired === undefined ? 'unpaired error' : 'paired over common random numbers'}); with ${percent(confidence)} confidence it rose by at least ${fmt(bound)}; the largest allowed increase is ${fmt(limit)}: ${pass ? 'pass' : 'FAIL'}${noted(se === null ? NOT_ESTIMABLE : '')}.`,
    };
  });
  return { pass: rules.every((r) => r.pass), confidence: policy.confidence, rules };
}
