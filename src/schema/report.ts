import { z } from 'zod';
import { MethodSpecSchema } from './proposal.js';

/**
 * The report and the optimize response. Every figure from draws carries its Monte Carlo
 * standard error. Volatilities, expected returns and tracking errors are annualised.
 */

const fraction = z.number();

/** A Monte Carlo standard error: null when it cannot be estimated (fewer than 2 successful draws; the report warns). */
export const MonteCarloErrorSchema = z.number().min(0).nullable();

export const WarningSchema = z.strictObject({
  code: z.string().describe('Stable machine-readable code.'),
  message: z.string().describe('Plain-language explanation.'),
});

export const DiagnosticsSchema = z
  .strictObject({
    solver: z.string(),
    iterations: z.int().min(0),
    converged: z.boolean(),
    kktResidual: z.number().min(0).describe('Largest violation of the optimality (KKT) conditions at the returned weights.'),
  })
  .describe('How the optimisation went.');

export const BaseOptimumSchema = z
  .strictObject({
    weights: z.array(fraction).describe('Optimal weights on the unperturbed inputs, fractions in the order of `assets`.'),
    expectedReturn: z.number().describe('Annualised expected return μᵀw × periodsPerYear.'),
    volatility: z.number().min(0).describe('Annualised volatility √(wᵀΣw × periodsPerYear).'),
    riskContributions: z.array(z.number()).describe('Euler risk contributions w_i(Σw)_i / wᵀΣw, fractions of total risk summing to 1 (Tasche 2008).'),
    diversificationRatio: z.number().describe('wᵀσ / √(wᵀΣw) (Choueifaty & Coignard 2008).'),
    effectiveHoldings: z.number().describe('1 / Σ w_i².'),
    factorRiskShare: z
      .strictObject({ factor: z.number(), specific: z.number() })
      .optional()
      .describe('Shares of variance from factor risk wᵀBFBᵀw and specific risk wᵀDw (with a factor model).'),
    diagnostics: DiagnosticsSchema,
    warnings: z.array(WarningSchema),
  })
  .describe("A method's optimum on the base inputs.");

export const StatSchema = z
  .strictObject({
    mean: z.number(),
    stdErr: MonteCarloErrorSchema.describe('Monte Carlo standard error of the mean (sd/√draws); null when it cannot be estimated.'),
    p05: z.number(),
    p50: z.number(),
    p95: z.number(),
    p50StdErr: MonteCarloErrorSchema.optional().describe('Monte Carlo standard error of the median (exact bootstrap of the sample percentile, see meta.monteCarloError).'),
  })
  .describe('Summary over draws.');

export const BandSchema = StatSchema.extend({ base: z.number().describe('Value on the unperturbed inputs.') });

export const EstimateSchema = z
  .strictObject({ value: z.number(), stdErr: MonteCarloErrorSchema.describe('Monte Carlo standard error (method in meta.monteCarloError); null when it cannot be estimated.') })
  .describe('A draw-based figure with its Monte Carlo error.');

export const WeightBandSchema = z.strictObject({
  asset: z.string(),
  mean: z.number(),
  sd: z.number().min(0),
  p05: z.number(),
  p25: z.number(),
  p50: z.number(),
  p75: z.number(),
  p95: z.number(),
  bandStdErr: MonteCarloErrorSchema.describe('Monte Carlo standard error of p05 and p95 (the larger; exact bootstrap of the sample percentile).'),
  meanStdErr: MonteCarloErrorSchema.describe('Monte Carlo standard error of `mean` (sd/√draws); null (warning weight-error-not-estimable) when the weight leaves its usual value in only 1–4 draws.'),
  p50StdErr: MonteCarloErrorSchema.describe('Monte Carlo standard error of `p50` (exact bootstrap of the sample percentile; exactly 0 when the draws around the median are tied).'),
  selectionRate: z.number().min(0).max(1).describe('Share of draws where |w_i| exceeds the selection threshold.'),
  selectionRateStdErr: MonteCarloErrorSchema.describe('Monte Carlo standard error of `selectionRate` (binomial, √(p(1−p)/(n−1))); null (warning weight-error-not-estimable) when only 1–4 draws are in the minority state.'),
  proposalPercentile: z.number().min(0).max(100).describe("Where the proposal's weight falls in the resampled distribution (mid-rank percentile, 0–100)."),
});

