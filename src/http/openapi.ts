import { z } from 'zod';
import { LIMITS } from '../schema/limits.js';
import { VERSION } from '../version.js';
import { COMPONENTS, type ComponentName } from './components.js';
import type { ProblemStatus } from './problem.js';
import type { Body, RouteDefinition } from './route.js';

/**
 * OpenAPI 3.1 generated from the route table (src/http/routes) and the zod schemas the service
 * validates with. Component schemas come from zod's own JSON Schema conversion, the same one that
 * writes schemas/*.schema.json, with references between components.
 */

const COMPONENT_REF = (name: string) => `#/components/schemas/${name}`;

type JsonObject = Record<string, unknown>;

/** The component schemas: each from the conversion in its own direction (requests as read, responses as written). */
function componentSchemas(): Record<ComponentName, JsonObject> {
  const registry = z.registry<{ id: string }>();
  for (const [name, { schema }] of Object.entries(COMPONENTS)) registry.add(schema, { id: name });
  const byIo = (io: 'input' | 'output') =>
    z.toJSONSchema(registry, { target: 'draft-2020-12', io, unrepresentable: 'any', uri: COMPONENT_REF }).schemas as Record<string, JsonObject>;
  const input = byIo('input');
  const output = byIo('output');
  const out = {} as Record<ComponentName, JsonObject>;
  for (const [name, { io }] of Object.entries(COMPONENTS) as [ComponentName, { io: 'input' | 'output' }][]) {
    // Inside an OpenAPI document the dialect is the document's (jsonSchemaDialect) and the
    // component's name is its address: drop the per-schema $schema and the fragment-only $id.
    const { $schema: _dialect, $id: _id, ...schema } = (io === 'input' ? input : output)[name];
    out[name] = schema;
  }
  return out;
}

/** Parameters from a zod object, one per property, with the property's JSON Schema. */
function parameters(schema: z.ZodObject | undefined, location: 'query' | 'path'): JsonObject[] {
  if (!schema) return [];
  const json = z.toJSONSchema(schema, { target: 'draft-2020-12', io: 'input' }) as { properties?: Record<string, JsonObject>; required?: string[] };
  return Object.entries(json.properties ?? {}).map(([name, property]) => {
    const { description, ...rest } = property;
    return {
      name,
      in: location,
      required: location === 'path' || (json.required ?? []).includes(name),
      description,
      schema: rest,
    };
  });
}

function mediaBody(body: Body): JsonObject {
  return 'component' in body ? { schema: { $ref: COMPONENT_REF(body.component) } } : { schema: { type: 'string', description: body.text } };
}

const PROBLEM_DESCRIPTIONS: Record<ProblemStatus, string> = {
  400: 'Malformed: not JSON, or not a valid proposal. `errors` lists every bad field with its JSON path.',
  401: 'A bearer token is required (the deployment set WOBBLE_API_TOKEN) and none, or a wrong one, was sent.',
  404: 'No such resource.',
  405: 'The path exists but not with this method; `Allow` lists the methods it answers.',
  409: 'The computation was cancelled (the client went away, or a Durable Object shard was told to stop).',
  413: `Over a service limit (the body over ${LIMITS.maxBodyBytes} bytes, or a count or work limit, named in \`detail\`).`,
  415: 'The body is not `application/json` (UTF-8), or its Content-Encoding is not identity, gzip or deflate.',
  422: 'Valid, but without an answer (e.g. infeasible constraints, unstable inputs, a rule needing a baseline).',
  429: 'Too many requests from this client; retry after `Retry-After` seconds.',
  500: 'A bug in the service, or a deployment whose configuration cannot be read.',
  501: '`?shards` was asked for but the deployment has no STRESS_SHARD Durable Object binding.',
  502: 'A shard (a range of the draws computed in a Durable Object) failed twice; `detail` names the shard and its draws. No report is built from part of the draws.',
  503: 'The deployment\'s configuration cannot be read (details in the Worker logs); the /v1/* POST routes refuse to run until it is fixed.',
};

function problemResponse(status: ProblemStatus): JsonObject {
  const headers: JsonObject = {};
  if (status === 401) headers['WWW-Authenticate'] = { description: 'The bearer challenge (RFC 6750).', schema: { type: 'string' } };
  if (status === 405) headers['Allow'] = { description: 'The methods the path answers.', schema: { type: 'string' } };
  if (status === 429) headers['Retry-After'] = { description: 'Seconds to wait before retrying.', schema: { type: 'integer' } };
  if (status === 415) headers['Accept-Encoding'] = { description: 'The content codings the service decodes (when the coding was the problem).', schema: { type: 'string' } };
  return {
    description: PROBLEM_DESCRIPTIONS[status],
    ...(Object.keys(headers).length > 0 ? { headers } : {}),
    content: { 'application/problem+json': { schema: { $ref: COMPONENT_REF('Problem') } } },
  };
}

