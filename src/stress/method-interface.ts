import type { RiskModel } from '../linalg/risk-model.js';
import type { MethodResult } from '../optimize/types.js';

/** The inputs of one solve: per-period means, a risk model, and (for scenario-based Kelly) return rows. */
export interface SolveInputs {
  readonly mean: Float64Array;
  readonly riskModel: RiskModel;
  /** S×N per-period simple returns (row-major), when the method uses scenarios. */
  readonly scenarios?: Float64Array;
  readonly scenarioCount?: number;
}

/** One method, ready to be solved repeatedly on nearby inputs (the stress loop). */
export interface MethodSolver {
  /** Whether the optimum depends on the means: false methods skip the mean-only channel and report a mean-driven share of 0. */
  readonly usesMean: boolean;
  /** Solves; `warmStart` is a previous result's warm start for this method. Throws OptimizationError when there is no answer. */
  solve(inputs: SolveInputs, warmStart?: unknown): MethodResult;
}
