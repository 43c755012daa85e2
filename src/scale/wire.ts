import { z } from 'zod';
import type { StressAccumulators, StressPlan } from '../stress/engine.js';
import { PartialInvalidError } from './errors.js';
import { WIRE_FIELDS, WIRE_VERSION, type WireCursor, type WireShape } from './wire-fields.js';

/**
 * The binary wire form of a partial result (the draws [start, end) of one request):
 *
 *   bytes 0–3   magic "WBLP"
 *   bytes 4–7   format version, uint32 little-endian (WIRE_VERSION)
 *   bytes 8–11  header length H, uint32 little-endian
 *   12 … 12+H   header, UTF-8 JSON (PartialHeader: which request, which range, section sizes, failure counts)
 *   zero padding to a multiple of 8
 *   f64 section doubles, little-endian IEEE 754 (the slots, field by field in WIRE_FIELDS order)
 *   u8 section  bytes (per-draw channel status)
 *
 * Binary rather than JSON, measured by `npm run bench:scale`: exact without any care (every
 * double, −0 and NaN included, round-trips bit for bit; JSON turns −0 into 0 and has no NaN), 2–25×
 * faster to encode and up to 9× faster to decode (decoding including recording the slots), and
 * 1.0–1.6× smaller (not more: JSON is short for the many exact zeros and bound values of
 * constrained weights; compression in transit narrows the gap further). Media type:
 * application/vnd.wobble.partial.
 */
export const PARTIAL_MEDIA_TYPE = 'application/vnd.wobble.partial';
const MAGIC = [0x57, 0x42, 0x4c, 0x50]; // "WBLP"
const PREAMBLE = 12;

// Float64Array uses the platform's byte order; every runtime wobble targets (x86-64, arm64) is little-endian.
const LITTLE_ENDIAN = new Uint8Array(new Float64Array([1]).buffer)[7] === 0x3f;

const CountsSchema = z.array(z.tuple([z.string(), z.int().min(0)]));

export const PartialHeaderSchema = z.strictObject({
  format: z.literal('wobble-partial'),
  version: z.int(),
  fields: z.array(z.string()),
  inputDigest: z.string(),
  seed: z.union([z.string(), z.number()]),
  draws: z.int().min(1),
  start: z.int().min(0),
  end: z.int().min(1),
  assets: z.int().min(1),
  methods: z.array(z.string()),
  sections: z.strictObject({ f64: z.int().min(0), u8: z.int().min(0) }),
  failures: z.strictObject({ inputs: CountsSchema, methods: z.array(CountsSchema) }),
});
export type PartialHeader = z.infer<typeof PartialHeaderSchema>;

/** A decoded partial: its header and its two sections (views, not copies, where alignment allows). */
export interface DecodedPartial {
  readonly header: PartialHeader;
  readonly f64: Float64Array;
  readonly u8: Uint8Array;
}

function shapeOf(header: { draws: number; start: number; end: number }): WireShape {
  return { draws: header.draws, start: header.start, end: header.end };
}

function sectionSizes(acc: StressAccumulators, shape: WireShape): { f64: number; u8: number } {
  let f64 = 0;
  let u8 = 0;
  for (const f of WIRE_FIELDS) {
    const s = f.size(acc, shape);
    f64 += s.f64;
    u8 += s.u8;
  }
  return { f64, u8 };
}

/** Encodes the draws [start, end) held in `acc` (computed for `plan`) as the binary wire form. */
export function encodePartial(plan: StressPlan, acc: StressAccumulators, range: { start: number; end: number }, inputDigest: string): Uint8Array {
  if (!LITTLE_ENDIAN) throw new Error('the partial wire form needs a little-endian platform');
  const shape = shapeOf({ draws: plan.draws, ...range });
  const sections = sectionSizes(acc, shape);
  const header: PartialHeader = {
    format: 'wobble-partial',
    version: WIRE_VERSION,
    fields: WIRE_FIELDS.map((f) => f.name),
    inputDigest,
    seed: plan.seed,
    draws: plan.draws,
    start: range.start,
    end: range.end,
    assets: plan.problem.n,
    methods: plan.problem.methods.map((m) => m.name),
    sections,
    failures: { inputs: [...acc.inputFailures], methods: acc.methods.map((m) => [...m.failures]) },
  };
  const headerBytes = new TextEncoder().encode(JSON.stringify(header));
  const f64Offset = Math.ceil((PREAMBLE + headerBytes.length) / 8) * 8;
  const total = f64Offset + sections.f64 * 8 + sections.u8;
  const buffer = new ArrayBuffer(total);
  const bytes = new Uint8Array(buffer);
  bytes.set(MAGIC, 0);
  const view = new DataView(buffer);
  view.setUint32(4, WIRE_VERSION, true);
  view.setUint32(8, headerBytes.length, true);
  bytes.set(headerBytes, PREAMBLE);
  const cursor: WireCursor = { f64: new Float64Array(buffer, f64Offset, sections.f64), f64At: 0, u8: new Uint8Array(buffer, f64Offset + sections.f64 * 8, sections.u8), u8At: 0 };
  for (const f of WIRE_FIELDS) f.write(acc, shape, cursor);
  if (cursor.f64At !== sections.f64 || cursor.u8At !== sections.u8) throw new Error('partial encoder wrote a different size than it declared');
  return bytes;
}

