import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { sampleCovariance } from '../../src/estimate/covariance.js';
import { ewmaCovariance } from '../../src/estimate/ewma.js';
import { pcaFactorModel, regressionFactorModel } from '../../src/estimate/factor-model.js';
import { returnHistoryFromRows } from '../../src/estimate/history.js';
import { ledoitWolfConstantCorrelation, ledoitWolfIdentity } from '../../src/estimate/ledoit-wolf.js';
import { sampleMean } from '../../src/estimate/means.js';
import { EstimationWorkspace } from '../../src/estimate/workspace.js';
import { parkMiller } from '../helpers/reference-data.js';

// Fixture written by scripts/reference/estimation_reference.py (numpy 2.4.6, scikit-learn 1.9.1):
// numpy.cov (ddof = 1), weighted numpy.cov for EWMA, sklearn LedoitWolf, numpy.linalg.lstsq, numpy.linalg.eigh.
interface EwmaReference {
  decay: number;
  zeroMean: number[][];
  weightedMean: number[][];
  effectiveObservations: number;
}
interface EstimatesReference {
  sampleMean: number[];
  sampleCovariance: number[][];
  ewma: EwmaReference[];
  ledoitWolf: { shrinkage: number; covariance: number[][] };
  constantCorrelation: { shrinkage: number; meanCorrelation: number; covariance: number[][] };
  regression: { alpha: number[]; loadings: number[][]; factorCovariance: number[][]; specificVariance: number[] };
  pca: { components: number; eigenvalues: number[]; loadings: number[][]; factorVariances: number[]; specificVariance: number[] };
}
interface EstimationFixture {
  generator: { seed: number; periods: number; assets: number; factors: number };
  returns: number[][];
  factors: number[][];
  rows: number[];
  full: EstimatesReference;
  selected: EstimatesReference;
}
const fixture = readFixture<EstimationFixture>('estimation.json');

// Open dataset: vega-datasets stocks.csv (BSD-3-Clause), monthly returns and numpy moments,
// written by scripts/reference/vega_stocks_reference.py.
interface VegaStocksFixture {
  assets: string[];
  dataset: { firstPriceDate: string; lastPriceDate: string };
  returns: number[][];
  sampleMean: number[];
  sampleCovariance: number[][];
}
const vega = readFixture<VegaStocksFixture>('vega-stocks.json');

function readFixture<T>(name: string): T {
  return JSON.parse(readFileSync(new URL(`fixtures/${name}`, import.meta.url), 'utf8')) as T;
}

/** max |a − e| / max |e|: errors relative to the size of the quantity. */
function relativeGap(actual: ArrayLike<number>, expected: readonly number[] | readonly number[][]): number {
  const flat = (expected as readonly (number | number[])[]).flat() as number[];
  expect(actual.length).toBe(flat.length);
  const scale = Math.max(...flat.map(Math.abs));
  let gap = 0;
  for (let i = 0; i < flat.length; i++) gap = Math.max(gap, Math.abs(actual[i] - flat[i]));
  return gap / scale;
}

/** The generator stated in estimation_reference.py's docstring. */
function rebuildInput(): { returns: number[][]; factors: number[][]; rows: number[] } {
  const { seed, periods, assets, factors: k } = fixture.generator;
  const trueLoadings = [[1, 0.2], [0.8, -0.3], [1.2, 0.5], [0.5, 0.9], [0.9, 0]];
  const next = parkMiller(seed); // Park–Miller LCG of shared/REFERENCES.md
  const returns: number[][] = [];
  const factors: number[][] = [];
  for (let t = 0; t < periods; t++) {
    const f: number[] = [];
    for (let a = 0; a < k; a++) f.push(0.05 * (next() - 0.5));
    const r: number[] = [];
    for (let i = 0; i < assets; i++) {
      let common = 0;
      for (let a = 0; a < k; a++) common += trueLoadings[i][a] * f[a];
      r.push(0.002 * (i + 1) + common + 0.02 * (next() - 0.5));
    }
    factors.push(f);
    returns.push(r);
  }
  const rows = Array.from({ length: periods }, () => Math.floor(periods * next()));
  return { returns, factors, rows };
}

const returns = returnHistoryFromRows(fixture.returns);
const factors = returnHistoryFromRows(fixture.factors);
const selection = Int32Array.from(fixture.rows);
const TOLERANCE = 1e-12;

describe('estimation fixture input', () => {
  it('is the stated Park–Miller construction', () => {
    const rebuilt = rebuildInput();
    expect(rebuilt.returns).toEqual(fixture.returns);
    expect(rebuilt.factors).toEqual(fixture.factors);
    expect(rebuilt.rows).toEqual(fixture.rows);
  });
});

