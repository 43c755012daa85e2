/**
 * Reusable scratch memory for repeated estimates (one per bootstrap loop): after the first draw
 * of a given size nothing is allocated. Buffers are keyed by purpose so two buffers in use at the
 * same time never alias; a buffer may be longer than asked for, callers use its first `length`.
 * A workspace is not shared between concurrent computations.
 */
export class EstimationWorkspace {
  private readonly buffers = new Map<string, Float64Array>();

  buffer(purpose: string, length: number): Float64Array {
    const existing = this.buffers.get(purpose);
    if (existing !== undefined && existing.length >= length) return existing;
    const fresh = new Float64Array(length);
    this.buffers.set(purpose, fresh);
    return fresh;
  }
}

/** The caller's workspace, or a throwaway one for a single call. */
export function workspaceOrNew(workspace: EstimationWorkspace | undefined): EstimationWorkspace {
  return workspace ?? new EstimationWorkspace();
}

/** The caller's output buffer after a length check, or a fresh one. */
export function outputOrNew(out: Float64Array | undefined, length: number, what: string): Float64Array {
  if (out === undefined) return new Float64Array(length);
  if (out.length !== length) throw new RangeError(`${what} buffer has length ${out.length}, expected ${length}`);
  return out;
}
