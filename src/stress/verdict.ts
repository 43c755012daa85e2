import type { MethodName, Policy, PolicyRule } from '../schema/proposal.js';
import type { Report, Verdict } from '../schema/report.js';
import { normalQuantile } from './normal-quantile.js';

/** A report figure with its Monte Carlo standard error. */
export interface MetricEstimate {
  readonly value: number;
  readonly stdErr: number;
}

type ReportBody = Omit<Report, 'verdict'>;

/** Reads a policy metric from a report, for the named method (default: the proposal's). */
export function metricOf(report: ReportBody, metric: PolicyRule['metric'], method: MethodName): MetricEstimate | undefined {
  if (metric === 'volatility-band-width') return report.proposal.volatilityBandWidth;
  const m = report.methods.find((x) => x.method.name === method);
  if (!m) return undefined;
  switch (metric) {
    case 'turnover-from-proposal.p50':
      return { value: m.turnoverFromProposal.p50, stdErr: m.turnoverFromProposal.p50StdErr ?? 0 };
    case 'turnover-from-proposal.mean':
      return { value: m.turnoverFromProposal.mean, stdErr: m.turnoverFromProposal.stdErr };
    case 'outside-band-share':
      return m.outsideBandShare;
    case 'mean-driven-share':
      return { value: m.meanDrivenShare.overall, stdErr: m.meanDrivenShare.stdErr };
    case 'max-weight-sd':
      return m.maxWeightSd;
    case 'forecast-break-even-std-errs':
      return smallestBreakEven(m);
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

const fmt = (x: number): string => (Math.abs(x) >= 1e-3 || x === 0 ? x.toFixed(4) : x.toExponential(3));

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
  pairedStdErr?: (metric: PolicyRule['metric'], method: MethodName) => number | undefined,
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
      const pass = !(est.value - z * est.stdErr > rule.max);
      return { ...base, threshold: rule.max, kind: 'max' as const, pass, message: `${rule.metric} for ${method} is ${fmt(est.value)} ± ${fmt(est.stdErr)}; the maximum is ${fmt(rule.max)}: ${pass ? 'pass' : 'FAIL'}${pass && est.value > rule.max ? ' (above the maximum, but within Monte Carlo error)' : ''}.` };
    }
    if (rule.min !== undefined) {
      const pass = !(est.value + z * est.stdErr < rule.min);
      return { ...base, threshold: rule.min, kind: 'min' as const, pass, message: `${rule.metric} for ${method} is ${fmt(est.value)} ± ${fmt(est.stdErr)}; the minimum is ${fmt(rule.min)}: ${pass ? 'pass' : 'FAIL'}${pass && est.value < rule.min ? ' (below the minimum, but within Monte Carlo error)' : ''}.` };
    }
    const limit = rule.maxIncrease as number;
    if (!baseline) throw new PolicyError([...path, 'maxIncrease'], 'maxIncrease compares with a baseline: pass one (an earlier report or proposal)');
    const before = metricOf(baseline, rule.metric, method);
    if (!before) throw new PolicyError([...path, 'method'], `the baseline has no figures for method "${method}"`);
    const increase = est.value - before.value;
    const paired = pairedStdErr?.(rule.metric, method);
    const se = paired ?? Math.hypot(est.stdErr, before.stdErr);
    const pass = !(increase - z * se > limit);
    return {
      ...base,
      stdErr: se,
      value: increase,
      threshold: limit,
      kind: 'maxIncrease' as const,
      baselineValue: before.value,
      pass,
      message: `${rule.metric} for ${method} went from ${fmt(before.value)} to ${fmt(est.value)} (change ${fmt(increase)} ± ${fmt(se)}, ${paired === undefined ? 'unpaired error' : 'paired over common random numbers'}); the largest allowed increase is ${fmt(limit)}: ${pass ? 'pass' : 'FAIL'}.`,
    };
  });
  return { pass: rules.every((r) => r.pass), confidence: policy.confidence, rules };
}
