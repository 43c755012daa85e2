import { KELLY_SOLVES_PER_ASSET } from '../optimize/forecast-sensitivity-kelly.js';
import type { MethodSpec } from '../schema/proposal.js';
import type { RequestShape } from '../cost/request-shape.js';
import { solveUnits, usesMean } from '../cost/work-model.js';

/**
 * Work of the break-even forecast table (src/stress/forecast-sensitivity.ts), in the units of the
 * work estimate (leading-order floating-point operations), counted once per request (it needs no
 * draws). Kept apart from the per-draw model so either can change without the other.
 *
 * Mean-variance (and Kelly's quadratic form): one factorisation of the reduced Hessian (counted
 * as one solve); per asset, one solve with that factor and one product with H for the shifts
 * (each at most N² dense, N·K with a factor model, since |F| ≤ N), then the exact turnover at ±1
 * standard error: PATH_SEGMENTS breakpoint segments each way, each one more solve with the base
 * factor plus a product (forecast-sensitivity-path.ts). Measured on the bench problems: 3.4–3.8
 * segments per direction on average; rare degenerate breakpoints fall back to a warm re-solve and
 * are not counted.
 * Scenario Kelly: at most KELLY_SOLVES_PER_ASSET warm-started solves per asset (the bracketing
 * search's bound), each counted as one Kelly solve.
 */
export const PATH_SEGMENTS = 4;

export function forecastSensitivityOps(methods: readonly MethodSpec[], s: RequestShape): number {
  const n = s.n;
  let total = 0;
  for (const m of methods) {
    if (!usesMean(m)) continue;
    const solve = solveUnits(m, s);
    if (m.name === 'kelly' && s.scenarioKelly) {
      total += n * KELLY_SOLVES_PER_ASSET * solve;
      continue;
    }
    const perSolve = s.factors > 0 ? n * s.factors : n * n;
    total += solve + n * (3 + 2 * PATH_SEGMENTS * 3) * perSolve;
  }
  return total;
}
