/**
 * Request limits. Work is bounded by counts, never by the clock: clocks stand still during
 * pure computation in the Workers runtime, and counts keep results deterministic.
 */
export const LIMITS = {
  /** Assets per proposal (contract: 2..2000). */
  maxAssets: 2000,
  minAssets: 2,
  /** Rows of a return history. 50 years of weekly data, or ~20 years of daily data. */
  maxRows: 5200,
  /** Factors in a supplied or estimated factor model. */
  maxFactors: 60,
  /** Resampling draws per request. */
  maxDraws: 5000,
  /** Request body size in bytes (413 above it). */
  maxBodyBytes: 16 * 1024 * 1024,
  /**
   * Work budget in counted units for a whole request: validation, preparation, every solve of
   * every channel of every draw, summaries, and both runs of a check against a baseline proposal
   * (src/cost/work-model.ts). Calibrated on the worst shape of each kind at up to about 5 ns per
   * unit on a shared 2-core development machine (DEVELOPERS.md, "Request cost"), so the budget is
   * at most ~100 s of CPU, inside the Worker's configured cpu_ms (wrangler.toml). Deployments
   * may pass a lower maximum (run options `maxWork`).
   */
  maxWorkUnits: 2e10,
  /**
   * Peak memory estimated from the request's shape (src/cost/memory-model.ts, which includes
   * 24 MB for the runtime and uncollected garbage): 96 MB, leaving 32 MB of a 128 MB Workers
   * isolate as headroom. Measured heap + ArrayBuffer peaks of the worst accepted shapes are in
   * DEVELOPERS.md, "Request cost".
   */
  maxMemoryBytes: 96 * 1024 * 1024,
  /** Largest response (JSON text) estimated from the shape. */
  maxResponseBytes: 12 * 1024 * 1024,
  /**
   * Characters in an asset, factor or group id. Ids come back several times in a report (weights,
   * bands, risk shares, every method…), about 10× in JSON; 2000 assets × 64 characters × 10 keeps
   * the names' share of a response near 1.3 MB. Long enough for ISINs, FIGIs and "ticker:exchange".
   */
  maxIdLength: 64,
  /**
   * Group constraints. Each group is a row of the QP that every solve (base and per draw) must
   * test, and overlapping groups make the working set large; the solve cost grows with groups ×
   * assets (measured in DEVELOPERS.md, "Request cost"). Sectors × regions × a few issuers fit.
   */
  maxGroups: 200,
  /** Σ over groups of the number of members (the QP's group rows are this long in total). */
  maxGroupMemberships: 20_000,
  /**
   * Magnitudes of caller numbers, chosen so that no product the service forms (quadratic forms,
   * annualising by up to 100 000 periods a year, Kelly scenarios) can overflow a double, while
   * still far above any sensible input (per-period returns are fractions: 0.01 = 1 %).
   */
  maxAbsReturn: 1e3,
  /** Variances, covariances, factor covariances, specific variances and standard errors. */
  maxAbsVariance: 1e6,
  /** Weights, bounds, the budget, group limits and the risk-free rate (leverage up to 1000×). */
  maxAbsWeight: 1e3,
  /** Risk aversion λ and 1/(Kelly fraction) stay within [1e-6, 1e6]. */
  maxRiskAversion: 1e6,
  minRiskAversion: 1e-6,
} as const;

/** Tolerances used by validation, stated once so the README and errors can quote them. */
export const TOLERANCES = {
  /** |Σ_ij − Σ_ji| ≤ symmetry · max_i Σ_ii */
  symmetry: 1e-9,
  /** smallest eigenvalue ≥ −psd · max(1, largest eigenvalue) */
  psd: 1e-10,
  /** |Σ w − budget| ≤ budget tolerance (absolute) */
  budget: 1e-6,
  /** a long-only weight below −negativeWeight is rejected */
  negativeWeight: 1e-9,
} as const;
