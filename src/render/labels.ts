import type { PolicyRule } from '../schema/proposal.js';

/**
 * One name per figure. Each figure has one JSON field (camelCase), at most one policy metric
 * (kebab-case of the same words) and one label (the same words in sentence case), used by every
 * renderer and the README's table. The one documented exception: a Monte Carlo standard error is
 * `stdErr` in JSON and "± se" in labels and prose.
 */
export interface Figure {
  /** Key into LABELS. */
  readonly key: keyof typeof LABELS;
  /** Where the figure sits in the report JSON. */
  readonly json: string;
  /** The policy metric that reads it, if any. */
  readonly metric: PolicyRule['metric'] | null;
}

export const LABELS = {
  turnoverFromProposal: 'Turnover from proposal',
  turnoverFromProposalP50: 'Turnover from proposal, p50',
  turnoverFromProposalMean: 'Turnover from proposal, mean',
  turnoverFromBase: 'Turnover from base',
  outsideBandShare: 'Outside band share',
  volatilityBandWidth: 'Volatility band width',
  meanDrivenShare: 'Mean-driven share',
  maxWeightSd: 'Max weight sd',
  certaintyEquivalentLoss: 'Certainty-equivalent loss',
  meanOfOptima: 'Mean of optima',
  selectionRate: 'Selection rate',
  proposalPercentile: 'Proposal percentile',
  bandStdErr: 'Band ± se',
  volatility: 'Volatility',
  statedOptimumTurnover: 'Turnover to stated optimum',
  forecastBreakEven: 'Forecast break-even in standard errors',
  stdErr: '± se',
} as const;

/** Column headings of the per-method stability table, shared by the HTML and markdown reports. */
export const METHOD_STABILITY_COLUMNS: readonly string[] = [
  'Method',
  `${LABELS.turnoverFromProposalP50} ± se`,
  `${LABELS.turnoverFromProposal}, p05 – p95`,
  `${LABELS.turnoverFromBase}, p50 ± se`,
  `${LABELS.volatility}, p05 – p95`,
  `${LABELS.certaintyEquivalentLoss}, mean ± se`,
  `${LABELS.meanDrivenShare} ± se`,
  `${LABELS.outsideBandShare} ± se`,
  `${LABELS.maxWeightSd} ± se`,
  'Failed draws',
];

export const FIGURES: readonly Figure[] = [
  { key: 'turnoverFromProposalP50', json: 'methods[k].turnoverFromProposal.p50 (± p50StdErr)', metric: 'turnover-from-proposal.p50' },
  { key: 'turnoverFromProposalMean', json: 'methods[k].turnoverFromProposal.mean (± stdErr)', metric: 'turnover-from-proposal.mean' },
  { key: 'turnoverFromBase', json: 'methods[k].turnoverFromBase', metric: null },
  { key: 'outsideBandShare', json: 'methods[k].outsideBandShare', metric: 'outside-band-share' },
  { key: 'volatilityBandWidth', json: 'proposal.volatilityBandWidth', metric: 'volatility-band-width' },
  { key: 'meanDrivenShare', json: 'methods[k].meanDrivenShare.overall (± stdErr)', metric: 'mean-driven-share' },
  { key: 'maxWeightSd', json: 'methods[k].maxWeightSd', metric: 'max-weight-sd' },
  { key: 'certaintyEquivalentLoss', json: 'methods[k].certaintyEquivalentLoss', metric: null },
  { key: 'meanOfOptima', json: 'methods[k].meanOfOptima', metric: null },
  { key: 'selectionRate', json: 'methods[k].weights[i].selectionRate', metric: null },
  { key: 'proposalPercentile', json: 'methods[k].weights[i].proposalPercentile', metric: null },
  { key: 'bandStdErr', json: 'methods[k].weights[i].bandStdErr', metric: null },
  { key: 'volatility', json: 'methods[k].volatility, proposal.volatility', metric: null },
  { key: 'statedOptimumTurnover', json: 'summary.statedOptimumTurnover', metric: null },
  { key: 'forecastBreakEven', json: 'summary.forecastBreakEven.stdErrs (min of methods[k].forecastSensitivity[].shiftUpStdErrs, shiftDownStdErrs)', metric: 'forecast-break-even-std-errs' },
  { key: 'stdErr', json: '…stdErr', metric: null },
];
