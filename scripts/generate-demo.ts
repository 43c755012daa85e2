/**
 * Generates schemas/examples/demo-proposal.json: an invented scenario, not real data.
 *
 * "Larchmere Valley Retirement Fund" (fictional) reviews a strategic allocation across ten broad
 * asset classes, built by mean-variance (λ = 4) from 15 years (180 months) of its own monthly
 * history, with long-only bounds and group limits. Returns are simulated from a seeded
 * Gaussian model with the annual volatilities and correlations below (plausible for broad asset
 * classes; chosen by us, not taken from any dataset). Listed real estate gets AR(1)
 * autocorrelation 0.3 (appraisal-style smoothing) so the stationary bootstrap has serial
 * dependence to respect. Expected returns differ only a little across classes, so the sample
 * means — 15 years of noise — drive the optimiser: the stress is interesting.
 *
 * The proposed weights are the mean-variance optimum of our own optimiser on these inputs (what
 * the fund's optimiser would hand the committee), rounded to 10 decimals.
 *
 * Run: npm run demo:generate (deterministic; same output every time).
 */
import { writeFileSync } from 'node:fs';
import { validateProposal } from '../src/schema/validate.js';
import { optimizeProposal } from '../src/stress/run.js';

const assets = [
  'domestic-equity',
  'developed-equity',
  'emerging-equity',
  'small-cap-equity',
  'government-bonds',
  'inflation-linked',
  'investment-grade-credit',
  'high-yield-credit',
  'listed-real-estate',
  'commodities',
];
// Annual expected returns and volatilities (invented, plausible ranges).
const annualMean = [0.065, 0.06, 0.075, 0.07, 0.025, 0.028, 0.035, 0.05, 0.055, 0.04];
const annualVol = [0.16, 0.17, 0.23, 0.21, 0.05, 0.06, 0.065, 0.1, 0.19, 0.2];
// Correlations (invented, symmetric, positive definite — checked below by Cholesky).
const corr = [
  [1.0, 0.85, 0.72, 0.88, -0.2, 0.05, 0.3, 0.62, 0.65, 0.3],
  [0.85, 1.0, 0.76, 0.78, -0.15, 0.08, 0.32, 0.6, 0.62, 0.33],
  [0.72, 0.76, 1.0, 0.7, -0.1, 0.12, 0.3, 0.6, 0.55, 0.42],
  [0.88, 0.78, 0.7, 1.0, -0.22, 0.04, 0.28, 0.64, 0.66, 0.3],
  [-0.2, -0.15, -0.1, -0.22, 1.0, 0.65, 0.7, 0.05, 0.1, -0.1],
  [0.05, 0.08, 0.12, 0.04, 0.65, 1.0, 0.6, 0.25, 0.2, 0.35],
  [0.3, 0.32, 0.3, 0.28, 0.7, 0.6, 1.0, 0.55, 0.35, 0.1],
  [0.62, 0.6, 0.6, 0.64, 0.05, 0.25, 0.55, 1.0, 0.55, 0.3],
  [0.65, 0.62, 0.55, 0.66, 0.1, 0.2, 0.35, 0.55, 1.0, 0.2],
  [0.3, 0.33, 0.42, 0.3, -0.1, 0.35, 0.1, 0.3, 0.2, 1.0],
];
const months = 180;
const ar1 = assets.map((a) => (a === 'listed-real-estate' ? 0.3 : 0));

// Park–Miller minimal standard generator (the same one the reference fixtures use).
let state = 20261202;
function uniform(): number {
  state = (16807 * state) % 2147483647;
  return state / 2147483647;
}
function normal(): number {
  // Box–Muller; uses two uniforms per call for simplicity.
  const u1 = uniform();
  const u2 = uniform();
  return Math.sqrt(-2 * Math.log(u1)) * Math.cos(2 * Math.PI * u2);
}

const n = assets.length;
const monthlyVol = annualVol.map((v) => v / Math.sqrt(12));
const cov = corr.map((row, i) => row.map((c, j) => c * monthlyVol[i] * monthlyVol[j]));
// Cholesky factor of the monthly covariance.
const chol = cov.map(() => new Array<number>(n).fill(0));
for (let i = 0; i < n; i++) {
  for (let j = 0; j <= i; j++) {
    let s = cov[i][j];
    for (let k = 0; k < j; k++) s -= chol[i][k] * chol[j][k];
    if (i === j) {
      if (s <= 0) throw new Error('demo correlation matrix is not positive definite');
      chol[i][i] = Math.sqrt(s);
    } else chol[i][j] = s / chol[j][j];
  }
}

const returns: number[][] = [];
const previousShock = new Array<number>(n).fill(0);
for (let t = 0; t < months; t++) {
  const z = Array.from({ length: n }, normal);
  const row: number[] = [];
  for (let i = 0; i < n; i++) {
    let shock = 0;
    for (let k = 0; k <= i; k++) shock += chol[i][k] * z[k];
    // AR(1) in the shock, rescaled so the unconditional variance is unchanged.
    const smoothed = ar1[i] * previousShock[i] + Math.sqrt(1 - ar1[i] * ar1[i]) * shock;
    previousShock[i] = smoothed;
    row.push(Number((annualMean[i] / 12 + smoothed).toFixed(6)));
  }
  returns.push(row);
}

const proposal = {
  assets,
  // Replaced below by the mean-variance optimum on these inputs: the allocation the fund's optimiser proposed.
  weights: assets.map(() => 1 / assets.length),
  inputs: { returns, periodsPerYear: 12 },
  method: { name: 'mean-variance', riskAversion: 4 },
  constraints: {
    longOnly: true,
    budget: 1,
    upper: 0.3,
    groups: [
      { name: 'equities', assets: assets.slice(0, 4), max: 0.6 },
      { name: 'defensive-fixed-income', assets: ['government-bonds', 'inflation-linked', 'investment-grade-credit'], min: 0.25 },
    ],
  },
  estimation: { covariance: 'ledoit-wolf' },
  resampling: { draws: 500, scheme: 'stationary-bootstrap', meanBlockLength: 'auto', seed: 'larchmere-2026' },
};

const validation = validateProposal(proposal);
if (!validation.ok) throw new Error(`demo proposal invalid: ${JSON.stringify(validation.problems)}`);
const optimum = await optimizeProposal(validation.proposal, validation.warnings);
proposal.weights = optimum.methods[0].base.weights.map((w) => Number(w.toFixed(10)));
const out = new URL('../schemas/examples/demo-proposal.json', import.meta.url);
writeFileSync(out, JSON.stringify(proposal, null, 2) + '\n');
console.log('wrote schemas/examples/demo-proposal.json');
