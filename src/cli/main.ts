import { VERSION } from '../version.js';
import type { CommandRun } from './commands/types.js';
import { commandHelp, USAGE } from './help.js';
import { EXIT, UsageError } from './io.js';
import { COMMAND_NAMES, parseCommandArgs, type CommandName } from './options.js';

/**
 * The CLI's front door. It parses arguments and prints help and the version with nothing but
 * this module, help.ts and options.ts loaded; the engine (zod schemas, solvers, renderers) is
 * imported only when a command runs, so `wobble --help` starts as fast as node itself allows.
 */

/** Each command's module, imported on demand. */
const COMMANDS: Record<CommandName, () => Promise<{ run: CommandRun }>> = {
  validate: () => import('./commands/validate.js'),
  optimize: () => import('./commands/optimize.js'),
  stress: () => import('./commands/stress.js'),
  check: () => import('./commands/check.js'),
  render: () => import('./commands/render.js'),
  demo: () => import('./commands/demo.js'),
};

/** Commands that read one file (or - for standard input); the rest take none. */
const FILE_ARGUMENT: Record<CommandName, string | undefined> = {
  validate: 'one proposal file',
  optimize: 'one proposal file',
  stress: 'one proposal file',
  check: 'one proposal file',
  render: 'one report file (JSON from "wobble stress" or "wobble check")',
  demo: undefined,
};

export async function main(argv: readonly string[]): Promise<number> {
  const [command, ...rest] = argv;
  if (command === undefined) {
    process.stderr.write(USAGE + '\n');
    return EXIT.usage;
  }
  if (command === '--help' || command === '-h' || command === 'help') {
    process.stdout.write(USAGE + '\n');
    return EXIT.ok;
  }
  if (command === '--version' || command === '-v' || command === '-V') {
    process.stdout.write(VERSION + '\n');
    return EXIT.ok;
  }
  if (!(COMMAND_NAMES as readonly string[]).includes(command)) {
    const hint = command.startsWith('-') ? `"${command}" is not an option before a command` : `unknown command "${command}"`;
    throw new UsageError(`${hint}; commands: ${COMMAND_NAMES.join(', ')} (see wobble --help)`);
  }
  const name = command as CommandName;
  const { values, positionals } = parseCommandArgs(name, rest);
  if (values.help) {
    process.stdout.write(commandHelp(name) + '\n');
    return EXIT.ok;
  }
  const wanted = FILE_ARGUMENT[name];
  if (wanted === undefined && positionals.length > 0) {
    throw new UsageError(`wobble ${name} takes no file, got "${positionals[0]}"; see wobble ${name} --help`);
  }
  if (wanted !== undefined && positionals.length !== 1) {
    throw new UsageError(`wobble ${name} needs ${wanted} (or - for standard input), got ${positionals.length}; see wobble ${name} --help`);
  }
  const { run: runCommand } = await COMMANDS[name]();
  return runCommand(positionals, values);
}

/** Errors a caller causes (missing or unreadable file) are exit 2; anything else is a bug, exit 3. */
function isCallerError(e: unknown): boolean {
  const code = String((e as NodeJS.ErrnoException | undefined)?.code ?? '');
  return e instanceof UsageError || ['ENOENT', 'EISDIR', 'EACCES', 'ENOTDIR', 'EPERM'].includes(code);
}

/** Runs the CLI on process.argv and sets the exit code (0 pass, 1 gate failed, 2 input or usage error, 3 internal error). */
export async function run(argv: readonly string[] = process.argv.slice(2)): Promise<void> {
  try {
    process.exitCode = await main(argv);
  } catch (e) {
    if (isCallerError(e)) {
      process.stderr.write(`wobble: ${(e as Error).message}\n`);
      process.exitCode = EXIT.usage;
    } else if ((e as NodeJS.ErrnoException | undefined)?.syscall) {
      // The system refused (disk full, broken pipe…): not the caller's input, not a bug in wobble.
      process.stderr.write(`wobble: internal error: ${(e as Error).message}\n`);
      process.exitCode = EXIT.internal;
    } else {
      process.stderr.write(`wobble: internal error (a bug; please report it with the input): ${(e as Error)?.stack ?? String(e)}\n`);
      process.exitCode = EXIT.internal;
    }
  }
}

// Run when executed directly from source (tests import main(); the built bin calls run()).
if (process.argv[1] && /cli[\\/]main\.ts$/.test(process.argv[1])) await run();
