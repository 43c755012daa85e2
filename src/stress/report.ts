import { annualiseMean, annualiseVolatility } from '../estimate/annualise.js';
import { decomposeRisk } from '../optimize/risk-decomposition.js';
import { CAUTIONS } from '../schema/cautions.js';
import type { MethodReport, Report, Stat } from '../schema/report.js';
import { MONTE_CARLO_ERROR_DESCRIPTION } from '../statistics/batch-means.js';
import { describeOptimum, clean, cleanArray } from './base-optimum.js';
import { SHORTFALL_LEVEL, type StressAccumulators, type StressPlan } from './engine.js';
import { expectedShortfall } from './scenarios.js';
import { findingsFor } from './findings.js';
import { methodKey } from './method-key.js';
export { methodKey } from './method-key.js';
import { planForecastSensitivity } from './plan-summary.js';
import { summarise } from './headline.js';
import { PERCENTILE_DEFINITION } from '../statistics/quantiles.js';
import type { ScalarSummary } from '../statistics/scalar-accumulator.js';
import { BAND_EDGE_TOLERANCE, outsideBandShare } from '../statistics/stability.js';
import { maxSdStdErr } from '../statistics/max-sd-error.js';
import { MIN_DRAWS_OFF_MODE } from '../statistics/weight-accumulator.js';


/** Assets a weight-error warning names before "and N more". */
const RARE_ASSETS_LISTED = 8;

/** A finite number for the report; NaN (no successful draw) becomes 0 — only for figures of a method the report warns about ('method-not-estimable'). */
function finite(x: number): number {
  return Number.isFinite(x) ? clean(x) : 0;
}

/** A Monte Carlo error for the report: null when it cannot be estimated (fewer than 2 successful draws; the report warns), never a made-up 0. */
function error(x: number): number | null {
  return Number.isFinite(x) ? clean(x) : null;
}

function stat(s: ScalarSummary): Stat {
  return { mean: finite(s.mean), stdErr: error(s.stdErr), p05: finite(s.p05), p50: finite(s.p50), p95: finite(s.p95), p50StdErr: error(s.p50StdErr) };
}

export interface ReportMeta {
  readonly version: string;
  readonly inputDigest: string;
  readonly elapsedMs: number;
}

