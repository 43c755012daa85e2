import { jsonSchema } from '../schema/json-schema.js';
import { VERSION } from '../version.js';
import { shardOpenApiPaths, SHARDS_QUERY_PARAMETER } from './shards.js';

/** OpenAPI 3.1 description, built from the same zod schemas as validation. */
export function openApiDocument(): Record<string, unknown> {
  const problem = {
    description: 'RFC 9457 problem details; `errors` lists every bad field with its JSON path.',
    content: { 'application/problem+json': { schema: { $ref: '#/components/schemas/Problem' } } },
  };
  const errors = { '400': problem, '413': problem, '422': problem };
  const proposalBody = {
    required: true,
    content: { 'application/json': { schema: { $ref: '#/components/schemas/Proposal' } } },
  };
  return {
    openapi: '3.1.0',
    info: {
      title: 'wobble',
      version: VERSION,
      description:
        'Robustness stress for proposed allocations: resample the inputs, re-optimise under several methods, report how stable weights and risk are. Estimates, not investment advice.',
    },
    paths: {
      '/healthz': { get: { summary: 'Liveness', responses: { '200': { description: 'ok' } } } },
      '/v1/optimize': {
        post: {
          summary: 'Optimum of every requested method on the unperturbed inputs',
          requestBody: proposalBody,
          responses: { '200': { description: 'optima', content: { 'application/json': { schema: { $ref: '#/components/schemas/OptimizeResponse' } } } }, ...errors },
        },
      },
      '/v1/stress': {
        post: {
          summary: 'Resample the inputs, re-optimise, report stability',
          parameters: [SHARDS_QUERY_PARAMETER],
          requestBody: proposalBody,
          responses: { '200': { description: 'report', content: { 'application/json': { schema: { $ref: '#/components/schemas/Report' } } } }, ...errors },
        },
      },
      '/v1/check': {
        post: {
          summary: 'Stress and judge against a policy; 200 whether the gate passes or not',
          requestBody: {
            required: true,
            content: {
              'application/json': {
                schema: {
                  type: 'object',
                  required: ['proposal', 'policy'],
                  additionalProperties: false,
                  properties: {
                    proposal: { $ref: '#/components/schemas/Proposal' },
                    policy: { $ref: '#/components/schemas/Policy' },
                    baseline: { description: 'An earlier report, or an earlier proposal to stress with the same seed.', type: 'object' },
                  },
                },
              },
            },
          },
          responses: { '200': { description: 'report with verdict', content: { 'application/json': { schema: { $ref: '#/components/schemas/Report' } } } }, ...errors },
        },
      },
      '/v1/examples/demo': { get: { summary: 'The built-in demo proposal', responses: { '200': { description: 'proposal' } } } },
      '/v1/schemas/{name}': {
        get: {
          summary: 'JSON Schema 2020-12 of proposal, report or policy',
          parameters: [{ name: 'name', in: 'path', required: true, schema: { enum: ['proposal', 'report', 'policy'] } }],
          responses: { '200': { description: 'schema' }, '404': problem },
        },
      },
      ...shardOpenApiPaths(problem),
    },
    components: {
      schemas: {
        Proposal: jsonSchema('proposal'),
        Report: jsonSchema('report'),
        Policy: jsonSchema('policy'),
        OptimizeResponse: jsonSchema('optimize-response'),
        Problem: {
          type: 'object',
          required: ['type', 'title', 'status', 'detail'],
          properties: {
            type: { type: 'string' },
            title: { type: 'string' },
            status: { type: 'integer' },
            detail: { type: 'string' },
            errors: {
              type: 'array',
              items: { type: 'object', required: ['path', 'pointer', 'message'], properties: { path: { type: 'string' }, pointer: { type: 'string' }, message: { type: 'string' } } },
            },
          },
        },
      },
    },
  };
}
