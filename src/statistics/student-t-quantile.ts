/**
 * Student-t quantiles for integer degrees of freedom, for bounds built on an error estimated from
 * few groups (the mean-driven share's jackknife over m groups has m − 1 degrees of freedom).
 *
 * The distribution function in closed form (Abramowitz & Stegun 1964, 26.7.3 and 26.7.4; from
 * memory): with θ = atan(t/√ν), A(t|ν) = P(|T| ≤ t) is
 *   ν odd:  (2/π)·[θ + sin θ·(cos θ + (2/3)cos³θ + … + (2·4···(ν−3))/(1·3···(ν−2))·cos^(ν−2)θ)]
 *           (just 2θ/π for ν = 1),
 *   ν even: sin θ·[1 + (1/2)cos²θ + (1·3)/(2·4)cos⁴θ + … + (1·3···(ν−3))/(2·4···(ν−2))·cos^(ν−2)θ],
 * and the quantile is found by bisection on it (checked against scipy.stats.t.ppf in
 * test/reference/student-t-quantile.test.ts).
 */

/** P(|T| ≤ t) for T ~ Student t with ν degrees of freedom (t ≥ 0). */
export function studentTCentralProbability(t: number, nu: number): number {
  if (!Number.isInteger(nu) || nu < 1) throw new RangeError(`degrees of freedom must be a positive integer, got ${nu}`);
  if (!(t >= 0)) throw new RangeError(`t must be ≥ 0, got ${t}`);
  if (t === Number.POSITIVE_INFINITY) return 1;
  const theta = Math.atan(t / Math.sqrt(nu));
  const sin = Math.sin(theta);
  const cos = Math.cos(theta);
  const cos2 = cos * cos;
  if (nu % 2 === 1) {
    if (nu === 1) return (2 / Math.PI) * theta;
    // cos θ·Σ_{k=0}^{(ν−3)/2} c_k cos^{2k}θ, c_0 = 1, c_k = c_{k−1}·(2k)/(2k + 1).
    let term = cos;
    let sum = cos;
    for (let k = 1; k <= (nu - 3) / 2; k++) {
      term *= ((2 * k) / (2 * k + 1)) * cos2;
      sum += term;
    }
    return Math.min(1, (2 / Math.PI) * (theta + sin * sum));
  }
  // Σ_{k=0}^{(ν−2)/2} d_k cos^{2k}θ, d_0 = 1, d_k = d_{k−1}·(2k − 1)/(2k).
  let term = 1;
  let sum = 1;
  for (let k = 1; k <= (nu - 2) / 2; k++) {
    term *= ((2 * k - 1) / (2 * k)) * cos2;
    sum += term;
  }
  return Math.min(1, sin * sum);
}

/** The p-quantile of Student's t with ν (a positive integer) degrees of freedom, 0.5 ≤ p < 1. */
export function studentTQuantile(p: number, nu: number): number {
  if (!(p >= 0.5 && p < 1)) throw new RangeError(`studentTQuantile needs 0.5 ≤ p < 1, got ${p}`);
  if (p === 0.5) return 0;
  const central = 2 * p - 1;
  let low = 0;
  let high = 1;
  while (studentTCentralProbability(high, nu) < central) high *= 2;
  // Bisection to the last bit (at most ~1100 halvings; in practice about 60).
  for (;;) {
    const mid = 0.5 * (low + high);
    if (mid === low || mid === high) return high;
    if (studentTCentralProbability(mid, nu) < central) low = mid;
    else high = mid;
  }
}
