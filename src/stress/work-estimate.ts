import type { MethodSpec } from '../schema/proposal.js';

/**
 * A count-based estimate of the floating-point work of a stress request, so the service can
 * refuse what it cannot finish instead of being killed mid-request (clocks stand still during
 * computation in the Workers runtime). Deliberately coarse: leading-order operation counts of
 * each step, calibrated against nothing more than their order of magnitude.
 */
export interface WorkShape {
  readonly n: number;
  /** History rows (0 for moments inputs). */
  readonly rows: number;
  /** Factors (0 for a dense covariance). */
  readonly factors: number;
  readonly pca: boolean;
  readonly scenarioKelly: boolean;
}

/** Operations to re-estimate the inputs for one draw. */
export function estimationOps(s: WorkShape): number {
  if (s.rows === 0) return s.factors > 0 ? s.factors ** 3 + s.n : s.n ** 3 / 3 + s.n ** 2;
  if (s.pca) return s.rows * s.n ** 2 + 10 * s.n ** 3;
  if (s.factors > 0) return s.rows * s.n * s.factors + s.factors ** 3;
  return s.rows * s.n ** 2;
}

/** Operations for one solve of a method, warm-started. */
export function solveOps(spec: MethodSpec, s: WorkShape): number {
  const n = s.n;
  // Factor QPs: Woodbury updates cost O(N·K²) per active-set change, and warm starts still make a
  // few dozen changes at large N (measured: ~3× the dense rate per counted operation at N = 2000, K = 8).
  const qp = s.factors > 0 ? 60 * n * s.factors ** 2 : n ** 3 / 3 + 20 * n ** 2;
  switch (spec.name) {
    case 'mean-variance':
    case 'minimum-variance':
      return qp;
    case 'kelly':
      // Newton steps, each forming the scenario Hessian (S·N²) and solving a dense QP.
      return s.scenarioKelly ? 12 * (s.rows * n ** 2 + n ** 3 / 3 + 20 * n ** 2) : qp;
    case 'risk-parity':
      return s.factors > 0 ? 10 * n * s.factors ** 2 : n <= 100 ? 8 * (n ** 3 / 3) : 100 * n ** 2;
    case 'equal-weight':
    case 'inverse-volatility':
      return n * (s.factors + 1);
  }
}

export function usesMean(spec: MethodSpec): boolean {
  return spec.name === 'mean-variance' || spec.name === 'kelly';
}

/** Total estimated operations: draws × (estimation + every solve in every channel it needs). */
export function estimateWork(methods: readonly MethodSpec[], draws: number, s: WorkShape): number {
  let perDraw = estimationOps(s);
  for (const m of methods) perDraw += (usesMean(m) ? 3 : 1) * solveOps(m, s);
  return draws * perDraw;
}
