import { z } from 'zod';
import demoProposal from '../../../schemas/examples/demo-proposal.json';
import { renderPage } from '../../render/page.js';
import { jsonSchema, SCHEMA_NAMES } from '../../schema/json-schema.js';
import { VERSION } from '../../version.js';
import { openApiDocument } from '../openapi.js';
import { problemResponse } from '../problem.js';
import { withEtag } from '../respond.js';
import type { RouteDefinition } from '../route.js';

/** Routes that describe the service: always open (no token), cheap, cacheable. */

export const pageRoute: RouteDefinition = {
  method: 'get',
  path: '/',
  operationId: 'getReviewerPage',
  summary: 'Reviewer page',
  description: 'A page where a reviewer pastes or uploads a proposal, runs the stress and reads the report.',
  tag: 'service',
  protected: false,
  cache: 'revalidate',
  ownCsp: true,
  success: { description: 'The reviewer page.', content: { 'text/html': { text: 'An HTML page.' } } },
  problems: [],
  handle: (c) => c.html(renderPage()),
};

export const healthRoute: RouteDefinition = {
  method: 'get',
  path: '/healthz',
  operationId: 'getHealth',
  summary: 'Liveness',
  description: 'Answers 200 while the service runs and its configuration reads, 503 when a setting cannot be read. Not counted against the rate limit and never needs a token.',
  tag: 'service',
  protected: false,
  cache: 'noStore',
  success: { description: 'The service is up.', content: { 'application/json': { component: 'Health' } } },
  problems: [503],
  handle: (c, config) => {
    // The setting's name and value stay in the logs: a public health check only says that something is wrong.
    if (config.problems.length > 0) {
      console.error(`wobble configuration: ${config.problems.join('; ')}`);
      return problemResponse(503, 'the service is misconfigured; its operator can read why in the Worker logs');
    }
    return c.json({ status: 'ok' as const, version: VERSION });
  },
};

export const SchemaPathSchema = z.object({
  name: z.enum(SCHEMA_NAMES).describe('Which schema: the request body (proposal), the response (report) or the gate rules (policy).'),
});

/** Serialised schemas, built once per isolate (the conversion takes ~20 ms). */
const schemaTexts = new Map<string, string>();
function schemaText(name: (typeof SCHEMA_NAMES)[number]): string {
  let text = schemaTexts.get(name);
  if (text === undefined) {
    text = JSON.stringify(jsonSchema(name), null, 2);
    schemaTexts.set(name, text);
  }
  return text;
}

export const schemaRoute: RouteDefinition = {
  method: 'get',
  path: '/v1/schemas/{name}',
  operationId: 'getJsonSchema',
  summary: 'JSON Schema of the proposal, report or policy',
  description: 'JSON Schema (draft 2020-12) generated from the same zod schemas that validate requests; the same files are committed under schemas/.',
  tag: 'discovery',
  protected: false,
  cache: 'static',
  pathParams: SchemaPathSchema,
  success: { description: 'The schema.', content: { 'application/schema+json': { component: 'JsonSchemaDocument' } }, headers: ['ETag'] },
  problems: [404],
  handle: (c) => {
    // `.json` and `.schema.json` suffixes are accepted so the committed file names work as URLs too.
    const name = c.req.param('name')?.replace(/\.schema\.json$|\.json$/, '') ?? '';
    const parsed = SchemaPathSchema.safeParse({ name });
    if (!parsed.success) return problemResponse(404, `no schema named "${name}"; expected one of ${SCHEMA_NAMES.join(', ')}`);
    return withEtag(c.req.raw, schemaText(parsed.data.name), 'application/schema+json');
  },
};

export const demoRoute: RouteDefinition = {
  method: 'get',
  path: '/v1/examples/demo',
  operationId: 'getDemoProposal',
  summary: 'The built-in demo proposal',
  description: 'An invented scenario (a fictional fund over ten asset classes), ready to post to /v1/stress.',
  tag: 'discovery',
  protected: false,
  cache: 'static',
  success: { description: 'A proposal.', content: { 'application/json': { component: 'Proposal' } }, headers: ['ETag'] },
  problems: [],
  handle: (c) => withEtag(c.req.raw, JSON.stringify(demoProposal, null, 2), 'application/json'),
};

export const openApiRoute: RouteDefinition = {
  method: 'get',
  path: '/openapi.json',
  operationId: 'getOpenApiDocument',
  summary: 'This OpenAPI 3.1 document',
  description: 'Generated from the route table and the zod schemas the service validates with. The server entry is the origin it was fetched from.',
  tag: 'discovery',
  protected: false,
  cache: 'static',
  success: { description: 'The OpenAPI document.', content: { 'application/json': { component: 'OpenApiDocument' } }, headers: ['ETag'] },
  problems: [],
  handle: (c) => withEtag(c.req.raw, JSON.stringify(openApiDocument(c.get('routes'), new URL(c.req.url).origin), null, 2), 'application/json'),
};
