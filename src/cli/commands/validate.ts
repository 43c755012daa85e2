import { summarise } from '../../http/problem.js';
import { validateProposal } from '../../schema/validate.js';
import { EXIT, parseJson, readInput } from '../io.js';
import type { CommandRun } from './types.js';

export const run: CommandRun = async ([file]) => {
  const source = file === '-' ? 'stdin' : file;
  const validation = validateProposal(parseJson(readInput(file), source));
  if (!validation.ok) {
    process.stderr.write(`${source}: ${validation.problems.length} problem${validation.problems.length === 1 ? '' : 's'}\n${summarise(validation.problems)}\n`);
    return EXIT.usage;
  }
  for (const w of validation.warnings) process.stderr.write(`warning (${w.code}): ${w.message}\n`);
  process.stdout.write(`${source}: valid (${validation.proposal.assets.length} assets)\n`);
  return EXIT.ok;
};
