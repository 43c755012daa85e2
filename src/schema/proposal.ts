import { z } from 'zod';
import { LIMITS } from './limits.js';

/**
 * The proposal: a weight vector, the inputs it was built from, and how to stress it.
 * Shape only; semantic checks (lengths, symmetry, PSD, feasibility) live in validate.ts.
 */

/** A number of at most `max` in magnitude (LIMITS: no product the service forms can overflow). */
const bounded = (max: number) => z.number().min(-max).max(max);
const returnValue = bounded(LIMITS.maxAbsReturn);
const varianceValue = bounded(LIMITS.maxAbsVariance);
const weightValue = bounded(LIMITS.maxAbsWeight);
const vector = z.array(returnValue);
const matrix = z.array(z.array(returnValue));
const varianceMatrix = z.array(z.array(varianceValue));
const weightVector = z.array(weightValue);
/** An asset, factor or group id. */
const id = z.string().min(1).max(LIMITS.maxIdLength);
const periodsPerYear = z
  .number()
  .positive()
  .max(100_000)
  .describe('Periods per year used to annualise: mean × p, volatility × √p (12 monthly, 52 weekly, 252 daily).');

export const FactorReturnsSchema = z
  .strictObject({
    names: z.array(id).min(1).max(LIMITS.maxFactors).describe('Factor ids, unique.'),
    returns: matrix.describe('T×K simple per-period factor returns, rows aligned with the asset returns.'),
  })
  .describe('Factor return history for a regression factor model.');

export const HistoryInputsSchema = z
  .strictObject({
    returns: matrix
      .min(3)
      .max(LIMITS.maxRows)
      .describe('T×N simple per-period returns (0.01 = 1 %), oldest first, columns in the order of `assets`.'),
    periodsPerYear,
    factors: FactorReturnsSchema.optional(),
  })
  .describe('A return history; means and covariance are estimated from it.');

export const MomentsInputsSchema = z
  .strictObject({
    mean: vector.describe('Per-period expected simple returns, in the order of `assets`.'),
    covariance: varianceMatrix.describe('N×N per-period covariance of simple returns.'),
    observations: z.int().min(2).describe('Number of observations the moments were estimated from (T); sets the parameter noise.'),
    periodsPerYear,
  })
  .describe('Estimated moments: mean vector and covariance matrix.');

export const FactorModelSchema = z
  .strictObject({
    factors: z.array(id).min(1).max(LIMITS.maxFactors).describe('Factor ids, unique.'),
    loadings: matrix.describe('N×K exposures B.'),
    factorCovariance: varianceMatrix.describe('K×K per-period factor covariance F.'),
    specificVariance: z.array(varianceValue).describe('Per-period specific (idiosyncratic) variances, the diagonal of D.'),
  })
  .describe('Σ = B F Bᵀ + D.');

export const FactorInputsSchema = z
  .strictObject({
    mean: vector.describe('Per-period expected simple returns, in the order of `assets`.'),
    factorModel: FactorModelSchema,
    observations: z.int().min(2).describe('Number of observations the model was estimated from (T).'),
    periodsPerYear,
  })
  .describe('Estimated means and a factor risk model.');

export const InputsSchema = z.union([HistoryInputsSchema, MomentsInputsSchema, FactorInputsSchema]);

export const RiskAversionSchema = z.union([
  z.number().min(LIMITS.minRiskAversion).max(LIMITS.maxRiskAversion).describe('λ in μᵀw − (λ/2)·wᵀΣw.'),
  z
    .strictObject({
      factor: z.number().min(LIMITS.minRiskAversion).max(LIMITS.maxRiskAversion).describe('λ_f, aversion to factor risk wᵀBFBᵀw.'),
      specific: z.number().min(LIMITS.minRiskAversion).max(LIMITS.maxRiskAversion).describe('λ_s, aversion to specific risk wᵀDw.'),
    })
    .describe('Separate risk aversion for factor and specific risk (needs a factor model).'),
]);

