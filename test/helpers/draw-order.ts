import seedrandom from 'seedrandom';

/**
 * 0..count−1 in a seeded random order (Fisher–Yates / Durstenfeld shuffle, Knuth TAOCP vol. 2,
 * Algorithm P, from memory), for the order-independence checks of the stress accumulators.
 */
export function shuffledIndices(count: number, seed: string): number[] {
  const random = seedrandom(seed);
  const order = Array.from({ length: count }, (_, k) => k);
  for (let k = count - 1; k > 0; k--) {
    const j = Math.floor(random() * (k + 1));
    [order[k], order[j]] = [order[j], order[k]];
  }
  return order;
}
