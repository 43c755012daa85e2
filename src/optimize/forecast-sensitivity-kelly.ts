import { kelly, KellyWorkspace, type KellyResult } from './kelly.js';
import { oneWayTurnover, patternDifferences, patternOf, type ActivePattern, type BreakEven } from './forecast-sensitivity.js';
import { QpWorkspace } from './qp.js';
import { OptimizationError, type ConstraintSet } from './types.js';

/**
 * Break-even forecast shifts of scenario Kelly (every fraction). The optimum of Σ p_s u(1 + r_sᵀw)
 * is not piecewise linear in the mean, so there is no exact parametric step: the scenarios'
 * column i is moved by a shift t per period (every scenario of asset i by the same t, so its mean
 * moves by t and nothing else does) and the problem is re-solved warm-started from the base
 * optimum, with a bracketing search on t:
 *
 * 1. doubling: t = unit·2^k for k = −2, −1, 0, …, until the active pattern (patternOf, tolerance
 *    PATTERN_TOLERANCE) differs from the base one, at most DOUBLINGS probes (unit = the forecast's
 *    standard error, so the search reaches 2^(DOUBLINGS−3) standard errors; none found → null);
 * 2. bisection between the last unchanged and the first changed probe until the bracket is no
 *    wider than max(RELATIVE_TOLERANCE·t, ABSOLUTE_TOLERANCE·unit): the doubling leaves a bracket
 *    [0, unit/4] or [t/2, t], so BISECTIONS = 7 halvings always reach that width.
 * The reported shift is the bracket's midpoint and its tolerance the half-width. (A change that
 * reverts between two probes of the doubling would be missed; the Kelly optimum moves smoothly
 * in t, so in practice each change persists.)
 *
 * An asset held at a lower bound of 0 needs no search downwards: its column does not touch wealth
 * (w_i = 0), so every other gradient is unchanged and its own only falls — the optimum is exactly
 * the same however far its mean drops (null, turnover 0).
 *
 * Solves per asset are bounded: 2·(DOUBLINGS + BISECTIONS) + 2 (the turnover at ±1 unit).
 */
export const DOUBLINGS = 13;
export const BISECTIONS = 7;
export const RELATIVE_TOLERANCE = 0.01;
export const ABSOLUTE_TOLERANCE = 0.005;
/** Largest number of Kelly solves for one asset (the work model counts this bound). */
export const KELLY_SOLVES_PER_ASSET = 2 * (DOUBLINGS + BISECTIONS) + 2;

export interface KellyShiftResult extends BreakEven {
  /** One-way turnover of the optimum with the mean moved by +unit and by −unit. */
  readonly turnoverUp: number;
  readonly turnoverDown: number;
}

export class KellyForecastSensitivity {
  /** Kelly solves made so far (for the work count and the benchmark). */
  solves = 0;
  private readonly n: number;
  private readonly shifted: Float64Array;
  private readonly basePattern: ActivePattern;
  private readonly workspace: QpWorkspace;
  private readonly kellyWorkspace = new KellyWorkspace();

  constructor(
    private readonly scenarios: Float64Array,
    private readonly scenarioCount: number,
    private readonly constraints: ConstraintSet,
    private readonly fraction: number,
    private readonly base: KellyResult,
  ) {
    this.n = constraints.n;
    this.shifted = Float64Array.from(scenarios);
    this.basePattern = patternOf(constraints, base.weights);
    this.workspace = new QpWorkspace(this.n, constraints.groups.length);
  }

  /** Kelly weights with column i of the scenarios moved by `shift` per period. */
  weightsAt(i: number, shift: number): Float64Array {
    const n = this.n;
    const s = this.shifted;
    for (let r = 0; r < this.scenarioCount; r++) s[r * n + i] = this.scenarios[r * n + i] + shift;
    this.solves++;
    try {
      return kelly(s, this.scenarioCount, this.constraints, {
        fraction: this.fraction,
        warmStart: this.base.warmStart,
        workspace: this.workspace,
        kellyWorkspace: this.kellyWorkspace,
      }).weights;
    } finally {
      for (let r = 0; r < this.scenarioCount; r++) s[r * n + i] = this.scenarios[r * n + i];
    }
  }

  /** Break-even shifts of asset i's mean both ways, searched in steps of `unit` (per period, > 0). */
  shiftsOf(i: number, unit: number): KellyShiftResult {
    const { lower, upper } = this.constraints;
    if (lower[i] === upper[i]) return { up: null, down: null, changesUp: [], changesDown: [], tolerance: 0, turnoverUp: 0, turnoverDown: 0 };
    const up = this.search(i, unit, 1);
    const down = this.search(i, unit, -1);
    return {
      up: up.shift,
      down: down.shift,
      changesUp: up.changes,
      changesDown: down.changes,
      tolerance: Math.max(up.bracketHalfWidth, down.bracketHalfWidth),
      turnoverUp: up.turnoverAtUnit,
      turnoverDown: down.turnoverAtUnit,
    };
  }

  private search(i: number, unit: number, sign: 1 | -1): { shift: number | null; changes: BreakEven['changesUp']; bracketHalfWidth: number; turnoverAtUnit: number } {
    const base = this.base.weights;
    if (sign < 0 && base[i] === 0 && this.constraints.lower[i] === 0) {
      return { shift: null, changes: [], bracketHalfWidth: 0, turnoverAtUnit: 0 };
    }
    let turnoverAtUnit = Number.NaN;
    const probe = (t: number): ActivePattern | undefined => {
      let w: Float64Array;
      try {
        w = this.weightsAt(i, sign * t);
      } catch (error) {
        if (error instanceof OptimizationError) return undefined;
        throw error;
      }
      if (t === unit) turnoverAtUnit = oneWayTurnover(w, base);
      return patternOf(this.constraints, w);
    };
    const changed = (p: ActivePattern): boolean => patternDifferences(this.basePattern, p).length > 0;
    let lo = 0;
    let hi = Number.NaN;
    let hiPattern: ActivePattern | undefined;
    for (let k = 0; k < DOUBLINGS; k++) {
      const t = unit * 2 ** (k - 2);
      const p = probe(t);
      if (!p) break; // no optimum there (e.g. wealth cannot stay positive): stop searching this way
      if (changed(p)) {
        hi = t;
        hiPattern = p;
        break;
      }
      lo = t;
    }
    if (Number.isNaN(turnoverAtUnit)) {
      const w = (() => {
        try {
          return this.weightsAt(i, sign * unit);
        } catch (error) {
          if (error instanceof OptimizationError) return undefined;
          throw error;
        }
      })();
      turnoverAtUnit = w ? oneWayTurnover(w, base) : Number.NaN;
    }
    if (!hiPattern) return { shift: null, changes: [], bracketHalfWidth: 0, turnoverAtUnit };
    for (let k = 0; k < BISECTIONS && hi - lo > Math.max(RELATIVE_TOLERANCE * hi, ABSOLUTE_TOLERANCE * unit); k++) {
      const mid = 0.5 * (lo + hi);
      const p = probe(mid);
      if (!p || changed(p)) {
        hi = mid;
        if (p) hiPattern = p;
      } else {
        lo = mid;
      }
    }
    return { shift: 0.5 * (lo + hi), changes: patternDifferences(this.basePattern, hiPattern), bracketHalfWidth: 0.5 * (hi - lo), turnoverAtUnit };
  }
}
