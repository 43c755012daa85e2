import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { DenseRiskModel } from '../../src/linalg/risk-model.js';
import { riskContributionsInto } from '../../src/optimize/risk-decomposition.js';
import { solveRiskParity } from '../../src/optimize/risk-parity.js';

// Property-based checks (fast-check) of published properties of risk parity and of the Euler
// decomposition, on random positive-definite covariance matrices.

/** The npm package `quadprog` (Goldfarb & Idnani 1983 dual method; 1-indexed arrays, no types). */
interface QuadprogResult {
  solution?: number[];
  message: string;
}
interface Quadprog {
  solveQP(Dmat: number[][], dvec: number[], Amat: number[][], bvec: number[], meq: number): QuadprogResult;
}
const quadprog = createRequire(import.meta.url)('quadprog') as Quadprog;

/**
 * Long-only minimum variance, min wᵀΣw s.t. 1ᵀw = 1, w ≥ 0, by quadprog: an independent,
 * general-purpose QP solver used as the outside reference for σ_MV.
 */
function longOnlyMinimumVariance(model: DenseRiskModel): number[] {
  const n = model.n;
  const D: number[][] = [[]];
  const d: number[] = [0];
  const A: number[][] = [[]];
  const b: number[] = [0, 1];
  for (let i = 1; i <= n; i++) {
    D.push([0]);
    A.push([0, 1]); // column 1: budget (equality, meq = 1)
    d.push(0);
    for (let j = 1; j <= n; j++) D[i].push(model.cov[(i - 1) * n + (j - 1)]);
    for (let j = 1; j <= n; j++) A[i].push(i === j ? 1 : 0); // columns 2..n+1: w_j ≥ 0
  }
  for (let j = 1; j <= n; j++) b.push(0);
  const result = quadprog.solveQP(D, d, A, b, 1);
  if (result.solution === undefined || result.message !== '') throw new Error(`quadprog: ${result.message}`);
  return result.solution.slice(1);
}

function volatility(model: DenseRiskModel, w: ArrayLike<number>): number {
  const n = model.n;
  let v = 0;
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) v += w[i] * model.cov[i * n + j] * w[j];
  return Math.sqrt(v);
}

/** Random PD covariance: correlation from AAᵀ + δI (δ > 0 keeps it positive definite), random vols. */
const covarianceArb = fc.integer({ min: 2, max: 7 }).chain((n) =>
  fc
    .record({
      a: fc.array(fc.double({ min: -1, max: 1, noNaN: true }), { minLength: n * n, maxLength: n * n }),
      vols: fc.array(fc.double({ min: 0.02, max: 0.8, noNaN: true }), { minLength: n, maxLength: n }),
      ridge: fc.double({ min: 0.02, max: 1, noNaN: true }),
    })
    .map(({ a, vols, ridge }): DenseRiskModel => {
      const g = new Float64Array(n * n);
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < n; j++) {
          let s = i === j ? ridge : 0;
          for (let c = 0; c < n; c++) s += a[i * n + c] * a[j * n + c];
          g[i * n + j] = s;
        }
      }
      const cov = new Float64Array(n * n);
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < n; j++) {
          cov[i * n + j] = (vols[i] * vols[j] * g[i * n + j]) / Math.sqrt(g[i * n + i] * g[j * n + j]);
        }
      }
      return { kind: 'dense', n, cov };
    }),
);

function solveErc(model: DenseRiskModel): Float64Array {
  const r = solveRiskParity(model);
  expect(r.diagnostics.converged).toBe(true);
  expect(r.diagnostics.kktResidual).toBeLessThanOrEqual(1e-10);
  return r.weights;
}

