import { CAUTIONS } from '../../src/schema/cautions.js';
import { summarise } from '../../src/stress/headline.js';
import type { MethodSpec } from '../../src/schema/proposal.js';
import type { BaseOptimum, MethodReport, OptimizeResponse, Report, Stat, Verdict } from '../../src/schema/report.js';

/**
 * A synthetic, schema-valid report for renderer tests. The numbers are invented (a made-up
 * ten-asset market, annual figures) but internally consistent: base volatilities, risk
 * contributions, diversification ratios and effective holdings are computed from one
 * covariance matrix, turnovers from the weights, and every band is ordered p05 ≤ … ≤ p95.
 * It is not output of the stress engine; that is tested elsewhere.
 */

export const SAMPLE_ASSETS: readonly string[] = [
  'domestic-equity',
  'developed-equity',
  'emerging-equity',
  'small-cap-equity',
  'government-bonds',
  'inflation-linked',
  'investment-grade-credit',
  'high-yield-credit',
  'listed-real-estate',
  'commodities',
];

const PROPOSAL_WEIGHTS = [0.1, 0.05, 0.12, 0.08, 0.2, 0.1, 0.1, 0.15, 0.05, 0.05];
/** Invented annual means and volatilities; constant correlation 0.3 between all pairs. */
const MEANS = [0.07, 0.065, 0.08, 0.075, 0.02, 0.025, 0.03, 0.045, 0.055, 0.04];
const VOLS = [0.16, 0.17, 0.22, 0.2, 0.05, 0.06, 0.07, 0.1, 0.18, 0.2];
const CORRELATION = 0.3;
const RISK_AVERSION = 4;
const DRAWS = 500;
/** z-scores of the 5th, 25th, 75th and 95th normal percentiles (standard normal table). */
const Z05 = 1.6448536;
const Z25 = 0.6744898;

interface MethodPlan {
  spec: MethodSpec;
  base: number[];
  /** Spread of each weight over draws, as a multiple of a common scale. */
  spread: number;
  meanDriven: number;
  /** Extra certainty-equivalent loss from estimation error (annual). */
  estimationLoss: number;
  failedDraws: number;
  reportsMedianError: boolean;
}

function normalise(values: readonly number[]): number[] {
  const total = values.reduce((s, v) => s + v, 0);
  return values.map((v) => v / total);
}

function inverseVolatility(): number[] {
  return normalise(VOLS.map((s) => 1 / s));
}

function methodPlans(): MethodPlan[] {
  const inverseVol = inverseVolatility();
  return [
    {
      spec: { name: 'mean-variance', riskAversion: RISK_AVERSION },
      base: [0.14, 0.02, 0, 0.13, 0.22, 0.12, 0.08, 0.19, 0.07, 0.03],
      spread: 1,
      meanDriven: 0.78,
      estimationLoss: 0.0061,
      failedDraws: 0,
      reportsMedianError: true,
    },
    {
      spec: { name: 'minimum-variance' },
      base: [0.02, 0, 0, 0, 0.3, 0.25, 0.3, 0.05, 0, 0.08],
      spread: 0.45,
      meanDriven: 0,
      estimationLoss: 0.0012,
      failedDraws: 0,
      reportsMedianError: true,
    },
    {
      spec: { name: 'kelly', fraction: 0.5 },
      base: [0.2, 0, 0, 0.2, 0.15, 0.05, 0.05, 0.25, 0.1, 0],
      spread: 1.3,
      meanDriven: 0.83,
      estimationLoss: 0.0094,
      failedDraws: 3,
      reportsMedianError: true,
    },
    {
      spec: { name: 'risk-parity' },
      base: normalise(inverseVol.map((w, i) => w * (1 + 0.02 * (i % 3)))),
      spread: 0.2,
      meanDriven: 0,
      estimationLoss: 0.0004,
      failedDraws: 0,
      reportsMedianError: true,
    },
    {
      spec: { name: 'equal-weight' },
      base: SAMPLE_ASSETS.map(() => 0.1),
      spread: 0,
      meanDriven: 0,
      estimationLoss: 0,
      failedDraws: 0,
      reportsMedianError: false,
    },
    {
      spec: { name: 'inverse-volatility' },
      base: inverseVol,
      spread: 0.15,
      meanDriven: 0,
      estimationLoss: 0.0002,
      failedDraws: 0,
      reportsMedianError: true,
    },
  ];
}

