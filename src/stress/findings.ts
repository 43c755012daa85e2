import type { MethodReport, Report } from '../schema/report.js';

type Finding = Report['findings'][number];

/** Methods whose weights do not use the means. */
export const MEAN_FREE_METHODS: ReadonlySet<string> = new Set(['minimum-variance', 'risk-parity', 'equal-weight', 'inverse-volatility']);

const pct = (x: number): string => `${(100 * x).toFixed(1)}%`;

/** Rules of thumb for what counts as notable (common practice, chosen by us; stated in the README). */
export const FINDING_THRESHOLDS = {
  /** A weight whose p05–p95 band is wider than this is called unstable. */
  wideBand: 0.1,
  /** Mean-driven share above this: the re-optimised weights "depend mainly on the return forecasts". */
  meanDriven: 0.7,
  /** Held (≥ 1 bp) in fewer than this share of draws although the proposal holds it. */
  rarelySelected: 0.5,
};

/**
 * Plain-language findings for a reviewer, from the proposal's own method first, then the
 * certainty-equivalent comparison of methods.
 */
export function findingsFor(assets: readonly string[], proposalWeights: readonly number[], methods: readonly MethodReport[], proposalVolatility: Report['proposal']['volatility']): Finding[] {
  const out: Finding[] = [];
  const own = methods[0];
  if (own) {
    const name = own.method.name;
    own.weights.forEach((w, i) => {
      // At most one finding per asset, the most telling first.
      const width = w.p95 - w.p05;
      const asset = assets[i];
      const share = own.meanDrivenShare.perAsset[i];
      const held = proposalWeights[i] >= 1e-4;
      const band = `re-optimised weights range ${pct(w.p05)}–${pct(w.p95)} (p05–p95)`;
      const selection = held && w.selectionRate < FINDING_THRESHOLDS.rarelySelected ? `; it is held in only ${pct(w.selectionRate)} of draws` : '';
      if (width > FINDING_THRESHOLDS.wideBand && share > FINDING_THRESHOLDS.meanDriven) {
        out.push({
          code: 'weight-driven-by-mean-forecast',
          asset,
          method: name,
          // About the re-optimised weights, not the proposal: a proposal (say 1/N) may depend on no forecast at all.
          message: `The re-optimised weights of ${asset} depend mainly on the return forecasts: ${band}, and ${pct(share)} of that variability comes from noise in the means rather than in the covariance${selection}; the proposed ${pct(proposalWeights[i])} sits at percentile ${w.proposalPercentile.toFixed(0)} of them.`,
        });
      } else if (width > FINDING_THRESHOLDS.wideBand) {
        out.push({ code: 'weight-unstable', asset, method: name, message: `The re-optimised ${name} weights of ${asset} are unstable: ${band}${selection}; the proposed ${pct(proposalWeights[i])} sits at percentile ${w.proposalPercentile.toFixed(0)} of them.` });
      } else if (selection) {
        out.push({ code: 'position-rarely-selected', asset, method: name, message: `${asset} (proposed ${pct(proposalWeights[i])})${selection.replace('; it', '')}.` });
      } else if (w.proposalPercentile < 5 || w.proposalPercentile > 95) {
        out.push({
          code: 'proposal-outside-band',
          asset,
          method: name,
          message: `The proposed weight of ${asset} (${pct(proposalWeights[i])}) lies outside the p05–p95 band of ${name} weights (${pct(w.p05)}–${pct(w.p95)}).`,
        });
      }
    });
    out.push({
      code: 'turnover',
      method: name,
      message: `Re-optimising ${name} on resampled inputs would trade a median ${pct(own.turnoverFromProposal.p50)} of the portfolio (one-way turnover from the proposal; p95 ${pct(own.turnoverFromProposal.p95)}).`,
    });
  }
  out.push({
    code: 'proposal-volatility-band',
    message: `The proposal's annualised volatility is ${pct(proposalVolatility.base)} on the base inputs and ranges ${pct(proposalVolatility.p05)}–${pct(proposalVolatility.p95)} (p05–p95) under resampled covariances.`,
  });
  // Which method loses least to estimation error, scored at the base inputs.
  // Only methods that ignore the return forecasts count as "simpler" here.
  const simpler = methods.filter((m) => MEAN_FREE_METHODS.has(m.method.name) && Number.isFinite(m.certaintyEquivalentLoss.mean));
  if (own && !MEAN_FREE_METHODS.has(own.method.name) && simpler.length > 0) {
    const best = simpler.reduce((a, b) => (b.certaintyEquivalentLoss.mean < a.certaintyEquivalentLoss.mean ? b : a));
    const se = Math.hypot(best.certaintyEquivalentLoss.stdErr, own.certaintyEquivalentLoss.stdErr);
    if (own.certaintyEquivalentLoss.mean - best.certaintyEquivalentLoss.mean > 2 * se) {
      out.push({
        code: 'simpler-method-loses-less',
        method: best.method.name,
        message: `Scored at the base inputs, ${best.method.name} re-optimised on resampled inputs loses ${pct(best.certaintyEquivalentLoss.mean)} a year of certainty-equivalent return on average, against ${pct(own.certaintyEquivalentLoss.mean)} for ${own.method.name}: at this sample size, estimation error costs ${own.method.name} more than ${best.method.name} gives up by ignoring the return forecasts.`,
      });
    }
  }
  // Headline first, then the findings a reviewer acts on before the descriptive ones.
  if (own) {
    const fragile = out.filter((f) => f.code === 'weight-driven-by-mean-forecast').length;
    out.unshift({
      code: 'summary',
      method: own.method.name,
      message: `${own.method.name}: ${fragile} of ${assets.length} weights depend mainly on their return forecasts; overall ${pct(own.meanDrivenShare.overall)} of the weight instability comes from noise in the means, and re-optimising on resampled inputs would trade a median ${pct(own.turnoverFromProposal.p50)} of the portfolio.`,
    });
  }
  const order = ['summary', 'simpler-method-loses-less', 'weight-driven-by-mean-forecast', 'weight-unstable', 'position-rarely-selected', 'proposal-outside-band', 'turnover', 'proposal-volatility-band'];
  return out.map((f, i) => [f, i] as const).sort(([a, i], [b, j]) => order.indexOf(a.code) - order.indexOf(b.code) || i - j).map(([f]) => f);
}
