import { readFileSync, writeFileSync } from 'node:fs';

/** Reads a file, or standard input for `-`. */
export function readInput(path: string): string {
  return readFileSync(path === '-' ? 0 : path, 'utf8');
}

export function writeOutput(text: string, outFile: string | undefined): void {
  if (outFile) writeFileSync(outFile, text);
  else process.stdout.write(text);
}

/** Exit codes of the contract. */
export const EXIT = { ok: 0, gateFailed: 1, usage: 2, internal: 3 } as const;

export class UsageError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'UsageError';
  }
}

/** Parses JSON from a named source, with the source in the error. */
export function parseJson(text: string, source: string): unknown {
  try {
    return JSON.parse(text);
  } catch (e) {
    throw new UsageError(`${source}: not valid JSON (${(e as Error).message})`);
  }
}