const patternSide = z.enum(['lower', 'inside', 'upper']);

export const PatternChangeSchema = z
  .strictObject({
    kind: z.enum(['asset', 'group']).describe('Whether an asset or a group constraint changes state.'),
    name: z.string().describe('The asset id or the group name.'),
    from: patternSide.describe('State at the base optimum: at its lower bound (a group: at its min), strictly inside, or at its upper bound (a group: at its max).'),
    to: patternSide.describe('State just past the shift.'),
    limit: z.number().describe('The bound or group limit involved (a weight fraction): the one it leaves (from) or reaches (to).'),
  })
  .describe('One change of the active pattern at a break-even shift.');

export const ForecastSensitivitySchema = z
  .strictObject({
    asset: z.string().describe('The asset whose mean forecast is shifted (all other inputs held at their base values).'),
    stdErr: z
      .number()
      .min(0)
      .describe("Annual standard error of this asset's mean forecast: σ_i·√p/√T (σ_i annual volatility, p periods per year, T observations) for a history or moments; p × the view's stdErr where views are given."),
    shiftUp: z
      .number()
      .min(0)
      .nullable()
      .describe("Smallest increase of the annual mean forecast at which the optimum's active pattern (each asset at its lower bound / inside / at its upper bound; each group at its min / inside / at its max) first changes; null when no increase, however large, changes it (scenario Kelly: none within 1024 standard errors)."),
    shiftDown: z
      .number()
      .min(0)
      .nullable()
      .describe('Smallest decrease (a positive number) of the annual mean forecast at which the active pattern first changes; null when no decrease changes it.'),
    shiftUpStdErrs: z.number().min(0).nullable().describe('shiftUp / stdErr (null when shiftUp is null or stdErr is 0).'),
    shiftDownStdErrs: z.number().min(0).nullable().describe('shiftDown / stdErr (null when shiftDown is null or stdErr is 0).'),
    turnoverPerStdErr: z
      .strictObject({
        up: z.number().min(0).describe('Forecast raised by one stdErr.'),
        down: z.number().min(0).describe('Forecast lowered by one stdErr.'),
      })
      .describe('One-way turnover ½Σ|w(μ ± stdErr·e_i) − w(μ)| of the optimum, with any breakpoints within one stdErr crossed.'),
    changesUp: z.array(PatternChangeSchema).describe('What changes at shiftUp (empty when shiftUp is null).'),
    changesDown: z.array(PatternChangeSchema).describe('What changes at shiftDown (empty when shiftDown is null).'),
    shiftTolerance: z
      .number()
      .min(0)
      .describe('Absolute accuracy of shiftUp and shiftDown (annual); 0 for the exact parametric step of mean-variance, the bracketing tolerance for Kelly on scenarios.'),
    dWeightsDMean: z
      .array(z.number())
      .optional()
      .describe('∂w/∂μ_i per unit of annual mean on the base active pattern (mean-variance and quadratic Kelly; given for up to 50 assets), in the order of `assets`.'),
  })
  .describe("How far one asset's return forecast must move before the optimiser changes its mind, and how that compares with how well the forecast is known.");

