import { assetVariances } from '../linalg/risk-ops.js';
import { NEAR_ZERO_VARIANCE_RATIO, nearZeroVarianceAssets } from '../optimize/degenerate.js';
import type { Warning } from '../schema/validate.js';
import type { PreparedProblem } from './problem.js';

/**
 * Warnings for inputs that are valid but degenerate, named before any method uses them:
 * - 'near-zero-variance': assets whose base variance is below NEAR_ZERO_VARIANCE_RATIO × the median
 *   (see src/optimize/degenerate.ts); inverse volatility and risk parity refuse such inputs.
 * - 'few-observations': fewer observations than assets with a plain sample covariance (history) or
 *   a moments covariance: the estimate is singular (rank ≤ T − 1) and so is every resampled one, so
 *   many optima are not unique and solves can fail. Ledoit–Wolf shrinkage or a factor model keeps
 *   the covariance well conditioned (Ledoit & Wolf 2004).
 */
export function degenerateInputWarnings(problem: PreparedProblem): Warning[] {
  const warnings: Warning[] = [];
  const n = problem.n;
  const variances = assetVariances(problem.riskModel, new Float64Array(n));
  const tiny = nearZeroVarianceAssets(variances, n);
  if (tiny.length > 0) {
    const names = tiny.map((i) => `${problem.assets[i]} (variance ${variances[i].toExponential(2)})`).join(', ');
    warnings.push({
      code: 'near-zero-variance',
      message:
        `${names}: variance below ${NEAR_ZERO_VARIANCE_RATIO} × the median asset variance, i.e. (almost) constant returns. ` +
        'Inverse volatility and risk parity cannot use such an asset and are refused or left out; minimum variance and ' +
        'mean-variance treat it as riskless. Check the data, or hold it outside the optimisation.',
    });
  }
  const t = problem.observations;
  const history = problem.history !== undefined;
  const copes = history ? problem.plan?.factorModel !== 'none' || problem.plan?.covariance.method === 'ledoit-wolf' : problem.riskModel.kind === 'factor';
  if (t < n && !copes) {
    warnings.push({
      code: 'few-observations',
      message:
        `${t} observations for ${n} assets: the ${history ? 'sample covariance' : 'covariance (and every resampled Wishart draw)'} is singular, ` +
        'so optima are not unique and some draws may fail. ' +
        (history
          ? "Ledoit–Wolf shrinkage (estimation.covariance: 'ledoit-wolf') or a factor model (estimation.factorModel) copes with fewer observations than assets."
          : 'A factor model (inputs.factorModel) or a return history with Ledoit–Wolf shrinkage copes with fewer observations than assets.'),
    });
  }
  return warnings;
}
