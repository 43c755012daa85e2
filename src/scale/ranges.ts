/** One contiguous range of draw indices [start, end), the unit of work computed apart. */
export interface DrawRange {
  /** Position of the range in draw order (0-based): shard or thread number in messages. */
  readonly index: number;
  readonly start: number;
  readonly end: number;
}

/**
 * Cuts draws 0..draws−1 into `parts` contiguous ranges whose sizes differ by at most one
 * (range k starts at ⌊k·draws/parts⌋). Every draw costs about the same, so equal sizes balance
 * the work; more parts than draws is refused (a range must hold at least one draw).
 */
export function splitDraws(draws: number, parts: number): DrawRange[] {
  if (!Number.isInteger(draws) || draws < 1) throw new RangeError(`draws must be a positive integer, got ${draws}`);
  if (!Number.isInteger(parts) || parts < 1 || parts > draws) throw new RangeError(`parts must be an integer in 1..${draws}, got ${parts}`);
  const ranges: DrawRange[] = [];
  for (let k = 0; k < parts; k++) ranges.push({ index: k, start: Math.floor((k * draws) / parts), end: Math.floor(((k + 1) * draws) / parts) });
  return ranges;
}

/** "draws 250–499" for messages (inclusive, as people count). */
export function describeRange(range: { start: number; end: number }): string {
  return `draws ${range.start}–${range.end - 1}`;
}