function covarianceTimes(w: readonly number[]): number[] {
  return w.map((_, i) => w.reduce((s, wj, j) => s + VOLS[i] * VOLS[j] * (i === j ? 1 : CORRELATION) * wj, 0));
}

function variance(w: readonly number[]): number {
  const sw = covarianceTimes(w);
  return w.reduce((s, wi, i) => s + wi * sw[i], 0);
}

function expectedReturn(w: readonly number[]): number {
  return w.reduce((s, wi, i) => s + wi * MEANS[i], 0);
}

/** Mean-variance certainty equivalent μᵀw − (λ/2)·wᵀΣw (DeMiguel, Garlappi & Uppal 2009). */
function certaintyEquivalent(w: readonly number[]): number {
  return expectedReturn(w) - (RISK_AVERSION / 2) * variance(w);
}

function turnover(a: readonly number[], b: readonly number[]): number {
  return 0.5 * a.reduce((s, ai, i) => s + Math.abs(ai - b[i]), 0);
}

function baseOptimum(w: readonly number[], iterations: number): BaseOptimum {
  const v = variance(w);
  const sw = covarianceTimes(w);
  return {
    weights: [...w],
    expectedReturn: expectedReturn(w),
    volatility: Math.sqrt(v),
    riskContributions: w.map((wi, i) => (wi * sw[i]) / v),
    diversificationRatio: w.reduce((s, wi, i) => s + wi * VOLS[i], 0) / Math.sqrt(v),
    effectiveHoldings: 1 / w.reduce((s, wi) => s + wi * wi, 0),
    diagnostics: { solver: iterations === 0 ? 'closed-form' : 'active-set', iterations, converged: true, kktResidual: iterations === 0 ? 0 : 3.2e-13 },
    warnings: [],
  };
}

/** A summary over draws centred on `centre` with standard deviation `sd` (normal quantiles, clipped at `floor`). */
function stat(centre: number, sd: number, withMedianError: boolean, floor = -Infinity): Stat {
  const result: Stat = {
    mean: centre,
    stdErr: sd / Math.sqrt(DRAWS),
    p05: Math.max(floor, centre - Z05 * sd),
    p50: centre,
    p95: centre + Z05 * sd,
  };
  if (withMedianError) result.p50StdErr = (1.2533 * sd) / Math.sqrt(DRAWS);
  return result;
}

/** Logistic approximation of the normal CDF; good enough for invented selection rates. */
function normalCdf(x: number): number {
  return 1 / (1 + Math.exp(-1.702 * x));
}

/** Mid-rank style percentile of `value` by linear interpolation between the band's quantiles. */
function percentileWithin(value: number, q: readonly [number, number, number, number, number]): number {
  const ranks = [5, 25, 50, 75, 95];
  if (value < q[0]) return 2.5;
  if (value > q[4]) return 97.5;
  for (let k = 0; k < 4; k++) {
    if (value <= q[k + 1]) {
      const width = q[k + 1] - q[k];
      return width === 0 ? (ranks[k] + ranks[k + 1]) / 2 : ranks[k] + ((value - q[k]) / width) * (ranks[k + 1] - ranks[k]);
    }
  }
  return 50;
}