/** Reads the framing and header of a binary partial; throws PartialInvalidError naming what is wrong. */
export function decodePartial(bytes: Uint8Array): DecodedPartial {
  if (!LITTLE_ENDIAN) throw new Error('the partial wire form needs a little-endian platform');
  if (bytes.length < PREAMBLE || MAGIC.some((m, i) => bytes[i] !== m)) throw new PartialInvalidError('not a wobble partial result (bad magic bytes)');
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const version = view.getUint32(4, true);
  if (version !== WIRE_VERSION) throw new PartialInvalidError(`partial result format version ${version}; this build reads version ${WIRE_VERSION}`);
  const headerLength = view.getUint32(8, true);
  if (PREAMBLE + headerLength > bytes.length) throw new PartialInvalidError('partial result is truncated (header)');
  let parsed: unknown;
  try {
    parsed = JSON.parse(new TextDecoder().decode(bytes.subarray(PREAMBLE, PREAMBLE + headerLength)));
  } catch {
    throw new PartialInvalidError('partial result header is not JSON');
  }
  const header = PartialHeaderSchema.safeParse(parsed);
  if (!header.success) throw new PartialInvalidError(`partial result header is invalid: ${header.error.issues.map((i) => `${i.path.join('.') || '(header)'}: ${i.message}`).join('; ')}`);
  const h = header.data;
  if (h.version !== version) throw new PartialInvalidError('partial result header and framing disagree on the version');
  const f64Offset = Math.ceil((PREAMBLE + headerLength) / 8) * 8;
  const expectedLength = f64Offset + h.sections.f64 * 8 + h.sections.u8;
  if (bytes.length !== expectedLength) throw new PartialInvalidError(`partial result is ${bytes.length} bytes; its header declares ${expectedLength}`);
  const f64Start = bytes.byteOffset + f64Offset;
  // A Float64Array view needs 8-byte alignment in its buffer; copy when the bytes sit elsewhere.
  const f64 =
    f64Start % 8 === 0
      ? new Float64Array(bytes.buffer, f64Start, h.sections.f64)
      : new Float64Array(bytes.slice(f64Offset, f64Offset + h.sections.f64 * 8).buffer);
  const u8 = bytes.subarray(f64Offset + h.sections.f64 * 8, expectedLength);
  return { header: h, f64, u8 };
}

/** What the merging side expects of every partial of one request. */
export interface PartialExpectation {
  readonly inputDigest: string;
  readonly plan: StressPlan;
}

/**
 * Checks that a decoded partial belongs to this request and range and has the shape this build
 * writes: version and field list, input digest, seed, total draws, range, assets, methods,
 * section sizes. Throws PartialInvalidError naming the first mismatch.
 */
export function checkPartial(partial: DecodedPartial, expected: PartialExpectation, range: { start: number; end: number }, target: StressAccumulators): void {
  const h = partial.header;
  const plan = expected.plan;
  const fields = WIRE_FIELDS.map((f) => f.name);
  const mismatch = (what: string, got: unknown, want: unknown): PartialInvalidError =>
    new PartialInvalidError(`partial result ${what} is ${JSON.stringify(got)}, expected ${JSON.stringify(want)}`);
  if (h.fields.join(',') !== fields.join(',')) throw mismatch('field list', h.fields, fields);
  if (h.inputDigest !== expected.inputDigest) throw mismatch('input digest', h.inputDigest, expected.inputDigest);
  if (h.seed !== plan.seed) throw mismatch('seed', h.seed, plan.seed);
  if (h.draws !== plan.draws) throw mismatch('draw count', h.draws, plan.draws);
  if (h.start !== range.start || h.end !== range.end) throw mismatch('draw range', [h.start, h.end], [range.start, range.end]);
  if (h.assets !== plan.problem.n) throw mismatch('asset count', h.assets, plan.problem.n);
  const methods = plan.problem.methods.map((m) => m.name);
  if (h.methods.join(',') !== methods.join(',')) throw mismatch('method list', h.methods, methods);
  if (h.failures.methods.length !== methods.length) throw mismatch('failure lists', h.failures.methods.length, methods.length);
  const sizes = sectionSizes(target, shapeOf(h));
  if (h.sections.f64 !== sizes.f64 || h.sections.u8 !== sizes.u8) throw mismatch('section sizes', h.sections, sizes);
}

/** Records a checked partial's slots into `target` (the range must not be recorded there yet). */
export function recordPartial(partial: DecodedPartial, target: StressAccumulators): void {
  const cursor: WireCursor = { f64: partial.f64, f64At: 0, u8: partial.u8, u8At: 0 };
  const shape = shapeOf(partial.header);
  for (const f of WIRE_FIELDS) f.read(target, shape, cursor);
}
