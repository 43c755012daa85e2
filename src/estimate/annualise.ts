/**
 * Annualisation of per-period figures under iid returns (common practice): the mean and the
 * variance grow with the number of periods, the volatility with its square root. The core stays
 * per period; these are applied only when results are reported.
 */

/** μ_annual = μ · p (p periods per year: 12 monthly, 52 weekly, 252 daily). */
export function annualiseMean(perPeriod: number, periodsPerYear: number): number {
  return perPeriod * checkedPeriods(periodsPerYear);
}

/** σ_annual = σ · √p. */
export function annualiseVolatility(perPeriod: number, periodsPerYear: number): number {
  return perPeriod * Math.sqrt(checkedPeriods(periodsPerYear));
}

/** σ²_annual = σ² · p. */
export function annualiseVariance(perPeriod: number, periodsPerYear: number): number {
  return perPeriod * checkedPeriods(periodsPerYear);
}

function checkedPeriods(periodsPerYear: number): number {
  if (!(periodsPerYear > 0) || !Number.isFinite(periodsPerYear)) {
    throw new RangeError(`periodsPerYear must be a positive finite number, got ${periodsPerYear}`);
  }
  return periodsPerYear;
}