// Each block runs on all 60 rows and on the bootstrap-style selection (numpy saw the copied rows,
// wobble the index array), with one workspace reused throughout as the stress loop would.
const workspace = new EstimationWorkspace();
for (const [label, rows, expected] of [
  ['all rows', undefined, fixture.full],
  ['selected rows', selection, fixture.selected],
] as const) {
  describe(`estimates on ${label} match numpy / scikit-learn`, () => {
    it('sample mean and sample covariance (numpy.cov, ddof = 1)', () => {
      expect(relativeGap(sampleMean(returns, { rows }), expected.sampleMean)).toBeLessThan(TOLERANCE);
      expect(relativeGap(sampleCovariance(returns, { rows, workspace }).model.cov, expected.sampleCovariance)).toBeLessThan(TOLERANCE);
    });

    it('EWMA, zero mean and weighted mean (numpy.cov with aweights, ddof = 0)', () => {
      // RiskMetrics Technical Document (1996) weights, normalised to sum to one.
      for (const reference of expected.ewma) {
        const zero = ewmaCovariance(returns, { rows, workspace, decay: reference.decay, mean: 'zero' });
        const weighted = ewmaCovariance(returns, { rows, workspace, decay: reference.decay, mean: 'weighted' });
        expect(relativeGap(zero.model.cov, reference.zeroMean)).toBeLessThan(TOLERANCE);
        expect(relativeGap(weighted.model.cov, reference.weightedMean)).toBeLessThan(TOLERANCE);
        expect(Math.abs(zero.effectiveObservations - reference.effectiveObservations)).toBeLessThan(1e-11);
      }
    });

    it('Ledoit–Wolf scaled identity (sklearn LedoitWolf) and constant correlation (paper formulas in numpy)', () => {
      const identity = ledoitWolfIdentity(returns, { rows, workspace });
      expect(Math.abs(identity.shrinkage - expected.ledoitWolf.shrinkage)).toBeLessThan(TOLERANCE);
      expect(relativeGap(identity.model.cov, expected.ledoitWolf.covariance)).toBeLessThan(TOLERANCE);
      const constant = ledoitWolfConstantCorrelation(returns, { rows, workspace });
      expect(Math.abs(constant.shrinkage - expected.constantCorrelation.shrinkage)).toBeLessThan(TOLERANCE);
      expect(Math.abs(constant.meanCorrelation! - expected.constantCorrelation.meanCorrelation)).toBeLessThan(TOLERANCE);
      expect(relativeGap(constant.model.cov, expected.constantCorrelation.covariance)).toBeLessThan(TOLERANCE);
    });

    it('regression factor model (numpy.linalg.lstsq with intercept; residual divisor T − K − 1)', () => {
      const fit = regressionFactorModel(returns, factors, ['f1', 'f2'], { rows, workspace });
      const reference = expected.regression;
      expect(relativeGap(fit.alpha, reference.alpha)).toBeLessThan(1e-10);
      expect(relativeGap(fit.model.loadings, reference.loadings)).toBeLessThan(1e-11);
      expect(relativeGap(fit.model.factorCov, reference.factorCovariance)).toBeLessThan(TOLERANCE);
      expect(relativeGap(fit.model.specificVar, reference.specificVariance)).toBeLessThan(1e-11);
    });

    it('PCA factor model (numpy.linalg.eigh of the ddof = 1 sample covariance)', () => {
      const reference = expected.pca;
      const fit = pcaFactorModel(returns, reference.components, { rows, workspace });
      expect(relativeGap(fit.eigenvalues, reference.eigenvalues)).toBeLessThan(TOLERANCE);
      expect(relativeGap(fit.model.loadings, reference.loadings)).toBeLessThan(1e-10);
      const k = reference.components;
      expect(relativeGap(Array.from({ length: k }, (_, a) => fit.model.factorCov[a * k + a]), reference.factorVariances)).toBeLessThan(TOLERANCE);
      expect(relativeGap(fit.model.specificVar, reference.specificVariance)).toBeLessThan(1e-10);
    });
  });
}

describe('vega-datasets monthly stock returns (open dataset)', () => {
  it('the fixture returns are the CSV prices turned into monthly simple returns', () => {
    // Independent of the Python script: parse node_modules/vega-datasets/data/stocks.csv here.
    const csv = readFileSync(new URL('../../node_modules/vega-datasets/data/stocks.csv', import.meta.url), 'utf8');
    const prices = new Map<string, Map<number, number>>();
    for (const line of csv.trim().split('\n').slice(1)) {
      const [symbol, date, price] = line.split(',');
      const day = Date.parse(`${date} UTC`);
      if (!prices.has(symbol)) prices.set(symbol, new Map());
      prices.get(symbol)!.set(day, Number(price));
    }
    expect([...prices.keys()].sort()).toEqual(vega.assets);
    const first = Date.parse(`${vega.dataset.firstPriceDate}T00:00:00Z`);
    const last = Date.parse(`${vega.dataset.lastPriceDate}T00:00:00Z`);
    const days = [...prices.get(vega.assets[0])!.keys()].filter((d) => d >= first && d <= last).sort((a, b) => a - b);
    expect(days.length).toBe(vega.returns.length + 1);
    for (let t = 1; t < days.length; t++) {
      const row = vega.assets.map((s) => prices.get(s)!.get(days[t])! / prices.get(s)!.get(days[t - 1])! - 1);
      for (let i = 0; i < row.length; i++) expect(Math.abs(row[i] - vega.returns[t - 1][i])).toBeLessThan(1e-15);
    }
  });

  it('sample mean and covariance (ddof = 1) reproduce numpy', () => {
    const history = returnHistoryFromRows(vega.returns);
    expect(relativeGap(sampleMean(history), vega.sampleMean)).toBeLessThan(TOLERANCE);
    expect(relativeGap(sampleCovariance(history).model.cov, vega.sampleCovariance)).toBeLessThan(TOLERANCE);
  });
});
