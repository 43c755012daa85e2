import { stressProposal } from '../../stress/run.js';
import { EXIT } from '../io.js';
import { guarded, loadProposal, requireFormat, runOptions, writeReportOutputs } from '../reporting.js';
import type { CommandRun } from './types.js';

export const run: CommandRun = async ([file], values) => {
  const format = requireFormat(values, ['json', 'markdown', 'html', 'table']);
  const options = runOptions(values);
  const loaded = loadProposal(file, { job: 'stress', draws: options.draws });
  if (!loaded) return EXIT.usage;
  return guarded(async () => {
    const report = await stressProposal(loaded.proposal, loaded.warnings, options);
    writeReportOutputs(report, format, values);
    return EXIT.ok;
  });
};
