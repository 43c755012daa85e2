/**
 * The worst accepted request of each kind, for `npm run bench:limits` and the memory-limit test
 * (invented data, for timing and memory only). Each shape is sized up to the work, memory and
 * response limits by src/cost itself, so the measurements check the models at their edges.
 */
import { readFileSync } from 'node:fs';
import { priceRequest } from '../../src/cost/check.js';
import { requestShape, type Job } from '../../src/cost/request-shape.js';
import type { Proposal, ProposalInput } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import { methodList } from '../../src/stress/problem.js';
import { targetStressProposal } from './problems.js';
import { buildCase } from './singular-cases.js';

/** Park–Miller uniforms (as test/bench/problems.ts), so every run builds the same data. */
function uniforms(seed: number): () => number {
  let s = seed;
  return () => {
    s = (16807 * s) % 2147483647;
    return s / 2147483647;
  };
}

const ids = (n: number, width = 8): string[] => Array.from({ length: n }, (_, i) => `asset-${String(i).padStart(width, '0')}`);

/** Σ = B Bᵀ + D with K = 5 factors; `singular` drops D and makes Σ rank-deficient (N > 5) with a tiny negative wobble. */
function covariance(n: number, u: () => number, singular = false): number[][] {
  const k = 5;
  const b = Array.from({ length: n }, () => Array.from({ length: k }, () => 0.1 * (u() - 0.3)));
  const out = Array.from({ length: n }, () => new Array<number>(n).fill(0));
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = 0;
      for (let a = 0; a < k; a++) s += b[i][a] * b[j][a];
      if (i === j) s += singular ? -1e-6 * u() : 0.002 + 0.004 * u();
      out[i][j] = Number(s.toPrecision(8));
      out[j][i] = out[i][j];
    }
  }
  return out;
}

function history(n: number, t: number, u: () => number): number[][] {
  const market = Array.from({ length: t }, () => 0.04 * (u() - 0.5));
  return market.map((m) => Array.from({ length: n }, (_, i) => Number((0.001 + (0.5 + (i % 7) / 7) * m + 0.03 * (u() - 0.5)).toFixed(6))));
}


export interface LimitShape {
  readonly name: string;
  readonly job: Job;
  readonly body: ProposalInput;
  /** The baseline proposal of a check (same draws). */
  readonly baseline?: ProposalInput;
}

/** Largest draws (≤ cap) at which the request still fits every limit. */
function maxDraws(job: Job, body: ProposalInput, baseline: ProposalInput | undefined, cap = 5000): number {
  const v = validateProposal(body);
  if (!v.ok) throw new Error(`shape is invalid: ${JSON.stringify(v.problems).slice(0, 300)}`);
  const b = baseline ? validateProposal(baseline) : undefined;
  if (b && !b.ok) throw new Error('baseline is invalid');
  const fits = (d: number): boolean =>
    !priceRequest(job, requestShape(v.proposal, methodList(v.proposal), d), { baseline: b?.ok ? requestShape(b.proposal, methodList(b.proposal), d) : undefined }).over;
  if (!fits(1)) return 0;
  let lo = 1;
  let hi = cap;
  if (fits(hi)) return hi;
  while (hi - lo > 1) {
    const mid = Math.floor((lo + hi) / 2);
    if (fits(mid)) lo = mid;
    else hi = mid;
  }
  return lo;
}

/**
 * Whether a request of this shape fits every limit, priced from its array lengths alone (the
 * probe is used as the parsed proposal: requestShape reads only lengths and settings).
 */
function fits(job: Job, body: ProposalInput): boolean {
  const p = body as Proposal;
  return !priceRequest(job, requestShape(p, methodList(p))).over;
}

/** Largest N (a multiple of `step`, ≤ 2000) whose request, built cheaply by `probe`, fits (bisection). */
function largestN(job: Job, probe: (n: number) => ProposalInput, step = 50): number {
  let lo = 0;
  let hi = 2000 / step + 1;
  while (hi - lo > 1) {
    const mid = Math.floor((lo + hi) / 2);
    if (fits(job, probe(mid * step))) lo = mid;
    else hi = mid;
  }
  return Math.max(step, lo * step);
}

function denseProbe(n: number, extra: Partial<ProposalInput> = {}): ProposalInput {
  const a = ids(n);
  const row = new Array<number>(n).fill(0);
  return { assets: a, weights: a.map(() => 1 / n), inputs: { mean: a.map(() => 0.005), covariance: a.map(() => row), observations: 60, periodsPerYear: 12 }, method: { name: 'mean-variance', riskAversion: 4 }, ...extra };
}

