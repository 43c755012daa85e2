import { validateProposal } from '../../schema/validate.js';
import { optimizeProposal } from '../../stress/run.js';
import { readJsonBody } from '../body.js';
import { bodyProblem, clock, invalid, runCore } from '../respond.js';
import type { RouteDefinition } from '../route.js';

export const optimizeRoute: RouteDefinition = {
  method: 'post',
  path: '/v1/optimize',
  operationId: 'optimizeProposal',
  summary: "Every method's optimum on the unperturbed inputs",
  description: 'Solves the proposal\'s method and every method in `compare` once, on the inputs as given (no resampling). Estimates, not investment advice.',
  tag: 'report',
  protected: true,
  cache: 'noStore',
  requestBody: { component: 'Proposal', description: 'The proposal: assets, weights, inputs, method, and options.' },
  success: { description: 'The optima, in the same shape as `methods[k].base` of a report.', content: { 'application/json': { component: 'OptimizeResponse' } } },
  problems: [400, 413, 422],
  handle: async (c, config) => {
    const body = await readJsonBody(c.req.raw);
    if (!body.ok) return bodyProblem(body);
    const validation = validateProposal(body.value, { job: 'optimize', maxWork: config.maxWork });
    if (!validation.ok) return invalid(validation.problems);
    return runCore(async () => c.json(await optimizeProposal(validation.proposal, validation.warnings, { clock, maxWork: config.maxWork })));
  },
};
