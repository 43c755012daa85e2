import { describe, expect, it } from 'vitest';
import { PartialInvalidError } from '../../src/scale/errors.js';
import { PartialMerger } from '../../src/scale/merge.js';
import { computeRange, RangeRequestSchema } from '../../src/scale/range-job.js';
import { splitDraws } from '../../src/scale/ranges.js';
import { WIRE_FIELDS, WIRE_VERSION } from '../../src/scale/wire-fields.js';
import { checkPartial, decodePartial, encodePartial, recordPartial } from '../../src/scale/wire.js';
import { inputDigest } from '../../src/stress/digest.js';
import { createAccumulators, planStress, runDraws } from '../../src/stress/engine.js';
import { historyProposal } from '../helpers/proposals.js';
import { valid } from './helpers.js';

async function setup(draws = 60) {
  const v = valid(historyProposal(60, { resampling: { draws, seed: 'wire' } }));
  const plan = planStress(v.proposal, []);
  return { v, plan, digest: await inputDigest(v.proposal) };
}

describe('splitDraws', () => {
  it('cuts draws into contiguous ranges whose sizes differ by at most one', () => {
    expect(splitDraws(10, 3).map((r) => [r.start, r.end])).toEqual([
      [0, 3],
      [3, 6],
      [6, 10],
    ]);
    expect(() => splitDraws(3, 4)).toThrow(RangeError);
  });
});