/** A history of N/2 + 1 rows with shorts allowed (priced from its lengths alone, see `fits`). */
function singularHistoryProbe(n: number): ProposalInput {
  const a = ids(n);
  const row = new Array<number>(n).fill(0);
  return { assets: a, weights: a.map(() => 1 / n), inputs: { returns: Array.from({ length: n / 2 + 1 }, () => row), periodsPerYear: 12 }, method: { name: 'minimum-variance' }, compare: [], constraints: { longOnly: false, lower: -0.1, upper: 0.2 } };
}

function withDraws(job: Job, name: string, body: ProposalInput, baseline?: ProposalInput, fraction = 1): LimitShape {
  const draws = Math.max(1, Math.floor(fraction * maxDraws(job, body, baseline)));
  const set = (p: ProposalInput): ProposalInput => ({ ...p, resampling: { ...p.resampling, draws, seed: 'limits' } });
  return { name: `${name} (${draws} draws)`, job, body: set(body), baseline: baseline && set(baseline) };
}

/** Overlapping groups: `g` groups, each of ~`share` of the assets, with maxima binding near equal weights. */
function groups(assets: string[], g: number, share: number, u: () => number): NonNullable<ProposalInput['constraints']>['groups'] {
  return Array.from({ length: g }, (_, k) => {
    const members = assets.filter(() => u() < share);
    return { name: `group-${k}`, assets: members.length > 0 ? members : [assets[k % assets.length]], max: Math.min(1, (members.length / assets.length) * (0.9 + 0.2 * u())) };
  });
}

/** Like `groups`, but every maximum is at or above the equal-weight share (0–15 % above), so equal weights are feasible. */
function feasibleGroups(assets: string[], g: number, share: number, u: () => number): NonNullable<ProposalInput['constraints']>['groups'] {
  return Array.from({ length: g }, (_, k) => {
    const members = assets.filter(() => u() < share);
    const chosen = members.length > 0 ? members : [assets[k % assets.length]];
    return { name: `group-${k}`, assets: chosen, max: Math.min(1, (chosen.length / assets.length) * (1 + 0.15 * u())) };
  });
}

/**
 * The shapes. `fraction` scales the draws of the stress shapes (1 = the largest accepted); the
 * optimize shapes are at the largest accepted size already.
 */
export type ShapeKind = 'optimize' | 'repair' | 'singular' | 'groups' | 'warm-groups' | 'parametric' | 'history' | 'kelly' | 'factor' | 'check';

