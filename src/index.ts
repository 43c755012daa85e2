/**
 * wobble as a library: `import { validateProposal, optimize, stress, check } from 'wobble'`.
 * The same pure functions the HTTP routes use, returning the same JSON; the types are inferred
 * from the zod schemas that also generate the published JSON Schemas. No Node or Workers APIs.
 */
export { check, optimize, stress, type CheckRequest, type StressOptions } from './library/requests.js';
export { validateProposal, type Validation, type Warning } from './schema/validate.js';
export { WobbleProblemError, type ProblemBody, type ProblemEntry } from './problem-error.js';
export type { Problem } from './schema/problems.js';
export {
  METHOD_NAMES,
  PolicyRuleSchema,
  PolicySchema,
  ProposalSchema,
  type MethodName,
  type MethodSpec,
  type Policy,
  type PolicyRule,
  type Proposal,
  type ProposalInput,
} from './schema/proposal.js';
export { OptimizeResponseSchema, ReportSchema, VerdictSchema, type MethodReport, type OptimizeResponse, type Report, type Verdict } from './schema/report.js';
export { renderReportHtml } from './render/html.js';
export { renderVerdictJunit } from './render/junit.js';
export { renderReportMarkdown } from './render/markdown.js';
export { renderOptimizeTable, renderReportTable } from './render/table.js';
export { CAUTIONS } from './schema/cautions.js';
export { VERSION } from './version.js';
