import { ChannelVarianceAccumulator } from '../statistics/channel-variance.js';
import type { StressAccumulators } from '../stress/engine.js';
import type { ScalarAccumulator } from '../statistics/scalar-accumulator.js';
import type { WeightAccumulator } from '../statistics/weight-accumulator.js';

/**
 * What a partial result carries, field by field. Each accumulator of the engine is one line in
 * WIRE_FIELDS (name, where it lives in StressAccumulators, how its range is packed). A partial
 * carries the per-draw slot data itself, never summaries, so every estimator computed at summary
 * time sees exactly the slots one loop would have produced.
 *
 * Adding an accumulator: add its line here and bump WIRE_VERSION. Partials of another version are
 * refused by name (both ends of a fan-out run the same build in practice; a mixed deployment gets
 * a clear error instead of a wrong merge).
 */
export const WIRE_VERSION = 1;

/** The range a partial covers and the shape of its rows. */
export interface WireShape {
  /** Draws of the whole request (B): batches and slot indices are defined over 0..B−1. */
  readonly draws: number;
  readonly start: number;
  readonly end: number;
}

/** Read/write position in a partial's two sections: doubles, then bytes. */
export interface WireCursor {
  readonly f64: Float64Array;
  f64At: number;
  readonly u8: Uint8Array;
  u8At: number;
}

export interface SectionSize {
  readonly f64: number;
  readonly u8: number;
}

/** How one kind of accumulator packs the slots of a range and records them into another. */
interface Codec<T> {
  size(accumulator: T, shape: WireShape): SectionSize;
  write(accumulator: T, shape: WireShape, cursor: WireCursor): void;
  /** Records the range's slots into `target` (which must hold none of them yet). */
  read(target: T, shape: WireShape, cursor: WireCursor): void;
}

/** A field of the wire form, bound to where its accumulators live (one per method, or one per request). */
export interface WireField {
  readonly name: string;
  size(acc: StressAccumulators, shape: WireShape): SectionSize;
  write(acc: StressAccumulators, shape: WireShape, cursor: WireCursor): void;
  read(target: StressAccumulators, shape: WireShape, cursor: WireCursor): void;
}

function field<T>(name: string, select: (acc: StressAccumulators) => readonly T[], codec: Codec<T>): WireField {
  return {
    name,
    size(acc, shape) {
      let f64 = 0;
      let u8 = 0;
      for (const a of select(acc)) {
        const s = codec.size(a, shape);
        f64 += s.f64;
        u8 += s.u8;
      }
      return { f64, u8 };
    },
    write: (acc, shape, cursor) => select(acc).forEach((a) => codec.write(a, shape, cursor)),
    read: (target, shape, cursor) => select(target).forEach((a) => codec.read(a, shape, cursor)),
  };
}

/** Where the range's first draw sits in an accumulator that may hold only a range of slots. */
function slotOffset(accumulator: { firstDraw: number; slotCount: number }, shape: WireShape, what: string): number {
  const offset = shape.start - accumulator.firstDraw;
  if (offset < 0 || shape.end - accumulator.firstDraw > accumulator.slotCount) {
    throw new Error(`${what}: holds draws ${accumulator.firstDraw}..${accumulator.firstDraw + accumulator.slotCount - 1}, not the range ${shape.start}..${shape.end - 1}`);
  }
  return offset;
}

function requireWholeRange(recorded: number, shape: WireShape, what: string): void {
  // Every draw of the range records every accumulator (a failure as NaN): the wire form relies on it.
  if (recorded !== shape.end - shape.start) {
    throw new Error(`${what}: ${recorded} draws recorded, expected exactly the range's ${shape.end - shape.start}`);
  }
}

/** One double per draw; NaN marks a failed draw (the accumulator's own convention). */
const scalarSlots: Codec<ScalarAccumulator> = {
  size: (_a, s) => ({ f64: s.end - s.start, u8: 0 }),
  write(a, s, c) {
    requireWholeRange(a.counts().recordedDraws, s, 'scalar accumulator');
    const at = slotOffset(a, s, 'scalar accumulator');
    c.f64.set(a.slots().subarray(at, at + s.end - s.start), c.f64At);
    c.f64At += s.end - s.start;
  },
  read(target, s, c) {
    for (let b = s.start; b < s.end; b++) target.record(b, c.f64[c.f64At + b - s.start]);
    c.f64At += s.end - s.start;
  },
};

/** One row of N doubles per draw; a row with a non-finite entry is a failed draw. */
const weightRows: Codec<WeightAccumulator> = {
  size: (a, s) => ({ f64: (s.end - s.start) * a.assets, u8: 0 }),
  write(a, s, c) {
    requireWholeRange(a.counts().recordedDraws, s, 'weight accumulator');
    const n = a.assets;
    const at = slotOffset(a, s, 'weight accumulator');
    c.f64.set(a.rows().subarray(at * n, (at + s.end - s.start) * n), c.f64At);
    c.f64At += (s.end - s.start) * n;
  },
  read(target, s, c) {
    const n = target.assets;
    for (let b = s.start; b < s.end; b++) target.record(b, c.f64, c.f64At + (b - s.start) * n);
    c.f64At += (s.end - s.start) * n;
  },
};

/**
 * The channel-variance accumulator keeps exact per-batch sums (not per-draw rows): a range carries
 * its per-draw status (2 bytes a draw) and the cells of the batches it touches; a batch split
 * between two ranges merges exactly (exact sums add without rounding; min/max combine). The
 * accumulator reads and writes its own typed arrays (ChannelVarianceAccumulator.writeWire/readWire).
 */
const channelCells: Codec<ChannelVarianceAccumulator> = {
  size(a, s) {
    return ChannelVarianceAccumulator.wireSize(s.draws, a.assets, s);
  },
  write(a, s, c) {
    a.writeWire(s, c);
  },
  read(target, s, c) {
    target.readWire(s, c);
  },
};

/** Version 1: the accumulators of StressAccumulators, request-wide first, then per method. */
export const WIRE_FIELDS: readonly WireField[] = [
  field('proposalVolatility', (a) => [a.proposalVolatility], scalarSlots),
  field('proposalReturn', (a) => [a.proposalReturn], scalarSlots),
  field('proposalShortfall', (a) => [a.proposalShortfall], scalarSlots),
  field('proposalRiskShares', (a) => [a.proposalRiskShares], weightRows),
  field('methods.weights', (a) => a.methods.map((m) => m.weights), weightRows),
  field('methods.channels', (a) => a.methods.map((m) => m.channels), channelCells),
  field('methods.turnoverFromProposal', (a) => a.methods.map((m) => m.turnoverFromProposal), scalarSlots),
  field('methods.turnoverFromBase', (a) => a.methods.map((m) => m.turnoverFromBase), scalarSlots),
  field('methods.volatility', (a) => a.methods.map((m) => m.volatility), scalarSlots),
  field('methods.certaintyEquivalentLoss', (a) => a.methods.map((m) => m.certaintyEquivalentLoss), scalarSlots),
];
