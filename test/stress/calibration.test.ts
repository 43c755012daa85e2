import { describe, expect, it } from 'vitest';
import { validateProposal } from '../../src/schema/validate.js';
import { pairedStdErr } from '../../src/stress/paired.js';
import { stressRun } from '../../src/stress/run.js';
import { historyProposal } from '../helpers/proposals.js';

/**
 * The fast CI version of `npm run calibrate`: K seeds of a small history case at 200 draws; for a
 * few reported errors, ratio = sd of the figure across seeds ÷ mean reported stdErr must lie in
 * 0.6–1.6. With K = 40 a ratio's own noise is ≈ 1/√(2·39) ≈ 11 %, so the band is about 4 sd wide
 * either side of 1 — and an error off by 2× (ratio 0.5 or 2) fails it. The seeds are fixed.
 */
const K = 40;
const DRAWS = 200;

function valid(riskAversion: number) {
  const v = validateProposal(
    historyProposal(60, { method: { name: 'mean-variance', riskAversion }, compare: [{ name: 'minimum-variance' }], constraints: { longOnly: true, budget: 1, upper: 0.6 } }),
  );
  if (!v.ok) throw new Error('invalid');
  return v;
}

function sd(xs: number[]): number {
  const m = xs.reduce((a, b) => a + b, 0) / xs.length;
  return Math.sqrt(xs.reduce((a, b) => a + (b - m) ** 2, 0) / (xs.length - 1));
}

describe('Monte Carlo errors are calibrated (spread across seeds ÷ mean reported error)', () => {
  it('percentiles, band width, mean-driven share, max weight sd and a paired difference', async () => {
    const candidate = valid(10);
    const baseline = valid(12);
    const figures = new Map<string, { values: number[]; errors: number[] }>();
    const add = (kind: string, value: number, stdErr: number | null | undefined) => {
      const f = figures.get(kind) ?? { values: [], errors: [] };
      f.values.push(value);
      f.errors.push(stdErr ?? Number.NaN);
      figures.set(kind, f);
    };
    for (let s = 0; s < K; s++) {
      const a = await stressRun(candidate.proposal, candidate.warnings, { draws: DRAWS, seed: `ci-${s}` });
      const b = await stressRun(baseline.proposal, baseline.warnings, { draws: DRAWS, seed: `ci-${s}` });
      const mv = a.report.methods[0];
      // Interior percentiles (not sitting on a bound): the median of x and the 95th percentile of y.
      const summary = a.run.acc.methods[0].weights.summarize(a.run.plan.problem.proposalWeights);
      add('weight p50', summary.perAsset[1].p50, summary.perAsset[1].p50StdErr);
      add('weight p95', summary.perAsset[2].p95, summary.perAsset[2].p95StdErr);
      add('turnover p50', mv.turnoverFromProposal.p50, mv.turnoverFromProposal.p50StdErr);
      add('volatility band width', a.report.proposal.volatilityBandWidth.value, a.report.proposal.volatilityBandWidth.stdErr);
      add('mean-driven share', mv.meanDrivenShare.overall, mv.meanDrivenShare.stdErr);
      add('max weight sd', mv.maxWeightSd.value, mv.maxWeightSd.stdErr);
      add('paired turnover p50', mv.turnoverFromProposal.p50 - b.report.methods[0].turnoverFromProposal.p50, pairedStdErr(a.run, b.run, 'turnover-from-proposal.p50', a.run.plan.problem.methods[0]));
    }
    for (const [kind, f] of figures) {
      const meanError = f.errors.reduce((x, y) => x + y, 0) / f.errors.length;
      const spread = sd(f.values);
      // A figure that never moves must report exactly 0 (a point mass), and then there is no ratio.
      if (spread === 0) {
        expect(meanError, kind).toBe(0);
        continue;
      }
      const ratio = spread / meanError;
      console.log(`calibration (${K} seeds, ${DRAWS} draws): ${kind} ratio ${ratio.toFixed(3)}`);
      expect(ratio, kind).toBeGreaterThan(0.6);
      expect(ratio, kind).toBeLessThan(1.6);
    }
  });
});
