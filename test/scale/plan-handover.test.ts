import { describe, expect, it } from 'vitest';
import { computeRange, type RangeRequest } from '../../src/scale/range-job.js';
import { fanOutRunner, type RangeExecutor } from '../../src/scale/runner.js';
import { inputDigest } from '../../src/stress/digest.js';
import { planStress } from '../../src/stress/engine.js';
import { stressProposal } from '../../src/stress/run.js';
import { historyProposal, momentsProposal } from '../helpers/proposals.js';
import { comparable, valid } from './helpers.js';

// A range computed from the caller's plan (same thread) or from its solution shipped to another
// thread (structured clone, as postMessage does) must draw exactly what a range that plans for
// itself draws: same partial bytes, same merged report.
const cases = [
  ['bootstrap history, all methods (scenario Kelly, block length)', historyProposal(60, { resampling: { draws: 48, seed: 'handover' } })],
  ['parametric moments', momentsProposal({ resampling: { draws: 40, seed: 11 } })],
] as const;

describe('plan hand-over to ranges', () => {
  for (const [name, p] of cases) {
    it(`a range from a shipped plan gives the same bytes as one that re-plans: ${name}`, async () => {
      const v = valid(p);
      const plan = planStress(v.proposal, v.warnings);
      const digest = await inputDigest(v.proposal);
      const request: RangeRequest = { proposal: v.proposal, draws: plan.draws, seed: plan.seed, start: 10, end: 31 };
      const replanned = Buffer.from(await computeRange(request));
      const shipped = structuredClone(plan.solution);
      expect(shipped).toEqual(plan.solution);
      expect(Buffer.from(await computeRange(request, { solution: shipped })).equals(replanned)).toBe(true);
      expect(Buffer.from(await computeRange(request, { planned: { plan, inputDigest: digest } })).equals(replanned)).toBe(true);
      // The solution carries every solved piece: nothing is solved again from it.
      expect(shipped.base.length).toBe(plan.problem.methods.length);
      expect(shipped.kept.length).toBe(plan.problem.methods.length);
    });
  }

  it('merges ranges computed from the shipped solution into the report of one loop', async () => {
    const p = cases[0][1];
    const v = valid(p);
    const fromSolution: RangeExecutor = (request, { plan }) => computeRange(request, { solution: structuredClone(plan.solution) });
    const fromPlan: RangeExecutor = (request, { plan, inputDigest: digest }) => computeRange(request, { planned: { plan, inputDigest: digest } });
    const whole = comparable(await stressProposal(v.proposal, v.warnings));
    for (const execute of [fromSolution, fromPlan]) {
      const report = await stressProposal(v.proposal, v.warnings, { drawRunner: fanOutRunner({ parts: 3, execute, unit: 'thread' }) });
      expect(comparable(report)).toBe(whole);
    }
  });

  it('refuses a plan made for another request', async () => {
    const v = valid(cases[1][1]);
    const plan = planStress(v.proposal, v.warnings);
    const request: RangeRequest = { proposal: v.proposal, draws: plan.draws + 1, seed: plan.seed, start: 0, end: 5 };
    await expect(computeRange(request, { planned: { plan, inputDigest: 'x' } })).rejects.toThrow(/another request/);
  });
});
