import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import type { DenseRiskModel, FactorRiskModel } from '../../src/linalg/risk-model.js';
import { toDenseCovariance } from '../../src/linalg/risk-ops.js';
import { solveRiskParity } from '../../src/optimize/risk-parity.js';
import type { RiskParityResult } from '../../src/optimize/risk-parity.js';
import { constantCorrelation, denseFromVolsAndCorrelation, MRT_BLOCK_CORRELATION, MRT_VOLS, parkMiller } from '../helpers/reference-data.js';

// Outside checks for risk parity / risk budgeting. Published values are in
// the project's shared REFERENCES.md; every check names its source.


/** Volatility √(wᵀΣw) by plain loops, independent of the code under test. */
function volatility(model: DenseRiskModel, w: ArrayLike<number>): number {
  const n = model.n;
  let v = 0;
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) v += w[i] * model.cov[i * n + j] * w[j];
  return Math.sqrt(v);
}

/** Risk contribution shares w_i(Σw)_i/wᵀΣw by plain loops (Euler; Tasche 2008). */
function riskShares(model: DenseRiskModel, w: ArrayLike<number>): number[] {
  const n = model.n;
  const rc: number[] = [];
  let total = 0;
  for (let i = 0; i < n; i++) {
    let si = 0;
    for (let j = 0; j < n; j++) si += model.cov[i * n + j] * w[j];
    rc.push(w[i] * si);
    total += w[i] * si;
  }
  return rc.map((r) => r / total);
}

function maxAbsDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  expect(a.length).toBe(b.length);
  let m = 0;
  for (let i = 0; i < a.length; i++) m = Math.max(m, Math.abs(a[i] - b[i]));
  return m;
}

function inverseVolWeights(vols: readonly number[]): number[] {
  const inv = vols.map((s) => 1 / s);
  const total = inv.reduce((a, b) => a + b, 0);
  return inv.map((v) => v / total);
}

/** Both solvers, each verified: converged and x∘(Σx) = b to 1e-10 (Spinu 2013). */
function solveBoth(model: DenseRiskModel | FactorRiskModel, budgets?: readonly number[]): RiskParityResult[] {
  const results = (['newton', 'coordinate-descent'] as const).map((solver) => solveRiskParity(model, { solver, budgets }));
  for (const r of results) {
    expect(r.diagnostics.converged).toBe(true);
    expect(r.diagnostics.kktResidual).toBeLessThanOrEqual(1e-10);
    expect(r.details.fellBack).toBe(false);
  }
  return results;
}

// σ = (10, 20, 30, 40) % of Maillard, Roncalli & Teïletche (2010) (REFERENCES.md).
const VOLS = MRT_VOLS;

