import { describe, expect, it } from 'vitest';
import { z } from 'zod';
import { problemsFromZod } from '../../src/schema/problems.js';
import { validateProposal } from '../../src/schema/validate.js';
import { momentsProposal } from '../helpers/proposals.js';

function messagesFor(schema: z.ZodType, value: unknown): string[] {
  const parsed = schema.safeParse(value);
  if (parsed.success) throw new Error('expected a failure');
  return problemsFromZod(parsed.error.issues).map((p) => p.message);
}

describe('problemsFromZod bounds', () => {
  it('says "> 0" for an exclusive minimum and "≥ 0" for an inclusive one', () => {
    expect(messagesFor(z.number().positive(), 0)).toEqual(['expected > 0']);
    expect(messagesFor(z.number().min(0), -1)).toEqual(['expected ≥ 0']);
  });

  it('says "< 1" for an exclusive maximum and "≤ 1" for an inclusive one', () => {
    expect(messagesFor(z.number().lt(1), 1)).toEqual(['expected < 1']);
    expect(messagesFor(z.number().max(1), 2)).toEqual(['expected ≤ 1']);
  });

  it('counts items for arrays', () => {
    expect(messagesFor(z.array(z.number()).min(2), [1])).toEqual(['expected at least 2 items']);
  });

  it('periodsPerYear: 0 is reported as "expected > 0" at its path', () => {
    const base = momentsProposal();
    const v = validateProposal({ ...base, inputs: { ...base.inputs, periodsPerYear: 0 } });
    expect(v.ok).toBe(false);
    if (v.ok) return;
    expect(v.problems).toContainEqual(expect.objectContaining({ path: 'inputs.periodsPerYear', message: 'expected > 0' }));
  });
});
