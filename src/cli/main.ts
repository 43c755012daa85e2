import { parseArgs } from 'node:util';
import demoProposal from '../../schemas/examples/demo-proposal.json';
import { summarise } from '../http/problem.js';
import { renderReportHtml } from '../render/html.js';
import { renderVerdictJunit } from '../render/junit.js';
import { renderReportMarkdown } from '../render/markdown.js';
import { renderOptimizeTable, renderReportTable } from '../render/table.js';
import { problemsFromZod } from '../schema/problems.js';
import { PolicySchema, type Policy, type Proposal } from '../schema/proposal.js';
import type { Report } from '../schema/report.js';
import { validateProposal, type Warning } from '../schema/validate.js';
import { resolveBaseline } from '../stress/baseline.js';
import { classifyError } from '../stress/errors.js';
import { checkProposal, optimizeProposal, stressProposal, type RunOptions } from '../stress/run.js';
import { VERSION } from '../version.js';
import { EXIT, parseJson, readInput, UsageError, writeOutput } from './io.js';
import { SCALE_HELP, SCALE_OPTIONS, scaleFailureExit, scaleRunner } from './scale-options.js';

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

Solves every requested method (the proposal's method and compare, default all six) on the
unperturbed inputs and prints weights, expected return, volatility, risk contributions and
solver diagnostics. --format json (default) or table. --out FILE writes to a file.`,
  stress: `wobble stress <file|-> [--draws N] [--seed S] [--format json|markdown|html|table] [--out FILE]

Resamples the inputs (bootstrap of the history, or parameter noise for moments), re-optimises
every method on every draw and reports weight bands, turnover, volatility, mean-driven share and
certainty-equivalent loss with Monte Carlo errors. --draws and --seed override the proposal's
resampling settings; the same proposal and seed give the same report. A progress bar is shown on
a terminal. --format json (default), markdown, html or table; --out FILE.`,
  check: `wobble check <file|-> --policy FILE [--baseline FILE] [--format json|markdown|junit]

Stresses the proposal and judges it against the policy's rules (--policy FILE, or the proposal's
own policy). --baseline FILE is an earlier report, or an earlier proposal stressed now with the
same seed, for maxIncrease rules. --format json (default), markdown or junit; --out FILE.
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
      ...SCALE_OPTIONS,
    },
  });
  if (values.help) {
    process.stdout.write(HELP[command] + (command === 'stress' || command === 'check' ? `\n\n${SCALE_HELP}` : '') + '\n');
    return EXIT.ok;
  }
  switch (command) {
    case 'demo':
      writeOutput(JSON.stringify(demoProposal, null, 2) + '\n', values.out);
      return EXIT.ok;
    case 'validate':
      return validateCommand(requireFile(positionals, command));
    case 'optimize':
      return optimizeCommand(requireFile(positionals, command), values);
    case 'stress':
      return stressCommand(requireFile(positionals, command), values);
    case 'check':
      return checkCommand(requireFile(positionals, command), values);
    default:
      throw new UsageError(`unknown command "${command}"`);
  }
}

type Options = { format?: string; out?: string; draws?: string; seed?: string; policy?: string; baseline?: string; threads?: string; remote?: string; shards?: string };

function requireFormat(format: string | undefined, allowed: string[], fallback: string): string {
  const f = format ?? fallback;
  if (!allowed.includes(f)) throw new UsageError(`--format must be one of ${allowed.join(', ')}, got "${f}"`);
  return f;
}

/** Reads and validates a proposal; prints problems and returns undefined when invalid. */
function loadProposal(file: string): { proposal: Proposal; warnings: Warning[] } | undefined {
  const source = file === '-' ? 'stdin' : file;
  const validation = validateProposal(parseJson(readInput(file), source));
  if (!validation.ok) {
    process.stderr.write(`${source}: ${validation.problems.length} problem${validation.problems.length === 1 ? '' : 's'}\n${summarise(validation.problems)}\n`);
    return undefined;
  }
  return { proposal: validation.proposal, warnings: validation.warnings };
}

/** Runs the core; a limit or an unsolvable problem is an input error (exit 2) with the reason. */
async function guarded(run: () => Promise<number>): Promise<number> {
  try {
    return await run();
  } catch (e) {
    const scaleExit = scaleFailureExit(e);
    if (scaleExit !== undefined) return scaleExit;
    const known = classifyError(e);
    if (!known) throw e;
    process.stderr.write(`wobble: ${known.status === 413 ? 'over a limit' : 'cannot be solved'}: ${known.detail}\n`);
    return EXIT.usage;
  }
}

