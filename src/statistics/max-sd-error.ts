import type { Seed } from '../resample/streams.js';
import { stridedMoments } from './batch-means.js';
import { BOOTSTRAP_REPLICATES, bootstrapCounts } from './draw-bootstrap.js';

/**
 * Monte Carlo error of the max weight sd, max_i s_i over the assets' sample sds of one method's
 * weights.
 *
 * Why not the leader's own error: when several sds are nearly tied, which asset is largest flips
 * between reruns, and the maximum of several noisy values spreads less than any one of them
 * (equal independent ones: the largest of three standard normals has sd 0.748, of ten 0.587, by
 * numerical integration of the order-statistic density).
 * The leader's delta-method error over-stated the spread 1.4–1.5× on the demo, where several
 * mean-variance weights have nearly equal sds (DEVELOPERS.md, calibration).
 *
 * The model: each sample sd is a mean of per-draw influence values, s_i ≈ σ_i + ē_i with
 * ψ_i(b) = ((w_ib − w̄_i)² − s_i²)/(2 s_i) (the delta method's linearisation), so the vector of
 * errors is nearly normal with the covariance of the ψ's over B draws. The spread of the maximum
 * is read off replicates of that normal vector, e*_i = Σ_b c_b ψ_i(b) / B with the error
 * bootstrap's multinomial counts c_b (the linearised bootstrap; for maxima of many means this is
 * the multiplier bootstrap of Chernozhukov, Chetverikov & Kato 2013, Ann. Statist. 41(6)), and
 * the error is the sd over the replicates of max_i (c_i + e*_i).
 *
 * The centres c_j: the plug-in s_j would keep the spread of the sds at its sampled size, which
 * noise inflates, so true ties look like gaps and the error stays over-stated. By the method of
 * moments, E Σ_j (s_j − s̄)² = Σ_j (σ_j − σ̄)² + tr(PΣ) over the k contenders (P = I − 11ᵀ/k, Σ the
 * errors' covariance), so the deviations s_j − s̄ are scaled by √max(0, 1 − tr(PΣ)/Σ_j (s_j − s̄)²)
 * (the positive part, as in a positive-part James–Stein estimate) and the centres keep the
 * estimated true spread. In a normal model with known covariance this reads 0.93–1.10 of the true
 * spread for ties of 3–10 assets and for gaps of 0.5–4 errors, where the plug-in centres read
 * 0.83–1.04 and the leader's error 0.60–0.99 (scripts/reference/max_sd_error_reference.py); on
 * normal draws through this code, 0.88–1.03 at 200 and 1000 draws
 * (test/statistics/max-sd-error.test.ts; DEVELOPERS.md, calibration).
 *
 * Not for the paired difference of two runs (check --baseline): replicates of both runs' maxima on
 * the same counts read 0.58–0.73 of the spread on the demo at 200–500 draws with these centres,
 * 0.50–0.63 with pairwise de-biased gaps to the leader and 0.62–0.71 with plug-in centres, against
 * 0.63–0.69 for the leaders' paired delta method on the same 200 seeds, which paired.ts keeps
 * (DEVELOPERS.md, calibration).
 *
 * Only contenders enter: the leader L and assets whose sampled gap to it is below CONTENDER_SDS sds
 * of (ē_L − ē_i) (otherwise the chance that one overtakes the leader is below Φ(−4) ≈ 3e-5), at
 * most MAX_CONTENDERS of them by size. With more tied sds than that the error over-states, on the
 * safe side (the largest of 32 equal independent normals has sd 0.49, of 100 0.43, of 1000 0.35).
 * A leader without contenders gets its own delta-method error exactly (no replicate noise), as
 * before.
 */

/** An asset enters the maximum's error when its gap to the leader is below this many sds of the difference. */
export const CONTENDER_SDS = 4;
/** An asset whose error differs from the leader's by less than this fraction of it moves with the leader. */
export const SAME_MOVES = 1e-6;
/** At most this many contenders (by sd), to bound the cost with thousands of assets. */
export const MAX_CONTENDERS = 32;

/** One asset's weight moments as the weight summary gives them (weight-accumulator.ts). */
export interface AssetSd {
  readonly mean: number;
  /** Sample sd, divisor n − 1 (NaN with fewer than 2 successful draws). */
  readonly sd: number;
  /** Its delta-method error (sdStdErrOfStrided). */
  readonly sdStdErr: number;
}

/** The assets that may set one run's max weight sd, with their centred influence values. */
interface Contenders {
  /** Successful draws (finite rows). */
  readonly successful: number;
  /** De-biased centres c_j, leader first. */
  readonly centres: Float64Array;
  /** Centred influence values of each contender, 0 in failed draws. */
  readonly influence: readonly Float64Array[];
}

/**
 * Per-draw influence values of one asset's sample sd, ψ(b) = ((w_b − w̄)² − s²)/(2s) (the delta
 * method's linearisation; 0 everywhere when s = 0), centred so Σ_b ψ(b) = 0 over the successful
 * draws (the (n − 1) divisor leaves an offset −s/2 that is no spread). Failed draws (NaN rows) get
 * `failed`. Returns the number of successful draws.
 */
export function sdInfluence(rows: Float64Array, draws: number, n: number, asset: number, w: AssetSd, out: Float64Array, failed: number): number {
  const s = w.sd;
  let sum = 0;
  let count = 0;
  for (let b = 0, at = asset; b < draws; b++, at += n) {
    const x = rows[at];
    if (!Number.isFinite(x)) {
      out[b] = Number.NaN;
      continue;
    }
    const d = x - w.mean;
    out[b] = s > 0 ? (d * d - s * s) / (2 * s) : 0;
    sum += out[b];
    count++;
  }
  const centre = count > 0 ? sum / count : 0;
  for (let b = 0; b < draws; b++) out[b] = Number.isFinite(out[b]) ? out[b] - centre : failed;
  return count;
}

