import { parseArgs } from 'node:util';
import { UsageError } from './io.js';

/**
 * Every CLI option in one table: its value, which commands accept it and its help line. The
 * parser, the "does not apply" hints and the option lists in --help are all derived from it, so
 * a new option is one row here (and its use in a command).
 */
export const COMMAND_NAMES = ['validate', 'optimize', 'stress', 'check', 'render', 'demo'] as const;
export type CommandName = (typeof COMMAND_NAMES)[number];

export interface OptionSpec {
  readonly type: 'string' | 'boolean';
  readonly short?: string;
  /** Placeholder shown in help, e.g. `N` for `--draws N`. */
  readonly value?: string;
  readonly commands: readonly CommandName[];
  readonly help: string;
}

const REPORTING: readonly CommandName[] = ['stress', 'check', 'render'];

export const OPTIONS: Record<string, OptionSpec> = {
  help: { type: 'boolean', short: 'h', commands: COMMAND_NAMES, help: 'show this help' },
  format: { type: 'string', value: 'FORMAT', commands: ['optimize', 'stress', 'check', 'render'], help: 'format of the main output (see above)' },
  out: { type: 'string', short: 'o', value: 'FILE', commands: ['optimize', 'stress', 'check', 'render', 'demo'], help: 'write the main output to FILE instead of standard output' },
  draws: { type: 'string', value: 'N', commands: ['stress', 'check'], help: "number of resampling draws (overrides the proposal's resampling.draws)" },
  seed: { type: 'string', value: 'S', commands: ['stress', 'check'], help: "random seed, a string or an integer (overrides resampling.seed)" },
  policy: { type: 'string', value: 'FILE', commands: ['check'], help: "gate rules (default: the proposal's own policy)" },
  baseline: { type: 'string', value: 'FILE', commands: ['check'], help: 'an earlier proposal (stressed now with the same seed) or report, for maxIncrease rules' },
  json: { type: 'string', value: 'FILE', commands: REPORTING, help: 'also write the report as JSON to FILE' },
  markdown: { type: 'string', value: 'FILE', commands: REPORTING, help: 'also write the report as markdown to FILE' },
  html: { type: 'string', value: 'FILE', commands: REPORTING, help: 'also write the report as HTML to FILE' },
  table: { type: 'string', value: 'FILE', commands: REPORTING, help: 'also write the one-screen text summary to FILE' },
  threads: { type: 'string', value: 'N', commands: ['stress', 'check'], help: 'split the draws over N worker threads (default: the available cores, at most 8, for long runs; 1 disables)' },
  remote: { type: 'string', value: 'URL', commands: ['stress', 'check'], help: 'send ranges of draws to a deployed wobble service (token from WOBBLE_API_TOKEN) and merge them here' },
  shards: { type: 'string', value: 'N', commands: ['stress', 'check'], help: 'number of ranges sent with --remote (default 4)' },
  junit: { type: 'string', value: 'FILE', commands: ['check', 'render'], help: 'also write the verdict as JUnit XML to FILE' },
};

export type OptionValues = Partial<Record<string, string | boolean>>;

export interface ParsedCommand {
  readonly values: OptionValues;
  readonly positionals: string[];
}

/** Parses one command's arguments; an unknown option, or one that does not apply to this command, is a UsageError with a one-line hint. */
export function parseCommandArgs(command: CommandName, args: readonly string[]): ParsedCommand {
  const accepted = Object.fromEntries(
    Object.entries(OPTIONS)
      .filter(([, spec]) => spec.commands.includes(command))
      .map(([name, spec]) => [name, spec.short ? { type: spec.type, short: spec.short } : { type: spec.type }]),
  );
  try {
    const { values, positionals } = parseArgs({ args: [...args], options: accepted, allowPositionals: true, strict: true });
    return { values: values as OptionValues, positionals };
  } catch (e) {
    throw new UsageError(optionHint(command, e as Error & { code?: string }));
  }
}

function optionHint(command: CommandName, error: Error & { code?: string }): string {
  if (error.code === 'ERR_PARSE_ARGS_UNKNOWN_OPTION') {
    const flag = /'(-{1,2}[^'\s]+)'/.exec(error.message)?.[1] ?? 'an option';
    const name = flag.replace(/^-+/, '').split('=')[0];
    const spec = OPTIONS[name] ?? Object.entries(OPTIONS).find(([, s]) => s.short === name)?.[1];
    if (spec) {
      return `${flag} does not apply to "wobble ${command}" (it is an option of ${spec.commands.map((c) => `"wobble ${c}"`).join(', ')}); see wobble ${command} --help`;
    }
    return `unknown option ${flag} for "wobble ${command}"; see wobble ${command} --help`;
  }
  if (error.code === 'ERR_PARSE_ARGS_INVALID_OPTION_VALUE') {
    return `${error.message.split('\n')[0]}; see wobble ${command} --help`;
  }
  return `${error.message.split('\n')[0]}; see wobble ${command} --help`;
}

/** The option lines of one command's help, from the table. */
export function optionHelp(command: CommandName): string {
  const rows = Object.entries(OPTIONS)
    .filter(([, spec]) => spec.commands.includes(command))
    .map(([name, spec]) => [`${spec.short ? `-${spec.short}, ` : '    '}--${name}${spec.value ? ` ${spec.value}` : ''}`, spec.help] as const);
  const width = Math.max(...rows.map(([flag]) => flag.length));
  return rows.map(([flag, help]) => `  ${flag.padEnd(width)}  ${help}`).join('\n');
}

/** A string option's value (parseArgs guarantees the type from the table). */
export function stringOption(values: OptionValues, name: string): string | undefined {
  const v = values[name];
  return typeof v === 'string' ? v : undefined;
}