export const MethodReportSchema = z.strictObject({
  method: MethodSpecSchema,
  base: BaseOptimumSchema,
  weights: z.array(WeightBandSchema),
  turnoverFromProposal: StatSchema.describe('One-way turnover ½Σ|w_b − w_proposal| of each draw’s optimum.'),
  turnoverFromBase: StatSchema.describe('One-way turnover ½Σ|w_b − w_base| of each draw’s optimum.'),
  volatility: StatSchema.describe('Annualised volatility of each draw’s optimum under that draw’s covariance.'),
  certaintyEquivalentLoss: StatSchema.describe(
    'CE(w*_MV,base) − CE(w_b), both scored at the base inputs; annualised (DeMiguel, Garlappi & Uppal 2009 compare methods this way).',
  ),
  meanDrivenShare: z
    .strictObject({
      overall: z.number().min(0).max(1),
      perAsset: z.array(z.number().min(0).max(1)),
      stdErr: MonteCarloErrorSchema.describe('Monte Carlo standard error of `overall` (delete-one-group jackknife); 0 when the share cannot move; null, with a warning, when a channel moved the weights in too few draws for an error to be read from them (see meta.monteCarloError).'),
    })
    .describe('Var_mean(w_i) / (Var_mean(w_i) + Var_cov(w_i)): the share of weight instability caused by noise in the means; 0 for methods that ignore means.'),
  meanOfOptima: z.array(z.number()).describe('Mean of the re-optimised weights: each asset’s weight averaged over the successful draws.'),
  outsideBandShare: EstimateSchema.describe("Share of assets whose proposed weight lies outside this method's p05–p95 band."),
  maxWeightSd: EstimateSchema.describe('Largest standard deviation of any asset’s weight across draws. When several assets’ sds are nearly tied the largest of them is biased upward at finite draws; stdErr is its spread across reruns (the error of the maximum, see meta.monteCarloError), and the gate judges it by a bound over all assets at once.'),
  failedDraws: z.int().min(0),
  forecastSensitivity: z
    .array(ForecastSensitivitySchema)
    .optional()
    .describe('Break-even forecast shifts per asset at the base inputs (exact, no resampling); present for methods that use the means.'),
});

export const ReportMetaSchema = z.strictObject({
  version: z.string(),
  seed: z.union([z.string(), z.int()]),
  drawsRequested: z.int(),
  drawsCompleted: z.int(),
  failedDraws: z.int().describe('Draws where at least one method failed to solve; those draws are excluded for that method.'),
  failureReasons: z
    .array(z.strictObject({ method: z.string(), reason: z.string(), count: z.int() }))
    .describe('Why draws failed, counted per method (with its parameters, e.g. "kelly (fraction 0.5)") and reason: a solve that did not converge, was unbounded, or whose KKT residual exceeded the documented tolerance, or inputs that could not be estimated.'),
  elapsedMs: z.number().describe('Wall time; with meta.threads and meta.shards the only fields that may vary between identical runs.'),
  inputDigest: z.string().describe('sha-256 (hex) of the canonical proposal JSON (keys sorted).'),
  scheme: z.enum(['stationary-bootstrap', 'iid-bootstrap', 'parametric']),
  meanBlockLength: z.number().nullable().describe('Mean block length used by the stationary bootstrap, else null.'),
  periodsPerYear: z.number(),
  channels: z.array(z.string()).describe('joint, mean-only and covariance-only share random numbers.'),
  percentiles: z.string().describe('The percentile definition used everywhere.'),
  monteCarloError: z.string().describe('How standard errors are computed.'),
  workUnits: z.number().describe('Estimated operations for this request, checked against the limit.'),
  baseEstimation: z
    .record(z.string(), z.number())
    .describe('What the estimator reports for the base inputs, e.g. the Ledoit–Wolf shrinkage intensity (0 = sample matrix) or a PCA model’s explained variance share.'),
  threads: z.int().min(1).optional().describe('Worker threads the draws were split over (CLI --threads); absent when computed in one loop. May differ between runs of the same request.'),
  shards: z.int().min(1).optional().describe('Ranges of draws computed apart (Durable Objects for POST /v1/stress?shards=N, or a remote service for the CLI) and merged. May differ between runs of the same request.'),
});

export const VerdictRuleSchema = z.strictObject({
  id: z.string(),
  metric: z.string(),
  method: z.string(),
  value: z.number(),
  stdErr: MonteCarloErrorSchema,
  bound: z
    .number()
    .describe(
      "The one-sided confidence bound at the policy's confidence that the rule is judged on: for max and maxIncrease the lower bound (the rule fails when it exceeds the threshold), for min the upper bound (fails when below). value ∓ z·stdErr for smooth figures (for mean-driven-share on the logit scale, with Student's t on the jackknife's groups − 1 degrees of freedom in place of z); for outside-band-share and max-weight-sd a bound over all assets at once, for turnover-from-proposal.p50 and volatility-band-width order statistics of the draws (see meta.monteCarloError); the value itself when the error cannot be estimated.",
    ),
  threshold: z.number(),
  kind: z.enum(['max', 'min', 'maxIncrease']),
  baselineValue: z.number().optional(),
  pass: z.boolean(),
  message: z.string(),
});

