import type { MethodSpec } from '../schema/proposal.js';
import type { Job, RequestShape } from './request-shape.js';
import { BOOTSTRAP_REPLICATES } from '../statistics/draw-bootstrap.js';
import { MAX_CONTENDERS } from '../statistics/max-sd-error.js';

/**
 * One work model for everything a request does, in counted operations ("units": leading-order
 * floating-point operation counts of each step, plus memory passes where those dominate).
 * Calibrated against measured CPU on the worst shape of each kind (`npm run bench:limits`; the
 * table is in DEVELOPERS.md, "Request cost"): the worst measured rate is the ns per unit that
 * LIMITS.maxWorkUnits is sized with. Pure function of the request's shape: a refusal comes
 * before any matrix is touched and is the same on every run.
 */

/**
 * An N×N symmetric eigendecomposition (ml-matrix: Householder tridiagonalisation then implicit
 * QL, ~(4/3 + 6)·N³ flops with vectors, from Golub & Van Loan §8.3) plus its JS-array copies.
 */
export const EIGEN_UNITS_PER_N3 = 12;
/** Parsing and checking one caller number: JSON text, zod, copies into typed arrays (measured). */
export const UNITS_PER_INPUT_NUMBER = 60;
/** Largest N for which a non-PSD covariance gets its exact smallest eigenvalue in the error message. */
export const EXACT_EIGENVALUE_MAX_N = 300;
/** Power-iteration steps for the largest eigenvalue in the PSD test (src/schema/matrix-checks.ts). */
export const POWER_ITERATIONS = 30;
/**
 * Cost factor of group limits in an active-set solve: about (N + G) iterations, each testing every
 * group row (M memberships) and updating up to min(G, N) explicit rows against N free variables.
 * First fitted on the slowest overlapping-group shape (optimize, N = 300, 200 groups) and kept as
 * the base of the warm term below, which was fitted against it.
 */
export const GROUP_UNITS_FACTOR = 170;
/**
 * The same for a cold solve (a base optimum: phase one, then the working set built from nothing).
 * Re-measured 2026-12-02 (`npm run bench:limits`): the optimize with N = 300 and 200 overlapping
 * groups took 436 s of CPU at 6.98e9 units (62.5 ns/unit) while the dense N = 650 optimize ran at
 * 9.0 ns/unit on the machine that day (3.05 when the worst rate of 5.07 was fitted). Scaled to
 * that machine speed the group solve needs ~148 s, about 4.2× what the factor 170 charged, so a
 * cold solve pays 750: that shape is now priced 2.96e10 units and refused (413) instead of
 * running for minutes, and a cold group solve stays near the worst rate of the other shapes.
 */
export const COLD_GROUP_UNITS_FACTOR = 750;
/**
 * A warm-started solve (every per-draw solve starts from the base optimum's working set, which is
 * feasible for the draw: only H and c move) pays GROUP_UNITS_FACTOR's term times min(1, G / N)^2.
 * Measured per-draw solves with overlapping groups (noisy parametric draws, `npm run
 * bench:work-model`), as the share of the cold term each needs to stay at the cold worst rate:
 * N = 300 with 50 groups 0.022 (charged 0.028), N = 100 with 50 groups 0.023 (0.25), N = 30 with
 * 10 groups 0.066 (0.11), N = 30 with 50 groups 0.056 (1), N = 100 with 200 groups 0.30 (1: 534
 * iterations and 1.2 s per solve, as much as a cold solve). With one group against 30 assets the
 * term is a few hundred units. Not measured warm: N = 300 with 200 groups (a cold solve there is
 * 35 s; its stress is refused at one draw anyway, the cold base optima alone being 2·10¹⁰).
 */
