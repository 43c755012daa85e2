import { renderOptimizeTable } from '../../render/table.js';
import { optimizeProposal } from '../../stress/run.js';
import { EXIT, writeOutput } from '../io.js';
import { stringOption } from '../options.js';
import { guarded, loadProposal, requireFormat } from '../reporting.js';
import type { CommandRun } from './types.js';

export const run: CommandRun = async ([file], values) => {
  const format = requireFormat(values, ['json', 'table']);
  const loaded = loadProposal(file, { job: 'optimize' });
  if (!loaded) return EXIT.usage;
  return guarded(async () => {
    const result = await optimizeProposal(loaded.proposal, loaded.warnings, () => performance.now());
    writeOutput(format === 'table' ? renderOptimizeTable(result) : JSON.stringify(result, null, 2) + '\n', stringOption(values, 'out'));
    return EXIT.ok;
  });
};
