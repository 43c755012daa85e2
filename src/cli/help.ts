import { VERSION } from '../version.js';
import { optionHelp, type CommandName } from './options.js';

/**
 * Help texts. This module and options.ts are all that `wobble --help` loads: no engine code.
 */

export const EXIT_CODES_TEXT = `Exit codes:
  0  success (check: every rule passed)
  1  check: a gate rule failed
  2  input or usage error (invalid proposal or policy, unreadable file, unknown or inapplicable option,
     a request over a limit or with no solution)
  3  internal error (a bug in wobble; please report it with the input), or a thread or shard that
     failed on its retry too (the message names it)
  130 interrupted (Ctrl-C during a --remote run; the service's ranges were stopped, no report)`;

export const USAGE = `wobble ${VERSION} — robustness stress for proposed allocations

Usage:
  wobble validate <file|->                      check a proposal (exit 0 valid, 2 invalid)
  wobble optimize <file|-> [--format json|table]
  wobble stress   <file|-> [--draws N] [--seed S] [--format json|markdown|html|table] [--out FILE]
  wobble check    <file|-> --policy FILE [--baseline FILE] [--format json|markdown|junit]
                  [--junit FILE] [--markdown FILE] [--html FILE] [--json FILE]
  wobble render   <report.json|-> [--format markdown|html|table|junit|json] [--out FILE]
  wobble demo                                   print the built-in demo proposal
  wobble --version

${EXIT_CODES_TEXT}

Run "wobble <command> --help" for a command's options.
Outputs are estimates, not investment advice.`;

/** The formats each command can write as its main output; the first is the default. */
export const FORMATS: Partial<Record<CommandName, readonly string[]>> = {
  optimize: ['json', 'table'],
  stress: ['json', 'markdown', 'html', 'table'],
  check: ['json', 'markdown', 'junit', 'table', 'html'],
  render: ['markdown', 'html', 'table', 'junit', 'json'],
};

const DESCRIPTIONS: Record<CommandName, string> = {
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
solver diagnostics.`,
  stress: `wobble stress <file|-> [--draws N] [--seed S] [--format json|markdown|html|table] [--out FILE]

Resamples the inputs (bootstrap of the history, or parameter noise for moments), re-optimises
every method on every draw and reports weight bands, turnover, volatility, mean-driven share and
certainty-equivalent loss with Monte Carlo errors. --draws and --seed override the proposal's
resampling settings; the same proposal and seed give the same report. A progress bar is shown on
a terminal. --json/--markdown/--html/--table FILE write further formats from the same run.`,
  check: `wobble check <file|-> --policy FILE [--baseline FILE] [--format json|markdown|junit]

Stresses the proposal and judges it against the policy's rules (--policy FILE, or the proposal's
own policy). --baseline FILE is an earlier proposal (stressed now with the same seed: paired
errors) or an earlier report, needed by maxIncrease rules. One run can write several outputs:
the main one (--format, --out) and any of --junit/--markdown/--html/--json/--table FILE.
Exit 0 pass, 1 gate failed, 2 input or usage error.`,
  render: `wobble render <report.json|-> [--format markdown|html|table|junit|json] [--out FILE]

Turns a saved report (the JSON of "wobble stress" or "wobble check") into another format without
running anything again; junit needs a report with a verdict (from "wobble check").`,
};

export function commandHelp(command: CommandName): string {
  const formats = FORMATS[command];
  const formatLine = formats ? `\n\nFormats: ${formats.join(', ')} (default ${formats[0]}).` : '';
  return `${DESCRIPTIONS[command]}${formatLine}\n\nOptions:\n${optionHelp(command)}\n\n${EXIT_CODES_TEXT}`;
}