export function limitShapes(fraction = 1, kinds: readonly ShapeKind[] = ['optimize', 'repair', 'singular', 'groups', 'warm-groups', 'parametric', 'history', 'kelly', 'factor', 'check']): LimitShape[] {
  const u = uniforms(20261202);
  const out: LimitShape[] = [];
  const want = (k: ShapeKind): boolean => kinds.includes(k);

  const n2000 = ids(2000, 8);
  const denseN = largestN('optimize', (n) => denseProbe(n));
  const dn = ids(denseN);
  if (want('optimize')) out.push({
    name: `optimize: dense N=${denseN}, all six methods`,
    job: 'optimize',
    body: { assets: dn, weights: dn.map(() => 1 / denseN), inputs: { mean: dn.map(() => Number((0.003 + 0.01 * u()).toFixed(6))), covariance: covariance(denseN, u), observations: 120, periodsPerYear: 12 }, method: { name: 'mean-variance', riskAversion: 4 } },
  });

  // Repair needs an eigendecomposition: the largest N the limits accept.
  const repairN = largestN('optimize', (n) => denseProbe(n, { method: { name: 'minimum-variance' }, compare: [], estimation: { repairCovariance: true } }));
  const ra = ids(repairN);
  if (want('repair')) out.push({
    name: `optimize: singular dense N=${repairN} with repairCovariance, minimum-variance`,
    job: 'optimize',
    body: { assets: ra, weights: ra.map(() => 1 / repairN), inputs: { mean: ra.map(() => 0.005), covariance: covariance(repairN, u, true), observations: 60, periodsPerYear: 12 }, method: { name: 'minimum-variance' }, compare: [], estimation: { repairCovariance: true } },
  });

  // The worst singular shapes of `npm run bench:singular` (src/cost/work-model.ts, singularQpUnits):
  // the slowest cold solve (rank N/2, mean-variance with shorts) at the largest N accepted; the
  // slowest warm solves (parametric draws from 6 observations, shorts and 50 groups); and the
  // common case, a history of fewer rows than assets, with many draws.
  if (want('singular')) {
    const singularN = largestN('optimize', (n) => ({ ...singularHistoryProbe(n), method: { name: 'mean-variance', riskAversion: 8 } }));
    const cold = buildCase(`history:${singularN}:half:mv8:short`);
    out.push({ name: `optimize: singular history N=${singularN}, T=${singularN / 2 + 1} (sample covariance of rank N/2), mean-variance λ 8 with shorts`, job: 'optimize', body: cold.body });
    const warm = buildCase('fewobs:200:5:mv0.5:sg50');
    out.push(withDraws('stress', 'stress: moments N=200, observations 6 (every Wishart draw singular), mean-variance λ 0.5, shorts, 50 overlapping groups', warm.body, undefined, fraction));
    const common = buildCase('history:400:199:mv4:long');
    out.push(withDraws('stress', 'stress: history N=400, T=200 (singular sample covariance), mean-variance + minimum-variance', { ...common.body, compare: [{ name: 'minimum-variance' }] }, undefined, fraction));
  }

  const n300 = ids(300);
  if (want('groups')) out.push({
    name: 'optimize: dense N=300, 200 overlapping groups (~18 000 memberships), mean-variance',
    job: 'optimize',
    body: {
      assets: n300,
      weights: n300.map(() => 1 / 300),
      inputs: { mean: n300.map(() => Number((0.003 + 0.01 * u()).toFixed(6))), covariance: covariance(300, u), observations: 120, periodsPerYear: 12 },
      method: { name: 'mean-variance', riskAversion: 2 },
      compare: [],
      constraints: { upper: 0.05, groups: groups(n300, 200, 0.3, u) },
    },
  });

  // Per-draw solves with more groups than assets: the warm start's working set moves as much as a
  // cold solve's (the measured worst of the warm group term, src/cost/work-model.ts).
  if (want('warm-groups')) {
    const shape = calibrationShapes().find((c) => c.name.startsWith('dense N=100') && c.name.endsWith(' 200 overlapping groups'));
    if (shape) out.push(withDraws('stress', `stress: ${shape.name}`, shape.body, undefined, fraction));
  }

  const historyN = largestN('stress', (n) => ({
    assets: ids(n),
    weights: ids(n).map(() => 1 / n),
    inputs: { returns: [0, 1, 2].map(() => new Array<number>(n).fill(0)), periodsPerYear: 252 },
    method: { name: 'equal-weight' },
    compare: [{ name: 'inverse-volatility' }],
    resampling: { scheme: 'iid-bootstrap', draws: 1 },
  }));
  const n500 = ids(500);
  if (want('parametric')) out.push(
    withDraws('stress', 'stress: dense moments N=500, parametric, all six methods', {
      assets: n500,
      weights: n500.map(() => 1 / 500),
      inputs: { mean: n500.map(() => Number((0.003 + 0.01 * u()).toFixed(6))), covariance: covariance(500, u), observations: 120, periodsPerYear: 12 },
      method: { name: 'mean-variance', riskAversion: 4 },
    }, undefined, fraction),
  );

  if (want('history')) out.push(
    withDraws('stress', `stress: history N=${historyN}, T=3, iid bootstrap, equal-weight + inverse-volatility`, {
      assets: ids(historyN),
      weights: ids(historyN).map(() => 1 / historyN),
      inputs: { returns: history(historyN, 3, u), periodsPerYear: 252 },
      method: { name: 'equal-weight' },
      compare: [{ name: 'inverse-volatility' }],
      resampling: { scheme: 'iid-bootstrap' },
    }, undefined, fraction),
  );

  const n100 = ids(100);
  const kellyHistory = history(100, 1000, u);
  if (want('kelly')) out.push(
    withDraws('stress', 'stress: history N=100, T=1000, scenario Kelly + mean-variance', {
      assets: n100,
      weights: n100.map(() => 1 / 100),
      inputs: { returns: kellyHistory, periodsPerYear: 252 },
      method: { name: 'kelly', fraction: 0.5 },
      compare: [{ name: 'mean-variance', riskAversion: 4 }],
      estimation: { covariance: 'ledoit-wolf' },
    }, undefined, fraction),
  );

  const k = 20;
  const factors = Array.from({ length: k }, (_, a) => `factor-${a}`);
  const factorCovariance = factors.map((_, a) => factors.map((__, b) => (a === b ? 0.002 : 0.0002)));
  if (want('factor')) out.push(
    withDraws('stress', 'stress: factor model N=2000, K=20, all six methods', {
      assets: n2000,
      weights: n2000.map(() => 1 / 2000),
      inputs: {
        mean: n2000.map(() => Number((0.003 + 0.01 * u()).toFixed(6))),
        factorModel: { factors, loadings: n2000.map(() => factors.map(() => Number((u() - 0.3).toFixed(4)))), factorCovariance, specificVariance: n2000.map(() => Number((0.001 + 0.003 * u()).toFixed(6))) },
        observations: 120,
        periodsPerYear: 12,
      },
      method: { name: 'minimum-variance' },
    }, undefined, fraction),
  );

  const n200 = ids(200);
  const checkBody: ProposalInput = {
    assets: n200,
    weights: n200.map(() => 1 / 200),
    inputs: { returns: history(200, 500, u), periodsPerYear: 252 },
    method: { name: 'mean-variance', riskAversion: 4 },
    compare: [{ name: 'minimum-variance' }, { name: 'risk-parity' }],
    estimation: { covariance: 'ledoit-wolf' },
    constraints: { upper: 0.05, groups: groups(n200, 20, 0.3, u) },
  };
  if (want('check')) out.push(withDraws('check', 'check: history N=200, T=500, 3 methods, 20 groups, baseline proposal', checkBody, { ...checkBody, weights: n200.map((_, i) => (i < 100 ? 1.5 : 0.5) / 200) }, fraction));
  return out;
}

