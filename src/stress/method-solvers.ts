import { equalWeight } from '../optimize/equal-weight.js';
import { inverseVolatility } from '../optimize/inverse-volatility.js';
import { kelly, KellyWorkspace } from '../optimize/kelly.js';
import { meanVariance } from '../optimize/mean-variance.js';
import { minimumVariance } from '../optimize/minimum-variance.js';
import { QpWorkspace } from '../optimize/qp.js';
import { createRiskParityWorkspace, solveRiskParity } from '../optimize/risk-parity.js';
import type { MethodResult } from '../optimize/types.js';
import type { MethodSpec } from '../schema/proposal.js';
import type { MethodSolver, SolveInputs } from './method-interface.js';
import { riskAversionOf, type PreparedProblem } from './problem.js';
import { usesMean } from '../cost/work-model.js';

export interface SolverContext {
  /** Kelly over scenario rows (bootstrap of a history); otherwise its quadratic approximation. */
  readonly scenarioKelly: boolean;
}

/**
 * Binds a method spec to the request's constraints and reusable workspaces, so the stress loop
 * can call `solve` thousands of times without re-allocating solver buffers.
 */
export function createMethodSolver(spec: MethodSpec, problem: PreparedProblem, context: SolverContext): MethodSolver {
  const constraints = problem.constraints;
  const assetNames = problem.assets;
  const mean = usesMean(spec);
  switch (spec.name) {
    case 'mean-variance': {
      const workspace = new QpWorkspace();
      const riskAversion = riskAversionOf(spec);
      return {
        usesMean: mean,
        solve: (x: SolveInputs, warmStart?: unknown) => meanVariance(x.riskModel, x.mean, constraints, riskAversion, { warmStart, workspace }),
      };
    }
    case 'minimum-variance': {
      const workspace = new QpWorkspace();
      return { usesMean: false, solve: (x, warmStart) => minimumVariance(x.riskModel, constraints, { warmStart, workspace }) };
    }
    case 'kelly': {
      const fraction = spec.fraction ?? 1;
      const workspace = new QpWorkspace();
      if (!context.scenarioKelly) {
        // Continuous-time approximation: CRRA γ = 1/f behaves like mean-variance with λ = γ (the plan adds a warning).
        return {
          usesMean: true,
          solve: (x, warmStart) => meanVariance(x.riskModel, x.mean, constraints, 1 / fraction, { warmStart, workspace }),
        };
      }
      const kellyWorkspace = new KellyWorkspace();
      return {
        usesMean: true,
        solve: (x, warmStart) => {
          if (!x.scenarios || !x.scenarioCount) throw new Error('scenario Kelly needs scenario rows');
          return kelly(x.scenarios, x.scenarioCount, constraints, { fraction, warmStart, workspace, kellyWorkspace, assetNames });
        },
      };
    }
    case 'risk-parity': {
      const workspace = createRiskParityWorkspace(problem.riskModel);
      return {
        usesMean: false,
        solve: (x, warmStart) => solveRiskParity(x.riskModel, { budgets: spec.budgets, warmStart, constraints, assetNames, workspace }),
      };
    }
    case 'equal-weight':
      return { usesMean: false, solve: () => equalWeight(problem.n, { constraints, assetNames }) };
    case 'inverse-volatility':
      return { usesMean: false, solve: (x) => inverseVolatility(x.riskModel, { constraints, assetNames }) };
  }
}

/**
 * The mean-variance optimum at the base inputs with the scoring risk aversion, against which every
 * method's certainty-equivalent loss is measured. Reuses the base result of a listed
 * mean-variance method with that risk aversion, else solves it.
 */
export function solveReferenceMeanVariance(problem: PreparedProblem, methods: readonly MethodSpec[], base: readonly MethodResult[]): Float64Array {
  const ra = problem.scoringRiskAversion;
  const index = methods.findIndex((m) => m.name === 'mean-variance' && riskAversionOf(m).factor === ra.factor && riskAversionOf(m).specific === ra.specific);
  if (index >= 0) return base[index].weights;
  const riskAversion = problem.riskModel.kind === 'factor' ? ra : ra.factor;
  return meanVariance(problem.riskModel, problem.mean, problem.constraints, riskAversion).weights;
}