export const VerdictSchema = z.strictObject({
  pass: z.boolean(),
  confidence: z.number(),
  rules: z.array(VerdictRuleSchema),
});

export const ReportSummarySchema = z
  .strictObject({
    headline: z.string().describe('The answer in one or two sentences, read aloud: the `sentences` joined. Every draw-based number carries its Monte Carlo standard error (±).'),
    sentences: z.array(z.string()).describe('The headline sentence by sentence.'),
    statedOptimumTurnover: z
      .number()
      .min(0)
      .nullable()
      .describe("One-way turnover between the proposal and its stated method's optimum on the base inputs (0 when the proposal is that optimum); null when that method was not re-optimised."),
    riskStable: z.boolean().describe("Whether the proposal's volatility band (p95 − p05) is at most a quarter of its base volatility."),
    simplerMethod: z
      .string()
      .nullable()
      .describe('A method that ignores the return forecasts and lost clearly less certainty-equivalent return at this sample size, else null.'),
    forecastBreakEven: z
      .strictObject({
        asset: z.string(),
        direction: z.enum(['up', 'down']),
        stdErrs: z.number().min(0),
        turnoverPerStdErr: z.number().min(0).describe('One-way turnover of the optimum when that forecast moves one standard error in that direction (from turnoverPerStdErr).'),
      })
      .nullable()
      .describe("The smallest change of one asset's return forecast, in its standard errors, that changes which positions of the optimum sit at a bound (the minimum over methods[k].forecastSensitivity of shiftUpStdErrs and shiftDownStdErrs, as the forecast-break-even-std-errs metric); null when not available."),
    assetNotes: z.array(z.string()).describe('A short note per asset (in the order of `assets`; empty when nothing is notable) for the per-asset table.'),
  })
  .describe('The headline first: the same sentences in every format.');

export const ReportSchema = z
  .strictObject({
    summary: ReportSummarySchema,
    meta: ReportMetaSchema,
    assets: z.array(z.string()),
    proposal: z.strictObject({
      method: MethodSpecSchema,
      weights: z.array(z.number()),
      expectedReturn: BandSchema.describe('Annualised expected return of the proposal under resampled means.'),
      volatility: BandSchema.describe('Annualised volatility of the proposal under resampled covariances.'),
      volatilityBandWidth: EstimateSchema.describe('p95 − p05 of the proposal’s annualised volatility.'),
      expectedShortfall95: BandSchema.optional().describe('Per-period 95 % expected shortfall of the proposal over resampled histories (return histories only), as a positive loss.'),
      riskContributions: z.array(
        z.strictObject({ asset: z.string(), base: z.number(), p05: z.number(), p50: z.number(), p95: z.number() }),
      ),
    }),
    methods: z.array(MethodReportSchema),
    findings: z.array(z.strictObject({ code: z.string(), asset: z.string().optional(), method: z.string().optional(), message: z.string() })),
    warnings: z.array(WarningSchema),
    verdict: VerdictSchema.optional(),
    cautions: z.array(z.string()),
  })
  .describe('The robustness report for a proposal.');

export const OptimizeResponseSchema = z.strictObject({
  meta: z.strictObject({ version: z.string(), inputDigest: z.string(), periodsPerYear: z.number(), elapsedMs: z.number() }),
  assets: z.array(z.string()),
  methods: z.array(
    z.strictObject({
      method: MethodSpecSchema,
      base: BaseOptimumSchema,
      forecastSensitivity: MethodReportSchema.shape.forecastSensitivity,
    }),
  ),
  warnings: z.array(WarningSchema),
  cautions: z.array(z.string()),
});

export type Report = z.infer<typeof ReportSchema>;
export type MethodReport = z.infer<typeof MethodReportSchema>;
export type BaseOptimum = z.infer<typeof BaseOptimumSchema>;
export type Stat = z.infer<typeof StatSchema>;
export type ForecastSensitivity = z.infer<typeof ForecastSensitivitySchema>;
export type PatternChange = z.infer<typeof PatternChangeSchema>;
export type OptimizeResponse = z.infer<typeof OptimizeResponseSchema>;
export type Verdict = z.infer<typeof VerdictSchema>;
export type ReportSummary = z.infer<typeof ReportSummarySchema>;