/**
 * Ordinary requests for `npm run bench:limits` (at their own draws, not sized to the limits): the
 * 30-asset monthly history with all six methods and one group at 1500 draws (the scale-out
 * benchmark's case), the demo at its 500 draws, and the same history with 50 and 200 overlapping
 * groups at 500 draws or the most the work limit accepts.
 */
export function ordinaryShapes(): LimitShape[] {
  const [target, demo, , g50, g200] = calibrationShapes();
  const at = (name: string, body: ProposalInput, draws: number): LimitShape => {
    const accepted = Math.max(1, Math.min(draws, maxDraws('stress', body, undefined, draws)));
    return { name: `ordinary: ${name} (${accepted} draws${accepted < draws ? `, the most accepted of ${draws}` : ''})`, job: 'stress', body: { ...body, resampling: { ...body.resampling, draws: accepted, seed: 'limits' } } };
  };
  return [at(target.name, target.body, 1500), at(demo.name, demo.body, 500), at(g50.name, g50.body, 500), at(g200.name, g200.body, 500)];
}

/**
 * Shapes for the work model's calibration (test/bench/work-calibration.ts) and the ordinary rows
 * of `npm run bench:limits`: the 30-asset monthly history (six methods) with 1 to 200 groups, the
 * demo, and wider dense problems with many overlapping groups, whose noisy draws move the warm
 * start's working set the most. Draws are set by the caller.
 */
export function calibrationShapes(): { name: string; body: ProposalInput }[] {
  const u = uniforms(20261203);
  const out: { name: string; body: ProposalInput }[] = [];
  const target = targetStressProposal('all');
  const a30 = target.assets;
  out.push({ name: '30 assets, T=240, six methods, 1 group', body: target });
  out.push({ name: 'demo (10 assets, T=180, six methods, 2 groups)', body: JSON.parse(readFileSync(new URL('../../schemas/examples/demo-proposal.json', import.meta.url), 'utf8')) as ProposalInput });
  for (const g of [10, 50, 200]) {
    out.push({ name: `30 assets, T=240, six methods, ${g} overlapping groups`, body: { ...target, constraints: { ...target.constraints, groups: feasibleGroups(a30, g, 0.3, u) } } });
  }
  for (const n of [100, 300]) {
    const a = ids(n);
    const dense = (g: number): ProposalInput => ({
      assets: a,
      weights: a.map(() => 1 / n),
      inputs: { mean: a.map(() => Number((0.003 + 0.01 * u()).toFixed(6))), covariance: covariance(n, u), observations: 60, periodsPerYear: 12 },
      method: { name: 'mean-variance', riskAversion: 2 },
      compare: [{ name: 'minimum-variance' }],
      constraints: { upper: Math.min(1, 15 / n), ...(g > 0 ? { groups: feasibleGroups(a, g, 0.3, u) } : {}) },
      resampling: { scheme: 'parametric' },
    });
    for (const g of [0, 50, 200]) out.push({ name: `dense N=${n}, parametric (60 obs.), mean-variance + minimum-variance, ${g} overlapping groups`, body: dense(g) });
  }
  return out;
}
