import { CheckRequestSchema } from '../../schema/check.js';
import { problem, problemsFromZod } from '../../schema/problems.js';
import { validateProposal } from '../../schema/validate.js';
import { resolveBaseline } from '../../stress/baseline.js';
import { interruptibleRunner } from '../../scale/runner.js';
import { checkProposal } from '../../stress/run.js';
import { readJsonBody } from '../body.js';
import { yieldToEvents } from '../shards.js';
import { bodyProblem, clock, invalid, prefixProblem, runCore } from '../respond.js';
import type { RouteDefinition } from '../route.js';

export const checkRoute: RouteDefinition = {
  method: 'post',
  path: '/v1/check',
  operationId: 'checkProposal',
  summary: 'Stress and judge against a policy; 200 whether the gate passes or not',
  description:
    'Stresses the proposal and judges every policy rule with its Monte Carlo error. The policy comes from the body or, when absent, from proposal.policy. With a baseline proposal both runs share their random numbers, so `maxIncrease` rules judge the effect of a change, not noise. Estimates, not investment advice.',
  tag: 'report',
  protected: true,
  cache: 'noStore',
  requestBody: { component: 'CheckRequest', description: 'The proposal, optional gate rules (default: proposal.policy) and an optional baseline.' },
  success: { description: 'The report with its verdict (`verdict.pass` says whether the gate passed).', content: { 'application/json': { component: 'Report' } } },
  problems: [400, 409, 413, 422],
  handle: async (c, config) => {
    const body = await readJsonBody(c.req.raw);
    if (!body.ok) return bodyProblem(body);
    const envelope = CheckRequestSchema.safeParse(body.value);
    if (!envelope.success) return invalid(problemsFromZod(envelope.error.issues));
    const validation = validateProposal(envelope.data.proposal, { job: 'check', maxWork: config.maxWork });
    if (!validation.ok) return invalid(validation.problems.map((p) => prefixProblem(p, 'proposal')));
    const policy = envelope.data.policy ?? validation.proposal.policy;
    if (!policy) return invalid([problem(['policy'], 'required field missing: a policy here or in proposal.policy')]);
    return runCore(async () => {
      let baseline;
      if (envelope.data.baseline !== undefined) {
        const resolved = resolveBaseline(envelope.data.baseline);
        if (!resolved.ok) return invalid(resolved.problems);
        baseline = resolved.baseline;
      }
      // The draws run in chunks and stop once the client has gone away (409; see README "Cancellation").
      const drawRunner = interruptibleRunner(c.req.raw.signal, yieldToEvents);
      return c.json(await checkProposal(validation.proposal, validation.warnings, policy, baseline, { clock, maxWork: config.maxWork, drawRunner }));
    });
  },
};