export const WARM_GROUP_EXPONENT = 2;
/**
 * With groups, a warm solve on a singular covariance (RequestShape.singular, or singularDraws:
 * every draw singular) saves less than on a definite one: the per-draw solves took 1.3–2× the
 * iterations of the cold solve (a singular draw's optimum sits on another flat face) and 4–6× the
 * time of the same draws made definite (`npm run bench:singular`, 2026-12-02: parametric draws of
 * N = 200 with 50 groups and shorts, 437 ms per solve against 73 ms with 999 observations; N = 100
 * with 100 groups and shorts, 678 against 164 ms). Priced with the definite share min(1, G / N)²,
 * the worst warm solves ran at 1.4–2.4× the reference rate (the faster of the N = 650 optimize's
 * two readings in the same run), long-only or with shorts alike (observations 6, mean-variance
 * λ = 0.5): N = 300 with 100 groups and shorts 6.3 s per solve, 2707
 * iterations, 2.39×; with 150 groups and shorts 22.7 s, 3958 iterations, 2.33×; 150 groups
 * long-only 14.4 s, 1.66×; N = 400 with 50 groups and shorts 0.8 s, 1.78×; and a bootstrap of
 * T = 480 rows for N = 400 with 50 groups and shorts 0.97× (see singularDraws). So a singular warm solve
 * pays the share times SINGULAR_WARM_GROUP_MULTIPLIER (capped at the whole term), and the dense
 * singular term too (singularQpUnits: its iterations reach the cold solve's, up to 4.8·N). With
 * both, every measured warm solve with groups is at ≤ 0.61× the reference rate (the highest:
 * N = 550, 50 groups and shorts, 1.5 s, 2643 iterations; a riskless long-only portfolio, rank
 * N − 1, N = 550, 50 groups: 1.2 s, 0.44×).
 */
export const SINGULAR_WARM_GROUP_MULTIPLIER = 4;
/**
 * Fixed cost of any solve, whatever its size: the result object, KKT residual, diagnostics and
 * warnings (measured: 0.1–0.5 ms per solve at N ≤ 30, where the flop counts are a few thousand;
 * charged at 2e5 so the demo stays near 2 ns per unit).
 */
export const SOLVE_OVERHEAD_UNITS = 2e5;
/** Fixed cost of a draw: its random stream, resampled rows, accumulator records (measured ~1 ms a draw at N ≤ 30). */
export const DRAW_OVERHEAD_UNITS = 5e5;
/**
 * Newton steps of scenario Kelly. A cold solve (the base optimum) is charged 12; a warm-started
 * per-draw solve starts at the base optimum and took 1.0–1.4 steps on average (demo; 30 assets ×
 * 240 months), charged 3.
 */
export const KELLY_COLD_NEWTON_STEPS = 12;
export const KELLY_WARM_NEWTON_STEPS = 3;

/** Cold: a base optimum (first solve of a problem); warm: a per-draw re-solve from the base optimum's working set. */
export type SolveStart = 'cold' | 'warm';