export const MethodSpecSchema = z.discriminatedUnion('name', [
  z
    .strictObject({ name: z.literal('mean-variance'), riskAversion: RiskAversionSchema })
    .describe('Markowitz (1952): maximise μᵀw − (λ/2)·wᵀΣw.'),
  z.strictObject({ name: z.literal('minimum-variance') }).describe('Minimise wᵀΣw.'),
  z
    .strictObject({
      name: z.literal('kelly'),
      fraction: z
        .number()
        .min(1 / LIMITS.maxRiskAversion)
        .max(1)
        .optional()
        .describe('Fraction f of full Kelly; constant relative risk aversion 1/f. 1 (default) is log utility.'),
    })
    .describe('Kelly (1956): maximise expected log growth over the return scenarios.'),
  z
    .strictObject({
      name: z.literal('risk-parity'),
      budgets: z.array(bounded(LIMITS.maxRiskAversion)).optional().describe('Risk budgets per asset (positive, normalised to sum 1); default equal.'),
    })
    .describe('Equal (or budgeted) risk contributions; long-only, fully invested.'),
  z.strictObject({ name: z.literal('equal-weight') }).describe('1/N of the budget in each asset.'),
  z.strictObject({ name: z.literal('inverse-volatility') }).describe('Weights proportional to 1/σ_i.'),
]);

const boundSchema = z.union([weightValue, weightVector]);

export const ConstraintsSchema = z
  .strictObject({
    longOnly: z.boolean().default(true).describe('No short positions (default true).'),
    budget: weightValue.default(1).describe('Σ w_i (default 1, fully invested).'),
    lower: boundSchema.optional().describe('Lower bound per asset: one number for all, or one per asset.'),
    upper: boundSchema.optional().describe('Upper bound per asset: one number for all, or one per asset.'),
    groups: z
      .array(
        z.strictObject({
          name: id,
          assets: z.array(z.string().max(LIMITS.maxIdLength)).min(1).max(LIMITS.maxAssets).describe('Asset ids in the group (each at most once).'),
          min: weightValue.optional().describe('Minimum total weight of the group.'),
          max: weightValue.optional().describe('Maximum total weight of the group.'),
        }),
      )
      .max(LIMITS.maxGroups)
      .optional()
      .describe('Group limits: min ≤ Σ of the members’ weights ≤ max.'),
  })
  .describe('The feasible set the optimising methods respect.');

export const EstimationSchema = z
  .strictObject({
    covariance: z
      .enum(['sample', 'ledoit-wolf', 'ledoit-wolf-constant-correlation', 'ewma'])
      .default('sample')
      .describe('Covariance estimator for return histories. sample divides by T−1.'),
    ewmaDecay: z.number().gt(0).lt(1).optional().describe('EWMA decay λ (0.94 is the usual daily choice, common practice).'),
    factorModel: z.enum(['none', 'regression', 'pca']).default('none').describe('Estimate a factor model from the history.'),
    pcaFactors: z.int().min(1).max(LIMITS.maxFactors).optional().describe('Number of principal components for factorModel "pca".'),
    repairCovariance: z
      .boolean()
      .default(false)
      .describe('Opt in to replacing a covariance that is not positive semi-definite by the nearest PSD matrix (with a warning).'),
  })
  .describe('How inputs are estimated from a return history.');

export const ResamplingSchema = z
  .strictObject({
    draws: z.int().min(1).max(LIMITS.maxDraws).default(500).describe('Number of resampled input sets.'),
    scheme: z
      .enum(['stationary-bootstrap', 'iid-bootstrap', 'parametric'])
      .optional()
      .describe('Default: stationary-bootstrap for return histories, parametric for moments.'),
    meanBlockLength: z
      .union([z.number().min(1), z.literal('auto')])
      .optional()
      .describe('Mean block length of the stationary bootstrap, in periods; "auto" (default) uses Politis & White (2004) with the 2009 correction.'),
    seed: z.union([z.string().max(200), z.int()]).default('wobble').describe('Seed of the random streams; same seed, same report.'),
  })
  .describe('How the inputs are resampled.');

