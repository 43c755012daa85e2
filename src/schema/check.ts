import { z } from 'zod';
import { PolicySchema } from './proposal.js';

/** Body of POST /v1/check. The proposal and baseline are validated on their own, for precise paths. */
export const CheckRequestSchema = z.strictObject({
  proposal: z.unknown().describe('The proposal to stress (see the proposal schema).'),
  policy: PolicySchema.optional().describe('Gate rules; default: proposal.policy.'),
  baseline: z.unknown().optional().describe('An earlier report, or an earlier proposal stressed now with the same seed.'),
});