/**
 * A cold dense active-set solve on a singular covariance (RequestShape.singular) runs part of its
 * way on a ridge (qp-hessian.ts, level 2): about as many iterations as on a definite Σ, but each
 * dearer (factor updates and refactorisations of a near-singular H_FF: 2.3–3.3 ns·N² an
 * iteration at N = 550–650 against 0.4 on a definite Σ). Charged on top of the dense QP's
 * N³/3 + 20N²: SINGULAR_QP_ITERATIONS_PER_VARIABLE · (N + G) iterations of
 * SINGULAR_QP_UNITS_PER_ITERATION_N2 · N² units each, i.e. (N + G)·N².
 *
 * Fitted 2026-12-02 (`npm run bench:singular`, CPU time per solve, after the flat-face fix in
 * qp-active-set.ts) on ranks 1, 2, 5, N/2, N − 1 (with and without a riskless long-only
 * portfolio), N = 50–650, minimum-variance and mean-variance (λ 0.1–50), long-only, capped, with
 * shorts, with 10–150 overlapping groups; sample covariances of T ≤ N rows, supplied and
 * repaired ones, and parametric draws from observations ≤ N. The dense reference (the N = 650
 * all-methods optimize) ran at 7.0–13.8 ns/unit in the same runs.
 * - Iterations: at most 1.3·(N + G) cold without groups, up to 2.35·(N + G) with 50 groups
 *   (rank N − 1, minimum-variance, N = 550: 1295) and 13.7·N with 150 (charged by the group term).
 * - Worst cold solves against the price without this term, at the reference rate: 1.2× (N = 650,
 *   rank N/2, mean-variance λ 8 with shorts: 752 iterations, 0.9 s; a history of 326 rows the
 *   same); 1.8× for one first solve of a process at N = 400 (rank 1, mean-variance λ 0.5:
 *   0.35 s), 0.8× repeated (0.22 s). With the term: ≤ 0.5×.
 * - Warm solves without groups need no such term: the worst measured was 0.76× the price without
 *   it (parametric draws of rank 200, N = 400, minimum-variance: 137 ms). With groups they pay it
 *   too: their iterations reach 1.3–2× the cold solve's, up to 4.8·N (observations 6, N = 550,
 *   50 groups and shorts, mean-variance λ = 0.5: 2643 iterations, 1.5 s at ~1.9 ns·N² each,
 *   ~1.1× the reference rate without it), besides the group term (SINGULAR_WARM_GROUP_MULTIPLIER).
 * The previous charge, the iteration cap max(200, 10·(N + G)) at 8·N² each, on every solve, was
 * fitted on the solver before that fix (N = 600, rank 2, 62 s) and priced these solves 55–500×
 * above their cost: a stress of a history of T = N/2 rows at 500 draws was accepted up to N = 70
 * (minimum-variance) by work, now 340; a singular optimize up to N = 550, now to the memory limit.
 */
export const SINGULAR_QP_ITERATIONS_PER_VARIABLE = 2;
export const SINGULAR_QP_UNITS_PER_ITERATION_N2 = 0.5;

/** Whether this solve's covariance is (or may be) singular: the base one, or every draw's (warm solves only). */
export function singularSolve(s: RequestShape, start: SolveStart): boolean {
  return s.singular || (start === 'warm' && s.singularDraws);
}

/**
 * The singular term of one dense active-set solve: every cold solve on a singular covariance, and
 * a warm one when there are groups (its iterations then reach the cold solve's or more; without
 * groups a warm solve needs none). 0 for a definite covariance.
 */
export function singularQpUnits(s: RequestShape, start: SolveStart = 'cold'): number {
  const charged = start === 'cold' ? s.singular : s.groups > 0 && singularSolve(s, start);
  return charged ? SINGULAR_QP_ITERATIONS_PER_VARIABLE * (s.n + s.groups) * SINGULAR_QP_UNITS_PER_ITERATION_N2 * s.n * s.n : 0;
}

export const usesMean = (spec: MethodSpec): boolean => spec.name === 'mean-variance' || spec.name === 'kelly';

const cube = (n: number): number => n * n * n;

/** Validation: parsing, shapes, symmetry, the PSD test (two Choleskys and a power iteration). */
export function validationUnits(s: RequestShape): number {
  let units = UNITS_PER_INPUT_NUMBER * s.inputNumbers + 4 * s.groupMemberships + 2 * s.assetIdChars;
  if (s.inputKind === 'dense-moments') {
    units += s.n * s.n + (2 * cube(s.n)) / 3 + POWER_ITERATIONS * 2 * s.n * s.n;
    if (s.n <= EXACT_EIGENVALUE_MAX_N) units += EIGEN_UNITS_PER_N3 * cube(s.n);
  } else if (s.inputKind === 'factor-moments') {
    units += cube(s.factors) + s.n * s.factors;
  }
  return units;
}

