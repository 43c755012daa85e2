import { summarise } from '../../http/problem.js';
import { problemsFromZod } from '../../schema/problems.js';
import { ReportSchema } from '../../schema/report.js';
import { EXIT, parseJson, readInput } from '../io.js';
import { requireFormat, writeReportOutputs } from '../reporting.js';
import type { CommandRun } from './types.js';

/** A saved report into any format, with no engine run: the report is checked against its schema first. */
export const run: CommandRun = async ([file], values) => {
  const format = requireFormat(values, ['markdown', 'html', 'table', 'junit', 'json']);
  const source = file === '-' ? 'stdin' : file;
  const parsed = ReportSchema.safeParse(parseJson(readInput(file), source));
  if (!parsed.success) {
    const problems = problemsFromZod(parsed.error.issues);
    process.stderr.write(`${source}: not a wobble report (${problems.length} problem${problems.length === 1 ? '' : 's'})\n${summarise(problems)}\n`);
    return EXIT.usage;
  }
  writeReportOutputs(parsed.data, format, values);
  return EXIT.ok;
};