describe('the partial wire form', () => {
  it('round-trips a range bit for bit: recording it elsewhere gives the same slots', async () => {
    const { plan, digest } = await setup();
    const acc = createAccumulators(plan);
    runDraws(plan, 20, 45, acc);
    const bytes = encodePartial(plan, acc, { start: 20, end: 45 }, digest);
    const decoded = decodePartial(bytes);
    expect(decoded.header.version).toBe(WIRE_VERSION);
    expect(decoded.header.fields).toEqual(WIRE_FIELDS.map((f) => f.name));
    const target = createAccumulators(plan);
    checkPartial(decoded, { inputDigest: digest, plan }, { start: 20, end: 45 }, target);
    recordPartial(decoded, target);
    // Re-encoding the copy gives the same bytes (failure maps travel in the header, merged by PartialMerger).
    for (const [k, m] of acc.methods.entries()) for (const [r, c] of m.failures) target.methods[k].failures.set(r, c);
    for (const [r, c] of acc.inputFailures) target.inputFailures.set(r, c);
    expect(Buffer.from(encodePartial(plan, target, { start: 20, end: 45 }, digest)).equals(Buffer.from(bytes))).toBe(true);
    expect(Array.from(target.methods[0].weights.rows().subarray(20 * plan.problem.n, 45 * plan.problem.n))).toEqual(
      Array.from(acc.methods[0].weights.rows().subarray(20 * plan.problem.n, 45 * plan.problem.n)),
    );
  });

  it('a range computed into range-sized accumulators (end − start slots) gives the same partial bytes as whole-run ones', async () => {
    const { plan, digest } = await setup();
    const whole = createAccumulators(plan);
    runDraws(plan, 20, 45, whole);
    const sized = createAccumulators(plan, { start: 20, end: 45 });
    runDraws(plan, 20, 45, sized);
    const n = plan.problem.n;
    for (const m of sized.methods) {
      expect([m.weights.firstDraw, m.weights.slotCount, m.weights.rows().length]).toEqual([20, 25, 25 * n]);
      for (const s of [m.turnoverFromProposal, m.turnoverFromBase, m.volatility, m.certaintyEquivalentLoss]) expect(s.slots().length).toBe(25);
    }
    expect(sized.proposalRiskShares.rows().length).toBe(25 * n);
    expect(sized.proposalVolatility.slots().length).toBe(25);
    expect(whole.proposalVolatility.slots().length).toBe(plan.draws);
    const bytes = encodePartial(plan, sized, { start: 20, end: 45 }, digest);
    expect(Buffer.from(bytes).equals(Buffer.from(encodePartial(plan, whole, { start: 20, end: 45 }, digest)))).toBe(true);
    // A range's accumulators cannot encode draws they do not hold.
    expect(() => encodePartial(plan, sized, { start: 0, end: 25 }, digest)).toThrow();
  });

  it('keeps −0 and NaN (failed draws) exactly, which JSON would not', async () => {
    const { plan, digest } = await setup(20);
    // Put a −0 on the wire (a successful slot edited in place).
    const edited = createAccumulators(plan);
    runDraws(plan, 0, 20, edited);
    const vol = edited.proposalVolatility.slots();
    vol[3] = -0;
    const bytes = encodePartial(plan, edited, { start: 0, end: 20 }, digest);
    const target = createAccumulators(plan);
    recordPartial(decodePartial(bytes), target);
    expect(Object.is(target.proposalVolatility.slots()[3], -0)).toBe(true);
    expect(JSON.parse(JSON.stringify([-0, Number.NaN]))).toEqual([0, null]);
  });

  it('is aligned whatever the byte offset it arrives at', async () => {
    const { plan, digest } = await setup(20);
    const acc = createAccumulators(plan);
    runDraws(plan, 0, 20, acc);
    const bytes = encodePartial(plan, acc, { start: 0, end: 20 }, digest);
    const shifted = new Uint8Array(bytes.length + 3);
    shifted.set(bytes, 3);
    const decoded = decodePartial(shifted.subarray(3));
    expect(Array.from(decoded.f64)).toEqual(Array.from(decodePartial(bytes).f64));
  });

  it('refuses partials of another version, request, seed, range or shape, naming what differs', async () => {
    const { v, plan, digest } = await setup(30);
    const ranges = splitDraws(30, 2);
    const request = { proposal: v.proposal, draws: 30, seed: 'wire', start: 0, end: 15 };
    const good = await computeRange(request);

    const versioned = good.slice();
    new DataView(versioned.buffer).setUint32(4, WIRE_VERSION + 1, true);
    expect(() => new PartialMerger(plan, digest, ranges).add(ranges[0], versioned)).toThrow(/format version 2; this build reads version 1/);
    expect(() => new PartialMerger(plan, digest, ranges).add(ranges[0], good.subarray(0, good.length - 8))).toThrow(/declares/);
    expect(() => new PartialMerger(plan, digest, ranges).add(ranges[0], new Uint8Array([1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13]))).toThrow(/magic/);
    expect(() => new PartialMerger(plan, 'f'.repeat(64), ranges).add(ranges[0], good)).toThrow(/input digest/);
    expect(() => new PartialMerger(plan, digest, ranges).add(ranges[1], good)).toThrow(/unknown range|draw range/);
    const otherSeed = await computeRange({ ...request, seed: 'other' });
    expect(() => new PartialMerger(plan, digest, ranges).add(ranges[0], otherSeed)).toThrow(/seed/);
    const otherDraws = await computeRange({ ...request, draws: 40 });
    expect(() => new PartialMerger(plan, digest, ranges).add(ranges[0], otherDraws)).toThrow(/draw count/);
    const otherProposal = valid(historyProposal(60, { resampling: { draws: 30, seed: 'wire' }, compare: [{ name: 'equal-weight' }] }));
    const otherMethods = await computeRange({ ...request, proposal: otherProposal.proposal });
    expect(() => new PartialMerger(plan, digest, ranges).add(ranges[0], otherMethods)).toThrow(PartialInvalidError);

    const merger = new PartialMerger(plan, digest, ranges);
    merger.add(ranges[0], good);
    expect(() => merger.add(ranges[0], good)).toThrow(/merged already/);
    expect(() => merger.finish()).toThrow(/missing/);
  });

  it('validates range requests at the boundary', () => {
    expect(RangeRequestSchema.safeParse({ proposal: {}, draws: 10, seed: 1, start: 5, end: 5 }).success).toBe(false);
    expect(RangeRequestSchema.safeParse({ proposal: {}, draws: 10, seed: 1, start: 5, end: 11 }).success).toBe(false);
    expect(RangeRequestSchema.safeParse({ proposal: {}, draws: 10, seed: 1, start: 0, end: 10 }).success).toBe(true);
  });
});
