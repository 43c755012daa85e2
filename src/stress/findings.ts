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
  /** A break-even forecast shift below this many standard errors: the position hinges on a change well within the forecast's own noise. */
  breakEvenStdErrs: 1,
  /** At most this many break-even findings (the smallest first). */
  breakEvenFindings: 5,
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
    const bestErr = best.certaintyEquivalentLoss.stdErr;
    const ownErr = own.certaintyEquivalentLoss.stdErr;
    // A finding needs both errors: without them the difference cannot be told from noise.
    const se = bestErr === null || ownErr === null ? Number.NaN : Math.hypot(bestErr, ownErr);
    if (own.certaintyEquivalentLoss.mean - best.certaintyEquivalentLoss.mean > 2 * se) {
      out.push({
        code: 'simpler-method-loses-less',
        method: best.method.name,
        message: `Scored at the base inputs, ${best.method.name} re-optimised on resampled inputs loses ${pct(best.certaintyEquivalentLoss.mean)} a year of certainty-equivalent return on average, against ${pct(own.certaintyEquivalentLoss.mean)} for ${own.method.name}: at this sample size, estimation error costs ${own.method.name} more than ${best.method.name} gives up by ignoring the return forecasts.`,
      });
    }
  }
  if (own?.forecastSensitivity) out.push(...breakEvenFindings(own.method.name, own.forecastSensitivity));
  // The headline lives in report.summary (headline.ts); here, the findings a reviewer acts on come before the descriptive ones.
  const order = ['simpler-method-loses-less', 'forecast-break-even', 'forecast-break-even-robust', 'weight-driven-by-mean-forecast', 'weight-unstable', 'position-rarely-selected', 'proposal-outside-band', 'turnover', 'proposal-volatility-band'];
  return out.map((f, i) => [f, i] as const).sort(([a, i], [b, j]) => order.indexOf(a.code) - order.indexOf(b.code) || i - j).map(([f]) => f);
}

type SensitivityRow = NonNullable<MethodReport['forecastSensitivity']>[number];
type Change = SensitivityRow['changesUp'][number];

/** Percent with two decimals below 1 % (break-even shifts are often small), one above. */
const pctFine = (x: number): string => `${(100 * x).toFixed(Math.abs(x) < 0.01 ? 2 : 1)}%`;
const stdErrs = (x: number): string => x.toFixed(x < 1 ? 2 : 1);

/** What a pattern change does, in words; `self` is the asset whose forecast moves. */
export function describePatternChange(c: Change, self: string): string {
  const who = c.kind === 'asset' ? (c.name === self ? 'it' : c.name) : `the ${c.name} group`;
  if (c.kind === 'group') {
    if (c.to === 'upper') return `takes ${who} to its maximum of ${pct(c.limit)}`;
    if (c.to === 'lower') return `takes ${who} down to its minimum of ${pct(c.limit)}`;
    return c.from === 'upper' ? `takes ${who} below its maximum of ${pct(c.limit)}` : `lifts ${who} above its minimum of ${pct(c.limit)}`;
  }
  if (c.to === 'lower') return c.limit === 0 ? `takes ${who} out of the allocation` : `takes ${who} down to its lower bound of ${pct(c.limit)}`;
  if (c.to === 'upper') return `takes ${who} up to its cap of ${pct(c.limit)}`;
  if (c.from === 'lower') return c.limit === 0 ? `brings ${who} into the allocation` : `lifts ${who} off its lower bound of ${pct(c.limit)}`;
  return `takes ${who} below its cap of ${pct(c.limit)}`;
}

/**
 * Ranked break-even findings for the proposal's method: each asset whose smaller break-even is
 * under FINDING_THRESHOLDS.breakEvenStdErrs standard errors (smallest first, at most
 * FINDING_THRESHOLDS.breakEvenFindings), or one sentence saying how robust the pattern is.
 */
export function breakEvenFindings(method: string, rows: readonly SensitivityRow[]): Finding[] {
  const candidates: { row: SensitivityRow; up: boolean; inStdErrs: number; shift: number; changes: readonly Change[]; turnover: number }[] = [];
  for (const row of rows) {
    const sides = [
      { up: true, inStdErrs: row.shiftUpStdErrs, shift: row.shiftUp, changes: row.changesUp, turnover: row.turnoverPerStdErr.up },
      { up: false, inStdErrs: row.shiftDownStdErrs, shift: row.shiftDown, changes: row.changesDown, turnover: row.turnoverPerStdErr.down },
    ].filter((x): x is typeof x & { inStdErrs: number; shift: number } => x.inStdErrs !== null && x.shift !== null);
    if (sides.length === 0) continue;
    const best = sides.reduce((a, b) => (b.inStdErrs < a.inStdErrs ? b : a));
    candidates.push({ row, ...best });
  }
  candidates.sort((a, b) => a.inStdErrs - b.inStdErrs || a.row.asset.localeCompare(b.row.asset));
  if (candidates.length === 0) return [];
  const fragile = candidates.filter((c) => c.inStdErrs < FINDING_THRESHOLDS.breakEvenStdErrs).slice(0, FINDING_THRESHOLDS.breakEvenFindings);
  if (fragile.length === 0) {
    const c = candidates[0];
    return [
      {
        code: 'forecast-break-even-robust',
        asset: c.row.asset,
        method,
        message: `${method}: no position changes unless a return forecast moves by at least ${stdErrs(c.inStdErrs)} standard errors (smallest: ${c.row.asset}, ${pctFine(c.shift)} a year ${c.up ? 'up' : 'down'}).`,
      },
    ];
  }
  return fragile.map((c) => ({
    code: 'forecast-break-even',
    asset: c.row.asset,
    method,
    message:
      `${c.row.asset}: its forecast ${c.up ? 'rising' : 'falling'} by ${stdErrs(c.inStdErrs)} standard errors (${pctFine(c.shift)} a year) ` +
      `${c.changes.map((x) => describePatternChange(x, c.row.asset)).join(' and ')}; a one-standard-error ${c.up ? 'rise' : 'fall'} would trade ${pct(c.turnover)} of the portfolio under ${method}.`,
  }));
}
