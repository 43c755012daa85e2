import demoProposal from '../../../schemas/examples/demo-proposal.json';
import { EXIT, writeOutput } from '../io.js';
import { stringOption } from '../options.js';
import type { CommandRun } from './types.js';

export const run: CommandRun = async (_positionals, values) => {
  writeOutput(JSON.stringify(demoProposal, null, 2) + '\n', stringOption(values, 'out'));
  return EXIT.ok;
};
