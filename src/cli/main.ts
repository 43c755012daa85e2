import { parseArgs } from 'node:util';
import demoProposal from '../../schemas/examples/demo-proposal.json';
import { summarise } from '../http/problem.js';
import { validateProposal } from '../schema/validate.js';
import { VERSION } from '../version.js';
import { EXIT, parseJson, readInput, UsageError, writeOutput } from './io.js';

const USAGE = `wobble ${VERSION} — robustness stress for proposed allocations

Usage:
  wobble validate <file|->                      check a proposal (exit 0 valid, 2 invalid)
  wobble optimize <file|-> [--format json|table]
  wobble stress   <file|-> [--draws N] [--seed S] [--format json|markdown|html|table] [--out FILE]
  wobble check    <file|-> --policy FILE [--baseline FILE] [--format json|markdown|junit]
  wobble demo                                   print the built-in demo proposal

Exit codes: 0 success, 1 gate failed (check), 2 input or usage error.
Run "wobble <command> --help" for a command's options.
Outputs are estimates, not investment advice.`;

const HELP: Record<string, string> = {
  validate: `wobble validate <file|->

Checks a proposal against the schema and every semantic rule (lengths, unique ids, symmetric
positive semi-definite covariance, weights summing to the budget, feasible constraints...).
Prints "valid" and any warnings; on problems prints one line per problem with its JSON path to
stderr and exits 2. "-" reads standard input.`,
  demo: `wobble demo

Prints the built-in demo proposal (an invented pension-fund scenario) as JSON.`,
  optimize: `wobble optimize <file|-> [--format json|table]

Solves every requested method on the unperturbed inputs.`,
  stress: `wobble stress <file|-> [--draws N] [--seed S] [--format json|markdown|html|table] [--out FILE]

Resamples the inputs, re-optimises every method on every draw and reports stability.`,
  check: `wobble check <file|-> --policy FILE [--baseline FILE] [--format json|markdown|junit]

Stresses the proposal and judges it against the policy's rules.
Exit 0 pass, 1 gate failed, 2 input or usage error.`,
};

export async function main(argv: string[]): Promise<number> {
  const [command, ...rest] = argv;
  if (!command || command === '--help' || command === '-h' || command === 'help') {
    process.stdout.write(USAGE + '\n');
    return command ? EXIT.ok : EXIT.usage;
  }
  if (command === '--version') {
    process.stdout.write(VERSION + '\n');
    return EXIT.ok;
  }
  if (!(command in HELP)) {
    process.stderr.write(`wobble: unknown command "${command}"\n\n${USAGE}\n`);
    return EXIT.usage;
  }
  const { values, positionals } = parseArgs({
    args: rest,
    allowPositionals: true,
    options: {
      help: { type: 'boolean', short: 'h' },
      format: { type: 'string' },
      out: { type: 'string', short: 'o' },
      draws: { type: 'string' },
      seed: { type: 'string' },
      policy: { type: 'string' },
      baseline: { type: 'string' },
    },
  });
  if (values.help) {
    process.stdout.write(HELP[command] + '\n');
    return EXIT.ok;
  }
  switch (command) {
    case 'demo':
      writeOutput(JSON.stringify(demoProposal, null, 2) + '\n', values.out);
      return EXIT.ok;
    case 'validate':
      return validateCommand(requireFile(positionals, command));
    default:
      process.stderr.write(`wobble ${command}: not built yet in this version\n`);
      return EXIT.usage;
  }
}

function requireFile(positionals: string[], command: string): string {
  if (positionals.length !== 1) throw new UsageError(`wobble ${command} needs one proposal file (or - for standard input)\n\n${HELP[command]}`);
  return positionals[0];
}

function validateCommand(file: string): number {
  const source = file === '-' ? 'stdin' : file;
  const validation = validateProposal(parseJson(readInput(file), source));
  if (!validation.ok) {
    process.stderr.write(`${source}: ${validation.problems.length} problem${validation.problems.length === 1 ? '' : 's'}\n${summarise(validation.problems)}\n`);
    return EXIT.usage;
  }
  for (const w of validation.warnings) process.stderr.write(`warning (${w.code}): ${w.message}\n`);
  process.stdout.write(`${source}: valid (${validation.proposal.assets.length} assets)\n`);
  return EXIT.ok;
}

/** Runs the CLI on process.argv, mapping caller mistakes to exit 2 and bugs to exit 3. */
export async function run(): Promise<void> {
  try {
    process.exitCode = await main(process.argv.slice(2));
  } catch (e) {
    const code = String((e as NodeJS.ErrnoException).code ?? '');
    if (e instanceof UsageError || code === 'ENOENT' || code === 'EISDIR' || code.startsWith('ERR_PARSE_ARGS')) {
      process.stderr.write(`wobble: ${(e as Error).message}\n`);
      process.exitCode = EXIT.usage;
    } else {
      process.stderr.write(`wobble: internal error: ${(e as Error).stack ?? String(e)}\n`);
      process.exitCode = 3;
    }
  }
}

// Run only when executed directly (tests import main(); bin/wobble.mjs calls run()).
if (process.argv[1] && /cli[\\/]main\.ts$/.test(process.argv[1])) await run();
