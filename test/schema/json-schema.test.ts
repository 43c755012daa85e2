import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { jsonSchema, SCHEMA_NAMES } from '../../src/schema/json-schema.js';

describe('committed JSON Schemas', () => {
  it.each(SCHEMA_NAMES)('schemas/%s.schema.json matches what the code generates (run `npm run schemas`)', (name) => {
    const committed = JSON.parse(readFileSync(new URL(`../../schemas/${name}.schema.json`, import.meta.url), 'utf8'));
    expect(committed).toEqual(jsonSchema(name));
    expect(committed.$schema).toBe('https://json-schema.org/draft/2020-12/schema');
  });

  it('describes every property of the proposal', () => {
    const missing: string[] = [];
    const walk = (node: unknown, path: string): void => {
      if (!node || typeof node !== 'object') return;
      const obj = node as Record<string, unknown>;
      const props = obj.properties as Record<string, Record<string, unknown>> | undefined;
      if (props) {
        for (const [key, child] of Object.entries(props)) {
          const described = typeof child.description === 'string' || (child.anyOf as unknown[] | undefined)?.every((b) => typeof (b as Record<string, unknown>).description === 'string');
          if (!described && !['name'].includes(key)) missing.push(`${path}.${key}`);
          walk(child, `${path}.${key}`);
        }
      }
      for (const k of ['anyOf', 'oneOf', 'items']) {
        const v = obj[k];
        if (Array.isArray(v)) v.forEach((b, i) => walk(b, `${path}.${k}[${i}]`));
        else if (v) walk(v, `${path}.${k}`);
      }
    };
    walk(jsonSchema('proposal'), '');
    expect(missing).toEqual([]);
  });
});
