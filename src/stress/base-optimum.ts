import { annualiseMean, annualiseVolatility } from '../estimate/annualise.js';
import type { RiskModel } from '../linalg/risk-model.js';
import { decomposeRisk } from '../optimize/risk-decomposition.js';
import type { MethodResult } from '../optimize/types.js';
import type { BaseOptimum } from '../schema/report.js';

/** Rounds away floating-point dust so reports read cleanly and stay byte-stable (12 significant digits). */
export function clean(x: number): number {
  if (!Number.isFinite(x)) return x;
  if (Math.abs(x) < 1e-15) return 0;
  return Number(x.toPrecision(12));
}

export function cleanArray(a: ArrayLike<number>): number[] {
  return Array.from(a, clean);
}

/**
 * A zero-variance portfolio (e.g. a singular covariance's null direction, or only riskless assets)
 * has no risk to share out: its Euler contributions w_i(Σw)_i / wᵀΣw are 0/0. They are reported as
 * 0 (no asset contributes risk) and its diversification ratio as 1, with a warning, so that the
 * report keeps the numbers its schema promises.
 */
function zeroRiskFallback(x: number, fallback: number): number {
  return Number.isFinite(x) ? clean(x) : fallback;
}

/** The report block for one method's optimum on the base inputs (annualised figures). */
export function describeOptimum(result: MethodResult, mean: Float64Array, riskModel: RiskModel, periodsPerYear: number): BaseOptimum {
  const w = result.weights;
  const risk = decomposeRisk(riskModel, w, { effectiveBets: false });
  let expected = 0;
  for (let i = 0; i < w.length; i++) expected += mean[i] * w[i];
  const out: BaseOptimum = {
    weights: cleanArray(w),
    expectedReturn: clean(annualiseMean(expected, periodsPerYear)),
    volatility: clean(annualiseVolatility(risk.volatility, periodsPerYear)),
    riskContributions: Array.from(risk.contributionShares, (x) => zeroRiskFallback(x, 0)),
    diversificationRatio: zeroRiskFallback(risk.diversificationRatio, 1),
    effectiveHoldings: clean(risk.effectiveHoldings),
    diagnostics: {
      solver: result.diagnostics.solver,
      iterations: result.diagnostics.iterations,
      converged: result.diagnostics.converged,
      kktResidual: Number(result.diagnostics.kktResidual.toPrecision(3)),
    },
    warnings: [...result.warnings],
  };
  if (!(risk.volatility > 0)) {
    out.warnings.push({
      code: 'zero-variance-portfolio',
      message: 'This portfolio has zero variance under the inputs (a riskless or perfectly hedged combination), so risk contributions are reported as 0 and the diversification ratio as 1.',
    });
  }
  if (risk.factorSplit) {
    out.factorRiskShare = { factor: clean(risk.factorSplit.factorShare), specific: clean(1 - risk.factorSplit.factorShare) };
  }
  return out;
}