/** Statuses a route answers besides its own: from the guard of protected routes, the body reader of POSTs, 405 for paths shared by methods. */
function statusesOf(route: RouteDefinition): ProblemStatus[] {
  const statuses = new Set<ProblemStatus>(route.problems);
  if (route.protected) [401, 429].forEach((s) => statuses.add(s as ProblemStatus));
  if (route.method === 'post') [400, 413, 415].forEach((s) => statuses.add(s as ProblemStatus));
  statuses.add(405);
  statuses.add(500);
  return [...statuses].sort((a, b) => a - b);
}

function operation(route: RouteDefinition): JsonObject {
  const responses: JsonObject = {
    '200': {
      description: route.success.description,
      headers: {
        'Cache-Control': { description: route.cache === 'noStore' ? '`no-store`: reports are never cached.' : 'Caching policy of this resource.', schema: { type: 'string' } },
        ...(route.success.headers?.includes('ETag') ? { ETag: { description: 'Strong validator; send it back in If-None-Match for a 304.', schema: { type: 'string' } } } : {}),
      },
      content: Object.fromEntries(Object.entries(route.success.content).map(([type, body]) => [type, mediaBody(body)])),
    },
  };
  if (route.success.headers?.includes('ETag')) responses['304'] = { description: 'Not modified: the If-None-Match ETag is current.' };
  for (const status of statusesOf(route)) responses[String(status)] = problemResponse(status);
  return {
    operationId: route.operationId,
    summary: route.summary,
    description: route.description,
    tags: [route.tag],
    ...(route.protected ? {} : { security: [] }),
    parameters: [
      ...parameters(route.pathParams, 'path'),
      ...parameters(route.query, 'query'),
      ...(route.success.headers?.includes('ETag')
        ? [{ name: 'If-None-Match', in: 'header', required: false, description: 'An ETag from an earlier answer.', schema: { type: 'string' } }]
        : []),
    ],
    ...(route.requestBody
      ? {
          requestBody: {
            required: true,
            description: `${route.requestBody.description} Content-Type must be application/json; the body may be sent with Content-Encoding gzip or deflate.`,
            content: { 'application/json': { schema: { $ref: COMPONENT_REF(route.requestBody.component) } } },
          },
        }
      : {}),
    responses,
  };
}

/** The document apart from its server entry, built once per route table (the conversion takes ~0.2 s). */
const built = new WeakMap<readonly RouteDefinition[], JsonObject>();

export function openApiDocument(routes: readonly RouteDefinition[], serverUrl: string): JsonObject {
  let document = built.get(routes);
  if (!document) {
    document = buildDocument(routes);
    built.set(routes, document);
  }
  return { ...document, servers: [{ url: serverUrl, description: 'The deployment this document was fetched from.' }] };
}

function buildDocument(routes: readonly RouteDefinition[]): JsonObject {
  const paths: Record<string, JsonObject> = {};
  for (const route of routes) {
    paths[route.path] = { ...paths[route.path], [route.method]: operation(route) };
  }
  const document: JsonObject = {
    openapi: '3.1.0',
    jsonSchemaDialect: 'https://json-schema.org/draft/2020-12/schema',
    info: {
      title: 'wobble',
      version: VERSION,
      summary: 'Robustness stress for proposed portfolio allocations.',
      description:
        'Resamples the inputs of a proposed allocation, re-optimises under several published methods and reports how stable weights and risk are, with Monte Carlo errors. Outputs are statistical estimates, not investment advice; past returns do not predict future returns; defer to your firm\'s policies and licensed professionals.',
      license: { name: 'UNLICENSED', identifier: 'LicenseRef-UNLICENSED' },
    },
    servers: [],
    tags: [
      { name: 'report', description: 'Optimise, stress and judge a proposal.' },
      { name: 'discovery', description: 'Schemas, examples and this document.' },
      { name: 'service', description: 'The page and liveness.' },
    ],
    security: [{ bearerToken: [] }],
    paths,
    components: {
      securitySchemes: {
        bearerToken: {
          type: 'http',
          scheme: 'bearer',
          description: 'Needed on the /v1/* POST routes only when the deployment sets WOBBLE_API_TOKEN; other routes are always open.',
        },
      },
      schemas: componentSchemas(),
    },
  };
  return document;
}
