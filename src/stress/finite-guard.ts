/**
 * The last check before a report leaves the core: every number in it is finite. JSON has no NaN
 * or Infinity (JSON.stringify would silently write null where the report schema promises a
 * number), so a non-finite value here is a bug in wobble, not a caller's mistake: it is thrown as
 * an internal error (HTTP 500 problem, CLI exit 3) rather than sent as a 200 with wrong figures.
 * Input limits (src/schema/limits.ts) are chosen so that it never fires; the fuzz test checks that.
 */
export class NonFiniteReportError extends Error {
  constructor(readonly path: string) {
    super(`internal error: the report has a non-finite number at ${path}`);
    this.name = 'NonFiniteReportError';
  }
}

/** Throws NonFiniteReportError naming the first non-finite number's path; returns the report unchanged. */
export function assertFiniteReport<T>(report: T): T {
  const path = firstNonFinite(report, 'report');
  if (path !== undefined) throw new NonFiniteReportError(path);
  return report;
}

function firstNonFinite(value: unknown, path: string): string | undefined {
  if (typeof value === 'number') return Number.isFinite(value) ? undefined : path;
  if (value === null || typeof value !== 'object') return undefined;
  if (ArrayBuffer.isView(value)) {
    const array = value as unknown as ArrayLike<number | bigint>;
    for (let i = 0; i < array.length; i++) {
      const x = array[i];
      if (typeof x === 'number' && !Number.isFinite(x)) return `${path}[${i}]`;
    }
    return undefined;
  }
  if (Array.isArray(value)) {
    for (let i = 0; i < value.length; i++) {
      const found = firstNonFinite(value[i], `${path}[${i}]`);
      if (found !== undefined) return found;
    }
    return undefined;
  }
  for (const [key, child] of Object.entries(value as Record<string, unknown>)) {
    const found = firstNonFinite(child, `${path}.${key}`);
    if (found !== undefined) return found;
  }
  return undefined;
}
