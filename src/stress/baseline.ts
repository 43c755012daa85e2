import { problem, problemsFromZod, type Problem } from '../schema/problems.js';
import { ReportSchema } from '../schema/report.js';
import { validateProposal } from '../schema/validate.js';
import type { Baseline } from './run.js';

export type BaselineResult = { ok: true; baseline: Baseline } | { ok: false; problems: Problem[] };

/**
 * A gate baseline is an earlier report, or an earlier proposal that checkProposal stresses with the
 * same seed and draw count as the candidate (common random numbers), so a change is judged on its
 * effect and not on Monte Carlo noise. This only validates it.
 */
export function resolveBaseline(value: unknown, path: (string | number)[] = ['baseline']): BaselineResult {
  if (value && typeof value === 'object' && 'meta' in value && 'methods' in value) {
    const parsed = ReportSchema.safeParse(value);
    if (!parsed.success) return { ok: false, problems: problemsFromZod(parsed.error.issues, path) };
    return { ok: true, baseline: { kind: 'report', report: parsed.data } };
  }
  if (!value || typeof value !== 'object' || !('assets' in value)) {
    return { ok: false, problems: [problem(path, 'expected an earlier report (with meta and methods) or an earlier proposal (with assets and inputs)')] };
  }
  const validation = validateProposal(value);
  if (!validation.ok) return { ok: false, problems: validation.problems.map((p) => problem([...path, ...splitPath(p.pointer)], p.message, p.kind)) };
  return { ok: true, baseline: { kind: 'proposal', proposal: validation.proposal, warnings: validation.warnings } };
}

function splitPath(pointer: string): (string | number)[] {
  return pointer
    .split('/')
    .slice(1)
    .map((s) => s.replace(/~1/g, '/').replace(/~0/g, '~'))
    .map((s) => (/^\d+$/.test(s) ? Number(s) : s));
}
