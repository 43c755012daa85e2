import { z } from 'zod';
import { renderReportHtml } from '../../render/html.js';
import { renderReportMarkdown } from '../../render/markdown.js';
import { validateProposal } from '../../schema/validate.js';
import { stressProposal } from '../../stress/run.js';
import { readJsonBody } from '../body.js';
import { problemResponse } from '../problem.js';
import { bodyProblem, clock, invalid, runCore } from '../respond.js';
import type { RouteDefinition } from '../route.js';
import { SHARDS_QUERY, shardRunOptions } from '../shards.js';

/** `?format=`: the report as JSON (default), a standalone HTML page, or markdown. */
export const ReportFormatQuerySchema = z.object({
  format: z.enum(['json', 'html', 'markdown']).default('json').describe('How to render the report: JSON (default), a standalone HTML page, or markdown.'),
});

export const stressRoute: RouteDefinition = {
  method: 'post',
  path: '/v1/stress',
  operationId: 'stressProposal',
  summary: 'Resample the inputs, re-optimise, report how stable weights and risk are',
  description:
    'Resamples the inputs, re-optimises the proposal\'s method and every method in `compare` on each draw, and reports weight bands, turnover, volatility and mean-driven shares with Monte Carlo errors. The same proposal and seed give the same report. Estimates, not investment advice.',
  tag: 'report',
  protected: true,
  cache: 'noStore',
  query: ReportFormatQuerySchema.extend(SHARDS_QUERY.shape),
  requestBody: { component: 'Proposal', description: 'The proposal: assets, weights, inputs, method, and options (resampling.draws, resampling.seed…).' },
  success: {
    description: 'The robustness report, in the requested format.',
    content: {
      'application/json': { component: 'Report' },
      'text/html': { text: 'The report as a standalone HTML page (with ?format=html).' },
      'text/markdown': { text: 'The report as markdown (with ?format=markdown).' },
    },
  },
  problems: [400, 409, 413, 422, 501, 502],
  handle: async (c, config) => {
    const query = ReportFormatQuerySchema.safeParse({ format: c.req.query('format') });
    if (!query.success) return problemResponse(400, `unknown format "${c.req.query('format')}"; expected json, html or markdown`);
    const format = query.data.format;
    const body = await readJsonBody(c.req.raw);
    if (!body.ok) return bodyProblem(body);
    const validation = validateProposal(body.value, { job: 'stress', maxWork: config.maxWork });
    if (!validation.ok) return invalid(validation.problems);
    return runCore(async () => {
      const report = await stressProposal(validation.proposal, validation.warnings, { clock, maxWork: config.maxWork, ...shardRunOptions(c.req.raw, c.env) });
      if (format === 'html') return c.html(renderReportHtml(report));
      if (format === 'markdown') return c.text(renderReportMarkdown(report), 200, { 'content-type': 'text/markdown; charset=utf-8' });
      return c.json(report);
    });
  },
};
