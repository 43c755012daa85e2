import { createDrawStream, type Seed } from '../resample/streams.js';

/**
 * Bootstrap replicates of the draws for the Monte Carlo errors that no formula gives (the outside-band
 * share, percentile differences of two runs): with R = 200 the error
 * estimate itself has a relative sd of about 1/√(2R) = 5 % (Efron & Tibshirani 1993, §6.4 —
 * 50–200 replicates suffice for a standard error).
 */
export const BOOTSTRAP_REPLICATES = 200;
/** Stream purpose of the error bootstrap: replicate r uses the stream (seed, r, 'mc-error'). */
export const BOOTSTRAP_PURPOSE = 'mc-error';
/**
 * The R replicates' counts for (seed, draws), computed once and reused by every method and by the
 * paired baseline run (same seed and draw count: the same resampled draws). One entry is kept.
 */
let cachedCounts: { key: string; counts: Int32Array[] } | undefined;

export function bootstrapCounts(seed: Seed, draws: number): Int32Array[] {
  const key = `${typeof seed}:${String(seed)}|${draws}`;
  if (cachedCounts?.key === key) return cachedCounts.counts;
  const counts: Int32Array[] = [];
  for (let r = 0; r < BOOTSTRAP_REPLICATES; r++) {
    const c = new Int32Array(draws);
    resampleCounts(seed, r, draws, c);
    counts.push(c);
  }
  cachedCounts = { key, counts };
  return counts;
}

/** How many draws a replicate's counts pick among the draws in `order` (the successful ones). */
export function resampledTotal(order: Int32Array, counts: Int32Array): number {
  let total = 0;
  for (let j = 0; j < order.length; j++) total += counts[order[j]];
  return total;
}

/** counts[b] = how often draw b is picked when B draws are drawn with replacement from stream (seed, r, 'mc-error'). */
export function resampleCounts(seed: Seed, replicate: number, draws: number, counts: Int32Array): void {
  counts.fill(0);
  const stream = createDrawStream(seed, replicate, BOOTSTRAP_PURPOSE);
  for (let k = 0; k < draws; k++) counts[stream.integer(draws)]++;
}

/**
 * Type-7 q-quantile of the resampled sample in which sorted value j (from draw order[j]) appears
 * counts[order[j]] times. NaN when the resample holds no successful draw. O(m).
 */
export function expandedQuantile(sorted: Float64Array, order: Int32Array, counts: Int32Array, q: number, knownTotal?: number): number {
  const m = sorted.length;
  const total = knownTotal ?? resampledTotal(order, counts);
  if (total === 0) return Number.NaN;
  const h = (total - 1) * q;
  const lowerIndex = Math.floor(h);
  const upperIndex = lowerIndex + 1 < total ? lowerIndex + 1 : total - 1;
  const gamma = h - lowerIndex;
  let a = Number.NaN;
  let b = Number.NaN;
  let cumulative = 0;
  for (let j = 0; j < m; j++) {
    cumulative += counts[order[j]];
    if (Number.isNaN(a) && cumulative > lowerIndex) a = sorted[j];
    if (cumulative > upperIndex) {
      b = sorted[j];
      break;
    }
  }
  const diff = b - a;
  return gamma >= 0.5 ? b - diff * (1 - gamma) : a + diff * gamma;
}


/** A column's successful (finite) draws sorted ascending, with the draw each came from; ties keep draw order (deterministic). */
export interface SortedDraws {
  readonly sorted: Float64Array;
  readonly order: Int32Array;
}

/** The finite entries data[start + b·stride], b < draws, as SortedDraws. */
export function sortedDraws(data: Float64Array, start: number, stride: number, draws: number): SortedDraws {
  let m = 0;
  for (let b = 0; b < draws; b++) if (Number.isFinite(data[start + b * stride])) m++;
  const order = new Int32Array(m);
  let k = 0;
  for (let b = 0; b < draws; b++) if (Number.isFinite(data[start + b * stride])) order[k++] = b;
  order.sort((a, c) => data[start + a * stride] - data[start + c * stride] || a - c);
  const sorted = new Float64Array(m);
  for (let j = 0; j < m; j++) sorted[j] = data[start + order[j] * stride];
  return { sorted, order };
}

/** One percentile of one per-draw column, with its coefficient in a linear combination. */
export interface PercentileTerm {
  readonly column: SortedDraws;
  readonly probability: number;
  readonly coefficient: number;
}

/**
 * Bootstrap standard error of Σ_t c_t·Q_t(p_t), type-7 percentiles of per-draw columns that may
 * belong to two runs on common random numbers (draw b of each run resamples the same inputs):
 * each replicate resamples the draw indices once, with the same counts for every column, and the
 * error is the sd of the combination over the BOOTSTRAP_REPLICATES replicates (the paired
 * bootstrap; Efron & Tibshirani 1993, §6 and §9). Every draw is independent of the others, so
 * resampling draws is the bootstrap of an i.i.d. sample.
 *
 * Why not the joint asymptotics of sample quantiles (Serfling 1980, §2.3.3), which this replaced:
 * per-draw turnover piles up at corner portfolios, and two runs' medians often sit on the same
 * atom; the indicator correlation then misstates how the two medians move together, and the
 * paired error of the median turnover came out 1.8× too small at 2000 draws (demo; DEVELOPERS.md).
 * The bootstrap carries the atoms into every replicate: a combination that no replicate moves
 * (both percentiles on masses that cover every plausible rank) has error exactly 0.
 * NaN when a column has fewer than 2 successful draws, or fewer than 2 replicates picked some of
 * every column's successful draws.
 */
export function percentileCombinationStdErr(terms: readonly PercentileTerm[], draws: number, seed: Seed): number {
  if (terms.length === 0) return 0;
  if (terms.some((t) => t.column.sorted.length < 2)) return Number.NaN;
  const replicates = bootstrapCounts(seed, draws);
  const totals = new Int32Array(terms.length);
  // Deviations from the first usable replicate, so identical replicates give exactly 0 (no
  // rounding residue of a mean).
  let first = Number.NaN;
  let used = 0;
  let sum = 0;
  let squares = 0;
  replicates: for (let r = 0; r < BOOTSTRAP_REPLICATES; r++) {
    const counts = replicates[r];
    let value = 0;
    for (let t = 0; t < terms.length; t++) {
      const { column, probability, coefficient } = terms[t];
      totals[t] = resampledTotal(column.order, counts);
      // A replicate that picked none of a column's successful draws (a method that failed in most
      // draws) has no percentile there: it is left out, as the draws' own failures are.
      if (totals[t] === 0) continue replicates;
      value += coefficient * expandedQuantile(column.sorted, column.order, counts, probability, totals[t]);
    }
    if (used === 0) first = value;
    const deviation = value - first;
    used++;
    sum += deviation;
    squares += deviation * deviation;
  }
  if (used < 2) return Number.NaN;
  const mean = sum / used;
  return Math.sqrt(Math.max(0, (squares - used * mean * mean) / (used - 1)));
}