export const ViewsSchema = z
  .strictObject({
    mean: vector.describe('Per-period return forecasts that replace the estimated means.'),
    stdErr: z.array(varianceValue).describe('Per-period standard errors of those forecasts; their noise in resampling.'),
  })
  .describe('Return forecasts with their own uncertainty.');

/** The six methods, in report order. Adding a method starts here (DEVELOPERS.md). */
export const METHOD_NAMES = ['mean-variance', 'minimum-variance', 'kelly', 'risk-parity', 'equal-weight', 'inverse-volatility'] as const;

export const PolicyRuleSchema = z.strictObject({
  id: z.string().min(1).optional().describe('Rule id shown in the verdict (default: metric).'),
  metric: z
    .enum([
      'turnover-from-proposal.p50',
      'turnover-from-proposal.mean',
      'outside-band-share',
      'volatility-band-width',
      'mean-driven-share',
      'max-weight-sd',
      'forecast-break-even-std-errs',
    ])
    .describe(
      "The report figure the rule constrains. forecast-break-even-std-errs is the smallest break-even forecast shift of any asset, in standard errors of its forecast (exact, so its stdErr is 0; use it with min).",
    ),
  method: z
    .enum(METHOD_NAMES)
    .optional()
    .describe("Which method's figures (default: the proposal's method)."),
  max: z.number().optional().describe('Fails when the lower confidence bound of the figure (verdict rule `bound`) is above this.'),
  min: z.number().optional().describe('Fails when the upper confidence bound of the figure (verdict rule `bound`) is below this.'),
  maxIncrease: z.number().optional().describe('Largest allowed increase over the baseline (same metric, same seed): fails when the lower confidence bound of the increase (verdict rule `bound`) is above this.'),
});

export const PolicySchema = z
  .strictObject({
    confidence: z.number().gt(0.5).lt(1).default(0.95).describe('A rule fails only when its one-sided confidence bound at this confidence (verdict rule `bound`) is beyond its threshold.'),
    rules: z.array(PolicyRuleSchema).min(1).describe('Every rule is judged and reported.'),
  })
  .describe('Gate rules for `check`.');

export const ProposalSchema = z
  .strictObject({
    assets: z.array(id).min(LIMITS.minAssets).max(LIMITS.maxAssets).describe('Unique asset ids.'),
    weights: weightVector.describe('The proposed allocation, fractions in the order of `assets`.'),
    inputs: InputsSchema,
    views: ViewsSchema.optional(),
    method: MethodSpecSchema.describe('How the proposal was built.'),
    compare: z.array(MethodSpecSchema).max(12).optional().describe('Methods to re-optimise as well (default: all six with defaults).'),
    constraints: ConstraintsSchema.optional(),
    estimation: EstimationSchema.optional(),
    resampling: ResamplingSchema.optional(),
    riskFreeRate: weightValue.default(0).describe('Annual risk-free rate (default 0).'),
    policy: PolicySchema.optional(),
  })
  .describe('A proposed allocation with the inputs it was built from.');

export type ProposalInput = z.input<typeof ProposalSchema>;
export type Proposal = z.output<typeof ProposalSchema>;
export type MethodSpec = z.output<typeof MethodSpecSchema>;
export type MethodName = MethodSpec['name'];
export type Policy = z.output<typeof PolicySchema>;
export type PolicyRule = z.output<typeof PolicyRuleSchema>;
export type HistoryInputs = z.output<typeof HistoryInputsSchema>;
export type MomentsInputs = z.output<typeof MomentsInputsSchema>;
export type FactorInputs = z.output<typeof FactorInputsSchema>;

