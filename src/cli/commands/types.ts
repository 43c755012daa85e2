import type { OptionValues } from '../options.js';

/** A command's entry, loaded on demand: positionals and parsed options in, exit code out. */
export type CommandRun = (positionals: readonly string[], values: OptionValues) => Promise<number>;