describe('risk parity against Maillard, Roncalli & Teïletche (2010)', () => {
  it('two assets: ERC weights are ∝ 1/σ whatever the correlation', () => {
    // Maillard, Roncalli & Teïletche (2010), J. Portfolio Management 36(4), §2 (two-asset case).
    const vols = [0.15, 0.35];
    for (const rho of [-0.95, -0.5, 0, 0.3, 0.8, 0.99]) {
      const model = denseFromVolsAndCorrelation(vols, constantCorrelation(2, rho));
      for (const r of solveBoth(model)) expect(maxAbsDiff(r.weights, inverseVolWeights(vols))).toBeLessThan(1e-9);
    }
  });

  it('constant correlation: ERC equals inverse volatility', () => {
    // Maillard, Roncalli & Teïletche (2010), §2 (constant correlation case).
    const vols = [0.05, 0.12, 0.2, 0.33, 0.41, 0.08];
    for (const rho of [-0.15, 0, 0.25, 0.6, 0.95]) {
      const model = denseFromVolsAndCorrelation(vols, constantCorrelation(vols.length, rho));
      for (const r of solveBoth(model)) expect(maxAbsDiff(r.weights, inverseVolWeights(vols))).toBeLessThan(1e-9);
    }
  });

  it('σ = (10,20,30,40)%, ρ = 0: ERC (0.48, 0.24, 0.16, 0.12), volatility 0.096', () => {
    // Maillard, Roncalli & Teïletche (2010), worked example (values in REFERENCES.md).
    const model = denseFromVolsAndCorrelation(VOLS, constantCorrelation(4, 0));
    for (const r of solveBoth(model)) {
      expect(maxAbsDiff(r.weights, [0.48, 0.24, 0.16, 0.12])).toBeLessThan(1e-9);
      expect(Math.abs(volatility(model, r.weights) - 0.096)).toBeLessThan(1e-9);
    }
  });

  it('σ = (10,20,30,40)%, ρ = 0.5: ERC (0.48, 0.24, 0.16, 0.12), volatility 0.1517893278', () => {
    // Maillard, Roncalli & Teïletche (2010), worked example (values in REFERENCES.md).
    const model = denseFromVolsAndCorrelation(VOLS, constantCorrelation(4, 0.5));
    for (const r of solveBoth(model)) {
      expect(maxAbsDiff(r.weights, [0.48, 0.24, 0.16, 0.12])).toBeLessThan(1e-9);
      expect(Math.abs(volatility(model, r.weights) - 0.1517893278)).toBeLessThan(1e-9);
    }
  });

  // Their block correlation [[1,.8,0,0],[.8,1,0,0],[0,0,1,−.5],[0,0,−.5,1]] (REFERENCES.md).
  const blockCorrelation = MRT_BLOCK_CORRELATION;

  it('block correlation example: ERC weights, vol 0.1029340369, 1/N vol 0.1151086443', () => {
    // Maillard, Roncalli & Teïletche (2010), worked example with a block correlation matrix.
    const model = denseFromVolsAndCorrelation(VOLS, blockCorrelation);
    for (const r of solveBoth(model)) {
      expect(maxAbsDiff(r.weights, [0.3836125063, 0.1918062531, 0.2426178518, 0.1819633888])).toBeLessThan(1e-9);
      expect(Math.abs(volatility(model, r.weights) - 0.1029340369)).toBeLessThan(1e-9);
      // Equal risk contributions, checked by plain loops (Euler shares, Tasche 2008).
      expect(maxAbsDiff(riskShares(model, r.weights), [0.25, 0.25, 0.25, 0.25])).toBeLessThan(1e-12);
    }
    expect(Math.abs(volatility(model, [0.25, 0.25, 0.25, 0.25]) - 0.1151086443)).toBeLessThan(1e-9);
  });

  it('risk budgets (0.4, 0.3, 0.2, 0.1) give the published weights and risk shares', () => {
    // Maillard, Roncalli & Teïletche (2010) / Roncalli risk-budgeting example (values in REFERENCES.md).
    const model = denseFromVolsAndCorrelation(VOLS, blockCorrelation);
    const budgets = [0.4, 0.3, 0.2, 0.1];
    for (const r of solveBoth(model, budgets)) {
      expect(maxAbsDiff(r.weights, [0.4927987426, 0.1901660547, 0.194225736, 0.1228094666])).toBeLessThan(1e-9);
      expect(maxAbsDiff(riskShares(model, r.weights), budgets)).toBeLessThan(1e-12);
    }
  });
});

describe('risk parity on real data against scipy (vega-datasets stocks, scripts/reference/vega_stocks_reference.py)', () => {
  interface VegaFixture {
    sampleCovariance: number[][];
    optima: {
      riskParity: { weights: number[]; variance: number; spinu: { x: number[]; spinuObjective: number } };
    };
  }
  const fixture = JSON.parse(readFileSync(new URL('./fixtures/vega-stocks.json', import.meta.url), 'utf8')) as VegaFixture;
  const n = fixture.sampleCovariance.length;
  const model: DenseRiskModel = { kind: 'dense', n, cov: Float64Array.from(fixture.sampleCovariance.flat()) };

  it('ERC weights, Spinu x and variance match scipy trust-exact + root polish', () => {
    // scipy.optimize (trust-exact on Spinu's objective, polished by root/hybr): a general-purpose
    // solver on the same Σ (monthly returns of 5 stocks, ddof 1).
    const ref = fixture.optima.riskParity;
    for (const r of solveBoth(model)) {
      expect(maxAbsDiff(r.weights, ref.weights)).toBeLessThan(1e-9);
      expect(maxAbsDiff(r.warmStart.x, ref.spinu.x)).toBeLessThan(1e-8);
      expect(Math.abs(volatility(model, r.weights) ** 2 - ref.variance)).toBeLessThan(1e-12);
      // Spinu's objective at the solution: ½xᵀΣx − Σ b ln x with b = 1/N.
      const x = r.warmStart.x;
      let quad = 0;
      let logs = 0;
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < n; j++) quad += x[i] * model.cov[i * n + j] * x[j];
        logs += Math.log(x[i]) / n;
      }
      expect(Math.abs(0.5 * quad - logs - ref.spinu.spinuObjective)).toBeLessThan(1e-12);
    }
  });
});

