import { z } from 'zod';
import { PolicySchema, ProposalSchema } from '../schema/proposal.js';
import { OptimizeResponseSchema, ReportSchema } from '../schema/report.js';
import { ProblemDetailsSchema } from './problem.js';

/**
 * The named schemas of the HTTP contract, from the same zod schemas that validate requests and
 * type reports. Requests are described as zod reads them (`io: 'input'`, defaults optional),
 * responses as the service writes them (`io: 'output'`).
 */

export const HealthSchema = z.strictObject({
  status: z.literal('ok'),
  version: z.string().describe('The service version, as in meta.version of reports.'),
});

/** Body of POST /v1/check as documented; the handler validates proposal and baseline separately for precise paths. */
export const CheckRequestDocumentSchema = z
  .strictObject({
    proposal: ProposalSchema,
    policy: PolicySchema.optional().describe('Gate rules; default: proposal.policy.'),
    baseline: z
      .union([ReportSchema, ProposalSchema])
      .optional()
      .describe('An earlier report, or an earlier proposal stressed now with the same seed and draws (common random numbers).'),
  })
  .describe('A proposal, the gate rules to judge it by, and optionally a baseline to compare against.');

/** A JSON Schema document (draft 2020-12), as served under /v1/schemas/{name}. */
export const JsonSchemaDocumentSchema = z.looseObject({ $schema: z.string(), $id: z.string() }).describe('A JSON Schema (draft 2020-12) document.');

/** An OpenAPI 3.1 document. */
export const OpenApiDocumentSchema = z.looseObject({ openapi: z.string(), info: z.looseObject({}), paths: z.looseObject({}) }).describe('An OpenAPI 3.1 document.');

export const COMPONENTS = {
  Proposal: { schema: ProposalSchema, io: 'input' },
  Policy: { schema: PolicySchema, io: 'input' },
  CheckRequest: { schema: CheckRequestDocumentSchema, io: 'input' },
  Report: { schema: ReportSchema, io: 'output' },
  OptimizeResponse: { schema: OptimizeResponseSchema, io: 'output' },
  Problem: { schema: ProblemDetailsSchema, io: 'output' },
  Health: { schema: HealthSchema, io: 'output' },
  JsonSchemaDocument: { schema: JsonSchemaDocumentSchema, io: 'output' },
  OpenApiDocument: { schema: OpenApiDocumentSchema, io: 'output' },
} as const satisfies Record<string, { schema: z.ZodType; io: 'input' | 'output' }>;

export type ComponentName = keyof typeof COMPONENTS;