function methodReport(plan: MethodPlan, assets: readonly string[], index: number): MethodReport {
  const base = baseOptimum(plan.base, plan.spec.name === 'equal-weight' || plan.spec.name === 'inverse-volatility' ? 0 : 6 + index);
  const weights = assets.map((asset, i) => {
    const w = plan.base[i];
    const sd = plan.spread * (0.025 + 0.2 * w);
    const quantile = (z: number) => Math.min(0.3, Math.max(0, w + z * sd));
    const q: [number, number, number, number, number] = [quantile(-Z05), quantile(-Z25), w, quantile(Z25), quantile(Z05)];
    const selectionRate = sd === 0 ? (w > 0 ? 1 : 0) : normalCdf((w - 0.001) / sd);
    const proposal = PROPOSAL_WEIGHTS[i];
    const proposalPercentile = sd === 0 ? (proposal > w ? 100 : proposal < w ? 0 : 50) : percentileWithin(proposal, q);
    return {
      asset,
      mean: w,
      sd,
      p05: q[0],
      p25: q[1],
      p50: q[2],
      p75: q[3],
      p95: q[4],
      bandStdErr: (1.9 * sd) / Math.sqrt(DRAWS),
      meanStdErr: sd / Math.sqrt(DRAWS),
      p50StdErr: (1.25 * sd) / Math.sqrt(DRAWS),
      selectionRate,
      selectionRateStdErr: Math.sqrt((selectionRate * (1 - selectionRate)) / (DRAWS - 1)),
      proposalPercentile,
    };
  });
  const turnoverCentre = turnover(plan.base, PROPOSAL_WEIGHTS) + 0.08 * plan.spread;
  const mvBase = methodPlans()[0].base;
  const ceLoss = Math.max(0, certaintyEquivalent(mvBase) - certaintyEquivalent(plan.base)) + plan.estimationLoss;
  const outsideCount = weights.filter((b, i) => PROPOSAL_WEIGHTS[i] < b.p05 || PROPOSAL_WEIGHTS[i] > b.p95).length;
  return {
    method: plan.spec,
    base,
    weights,
    outsideBandShare: { value: outsideCount / assets.length, stdErr: plan.spread === 0 ? 0 : 0.012 * plan.spread },
    maxWeightSd: { value: Math.max(...weights.map((b) => b.sd)), stdErr: 0.0009 * plan.spread },
    turnoverFromProposal: stat(turnoverCentre, 0.05 * plan.spread, plan.reportsMedianError, 0),
    turnoverFromBase: stat(0.1 * plan.spread, 0.04 * plan.spread, plan.reportsMedianError, 0),
    volatility: stat(base.volatility, 0.06 * base.volatility * (plan.spread > 0 ? 1 : 0.5), plan.reportsMedianError, 0),
    // Loss against the base mean-variance optimum is never negative when scored at the base inputs.
    certaintyEquivalentLoss: stat(ceLoss, 0.8 * plan.estimationLoss + 0.0005, plan.reportsMedianError, 0),
    meanDrivenShare: {
      overall: plan.meanDriven,
      perAsset: plan.base.map((_, i) => (plan.meanDriven === 0 ? 0 : Math.min(1, plan.meanDriven * (0.75 + 0.05 * i)))),
      stdErr: plan.meanDriven === 0 ? 0 : 0.021,
    },
    meanOfOptima: [...plan.base],
    failedDraws: plan.failedDraws,
  };
}

function sampleVerdict(methods: readonly MethodReport[], outsideBandShare: number): Verdict {
  const mv = methods[0];
  const turnoverValue = mv.turnoverFromProposal.p50;
  const turnoverError = mv.turnoverFromProposal.p50StdErr ?? mv.turnoverFromProposal.stdErr ?? 0;
  const turnoverThreshold = 0.1;
  // A rule fails only when it is beyond its threshold by more than z·stdErr (one-sided 95 %).
  const turnoverPass = turnoverValue - Z05 * turnoverError <= turnoverThreshold;
  const bandThreshold = 0.2;
  const bandPass = outsideBandShare <= bandThreshold;
  return {
    pass: turnoverPass && bandPass,
    confidence: 0.95,
    rules: [
      {
        id: 'median-turnover',
        metric: 'turnover-from-proposal.p50',
        method: 'mean-variance',
        value: turnoverValue,
        stdErr: turnoverError,
        bound: turnoverValue - Z05 * turnoverError,
        threshold: turnoverThreshold,
        kind: 'max',
        pass: turnoverPass,
        message: `Median turnover from the proposal is ${(turnoverValue * 100).toFixed(1)}%, above the 10.0% limit by more than Monte Carlo error allows.`,
      },
      {
        id: 'outside-band',
        metric: 'outside-band-share',
        method: 'mean-variance',
        value: outsideBandShare,
        stdErr: 0,
        // An invented report: the bound is the value (as for a figure without error).
        bound: outsideBandShare,
        threshold: bandThreshold,
        kind: 'max',
        pass: bandPass,
        message: `${(outsideBandShare * 100).toFixed(1)}% of positions lie outside their 5–95 % band; the limit is 20.0%.`,
      },
    ],
  };
}

export interface SampleReportOptions {
  /** Replace the asset ids (same count, 10), e.g. to test escaping of hostile ids. */
  assets?: readonly string[];
  /** Include a verdict with one failing and one passing rule (default true). */
  withVerdict?: boolean;
}

