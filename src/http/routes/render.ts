import { z } from 'zod';
import { renderReportHtml } from '../../render/html.js';
import { renderReportMarkdown } from '../../render/markdown.js';
import { problemsFromZod } from '../../schema/problems.js';
import { ReportSchema } from '../../schema/report.js';
import { readJsonBody } from '../body.js';
import { problemResponse } from '../problem.js';
import { bodyProblem, invalid } from '../respond.js';
import type { RouteDefinition } from '../route.js';

export const RenderQuerySchema = z.object({
  format: z.enum(['html', 'markdown']).default('html').describe('HTML (default) or markdown.'),
  embed: z.enum(['true', 'false']).default('false').describe('true: HTML without the cautions box, for a page that shows the cautions itself (the reviewer page).'),
});

/** A report (e.g. a saved one, or the one the reviewer page just received) rendered by the same code as `?format=`. */
export const renderRoute: RouteDefinition = {
  method: 'post',
  path: '/v1/render',
  operationId: 'renderReport',
  summary: 'Render a report as HTML or markdown',
  description: 'Renders a report (as returned by /v1/stress or /v1/check) as a standalone HTML page or markdown; the headline first in both. Cheap: no resampling.',
  tag: 'report',
  protected: true,
  cache: 'noStore',
  query: RenderQuerySchema,
  requestBody: { component: 'Report', description: 'A report as returned by /v1/stress or /v1/check.' },
  success: {
    description: 'The rendered report.',
    content: {
      'text/html': { text: 'The report as an HTML page.' },
      'text/markdown': { text: 'The report as markdown (with ?format=markdown).' },
    },
  },
  problems: [400, 413],
  handle: async (c) => {
    const query = RenderQuerySchema.safeParse({ format: c.req.query('format'), embed: c.req.query('embed') });
    if (!query.success) return problemResponse(400, 'expected format=html or format=markdown, and embed=true or embed=false');
    const body = await readJsonBody(c.req.raw);
    if (!body.ok) return bodyProblem(body);
    const parsed = ReportSchema.safeParse(body.value);
    if (!parsed.success) return invalid(problemsFromZod(parsed.error.issues));
    if (query.data.format === 'markdown') return c.text(renderReportMarkdown(parsed.data), 200, { 'content-type': 'text/markdown; charset=utf-8' });
    return c.html(renderReportHtml(parsed.data, { embedded: query.data.embed === 'true' }));
  },
};
