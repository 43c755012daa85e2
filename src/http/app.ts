import { Hono } from 'hono';
import demoProposal from '../../schemas/examples/demo-proposal.json';
import { jsonSchema, SCHEMA_NAMES, type SchemaName } from '../schema/json-schema.js';
import { CheckRequestSchema } from '../schema/check.js';
import { problem, problemsFromZod, statusFor, type Problem } from '../schema/problems.js';
import { renderReportHtml } from '../render/html.js';
import { renderReportMarkdown } from '../render/markdown.js';
import { renderPage } from '../render/page.js';
import { resolveBaseline } from '../stress/baseline.js';
import { classifyError } from '../stress/errors.js';
import { checkProposal, optimizeProposal, stressProposal } from '../stress/run.js';
import { validateProposal } from '../schema/validate.js';
import { VERSION } from '../version.js';
import { readJsonBody, type BodyResult } from './body.js';
import { openApiDocument } from './openapi.js';
import { problemResponse, summarise } from './problem.js';
import { registerShardRoutes, shardProblem, shardRunOptions } from './shards.js';

/**
 * The HTTP edge: parse, validate, call the core, shape errors as problem+json.
 * Nothing a caller sends may produce a 500: every failure of the core that a request can
 * cause is typed and mapped to 4xx.
 */
export function createApp(): Hono {
  const app = new Hono();

  app.get('/', (c) => c.html(renderPage()));
  app.get('/healthz', (c) => c.json({ status: 'ok', version: VERSION }));
  app.get('/openapi.json', (c) => c.json(openApiDocument()));
  app.get('/v1/examples/demo', (c) => c.json(demoProposal));
  app.get('/v1/schemas/:name', (c) => {
    const name = c.req.param('name').replace(/\.schema\.json$|\.json$/, '');
    if (!(SCHEMA_NAMES as readonly string[]).includes(name)) {
      return problemResponse(404, `no schema named "${name}"; expected one of ${SCHEMA_NAMES.join(', ')}`);
    }
    return c.json(jsonSchema(name as SchemaName));
  });

  app.post('/v1/optimize', async (c) => {
    const body = await readJsonBody(c.req.raw);
    if (!body.ok) return bodyProblem(body);
    const validation = validateProposal(body.value);
    if (!validation.ok) return invalid(validation.problems);
    return respond(async () => c.json(await optimizeProposal(validation.proposal, validation.warnings, clock)));
  });

  registerShardRoutes(app);
  app.post('/v1/stress', async (c) => {
    const format = c.req.query('format') ?? 'json';
    if (!['json', 'html', 'markdown'].includes(format)) return problemResponse(400, `unknown format "${format}"; expected json, html or markdown`);
    const body = await readJsonBody(c.req.raw);
    if (!body.ok) return bodyProblem(body);
    const validation = validateProposal(body.value);
    if (!validation.ok) return invalid(validation.problems);
    return respond(async () => {
      const report = await stressProposal(validation.proposal, validation.warnings, { clock, ...shardRunOptions(c.req.raw, c.env) });
      if (format === 'html') return c.html(renderReportHtml(report));
      if (format === 'markdown') return c.text(renderReportMarkdown(report), 200, { 'content-type': 'text/markdown; charset=utf-8' });
      return c.json(report);
    });
  });

  app.post('/v1/check', async (c) => {
    const body = await readJsonBody(c.req.raw);
    if (!body.ok) return bodyProblem(body);
    const envelope = CheckRequestSchema.safeParse(body.value);
    if (!envelope.success) return invalid(problemsFromZod(envelope.error.issues));
    const validation = validateProposal(envelope.data.proposal);
    if (!validation.ok) return invalid(validation.problems.map((p) => prefixProblem(p, 'proposal')));
    const policy = envelope.data.policy ?? validation.proposal.policy;
    if (!policy) return invalid([problem(['policy'], 'required field missing: a policy here or in proposal.policy')]);
    return respond(async () => {
      let baseline;
      if (envelope.data.baseline !== undefined) {
        const resolved = resolveBaseline(envelope.data.baseline);
        if (!resolved.ok) return invalid(resolved.problems);
        baseline = resolved.baseline;
      }
      return c.json(await checkProposal(validation.proposal, validation.warnings, policy, baseline, { clock }));
    });
  });

  app.notFound((c) => problemResponse(404, `no route for ${c.req.method} ${new URL(c.req.url).pathname}`));
  app.onError((err) => {
    // A bug, not a caller's mistake; keep the message generic and log the detail.
    console.error(err);
    return problemResponse(500, 'an internal error occurred; this is a bug in wobble, please report it with the request');
  });
  return app;
}

function bodyProblem(body: Extract<BodyResult, { ok: false }>): Response {
  return problemResponse(body.status, body.detail, body.errors ? { errors: body.errors } : {});
}

/** Runs the core; typed failures become 413/422 problem+json, anything else propagates to onError (500, a bug). */
async function respond(run: () => Promise<Response>): Promise<Response> {
  try {
    return await run();
  } catch (e) {
    const sharding = shardProblem(e);
    if (sharding) return sharding;
    const known = classifyError(e);
    if (!known) throw e;
    return problemResponse(known.status, known.detail, known.path ? { errors: [problem(known.path, known.detail, known.status === 413 ? 'limit' : 'unsolvable')] } : {});
  }
}

function prefixProblem(p: Problem, prefix: string): Problem {
  return { ...p, path: p.path ? `${prefix}.${p.path}` : prefix, pointer: `/${prefix}${p.pointer}` };
}

/** Wall-clock milliseconds for meta.elapsedMs only (never used to bound work). */
const clock = (): number => Date.now();

export function invalid(problems: Parameters<typeof statusFor>[0]): Response {
  const status = statusFor(problems);
  return problemResponse(status, summarise(problems), { errors: problems });
}
