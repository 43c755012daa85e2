import { createAccumulators, type StressAccumulators, type StressPlan } from '../stress/engine.js';
import { PartialInvalidError } from './errors.js';
import type { DrawRange } from './ranges.js';
import { checkPartial, decodePartial, recordPartial, type PartialHeader } from './wire.js';

/**
 * Merges the partial results of one request into accumulators equal, slot for slot, to one loop
 * over all draws. Partials may arrive in any order; each is checked (version, input digest, seed,
 * draw range, shapes) before any of its slots is recorded, so a bad partial leaves nothing behind
 * and can be retried. Memory: the merged accumulators plus the partial being recorded.
 */
export class PartialMerger {
  readonly acc: StressAccumulators;
  private readonly failures = new Map<number, PartialHeader['failures']>();

  constructor(
    private readonly plan: StressPlan,
    private readonly inputDigest: string,
    private readonly ranges: readonly DrawRange[],
  ) {
    let next = 0;
    for (const r of ranges) {
      if (r.start !== next || r.end <= r.start) throw new RangeError('ranges must be contiguous, non-empty and in order');
      next = r.end;
    }
    if (next !== plan.draws) throw new RangeError(`ranges cover 0..${next - 1}, the request has ${plan.draws} draws`);
    this.acc = createAccumulators(plan);
  }

  /** Checks and records the partial computed for `range`; throws PartialInvalidError if it does not fit. */
  add(range: DrawRange, bytes: Uint8Array): void {
    const own = this.ranges[range.index];
    if (!own || own.start !== range.start || own.end !== range.end) throw new RangeError(`unknown range ${range.index}`);
    if (this.failures.has(range.index)) throw new PartialInvalidError(`range ${range.index} was merged already`);
    const partial = decodePartial(bytes);
    checkPartial(partial, { inputDigest: this.inputDigest, plan: this.plan }, range, this.acc);
    recordPartial(partial, this.acc);
    this.failures.set(range.index, partial.header.failures);
  }

  get complete(): boolean {
    return this.failures.size === this.ranges.length;
  }

  /**
   * The merged accumulators, once every range is in. Failure counts are folded in draw order, so
   * their maps list reasons in the order one loop would have met them.
   */
  finish(): StressAccumulators {
    if (!this.complete) throw new Error(`${this.ranges.length - this.failures.size} of ${this.ranges.length} ranges missing; a report needs every draw`);
    for (const range of this.ranges) {
      const f = this.failures.get(range.index) as PartialHeader['failures'];
      for (const [reason, count] of f.inputs) this.acc.inputFailures.set(reason, (this.acc.inputFailures.get(reason) ?? 0) + count);
      f.methods.forEach((counts, k) => {
        const map = this.acc.methods[k].failures;
        for (const [reason, count] of counts) map.set(reason, (map.get(reason) ?? 0) + count);
      });
    }
    return this.acc;
  }
}
