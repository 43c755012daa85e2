import { KELLY_SOLVES_PER_ASSET } from '../optimize/forecast-sensitivity-kelly.js';
import type { MethodSpec } from '../schema/proposal.js';
import { solveOps, usesMean, type WorkShape } from './work-estimate.js';

/**
 * Work of the break-even forecast table (src/stress/forecast-sensitivity.ts), in the units of the
 * work estimate (leading-order floating-point operations), counted once per request (it needs no
 * draws). Kept apart from the per-draw model so either can change without the other.
 *
 * Mean-variance (and Kelly's quadratic form): one factorisation of the reduced Hessian (counted
 * as one solve), then per asset one solve with the factor (N² dense, N·K factor) and one product
 * with H (N² dense, N·K factor); the turnover at ±1 standard error is linear on the base pattern
 * and needs a warm-started re-solve only where a breakpoint lies within one standard error —
 * counted here at its bound, two per asset.
 * Scenario Kelly: at most KELLY_SOLVES_PER_ASSET warm-started solves per asset (the bracketing
 * search's bound), each counted as one Kelly solve.
 */
export function forecastSensitivityOps(methods: readonly MethodSpec[], s: WorkShape): number {
  const n = s.n;
  let total = 0;
  for (const m of methods) {
    if (!usesMean(m)) continue;
    const solve = solveOps(m, s);
    if (m.name === 'kelly' && s.scenarioKelly) {
      total += n * KELLY_SOLVES_PER_ASSET * solve;
      continue;
    }
    const perAsset = s.factors > 0 ? 2 * n * s.factors : 2 * n * n;
    total += solve + n * perAsset + 2 * n * solve;
  }
  return total;
}
