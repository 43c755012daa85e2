import { problem, problemsFromZod, type Problem } from '../schema/problems.js';
import { ReportSchema, type Report } from '../schema/report.js';
import { validateProposal } from '../schema/validate.js';
import { stressProposal, type RunOptions } from './run.js';

export type BaselineResult = { ok: true; report: Omit<Report, 'verdict'> } | { ok: false; problems: Problem[] };

/**
 * A gate baseline is an earlier report, or an earlier proposal that is stressed now with the same
 * seed and draw count as the candidate (common random numbers), so a change is judged on its
 * effect and not on Monte Carlo noise.
 */
export async function resolveBaseline(value: unknown, options: RunOptions, path: (string | number)[] = ['baseline']): Promise<BaselineResult> {
  if (value && typeof value === 'object' && 'meta' in value && 'methods' in value) {
    const parsed = ReportSchema.safeParse(value);
    if (!parsed.success) return { ok: false, problems: problemsFromZod(parsed.error.issues, path) };
    return { ok: true, report: parsed.data };
  }
  if (!value || typeof value !== 'object' || !('assets' in value)) {
    return { ok: false, problems: [problem(path, 'expected an earlier report (with meta and methods) or an earlier proposal (with assets and inputs)')] };
  }
  const validation = validateProposal(value);
  if (!validation.ok) return { ok: false, problems: validation.problems.map((p) => problem([...path, ...splitPath(p.pointer)], p.message, p.kind)) };
  return { ok: true, report: await stressProposal(validation.proposal, validation.warnings, options) };
}

function splitPath(pointer: string): (string | number)[] {
  return pointer
    .split('/')
    .slice(1)
    .map((s) => s.replace(/~1/g, '/').replace(/~0/g, '~'))
    .map((s) => (/^\d+$/.test(s) ? Number(s) : s));
}