/** Turning the validated inputs into the base problem: the repair (one eigendecomposition) or the base estimate. */
export function preparationUnits(s: RequestShape): number {
  if (s.inputKind === 'history') return estimationUnits(s);
  if (s.repair) return (EIGEN_UNITS_PER_N3 + 1) * cube(s.n) + s.n * s.n;
  return s.inputKind === 'dense-moments' ? 2 * s.n * s.n : s.n * (s.factors + 1);
}

/** Re-estimating the inputs for one draw (also the base estimate of a history). */
export function estimationUnits(s: RequestShape): number {
  const { n, factors: k } = s;
  if (s.inputKind === 'dense-moments') return s.scheme === 'parametric' ? cube(n) + 3 * n * n : 0;
  if (s.inputKind === 'factor-moments') return cube(k) + 4 * n * (k + 1);
  const t = s.rows;
  if (s.factorModel === 'regression') return t * n * (k + 2) + cube(k) + n * k * k;
  // Writing the N×N result dominates when T is small, so every dense estimate pays a few N² passes.
  const covariance = (s.covarianceEstimator === 'sample' ? 1 : 2) * t * n * n + 4 * n * n;
  if (s.factorModel === 'pca') return covariance + EIGEN_UNITS_PER_N3 * cube(n);
  return covariance;
}

/** The explicit-row part of an active-set solve with group limits (0 without groups). */
export function groupUnits(s: RequestShape, start: SolveStart = 'cold'): number {
  if (s.groups === 0) return 0;
  const rows = (s.n + s.groups) * (s.groupMemberships + Math.min(s.groups, s.n) * s.n);
  if (start === 'cold') return COLD_GROUP_UNITS_FACTOR * rows;
  const ratio = s.groups / s.n;
  const share = Math.min(1, (singularSolve(s, start) ? SINGULAR_WARM_GROUP_MULTIPLIER : 1) * Math.min(1, ratio) ** WARM_GROUP_EXPONENT);
  return GROUP_UNITS_FACTOR * rows * share;
}

/** One solve of a method on dense or factor inputs, cold (a base optimum) or warm-started (a draw). */
export function solveUnits(spec: MethodSpec, s: RequestShape, start: SolveStart = 'cold'): number {
  return SOLVE_OVERHEAD_UNITS + solveWorkUnits(spec, s, start);
}

function solveWorkUnits(spec: MethodSpec, s: RequestShape, start: SolveStart): number {
  const { n, factors: k } = s;
  const dense = s.inputKind !== 'factor-moments' && !(s.inputKind === 'history' && s.factorModel !== 'none');
  // Factor QPs: Woodbury updates cost O(N·K²) per active-set change, and warm starts still make a
  // few dozen changes at large N (measured: ~3× the dense rate per counted operation at N = 2000, K = 8).
  const qp = (dense ? cube(n) / 3 + 20 * n * n + singularQpUnits(s, start) : 60 * n * Math.max(k, 1) ** 2) + groupUnits(s, start);
  switch (spec.name) {
    case 'mean-variance':
    case 'minimum-variance':
      return qp;
    case 'kelly':
      // Newton steps, each forming the scenario Hessian (T·N²) and solving a QP.
      return s.scenarioKelly ? (start === 'cold' ? KELLY_COLD_NEWTON_STEPS : KELLY_WARM_NEWTON_STEPS) * (s.rows * n * n + qp) : qp;
    case 'risk-parity':
      return !dense ? 10 * n * k * k : n <= 100 ? 8 * (cube(n) / 3) : 100 * n * n;
    case 'equal-weight':
    case 'inverse-volatility':
      return n * (k + 1);
  }
}

/** Per draw: the proposal's own figures (variance, risk shares, shortfall) — two products with Σ. */
export function proposalFigureUnits(s: RequestShape): number {
  const dense = s.inputKind !== 'factor-moments' && !(s.inputKind === 'history' && s.factorModel !== 'none');
  return (dense ? 2 * s.n * s.n : 4 * s.n * (s.factors + 1)) + s.rows * (s.n + 8);
}

