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
    riskContributions: cleanArray(risk.contributionShares),
    diversificationRatio: clean(risk.diversificationRatio),
    effectiveHoldings: clean(risk.effectiveHoldings),
    diagnostics: {
      solver: result.diagnostics.solver,
      iterations: result.diagnostics.iterations,
      converged: result.diagnostics.converged,
      kktResidual: Number(result.diagnostics.kktResidual.toPrecision(3)),
    },
    warnings: [...result.warnings],
  };
  if (risk.factorSplit) {
    out.factorRiskShare = { factor: clean(risk.factorSplit.factorShare), specific: clean(1 - risk.factorSplit.factorShare) };
  }
  return out;
}
