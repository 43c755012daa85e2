import { summarise } from '../../http/problem.js';
import { problemsFromZod } from '../../schema/problems.js';
import { PolicySchema, type Policy } from '../../schema/proposal.js';
import { resolveBaseline } from '../../stress/baseline.js';
import { checkProposal, type Baseline } from '../../stress/run.js';
import { EXIT, parseJson, readInput, UsageError } from '../io.js';
import { stringOption } from '../options.js';
import { guarded, loadProposal, requireFormat, runOptions, writeReportOutputs } from '../reporting.js';
import type { CommandRun } from './types.js';

export const run: CommandRun = async ([file], values) => {
  const format = requireFormat(values, ['json', 'markdown', 'junit', 'table', 'html']);
  const options = runOptions(values);
  const policyFile = stringOption(values, 'policy');
  const baselineFile = stringOption(values, 'baseline');
  const loaded = loadProposal(file, { job: 'check', draws: options.draws });
  if (!loaded) return EXIT.usage;
  let policy: Policy | undefined = loaded.proposal.policy;
  if (policyFile !== undefined) {
    const parsed = PolicySchema.safeParse(parseJson(readInput(policyFile), policyFile));
    if (!parsed.success) {
      process.stderr.write(`${policyFile}: invalid policy\n${summarise(problemsFromZod(parsed.error.issues))}\n`);
      return EXIT.usage;
    }
    policy = parsed.data;
  }
  if (!policy) throw new UsageError('wobble check needs --policy FILE (or a policy inside the proposal)');
  // Said before any draw is computed: a maxIncrease rule cannot be judged without a baseline.
  const needsBaseline = policy.rules.findIndex((r) => r.maxIncrease !== undefined);
  if (needsBaseline >= 0 && baselineFile === undefined) {
    throw new UsageError(`policy rules[${needsBaseline}] (${policy.rules[needsBaseline].metric}) uses maxIncrease, which compares with a baseline: add --baseline FILE (an earlier proposal or report)`);
  }
  let baseline: Baseline | undefined;
  if (baselineFile !== undefined) {
    const resolved = resolveBaseline(parseJson(readInput(baselineFile), baselineFile));
    if (!resolved.ok) {
      process.stderr.write(`${baselineFile}: invalid baseline\n${summarise(resolved.problems)}\n`);
      return EXIT.usage;
    }
    baseline = resolved.baseline;
  }
  const judgedPolicy = policy;
  return guarded(async () => {
    const report = await checkProposal(loaded.proposal, loaded.warnings, judgedPolicy, baseline, options);
    writeReportOutputs(report, format, values);
    const verdict = report.verdict;
    if (verdict && !verdict.pass) {
      process.stderr.write(`gate FAILED: ${verdict.rules.filter((r) => !r.pass).map((r) => r.id).join(', ')}\n`);
      return EXIT.gateFailed;
    }
    return EXIT.ok;
  });
};
