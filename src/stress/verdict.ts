import type { MethodName, MethodSpec, Policy, PolicyRule } from '../schema/proposal.js';
import { counterpartIndex } from './paired.js';
import type { Report, Verdict } from '../schema/report.js';
import { normalQuantile } from '../statistics/normal-quantile.js';

/** A report figure with its Monte Carlo standard error. */
export interface MetricEstimate {
  readonly value: number;
  /** null when the error cannot be estimated (too few successful draws). */
  readonly stdErr: number | null;
  /** The method the figure belongs to and its index in the report (absent for the proposal-level volatility band width). */
  readonly spec?: MethodSpec;
  readonly index?: number;
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
    case 'mean-driven-share':
      return of(m.meanDrivenShare.overall, m.meanDrivenShare.stdErr);
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
/** Error allowance z·se; an error that cannot be estimated allows nothing (the rule is judged on its value alone). */
const allowance = (z: number, se: number | null): number => (se === null ? 0 : z * se);
const noErrorNote = (se: number | null): string => (se === null ? ' (Monte Carlo error not estimable: judged on the value alone)' : '');

/**
 * Judges each rule. A rule fails only when its value is beyond the threshold by more than the
 * Monte Carlo error allows at the policy's confidence: one-sided, value − z·se > max or
 * value + z·se < min, z = Φ⁻¹(confidence). For maxIncrease the error of the difference is the
 * paired batch-by-batch error when both runs share their random numbers (`pairedStdErr`), else
 * √(se² + se_baseline²) — conservative, since common random numbers make the runs positively
 * correlated and the true error of the difference smaller.
 */
export function judge(
  report: ReportBody,
  policy: Policy,
  baseline?: ReportBody,
  pairedStdErr?: (metric: PolicyRule['metric'], spec: MethodSpec) => number | undefined,
): Verdict {
  const z = normalQuantile(policy.confidence);
  const rules = policy.rules.map((rule, i) => {
    const method = rule.method ?? report.proposal.method.name;
    const id = rule.id ?? `${rule.metric}${rule.method ? `@${rule.method}` : ''}`;
    const path = ['policy', 'rules', i];
    const bounds = [rule.max, rule.min, rule.maxIncrease].filter((x) => x !== undefined).length;
    if (bounds !== 1) throw new PolicyError(path, 'each rule needs exactly one of max, min or maxIncrease');
    const est = metricOf(report, rule.metric, method);
    if (!est) throw new PolicyError([...path, 'method'], `method "${method}" was not re-optimised in this report; add it to compare`);
    const base = { id, metric: rule.metric, method, value: est.value, stdErr: est.stdErr };
    if (rule.max !== undefined) {
      const pass = !(est.value - allowance(z, est.stdErr) > rule.max);
      return { ...base, threshold: rule.max, kind: 'max' as const, pass, message: `${rule.metric} for ${method} is ${fmt(est.value)} ± ${fmt(est.stdErr)}; the maximum is ${fmt(rule.max)}: ${pass ? 'pass' : 'FAIL'}${pass && est.value > rule.max ? ' (above the maximum, but within Monte Carlo error)' : ''}${noErrorNote(est.stdErr)}.` };
    }
    if (rule.min !== undefined) {
      const pass = !(est.value + allowance(z, est.stdErr) < rule.min);
      return { ...base, threshold: rule.min, kind: 'min' as const, pass, message: `${rule.metric} for ${method} is ${fmt(est.value)} ± ${fmt(est.stdErr)}; the minimum is ${fmt(rule.min)}: ${pass ? 'pass' : 'FAIL'}${pass && est.value < rule.min ? ' (below the minimum, but within Monte Carlo error)' : ''}${noErrorNote(est.stdErr)}.` };
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
    const pass = !(increase - allowance(z, se) > limit);
    return {
      ...base,
      stdErr: se,
      value: increase,
      threshold: limit,
      kind: 'maxIncrease' as const,
      baselineValue: before.value,
      pass,
      message: `${rule.metric} for ${method} went from ${fmt(before.value)} to ${fmt(est.value)} (change ${fmt(increase)} ± ${fmt(se)}, ${paired === undefined ? 'unpaired error' : 'paired over common random numbers'}); the largest allowed increase is ${fmt(limit)}: ${pass ? 'pass' : 'FAIL'}${noErrorNote(se)}.`,
    };
  });
  return { pass: rules.every((r) => r.pass), confidence: policy.confidence, rules };
}