/** --draws and --seed override the proposal's own resampling settings (absent: the proposal's). */
function runOptions(values: Options): RunOptions {
  let draws: number | undefined;
  if (values.draws !== undefined) {
    draws = Number(values.draws);
    if (!Number.isInteger(draws) || draws < 1) throw new UsageError(`--draws must be a positive integer, got "${values.draws}"`);
  }
  const seed = values.seed === undefined ? undefined : /^-?\d+$/.test(values.seed) ? Number(values.seed) : values.seed;
  return { draws, seed, clock: () => performance.now(), onProgress: progressBar(), drawRunner: scaleRunner(values) };
}

/** A progress bar on stderr when it is a terminal (never in pipes or CI logs). */
function progressBar(): ((done: number, total: number) => void) | undefined {
  if (!process.stderr.isTTY) return undefined;
  let last = -1;
  return (done, total) => {
    const pct = Math.floor((100 * done) / total);
    if (pct === last) return;
    last = pct;
    const width = 30;
    const filled = Math.round((width * done) / total);
    process.stderr.write(`\r[${'#'.repeat(filled)}${'.'.repeat(width - filled)}] ${pct}% (${done}/${total} draws)`);
    if (done === total) process.stderr.write('\r' + ' '.repeat(width + 30) + '\r');
  };
}

async function optimizeCommand(file: string, values: Options): Promise<number> {
  const format = requireFormat(values.format, ['json', 'table'], 'json');
  const loaded = loadProposal(file);
  if (!loaded) return EXIT.usage;
  return guarded(async () => {
    const result = await optimizeProposal(loaded.proposal, loaded.warnings, () => performance.now());
    writeOutput(format === 'table' ? renderOptimizeTable(result) : JSON.stringify(result, null, 2) + '\n', values.out);
    return EXIT.ok;
  });
}

function renderReport(report: Report, format: string): string {
  switch (format) {
    case 'table':
      return renderReportTable(report);
    case 'markdown':
      return renderReportMarkdown(report);
    case 'html':
      return renderReportHtml(report);
    case 'junit':
      return renderVerdictJunit(report);
    default:
      return JSON.stringify(report, null, 2) + '\n';
  }
}

async function stressCommand(file: string, values: Options): Promise<number> {
  const format = requireFormat(values.format, ['json', 'markdown', 'html', 'table'], 'json');
  const loaded = loadProposal(file);
  if (!loaded) return EXIT.usage;
  return guarded(async () => {
    const report = await stressProposal(loaded.proposal, loaded.warnings, runOptions(values));
    writeOutput(renderReport(report, format), values.out);
    return EXIT.ok;
  });
}

async function checkCommand(file: string, values: Options): Promise<number> {
  const format = requireFormat(values.format, ['json', 'markdown', 'junit', 'table', 'html'], 'json');
  const loaded = loadProposal(file);
  if (!loaded) return EXIT.usage;
  let policy = loaded.proposal.policy;
  if (values.policy) {
    const parsed = PolicySchema.safeParse(parseJson(readInput(values.policy), values.policy));
    if (!parsed.success) {
      process.stderr.write(`${values.policy}: invalid policy\n${summarise(problemsFromZod(parsed.error.issues))}\n`);
      return EXIT.usage;
    }
    policy = parsed.data;
  }
  if (!policy) throw new UsageError('wobble check needs --policy FILE (or a policy inside the proposal)');
  const options = runOptions(values);
  return guarded(async () => {
    let baseline;
    if (values.baseline) {
      const resolved = resolveBaseline(parseJson(readInput(values.baseline), values.baseline));
      if (!resolved.ok) {
        process.stderr.write(`${values.baseline}: invalid baseline\n${summarise(resolved.problems)}\n`);
        return EXIT.usage;
      }
      baseline = resolved.baseline;
    }
    const report = await checkProposal(loaded.proposal, loaded.warnings, policy as Policy, baseline, options);
    writeOutput(renderReport(report, format), values.out);
    const verdict = report.verdict;
    if (verdict && !verdict.pass) {
      process.stderr.write(`gate FAILED: ${verdict.rules.filter((r) => !r.pass).map((r) => r.id).join(', ')}\n`);
      return EXIT.gateFailed;
    }
    return EXIT.ok;
  });
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