/** Turns the accumulated draws into the report (without a verdict). */
export function buildReport(plan: StressPlan, acc: StressAccumulators, meta: ReportMeta): Omit<Report, 'verdict'> {
  const p = plan.problem;
  const n = p.n;
  const ppy = p.periodsPerYear;
  const warnings = [...plan.warnings];
  if (plan.draws < 100) {
    warnings.push({
      code: 'few-draws',
      message: `Only ${plan.draws} draws: percentiles and their errors are rough; 500 or more is usual.${plan.draws < 2 ? ' With a single draw no Monte Carlo error can be estimated: every error is null.' : ''}`,
    });
  }

  const sensitivity = planForecastSensitivity(plan);
  warnings.push(...sensitivity.warnings);
  const methods: MethodReport[] = plan.solvers.map((_, k) => {
    const a = acc.methods[k];
    const spec = p.methods[k];
    const summary = a.weights.summarize(p.proposalWeights);
    if (summary.successfulDraws < 2) {
      warnings.push({
        code: 'method-not-estimable',
        message: `${methodKey(spec)} succeeded in ${summary.successfulDraws} of ${plan.draws} draws: its Monte Carlo errors cannot be estimated (reported as null)${summary.successfulDraws === 0 ? ' and its draw-based figures are placeholders (0), not estimates' : ''}; see meta.failureReasons.`,
      });
    }
    if (summary.successfulDraws >= 2) {
      const rare = summary.perAsset.flatMap((w, i) => (Number.isNaN(w.meanStdErr) || Number.isNaN(w.selectionRateStdErr) ? [p.assets[i]] : []));
      if (rare.length > 0) {
        const shown = rare.slice(0, RARE_ASSETS_LISTED).join(', ') + (rare.length > RARE_ASSETS_LISTED ? ` and ${rare.length - RARE_ASSETS_LISTED} more` : '');
        warnings.push({
          code: 'weight-error-not-estimable',
          message:
            `${methodKey(spec)}: ${rare.length === 1 ? 'one asset leaves its' : `${rare.length} assets leave their`} usual weight (mostly a bound) in only 1–${MIN_DRAWS_OFF_MODE - 1} of ${summary.successfulDraws} draws (${shown}), ` +
            `so the Monte Carlo error of ${rare.length === 1 ? 'its' : 'their'} mean weight or selection rate rests on those few draws and cannot be estimated (reported as null); a rerun could move the figure by more than they show. More draws would help.`,
        });
      }
    }
    const shares = a.channels.summarize({ meanChannelFixed: !plan.solvers[k].usesMean });
    if (shares.overallErrorMethod === 'not-estimable') {
      const unseen = Math.min(shares.meanChannelEffectiveGroups, shares.covarianceChannelEffectiveGroups) === 0;
      warnings.push({
        code: 'mean-driven-share-not-estimable',
        message:
          `${methodKey(spec)}: the Monte Carlo error of the mean-driven share cannot be estimated from ${plan.draws} draws (reported as null): ` +
          `one of its channels moved the weights in very few draws (effective groups of draws carrying the spread: mean-only ${shares.meanChannelEffectiveGroups.toFixed(1)}, ` +
          `covariance-only ${shares.covarianceChannelEffectiveGroups.toFixed(1)}; at least ${shares.effectiveGroupTarget} needed), so the share rests on rare draws and a rerun could move it by more than these draws can show. ` +
          (unseen
            ? `That channel never moved in these draws, so its moves are rarer than about 3 in ${plan.draws}: at least ${shares.drawsForEstimableError} draws would be needed, possibly far more.`
            : `About ${shares.drawsForEstimableError} draws or more would let it be estimated.`),
      });
    }
    const stability = outsideBandShare(a.weights.rows(), plan.draws, n, p.proposalWeights, BAND_EDGE_TOLERANCE, plan.seed);
    let maxSd = 0;
    summary.perAsset.forEach((w) => {
      if (w.sd > maxSd) maxSd = w.sd;
    });
    // Nearly tied sds: the error of the maximum, not of its leader (max-sd-error.ts).
    const maxSdErr = summary.successfulDraws < 2 ? Number.NaN : maxSdStdErr(a.weights.rows(), plan.draws, summary.perAsset, plan.seed);
    return {
      method: spec,
      base: describeOptimum(plan.base[k], p.mean, p.riskModel, ppy),
      weights: summary.perAsset.map((w, i) => ({
        asset: p.assets[i],
        mean: finite(w.mean),
        sd: finite(w.sd),
        p05: finite(w.p05),
        p25: finite(w.p25),
        p50: finite(w.p50),
        p75: finite(w.p75),
        p95: finite(w.p95),
        bandStdErr: error(w.bandStdErr),
        meanStdErr: error(w.meanStdErr),
        p50StdErr: error(w.p50StdErr),
        selectionRate: finite(w.selectionRate),
        selectionRateStdErr: error(w.selectionRateStdErr),
        proposalPercentile: finite(w.proposalPercentile),
      })),
      turnoverFromProposal: stat(a.turnoverFromProposal.summarize()),
      turnoverFromBase: stat(a.turnoverFromBase.summarize()),
      volatility: stat(a.volatility.summarize()),
      certaintyEquivalentLoss: stat(a.certaintyEquivalentLoss.summarize()),
      meanDrivenShare: {
        overall: finite(shares.overall),
        perAsset: cleanArray(Array.from(shares.perAsset, (x) => (Number.isFinite(x) ? x : 0))),
        stdErr: error(shares.overallStdErr),
      },
      meanOfOptima: cleanArray(summary.meanOfOptima),
      outsideBandShare: { value: finite(stability.value), stdErr: error(stability.stdErr) },
      maxWeightSd: { value: finite(maxSd), stdErr: error(maxSdErr) },
      failedDraws: summary.failedDraws,
      ...(sensitivity.tables[k] ? { forecastSensitivity: sensitivity.tables[k] } : {}),
    };
  });

  const baseRisk = decomposeRisk(p.riskModel, p.proposalWeights, { effectiveBets: false });
  let baseMu = 0;
  for (let i = 0; i < n; i++) baseMu += p.mean[i] * p.proposalWeights[i];
  const vol = acc.proposalVolatility.summarize();
  const ret = acc.proposalReturn.summarize();
  const shares = acc.proposalRiskShares.summarize(p.proposalWeights);
  const proposal: Report['proposal'] = {
    method: p.methods[0],
    weights: cleanArray(p.proposalWeights),
    expectedReturn: { base: clean(annualiseMean(baseMu, ppy)), ...stat(ret) },
    volatility: { base: clean(annualiseVolatility(baseRisk.volatility, ppy)), ...stat(vol) },
    volatilityBandWidth: { value: finite(vol.p95 - vol.p05), stdErr: error(vol.bandWidthStdErr) },
    riskContributions: shares.perAsset.map((s, i) => ({
      asset: p.assets[i],
      // 0 for a zero-variance proposal (0/0): no asset contributes risk.
      base: finite(baseRisk.contributionShares[i]),
      p05: finite(s.p05),
      p50: finite(s.p50),
      p95: finite(s.p95),
    })),
  };
  if (p.history && plan.scheme !== 'parametric') {
    const es = acc.proposalShortfall.summarize();
    // Base: the shortfall over the history itself.
    const t = p.history.assets.periods;
    const baseEs = expectedShortfall(p.history.assets.values, n, t, undefined, p.proposalWeights, SHORTFALL_LEVEL, new Float64Array(t));
    proposal.expectedShortfall95 = { base: clean(baseEs), ...stat(es) };
  }

  // Failures: draws where at least one method (or the inputs) failed.
  const failedDraws = countFailedDraws(plan, acc);
  const failureReasons: Report['meta']['failureReasons'] = [];
  for (const [reason, count] of acc.inputFailures) failureReasons.push({ method: 'inputs', reason, count });
  acc.methods.forEach((a, k) => {
    for (const [reason, count] of a.failures) failureReasons.push({ method: methodKey(p.methods[k]), reason, count });
  });
  failureReasons.sort((x, y) => y.count - x.count || x.method.localeCompare(y.method) || x.reason.localeCompare(y.reason));
  if (failedDraws > 0) {
    warnings.push({ code: 'failed-draws', message: `${failedDraws} of ${plan.draws} draws failed for at least one method; those draws are left out of that method's figures (see meta.failureReasons).` });
  }
  const inputFailed = [...acc.inputFailures.values()].reduce((a, b) => a + b, 0);
  const body: Omit<Report, 'verdict' | 'summary'> = {
    meta: {
      version: meta.version,
      seed: plan.seed,
      drawsRequested: plan.draws,
      drawsCompleted: plan.draws - inputFailed,
      failedDraws,
      failureReasons: failureReasons.slice(0, 20),
      elapsedMs: meta.elapsedMs,
      inputDigest: meta.inputDigest,
      scheme: plan.scheme,
      meanBlockLength: plan.meanBlockLength === null ? null : clean(plan.meanBlockLength),
      periodsPerYear: ppy,
      channels: ['joint', 'mean-only', 'covariance-only'],
      percentiles: PERCENTILE_DEFINITION,
      monteCarloError: MONTE_CARLO_ERROR_DESCRIPTION,
      workUnits: Math.round(plan.workUnits + sensitivity.workUnits),
      baseEstimation: Object.fromEntries(Object.entries(p.estimationNotes).map(([k, v]) => [k, clean(v)])),
    },
    assets: [...p.assets],
    proposal,
    methods,
    findings: findingsFor(p.assets, Array.from(p.proposalWeights), methods, proposal.volatility),
    warnings,
    cautions: [...CAUTIONS],
  };
  // The headline first in the JSON too (key order is the serialisation order).
  return { summary: summarise(body), ...body };
}

function countFailedDraws(plan: StressPlan, acc: StressAccumulators): number {
  const failed = new Uint8Array(plan.draws);
  for (const a of acc.methods) {
    const rows = a.weights.rows();
    const n = plan.problem.n;
    for (let b = 0; b < plan.draws; b++) if (!Number.isFinite(rows[b * n])) failed[b] = 1;
  }
  let count = 0;
  for (let b = 0; b < plan.draws; b++) count += failed[b];
  return count;
}
