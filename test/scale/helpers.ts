import type { ProposalInput } from '../../src/schema/proposal.js';
import { validateProposal } from '../../src/schema/validate.js';

export function valid(p: ProposalInput) {
  const v = validateProposal(p);
  if (!v.ok) throw new Error(JSON.stringify(v.problems));
  return v;
}

/** The report as bytes without the fields that may differ between runs (meta.elapsedMs, meta.shards, meta.threads). */
export function comparable(report: { meta: Record<string, unknown> }): string {
  const { elapsedMs: _e, shards: _s, threads: _t, ...meta } = report.meta;
  return JSON.stringify({ ...report, meta });
}
