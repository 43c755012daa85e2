import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { MethodSpec, ProposalInput } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';
import { classifyError } from '../../src/stress/errors.js';
import { stressProposal } from '../../src/stress/run.js';
import { parkMiller } from '../helpers/reference-data.js';

/**
 * Property: whatever the (small, random, invented) inputs, a report never contains a weight outside
 * the feasible set of the method that produced it, nor a non-finite figure. Methods that apply the
 * caller's constraints (mean-variance, minimum-variance, Kelly) must respect bounds, groups and the
 * budget; the closed-form and risk-parity methods are long-only and fully invested by definition
 * (they warn about the caller's constraints they ignore). Inputs that have no answer must be
 * refused with a 4xx, never reported.
 */
const TOLERANCE = 1e-6;
const CONSTRAINED = new Set(['mean-variance', 'minimum-variance', 'kelly']);

interface Case {
  n: number;
  rows: number;
  seed: number;
  longOnly: boolean;
  upper: number;
  lower: number;
  group: boolean;
  method: MethodSpec;
  scale: number;
}

function proposalOf(c: Case): ProposalInput {
  const u = parkMiller(c.seed);
  const normal = () => Math.sqrt(-2 * Math.log(u())) * Math.cos(2 * Math.PI * u());
  const returns: number[][] = [];
  for (let t = 0; t < c.rows; t++) {
    const common = normal();
    returns.push(Array.from({ length: c.n }, (_, i) => Number((0.004 + 0.001 * i + c.scale * (0.6 * common + 0.8 * normal())).toFixed(6))));
  }
  const assets = Array.from({ length: c.n }, (_, i) => `a${i}`);
  return {
    assets,
    weights: Array.from({ length: c.n }, () => 1 / c.n),
    inputs: { returns, periodsPerYear: 12 },
    method: c.method,
    compare: [{ name: 'risk-parity' }, { name: 'equal-weight' }, { name: 'inverse-volatility' }, { name: 'minimum-variance' }],
    constraints: {
      longOnly: c.longOnly,
      upper: c.upper,
      ...(c.longOnly ? {} : { lower: c.lower }),
      ...(c.group && c.n >= 3 ? { groups: [{ name: 'g', assets: ['a0', 'a1'], max: Math.max(2 / c.n, 0.55) }] } : {}),
    },
    resampling: { draws: 20, seed: c.seed },
  };
}

/** Every number anywhere in the report is finite (null marks an error that cannot be estimated). */
function expectFinite(value: unknown, path: string): void {
  if (typeof value === 'number') expect(Number.isFinite(value), path).toBe(true);
  else if (Array.isArray(value)) value.forEach((v, i) => expectFinite(v, `${path}[${i}]`));
  else if (value !== null && typeof value === 'object') for (const [k, v] of Object.entries(value)) expectFinite(v, `${path}.${k}`);
}

const caseArbitrary = fc.record({
  n: fc.integer({ min: 2, max: 5 }),
  rows: fc.integer({ min: 6, max: 36 }),
  seed: fc.integer({ min: 1, max: 2 ** 30 }),
  longOnly: fc.boolean(),
  upper: fc.constantFrom(0.6, 0.8, 1, 2),
  lower: fc.constantFrom(-0.5, -1),
  group: fc.boolean(),
  scale: fc.constantFrom(0.01, 0.04, 0.12),
  method: fc.constantFrom<MethodSpec>({ name: 'mean-variance', riskAversion: 3 }, { name: 'mean-variance', riskAversion: 0.5 }, { name: 'minimum-variance' }, { name: 'kelly' }, { name: 'kelly', fraction: 0.5 }),
});

describe('reports stay inside the feasible set', () => {
  it('no weight outside bounds, groups or budget; no non-finite figure (random small inputs)', async () => {
    await fc.assert(
      fc.asyncProperty(caseArbitrary, async (c) => {
        const input = proposalOf(c);
        const v = validateProposal(input);
        if (!v.ok) return; // invalid inputs are refused with their JSON paths (tested elsewhere)
        let report;
        try {
          report = await stressProposal(v.proposal, v.warnings);
        } catch (e) {
          const mapped = classifyError(e);
          expect(mapped, String(e)).toBeDefined();
          return;
        }
        expectFinite(report, 'report');
        const n = c.n;
        const lower = c.longOnly ? 0 : c.lower;
        for (const m of report.methods) {
          const constrained = CONSTRAINED.has(m.method.name);
          const lo = constrained ? lower : 0;
          const hi = constrained ? c.upper : 1;
          const vectors: [string, number[]][] = [
            ['base', m.base.weights],
            ['resampledAverage', m.resampledAverage],
          ];
          for (const [label, w] of vectors) {
            expect(w.length).toBe(n);
            const sum = w.reduce((a, b) => a + b, 0);
            expect(Math.abs(sum - 1), `${m.method.name} ${label} budget`).toBeLessThan(TOLERANCE);
            for (const x of w) {
              expect(x, `${m.method.name} ${label} lower`).toBeGreaterThanOrEqual(lo - TOLERANCE);
              expect(x, `${m.method.name} ${label} upper`).toBeLessThanOrEqual(hi + TOLERANCE);
            }
            if (constrained && c.group && n >= 3) expect(w[0] + w[1], `${m.method.name} ${label} group`).toBeLessThanOrEqual(Math.max(2 / n, 0.55) + TOLERANCE);
          }
          for (const band of m.weights) {
            for (const x of [band.p05, band.p25, band.p50, band.p75, band.p95, band.mean]) {
              expect(x, `${m.method.name} band lower`).toBeGreaterThanOrEqual(lo - TOLERANCE);
              expect(x, `${m.method.name} band upper`).toBeLessThanOrEqual(hi + TOLERANCE);
            }
          }
        }
      }),
      { numRuns: 40, seed: 7 },
    );
  });
});