describe('risk parity properties (Maillard, Roncalli & Teïletche 2010)', () => {
  it('scaling returns by c (Σ → c²Σ) scales volatility by c and leaves ERC weights unchanged', () => {
    // Risk contributions are homogeneous in Σ, so the ERC condition is scale-free (MRT 2010, §2).
    fc.assert(
      fc.property(covarianceArb, fc.double({ min: 0.01, max: 100, noNaN: true }), (model, c) => {
        const scaled: DenseRiskModel = { ...model, cov: model.cov.map((v) => v * c * c) };
        const w = solveErc(model);
        const ws = solveErc(scaled);
        for (let i = 0; i < model.n; i++) expect(Math.abs(w[i] - ws[i])).toBeLessThan(1e-10);
        const ratio = volatility(scaled, ws) / volatility(model, w);
        expect(Math.abs(ratio - c) / c).toBeLessThan(1e-10);
      }),
      { numRuns: 100 },
    );
  });

  it('permuting assets permutes the ERC weights', () => {
    // The ERC portfolio is defined asset by asset, with no reference to order (MRT 2010).
    const arb = covarianceArb.chain((model) =>
      fc.tuple(
        fc.constant(model),
        fc.shuffledSubarray(
          Array.from({ length: model.n }, (_, i) => i),
          { minLength: model.n, maxLength: model.n },
        ),
      ),
    );
    fc.assert(
      fc.property(arb, ([model, perm]) => {
        const n = model.n;
        const cov = new Float64Array(n * n);
        for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) cov[i * n + j] = model.cov[perm[i] * n + perm[j]];
        const w = solveErc(model);
        const wp = solveErc({ kind: 'dense', n, cov });
        for (let i = 0; i < n; i++) expect(Math.abs(wp[i] - w[perm[i]])).toBeLessThan(1e-10);
      }),
      { numRuns: 100 },
    );
  });

  it('σ_MV ≤ σ_ERC ≤ σ_1/N on random positive-definite matrices', () => {
    // Maillard, Roncalli & Teïletche (2010), volatility ordering; σ_MV from quadprog (long-only).
    fc.assert(
      fc.property(covarianceArb, (model) => {
        const n = model.n;
        const mv = longOnlyMinimumVariance(model);
        const sigmaMv = volatility(model, mv);
        const sigmaErc = volatility(model, solveErc(model));
        const sigmaEqual = volatility(model, new Array(n).fill(1 / n));
        expect(sigmaMv).toBeLessThanOrEqual(sigmaErc * (1 + 1e-9));
        expect(sigmaErc).toBeLessThanOrEqual(sigmaEqual * (1 + 1e-12));
      }),
      { numRuns: 150 },
    );
  });

  it('σ_MV ≤ σ_ERC ≤ σ_1/N on real data, σ_MV from the cvxpy/CLARABEL fixture', () => {
    // vega-datasets stocks (scripts/reference/vega_stocks_reference.py): long-only minimum
    // variance solved by cvxpy + CLARABEL, cross-checked by scipy SLSQP.
    const fixture = JSON.parse(readFileSync(new URL('./fixtures/vega-stocks.json', import.meta.url), 'utf8')) as {
      sampleCovariance: number[][];
      optima: { minimumVariance: { variance: number; weights: number[] } };
    };
    const n = fixture.sampleCovariance.length;
    const model: DenseRiskModel = { kind: 'dense', n, cov: Float64Array.from(fixture.sampleCovariance.flat()) };
    const sigmaMv = Math.sqrt(fixture.optima.minimumVariance.variance);
    // quadprog agrees with the fixture's minimum variance (two independent solvers).
    expect(Math.abs(volatility(model, longOnlyMinimumVariance(model)) - sigmaMv)).toBeLessThan(1e-9);
    const sigmaErc = volatility(model, solveErc(model));
    expect(sigmaMv).toBeLessThan(sigmaErc);
    expect(sigmaErc).toBeLessThan(volatility(model, new Array(n).fill(1 / n)));
  });
});

describe('Euler decomposition property (Tasche 2008, arXiv:0708.2542)', () => {
  it('risk contributions sum to the volatility for any weights, long or short', () => {
    const arb = covarianceArb.chain((model) =>
      fc.tuple(fc.constant(model), fc.array(fc.double({ min: -1, max: 1, noNaN: true }), { minLength: model.n, maxLength: model.n })),
    );
    fc.assert(
      fc.property(arb, ([model, wArr]) => {
        const w = Float64Array.from(wArr);
        const sigma = volatility(model, w);
        fc.pre(sigma > 1e-6);
        const rc = new Float64Array(model.n);
        const reported = riskContributionsInto(model, w, rc);
        const sum = rc.reduce((a, b) => a + b, 0);
        expect(Math.abs(reported - sigma) / sigma).toBeLessThan(1e-12);
        expect(Math.abs(sum - sigma) / sigma).toBeLessThan(1e-11);
      }),
      { numRuns: 200 },
    );
  });
});
