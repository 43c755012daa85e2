/**
 * The cases of `npm run bench:singular` (test/bench/singular-sweep.ts), also priced by
 * test/cost/work-model.test.ts against their measured CPU: proposals whose dense covariance is
 * singular (invented data, for timing only). A case is `input:n:rank:method:constraints`:
 *   input        moments (Σ of the given rank, PSD to rounding), repair (the same Σ with a tiny
 *                negative wobble on the diagonal and repairCovariance), history (T = rank + 1 rows,
 *                sample covariance of rank ≤ T − 1), fewobs (a full-rank Σ whose parametric
 *                Wishart draws have observations = rank + 1, singular when that is ≤ N)
 *   rank         a number, `half` (N/2), `n-1` (one null direction of mixed sign) or `n-1pos`
 *                (one null direction with positive entries: a riskless long-only portfolio)
 *   method       minvar, or mv<λ> (mean-variance with risk aversion λ, e.g. mv2)
 *   constraints  long (long-only), cap (long-only, upper max(3/N, 0.02)), short (lower −0.1, upper
 *                0.2), g<G> (long-only with G overlapping group maxima), sg<G> (shorts with groups)
 */
import type { ProposalInput } from '../../src/schema/proposal.js';

/** Park–Miller uniforms and Box–Muller normals (as test/bench/problems.ts): the same data on every run. */
function normals(seed: number): () => number {
  let s = seed;
  const u = (): number => {
    s = (16807 * s) % 2147483647;
    return s / 2147483647;
  };
  return () => Math.sqrt(-2 * Math.log(u())) * Math.cos(2 * Math.PI * u());
}

const ids = (n: number): string[] => Array.from({ length: n }, (_, i) => `a${String(i).padStart(5, '0')}`);

/** r random factors with per-asset scales (vols ~1–4 % a month): Σ = B Bᵀ, rank r, or a full-rank Σ projected off one null vector. */
function factorRows(n: number, r: number, z: () => number): number[][] {
  return Array.from({ length: n }, (_, i) => {
    const scale = 0.01 * (1 + 3 * ((i * 7919) % 101) / 101) / Math.sqrt(r);
    return Array.from({ length: r }, () => scale * (0.6 + z()));
  });
}

function lowRank(n: number, rankSpec: string, z: () => number): number[][] {
  if (rankSpec === 'n-1' || rankSpec === 'n-1pos') {
    // Σ = P A P with A = B Bᵀ + D full rank and P = I − v vᵀ (‖v‖ = 1): rank N − 1, null vector v.
    const b = factorRows(n, 5, z);
    const a = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => b[i].reduce((t, x, k) => t + x * b[j][k], 0) + (i === j ? 1e-4 * (1 + ((i * 31) % 7)) : 0)));
    const v = Array.from({ length: n }, (_, i) => (rankSpec === 'n-1pos' ? 1 + ((i * 13) % 5) / 5 : z()));
    const norm = Math.hypot(...v);
    for (let i = 0; i < n; i++) v[i] /= norm;
    const av = a.map((row) => row.reduce((t, x, j) => t + x * v[j], 0));
    const vav = av.reduce((t, x, i) => t + x * v[i], 0);
    // P A P = A − v (Av)ᵀ − (Av) vᵀ + (vᵀAv) v vᵀ
    return a.map((row, i) => row.map((x, j) => x - v[i] * av[j] - av[i] * v[j] + vav * v[i] * v[j]));
  }
  const r = rankSpec === 'half' ? Math.floor(n / 2) : Number(rankSpec);
  const b = factorRows(n, r, z);
  return b.map((bi) => b.map((bj) => bi.reduce((t, x, k) => t + x * bj[k], 0)));
}

/** Overlapping group maxima near the equal-weight share (as limit-shapes.ts `groups`). */
function groups(a: string[], g: number, seed: number): NonNullable<NonNullable<ProposalInput['constraints']>['groups']> {
  let s = seed;
  const u = (): number => {
    s = (16807 * s) % 2147483647;
    return s / 2147483647;
  };
  return Array.from({ length: g }, (_, k) => {
    const members = a.filter(() => u() < 0.3);
    const chosen = members.length > 0 ? members : [a[k % a.length]];
    return { name: `group-${k}`, assets: chosen, max: Math.min(1, (chosen.length / a.length) * (0.9 + 0.2 * u())) };
  });
}

export interface Case {
  readonly label: string;
  readonly body: ProposalInput;
  readonly singular: boolean;
}

export function buildCase(label: string): Case {
  const [input, nText, rankSpec, method, cons] = label.split(':');
  const n = Number(nText);
  const z = normals(20261202 + n);
  const a = ids(n);
  const rank = rankSpec === 'half' ? Math.floor(n / 2) : rankSpec.startsWith('n-1') ? n - 1 : Number(rankSpec);
  const mean = a.map((_, i) => 0.004 + 0.006 * (((i * 37) % 17) / 17));
  const spec: ProposalInput['method'] = method === 'minvar' ? { name: 'minimum-variance' } : { name: 'mean-variance', riskAversion: Number(method.slice(2)) };
  const shorts = cons === 'short' || cons.startsWith('sg');
  const g = cons.startsWith('g') ? Number(cons.slice(1)) : cons.startsWith('sg') ? Number(cons.slice(2)) : 0;
  const constraints: ProposalInput['constraints'] = {
    ...(shorts ? { longOnly: false, lower: -0.1, upper: 0.2 } : {}),
    ...(cons === 'cap' ? { upper: Math.max(3 / n, 0.02) } : {}),
    ...(g > 0 ? { groups: groups(a, g, 1234 + g) } : {}),
  };
  const common = { assets: a, weights: a.map(() => 1 / n), method: spec, compare: [], constraints };
  let body: ProposalInput;
  if (input === 'history') {
    const t = rank + 1;
    const b = factorRows(n, Math.max(1, Math.min(5, rank)), z);
    const rows = Array.from({ length: t }, () => {
      const f = b[0].map(() => z());
      return b.map((bi, i) => 0.004 + bi.reduce((s, x, k) => s + x * f[k], 0) + 0.02 * (1 + (i % 5) / 5) * z());
    });
    body = { ...common, inputs: { returns: rows, periodsPerYear: 12 }, resampling: { scheme: 'stationary-bootstrap' } };
  } else if (input === 'fewobs') {
    const b = factorRows(n, 5, z);
    const cov = b.map((bi, i) => b.map((bj, j) => bi.reduce((t, x, k) => t + x * bj[k], 0) + (i === j ? 2e-4 * (1 + (i % 7)) : 0)));
    body = { ...common, inputs: { mean, covariance: cov, observations: rank + 1, periodsPerYear: 12 }, resampling: { scheme: 'parametric' } };
  } else {
    const cov = lowRank(n, rankSpec, z);
    if (input === 'repair') for (let i = 0; i < n; i++) cov[i][i] -= 1e-9 * (1 + (i % 3));
    body = {
      ...common,
      inputs: { mean, covariance: cov, observations: 120, periodsPerYear: 12 },
      resampling: { scheme: 'parametric' },
      ...(input === 'repair' ? { estimation: { repairCovariance: true } } : {}),
    };
  }
  // Only a supplied singular Σ needs telling (validation finds it by its PSD test); the shape flags the others itself.
  return { label, body, singular: input === 'moments' };
}

