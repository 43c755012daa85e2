import { Hono } from 'hono';
import demoProposal from '../../schemas/examples/demo-proposal.json';
import { CAUTIONS } from '../schema/cautions.js';
import { jsonSchema, SCHEMA_NAMES, type SchemaName } from '../schema/json-schema.js';
import { statusFor } from '../schema/problems.js';
import { validateProposal } from '../schema/validate.js';
import { VERSION } from '../version.js';
import { readJsonBody } from './body.js';
import { openApiDocument } from './openapi.js';
import { problemResponse, summarise } from './problem.js';

/**
 * The HTTP edge: parse, validate, call the core, shape errors as problem+json.
 * Nothing a caller sends may produce a 500: every failure of the core that a request can
 * cause is typed and mapped to 4xx.
 */
export function createApp(): Hono {
  const app = new Hono();

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

  const notYet = (what: string) => async (c: { req: { raw: Request } }) => {
    const body = await readJsonBody(c.req.raw);
    if (!body.ok) return problemResponse(body.status, body.detail, body.errors ? { errors: body.errors } : {});
    const validation = validateProposal(body.value);
    if (!validation.ok) return invalid(validation.problems);
    return problemResponse(501, `${what} is not built yet in this version; the proposal is valid.`, { cautions: CAUTIONS });
  };
  app.post('/v1/optimize', notYet('POST /v1/optimize'));
  app.post('/v1/stress', notYet('POST /v1/stress'));
  app.post('/v1/check', notYet('POST /v1/check'));

  app.notFound((c) => problemResponse(404, `no route for ${c.req.method} ${new URL(c.req.url).pathname}`));
  app.onError((err) => {
    // A bug, not a caller's mistake; keep the message generic and log the detail.
    console.error(err);
    return problemResponse(500, 'an internal error occurred; this is a bug in wobble, please report it with the request');
  });
  return app;
}

export function invalid(problems: Parameters<typeof statusFor>[0]): Response {
  const status = statusFor(problems);
  return problemResponse(status, summarise(problems), { errors: problems });
}