/**
 * Summaries: sorting the stored draws for exact percentiles, batch means, and the outside-band
 * share's bootstrap (BOOTSTRAP_REPLICATES resamples of every method's draws × assets, counted in
 * full: assets far from both band edges are skipped, but nothing bounds how many are near one).
 * Measured: N = 2000 (8 factors), 850 draws, two methods (inverse volatility, 1/N) — the summary
 * took 2.4–3.1 s, against 1.2e8 units before the bootstrap term (20–26 ns/unit) and 8.0e8 with it
 * (3–3.9 ns/unit, inside the worst rate of the calibration table). The max weight sd's error adds
 * BOOTSTRAP_REPLICATES replicates over at most MAX_CONTENDERS assets' draws per method (every asset
 * tied: 850 draws × 2000 assets 53 ms, 5000 × 200 120 ms, 5000 × 2000 79 ms; counted in full).
 */
export function summaryUnits(s: RequestShape): number {
  const stored = (s.methods.length + 1) * s.draws * s.n;
  const replicated = BOOTSTRAP_REPLICATES * s.methods.length * s.draws;
  return stored * (4 + 2 * Math.log2(Math.max(2, s.draws))) + replicated * s.n + replicated * Math.min(s.n, MAX_CONTENDERS);
}

/** One draw's solves of one method: the joint channel, plus mean-only and covariance-only re-solves for methods that read the means. */
export function perDrawMethodUnits(spec: MethodSpec, s: RequestShape): number {
  return (usesMean(spec) ? 3 : 1) * solveUnits(spec, s, 'warm');
}

export interface WorkBreakdown {
  readonly validation: number;
  readonly preparation: number;
  readonly baseSolves: number;
  readonly draws: number;
  readonly summary: number;
  readonly total: number;
}

/** Units of one stress run (the work of `check` without a baseline proposal, and of each of its two runs with one). */
export function stressBreakdown(s: RequestShape): WorkBreakdown {
  const validation = validationUnits(s);
  const preparation = preparationUnits(s) + (s.inputKind === 'history' ? 20 * s.rows * s.n : cube(s.inputKind === 'dense-moments' ? s.n : s.factors) / 3);
  // Every method once at the base inputs, and the mean-variance reference for the certainty-equivalent score.
  const reference: MethodSpec = { name: 'mean-variance', riskAversion: 1 };
  let baseSolves = solveUnits(reference, s);
  let perDraw = DRAW_OVERHEAD_UNITS + estimationUnits(s) + proposalFigureUnits(s);
  for (const m of s.methods) {
    baseSolves += solveUnits(m, s);
    perDraw += perDrawMethodUnits(m, s);
  }
  const draws = s.draws * perDraw;
  const summary = summaryUnits(s);
  return { validation, preparation, baseSolves, draws, summary, total: validation + preparation + baseSolves + draws + summary };
}

/** Units of optimize: validation, the base inputs and one solve per method — no draws, no channels. */
export function optimizeBreakdown(s: RequestShape): WorkBreakdown {
  const validation = validationUnits(s);
  const preparation = preparationUnits(s);
  const baseSolves = s.methods.reduce((total, m) => total + solveUnits(m, s), 0);
  return { validation, preparation, baseSolves, draws: 0, summary: 0, total: validation + preparation + baseSolves };
}

/** Units of a whole request; `check` with a baseline proposal pays for both runs. */
export function requestWork(job: Job, s: RequestShape, baseline?: RequestShape): number {
  switch (job) {
    case 'validate':
      return validationUnits(s);
    case 'optimize':
      return optimizeBreakdown(s).total;
    case 'stress':
      return stressBreakdown(s).total;
    case 'check':
      return stressBreakdown(s).total + (baseline ? stressBreakdown(baseline).total : 0);
  }
}