/** A synthetic but schema-valid report for ten assets and six methods. */
export function sampleReport(options: SampleReportOptions = {}): Report {
  const assets = options.assets ? [...options.assets] : [...SAMPLE_ASSETS];
  if (assets.length !== SAMPLE_ASSETS.length) throw new Error(`sampleReport needs ${SAMPLE_ASSETS.length} asset ids`);
  const methods = methodPlans().map((plan, index) => methodReport(plan, assets, index));
  const mv = methods[0];
  const outside = mv.weights.filter((b, i) => PROPOSAL_WEIGHTS[i] < b.p05 || PROPOSAL_WEIGHTS[i] > b.p95);
  const proposalBase = baseOptimum(PROPOSAL_WEIGHTS, 0);
  const proposalVol = proposalBase.volatility;
  const body: Omit<Report, 'summary' | 'verdict'> = {
    meta: {
      version: '0.1.0',
      seed: 'sample-seed',
      drawsRequested: DRAWS,
      drawsCompleted: DRAWS,
      failedDraws: 3,
      failureReasons: [{ method: 'kelly', reason: 'Newton iterations did not converge within the step limit', count: 3 }],
      elapsedMs: 1234.5,
      inputDigest: '9f2c4e1b7a3d5f60c8e2b4a6d1f3e5c7a9b0d2f4e6c8a1b3d5f7e9c0a2b4d6f8',
      scheme: 'stationary-bootstrap',
      meanBlockLength: 3.7,
      periodsPerYear: 12,
      channels: ['joint', 'mean-only', 'covariance-only'],
      percentiles: 'Hyndman & Fan (1996) type 7: linear interpolation between order statistics.',
      monteCarloError: 'Means: sd/√draws. Percentiles and shares: batch means over 25 batches.',
      workUnits: 4.2e7,
      baseEstimation: { shrinkage: 0.21, effectiveObservations: 180 },
    },
    assets,
    proposal: {
      method: { name: 'mean-variance', riskAversion: RISK_AVERSION },
      weights: [...PROPOSAL_WEIGHTS],
      expectedReturn: { base: proposalBase.expectedReturn, ...stat(proposalBase.expectedReturn * 0.98, 0.012, true) },
      volatility: { base: proposalVol, ...stat(proposalVol * 1.01, 0.1 * proposalVol, true, 0) },
      volatilityBandWidth: { value: 2 * Z05 * 0.1 * proposalVol, stdErr: 0.0011 },
      expectedShortfall95: { base: 0.041, ...stat(0.043, 0.006, true, 0) },
      riskContributions: assets.map((asset, i) => {
        const rc = proposalBase.riskContributions[i];
        return { asset, base: rc, p05: rc * 0.8, p50: rc, p95: rc * 1.2 };
      }),
    },
    methods,
    findings: [
      ...outside.map((b) => {
        const i = assets.indexOf(b.asset);
        return {
          code: 'outside-band',
          asset: b.asset,
          method: 'mean-variance',
          message: `The proposed ${(PROPOSAL_WEIGHTS[i] * 100).toFixed(1)}% in ${b.asset} lies outside the mean-variance 5–95 % band (${(b.p05 * 100).toFixed(1)}% to ${(b.p95 * 100).toFixed(1)}%).`,
        };
      }),
      {
        code: 'mean-driven',
        method: 'mean-variance',
        message: `${(mv.meanDrivenShare.overall * 100).toFixed(0)}% of the mean-variance weight instability comes from noise in the expected returns, not in the covariance.`,
      },
      {
        code: 'simpler-method',
        method: 'risk-parity',
        message: 'At this sample size risk parity loses less certainty equivalent than mean-variance once estimation error is counted.',
      },
    ],
    warnings: [
      { code: 'short-history', message: 'The return history has 120 rows for 10 assets; estimated means are noisy at this length.' },
      { code: 'kelly-failed-draws', message: 'Kelly did not converge in 3 of 500 draws; those draws are excluded from its figures.' },
    ],
    cautions: [...CAUTIONS],
  };
  // The headline comes from the core, as in a real report (it is tested against hand-worked figures in test/stress/headline.test.ts).
  const report: Report = { summary: summarise(body), ...body };
  if (options.withVerdict !== false) report.verdict = sampleVerdict(methods, outside.length / assets.length);
  return report;
}

/** The optimize response for the same invented market: the base optimum of every method. */
export function sampleOptimizeResponse(options: Pick<SampleReportOptions, 'assets'> = {}): OptimizeResponse {
  const report = sampleReport({ assets: options.assets, withVerdict: false });
  return {
    meta: { version: report.meta.version, inputDigest: report.meta.inputDigest, periodsPerYear: report.meta.periodsPerYear, elapsedMs: 12.5 },
    assets: report.assets,
    methods: report.methods.map((m) => ({ method: m.method, base: m.base })),
    warnings: [{ code: 'short-history', message: 'The return history has 120 rows for 10 assets; estimated means are noisy at this length.' }],
    cautions: [...CAUTIONS],
  };
}
