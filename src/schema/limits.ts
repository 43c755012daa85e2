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
   * Work budget: estimated floating-point operations for a whole stress request
   * (draws × (estimation + every solve in every channel); src/stress/work-estimate.ts).
   * Measured at about 1–1.3 ns per counted operation on a 2-core development machine, so the
   * budget is roughly 10–30 s of CPU, inside the Worker's configured cpu_ms (wrangler.toml).
   */
  maxWorkUnits: 2e10,
  /**
   * Numbers kept in memory for exact percentiles: draws × assets × (methods + 1), 8 bytes each.
   * 6e6 is 48 MB, leaving room in a 128 MB Workers isolate.
   */
  maxStoredValues: 6e6,
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