/** Var of the mean of centred per-draw values (0 in failed draws) over `successful` draws: Σ x²/(m(m − 1)). */
function varianceOfMean(x: Float64Array, successful: number): number {
  let squares = 0;
  for (let b = 0; b < x.length; b++) squares += x[b] * x[b];
  return successful > 1 ? squares / ((successful - 1) * successful) : 0;
}

/** The asset with the largest sd (the first of equal ones), or −1 when any sd is not estimable. */
export function maxSdLeader(perAsset: readonly AssetSd[]): number {
  let leader = -1;
  for (let i = 0; i < perAsset.length; i++) {
    if (!(perAsset[i].sd >= 0)) return -1;
    if (leader < 0 || perAsset[i].sd > perAsset[leader].sd) leader = i;
  }
  return leader;
}

function contendersOf(rows: Float64Array, draws: number, perAsset: readonly AssetSd[], leader: number): Contenders {
  const n = perAsset.length;
  const top = perAsset[leader];
  // Screen by sd(ē_L − ē_i) ≤ se_L + se_i (so a superset of the contenders), largest sds first.
  const screened: number[] = [];
  for (let i = 0; i < n; i++) {
    const reach = CONTENDER_SDS * (top.sdStdErr + perAsset[i].sdStdErr);
    if (i !== leader && reach > 0 && perAsset[i].sd >= top.sd - reach) screened.push(i);
  }
  screened.sort((x, y) => perAsset[y].sd - perAsset[x].sd || x - y);
  const leaderInfluence = new Float64Array(draws);
  const successful = sdInfluence(rows, draws, n, leader, top, leaderInfluence, 0);
  const sds = [top.sd];
  const influence = [leaderInfluence];
  const psi = new Float64Array(draws);
  const difference = new Float64Array(draws);
  for (const i of screened) {
    if (influence.length >= MAX_CONTENDERS) break;
    sdInfluence(rows, draws, n, i, perAsset[i], psi, 0);
    for (let b = 0; b < draws; b++) difference[b] = leaderInfluence[b] - psi[b];
    // A contender: its sampled gap is within CONTENDER_SDS sds of (ē_L − ē_i). An asset that moves
    // with the leader (the other weight of a two-asset budget, w₂ = 1 − w₁: the same sd up to
    // rounding) is not one: the maximum is then the leader's sd, with its exact error.
    const apart = Math.sqrt(varianceOfMean(difference, successful));
    if (apart > SAME_MOVES * top.sdStdErr && top.sd - perAsset[i].sd < CONTENDER_SDS * apart) {
      sds.push(perAsset[i].sd);
      influence.push(psi.slice());
    }
  }
  const k = sds.length;
  const centres = Float64Array.from(sds);
  if (k > 1) {
    // Method of moments for the spread of the true sds among the contenders:
    // E Σ_j (s_j − s̄)² = Σ_j (σ_j − σ̄)² + tr(PΣ), with P = I − 11ᵀ/k and Σ the covariance of the
    // errors, tr(PΣ) = Σ_j Var(ē_j) − Var(Σ_j ē_j)/k. The deviations are scaled by
    // f = √max(0, 1 − tr(PΣ)/Σ_j (s_j − s̄)²) so the centres' spread matches that estimate.
    let mean = 0;
    for (const c of centres) mean += c / k;
    let spread = 0;
    let trace = 0;
    const total = difference.fill(0);
    for (let j = 0; j < k; j++) {
      spread += (centres[j] - mean) ** 2;
      trace += varianceOfMean(influence[j], successful);
      for (let b = 0; b < draws; b++) total[b] += influence[j][b];
    }
    trace -= varianceOfMean(total, successful) / k;
    const shrink = spread > 0 ? Math.sqrt(Math.max(0, 1 - trace / spread)) : 0;
    for (let j = 0; j < k; j++) centres[j] = mean + shrink * (centres[j] - mean);
  }
  return { successful, centres, influence };
}

/** max_j (c_j + e*_j) of one replicate, e*_j = Σ_b counts[b]·ψ_j(b) / (successful draws). */
function replicateMaximum(c: Contenders, counts: Int32Array): number {
  let best = Number.NEGATIVE_INFINITY;
  for (let j = 0; j < c.centres.length; j++) {
    const psi = c.influence[j];
    let sum = 0;
    for (let b = 0; b < psi.length; b++) sum += counts[b] * psi[b];
    const value = c.centres[j] + sum / c.successful;
    if (value > best) best = value;
  }
  return best;
}

/**
 * Monte Carlo error of one method's max weight sd from its per-draw weights (rows: draws × n,
 * NaN rows for failed draws) and each asset's moments from the weight summary. NaN when an sd is
 * not estimable (fewer than 2 successful draws); 0 when every weight is fixed.
 */
export function maxSdStdErr(rows: Float64Array, draws: number, perAsset: readonly AssetSd[], seed: Seed): number {
  const leader = maxSdLeader(perAsset);
  if (leader < 0) return Number.NaN;
  const c = contendersOf(rows, draws, perAsset, leader);
  if (c.centres.length === 1) return perAsset[leader].sdStdErr;
  const counts = bootstrapCounts(seed, draws);
  const maxima = new Float64Array(BOOTSTRAP_REPLICATES);
  for (let r = 0; r < BOOTSTRAP_REPLICATES; r++) maxima[r] = replicateMaximum(c, counts[r]);
  return stridedMoments(maxima, 0, 1, maxima.length).sd;
}
