import type { StressPlan } from './engine.js';
import { forecastSensitivityTables, type ForecastSensitivityTables } from './forecast-sensitivity.js';

/**
 * The parts of a report that depend on the plan alone, not on the draws, computed once per plan.
 * A thread that finishes its own range of draws early computes them while it waits for the other
 * ranges (src/cli/threads.ts), so the report after the merge only assembles them. A pure function
 * of the plan, so computing it earlier changes no byte.
 */
const forecastSensitivityByPlan = new WeakMap<StressPlan, ForecastSensitivityTables>();

export function planForecastSensitivity(plan: StressPlan): ForecastSensitivityTables {
  let tables = forecastSensitivityByPlan.get(plan);
  if (!tables) {
    tables = forecastSensitivityTables(plan.problem, plan.base, plan.baseScenarios, plan.workUnits, plan.maxWorkUnits);
    forecastSensitivityByPlan.set(plan, tables);
  }
  return tables;
}
