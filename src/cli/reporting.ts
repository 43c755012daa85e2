import { summarise } from '../http/problem.js';
import { renderReportHtml } from '../render/html.js';
import { renderVerdictJunit } from '../render/junit.js';
import { renderReportMarkdown } from '../render/markdown.js';
import { renderReportTable } from '../render/table.js';
import type { Proposal } from '../schema/proposal.js';
import type { Report } from '../schema/report.js';
import { validateProposal, type ValidationContext, type Warning } from '../schema/validate.js';
import { classifyError } from '../stress/errors.js';
import type { RunOptions } from '../stress/run.js';
import { EXIT, parseJson, readInput, UsageError, writeOutput } from './io.js';
import { stringOption, type OptionValues } from './options.js';
import { scaleFailureExit, scaleRunner } from './scale-options.js';

/** Shared by the engine-running commands (loaded only when one of them runs). */

export type ReportFormat = 'json' | 'markdown' | 'html' | 'table' | 'junit';

/** The extra outputs one run can write beside the main one (`--junit FILE` …), in a fixed order. */
const EXTRA_OUTPUTS: readonly ReportFormat[] = ['json', 'markdown', 'html', 'table', 'junit'];

export function renderReport(report: Report, format: ReportFormat): string {
  switch (format) {
    case 'table':
      return renderReportTable(report);
    case 'markdown':
      return renderReportMarkdown(report);
    case 'html':
      return renderReportHtml(report);
    case 'junit':
      if (!report.verdict) throw new UsageError('JUnit output needs a report with a verdict (from "wobble check")');
      return renderVerdictJunit(report);
    case 'json':
      return JSON.stringify(report, null, 2) + '\n';
  }
}

/** Checks --format against the command's list (first entry is the default). */
export function requireFormat<F extends string>(values: OptionValues, allowed: readonly F[]): F {
  const f = stringOption(values, 'format') ?? allowed[0];
  if (!(allowed as readonly string[]).includes(f)) throw new UsageError(`--format must be one of ${allowed.join(', ')}, got "${f}"`);
  return f as F;
}

/** Writes the main output (stdout or --out) and every requested extra output from the same report. */
export function writeReportOutputs(report: Report, format: ReportFormat, values: OptionValues): void {
  // Render everything first, so a usage problem (JUnit without a verdict) leaves no partial files.
  const extras = EXTRA_OUTPUTS.flatMap((f) => {
    const file = stringOption(values, f);
    return file === undefined ? [] : [{ file, text: renderReport(report, f) }];
  });
  const main = renderReport(report, format);
  for (const { file, text } of extras) writeOutput(text, file);
  writeOutput(main, stringOption(values, 'out'));
}

/** Reads and validates a proposal; prints problems and returns undefined when invalid. */
export function loadProposal(file: string, context: ValidationContext = {}): { proposal: Proposal; warnings: Warning[] } | undefined {
  const source = file === '-' ? 'stdin' : file;
  const validation = validateProposal(parseJson(readInput(file), source), context);
  if (!validation.ok) {
    process.stderr.write(`${source}: ${validation.problems.length} problem${validation.problems.length === 1 ? '' : 's'}\n${summarise(validation.problems)}\n`);
    return undefined;
  }
  return { proposal: validation.proposal, warnings: validation.warnings };
}

/** Runs the core; a limit or an unsolvable request is an input error (exit 2) with the reason and its JSON path. */
export async function guarded(run: () => Promise<number>): Promise<number> {
  try {
    return await run();
  } catch (e) {
    const scaleExit = scaleFailureExit(e);
    if (scaleExit !== undefined) return scaleExit;
    const known = classifyError(e);
    if (!known) throw e;
    const where = known.path && known.path.length > 0 ? `${formatWhere(known.path)}: ` : '';
    process.stderr.write(`wobble: ${known.status === 413 ? 'over a limit' : 'cannot be answered'}: ${where}${known.detail}\n`);
    return EXIT.usage;
  }
}

function formatWhere(path: readonly (string | number)[]): string {
  return path.map((p, i) => (typeof p === 'number' ? `[${p}]` : i === 0 ? p : `.${p}`)).join('');
}

/** --draws and --seed override the proposal's own resampling settings (absent: the proposal's). */
export function runOptions(values: OptionValues): RunOptions {
  const drawsText = stringOption(values, 'draws');
  let draws: number | undefined;
  if (drawsText !== undefined) {
    draws = Number(drawsText);
    if (!/^\d+$/.test(drawsText) || !Number.isSafeInteger(draws) || draws < 1) throw new UsageError(`--draws must be a positive integer, got "${drawsText}"`);
  }
  const seedText = stringOption(values, 'seed');
  const seed = seedText === undefined ? undefined : /^-?\d+$/.test(seedText) && Number.isSafeInteger(Number(seedText)) ? Number(seedText) : seedText;
  const drawRunner = scaleRunner({ threads: stringOption(values, 'threads'), remote: stringOption(values, 'remote'), shards: stringOption(values, 'shards') });
  return { draws, seed, clock: () => performance.now(), onProgress: progressBar(), drawRunner };
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
