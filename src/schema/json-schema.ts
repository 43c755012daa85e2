import { z } from 'zod';
import { PolicySchema, ProposalSchema } from './proposal.js';
import { OptimizeResponseSchema, ReportSchema } from './report.js';

/** JSON Schema (draft 2020-12) generated from the zod schemas: one source of truth. */

const schemaBase = 'https://wobble.invalid/schemas/';

function toJsonSchema(schema: z.ZodType, name: string, io: 'input' | 'output'): Record<string, unknown> {
  const generated = z.toJSONSchema(schema, { target: 'draft-2020-12', io, unrepresentable: 'any' }) as Record<string, unknown>;
  return { $schema: generated.$schema, $id: `${schemaBase}${name}.schema.json`, title: name, ...generated };
}

export const SCHEMA_NAMES = ['proposal', 'report', 'policy'] as const;
export type SchemaName = (typeof SCHEMA_NAMES)[number];

/** The published schemas, as served by GET /v1/schemas/:name and written to schemas/. */
export function jsonSchema(name: SchemaName | 'optimize-response'): Record<string, unknown> {
  switch (name) {
    case 'proposal':
      return toJsonSchema(ProposalSchema, name, 'input');
    case 'policy':
      return toJsonSchema(PolicySchema, name, 'input');
    case 'report':
      return toJsonSchema(ReportSchema, name, 'output');
    case 'optimize-response':
      return toJsonSchema(OptimizeResponseSchema, name, 'output');
  }
}