describe('solver paths agree', () => {
  function randomFactorModel(n: number, k: number, seed: number): FactorRiskModel {
    const u = parkMiller(seed); // Park–Miller generator (REFERENCES.md)
    const loadings = new Float64Array(n * k);
    for (let i = 0; i < n * k; i++) loadings[i] = 1.6 * u() - 0.5;
    const a = new Float64Array(k * k);
    for (let i = 0; i < k * k; i++) a[i] = u() - 0.5;
    const factorCov = new Float64Array(k * k);
    for (let p = 0; p < k; p++) {
      for (let q = 0; q < k; q++) {
        let s = 0;
        for (let c = 0; c < k; c++) s += a[p * k + c] * a[q * k + c];
        factorCov[p * k + q] = 0.003 * s + (p === q ? 0.0005 : 0);
      }
    }
    const specificVar = new Float64Array(n);
    for (let i = 0; i < n; i++) specificVar[i] = 0.0005 + 0.004 * u();
    return { kind: 'factor', n, k, factorNames: Array.from({ length: k }, (_, i) => `f${i}`), loadings, factorCov, specificVar };
  }

  it('Newton and coordinate descent agree on random dense problems (and give equal risk shares)', () => {
    // Spinu (2013) and Griveau-Billion, Richard & Roncalli (2013) solve the same condition x∘(Σx) = b.
    for (const seed of [3, 17, 101, 9001]) {
      const factor = randomFactorModel(40, 4, seed);
      const dense: DenseRiskModel = { kind: 'dense', n: 40, cov: toDenseCovariance(factor) };
      const [newton, ccd] = solveBoth(dense);
      expect(maxAbsDiff(newton.weights, ccd.weights)).toBeLessThan(1e-10);
      expect(maxAbsDiff(riskShares(dense, newton.weights), new Array(40).fill(1 / 40))).toBeLessThan(1e-12);
    }
  });

  it('factor-model path (Woodbury Newton, O(NK) sweeps) agrees with the dense path on the same Σ', () => {
    for (const [n, k, seed] of [
      [12, 2, 5],
      [150, 3, 77],
      [300, 6, 4242],
    ] as const) {
      const factor = randomFactorModel(n, k, seed);
      const dense: DenseRiskModel = { kind: 'dense', n, cov: toDenseCovariance(factor) };
      const budgets = Array.from({ length: n }, (_, i) => 1 + (i % 5));
      const [factorNewton, factorCcd] = solveBoth(factor, budgets);
      const [denseNewton, denseCcd] = solveBoth(dense, budgets);
      expect(factorNewton.diagnostics.solver).toBe('newton-woodbury');
      expect(maxAbsDiff(factorNewton.weights, denseNewton.weights)).toBeLessThan(1e-10);
      expect(maxAbsDiff(factorCcd.weights, denseCcd.weights)).toBeLessThan(1e-10);
      expect(maxAbsDiff(factorNewton.weights, denseCcd.weights)).toBeLessThan(1e-10);
      const total = budgets.reduce((a, b) => a + b, 0);
      expect(maxAbsDiff(riskShares(dense, factorNewton.weights), budgets.map((b) => b / total))).toBeLessThan(1e-11);
    }
  });
});
