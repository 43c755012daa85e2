import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createConfig, lintFromString } from '@redocly/openapi-core';
import openapiTS, { astToString } from 'openapi-typescript';
import ts from 'typescript';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { z } from 'zod';
import { createApp } from '../../src/http/app.js';
import { COMPONENTS } from '../../src/http/components.js';
import { ROUTES } from '../../src/http/routes/index.js';
import { jsonSchema } from '../../src/schema/json-schema.js';

// The OpenAPI document is generated from the route table; these tests hold it to two outside
// tools, both run in-process and offline: the Redocly linter (@redocly/openapi-core, the engine of
// `redocly lint`) with its strictest built-in ruleset, and openapi-typescript with its defaults.

type Doc = {
  openapi: string;
  servers: { url: string }[];
  paths: Record<string, Record<string, { operationId: string; parameters?: { name: string; in: string }[]; responses: Record<string, { content?: Record<string, unknown> }> }>>;
  components: { schemas: Record<string, Record<string, unknown>>; securitySchemes: Record<string, { type: string; scheme: string }> };
};

async function documentText(): Promise<string> {
  const res = await createApp().request('https://wobble.test/openapi.json');
  expect(res.status).toBe(200);
  return res.text();
}

// Both tools must work without the network: any fetch fails the test.
beforeEach(() => {
  vi.stubGlobal('fetch', () => Promise.reject(new Error('the OpenAPI tools must not use the network')));
});
afterEach(() => {
  vi.unstubAllGlobals();
});

describe('OpenAPI 3.1 generated from the routes', () => {
  it('lists every route with an operationId, its parameters, media types and problem responses', async () => {
    const doc = JSON.parse(await documentText()) as Doc;
    expect(doc.openapi).toBe('3.1.0');
    expect(doc.servers[0].url).toBe('https://wobble.test');
    expect(doc.components.securitySchemes.bearerToken).toMatchObject({ type: 'http', scheme: 'bearer' });
    const ids = new Set<string>();
    for (const route of ROUTES) {
      const op = doc.paths[route.path]?.[route.method];
      expect(op, `${route.method} ${route.path}`).toBeDefined();
      ids.add(op.operationId);
      for (const status of route.problems) expect(op.responses[String(status)], `${route.path} ${status}`).toBeDefined();
      expect(op.responses['405']).toBeDefined();
      if (route.protected) {
        expect(Object.keys(op.responses)).toEqual(expect.arrayContaining(['401', '415', '429']));
        expect(op.responses['415'].content).toHaveProperty(['application/problem+json']);
      }
    }
    expect(ids.size).toBe(ROUTES.length);
    const stress = doc.paths['/v1/stress'].post;
    expect(stress.parameters?.map((p) => `${p.in}:${p.name}`)).toContain('query:format');
    expect(Object.keys(stress.responses['200'].content ?? {})).toEqual(['application/json', 'text/html', 'text/markdown']);
    expect(doc.paths['/v1/schemas/{name}'].get.parameters?.map((p) => `${p.in}:${p.name}`)).toContain('path:name');
  });

  it('uses the same schemas as the published JSON Schemas (one source of truth)', async () => {
    const doc = JSON.parse(await documentText()) as Doc;
    const inline = (value: unknown): unknown => {
      if (Array.isArray(value)) return value.map(inline);
      if (value && typeof value === 'object') {
        const object = value as Record<string, unknown>;
        if (typeof object.$ref === 'string') {
          const { $ref, ...rest } = object;
          const target = inline(doc.components.schemas[$ref.replace('#/components/schemas/', '')]) as Record<string, unknown>;
          return { ...target, ...rest };
        }
        return Object.fromEntries(Object.entries(object).map(([k, v]) => [k, inline(v)]));
      }
      return value;
    };
    for (const [component, name] of [['Proposal', 'proposal'], ['Report', 'report'], ['Policy', 'policy']] as const) {
      const { $schema: _s, $id: _i, title: _t, ...published } = jsonSchema(name);
      expect(inline(doc.components.schemas[component]), component).toEqual(published);
    }
    // A baseline report in /v1/check points at the Report component, written as responses are
    // (io 'output'); that is exact only while the report schema reads as it is written.
    const asRead = z.toJSONSchema(COMPONENTS.Report.schema, { target: 'draft-2020-12', io: 'input', unrepresentable: 'any' });
    const asWritten = z.toJSONSchema(COMPONENTS.Report.schema, { target: 'draft-2020-12', io: 'output', unrepresentable: 'any' });
    expect(asRead).toEqual(asWritten);
  });

  it('passes the Redocly linter with the recommended-strict ruleset: no errors and no warnings', async () => {
    const config = await createConfig({ extends: ['recommended-strict'] });
    const problems = await lintFromString({ source: await documentText(), absoluteRef: 'openapi.json', config });
    expect(problems.map((p) => `${p.severity} ${p.ruleId}: ${p.message} at ${p.location[0]?.pointer}`)).toEqual([]);
  });

  it('the strict ruleset does catch what the hand-written document lacked (the check can fail)', async () => {
    const doc = JSON.parse(await documentText()) as Doc;
    delete (doc.paths['/v1/stress'].post as { operationId?: string }).operationId;
    const config = await createConfig({ extends: ['recommended-strict'] });
    const problems = await lintFromString({ source: JSON.stringify(doc), absoluteRef: 'openapi.json', config });
    expect(problems.map((p) => p.ruleId)).toContain('operation-operationId');
  });

  it('is accepted by openapi-typescript with its default rules, and the generated types compile and describe the routes', async () => {
    const warnings: unknown[] = [];
    const warn = vi.spyOn(console, 'warn').mockImplementation((...args) => void warnings.push(args));
    const generated = astToString(await openapiTS(JSON.parse(await documentText())));
    warn.mockRestore();
    expect(warnings).toEqual([]);
    const dir = mkdtempSync(join(tmpdir(), 'wobble-openapi-'));
    try {
      writeFileSync(join(dir, 'api.ts'), generated);
      writeFileSync(
        join(dir, 'use.ts'),
        [
          "import type { paths, components } from './api';",
          "type StressBody = paths['/v1/stress']['post']['requestBody']['content']['application/json'];",
          "type Report = paths['/v1/stress']['post']['responses'][200]['content']['application/json'];",
          "type Problem = paths['/v1/check']['post']['responses'][415]['content']['application/problem+json'];",
          "type Format = NonNullable<paths['/v1/stress']['post']['parameters']['query']>['format'];",
          "export const weights: StressBody['weights'] = [0.5, 0.5];",
          "export const version = (r: Report): string => r.meta.version;",
          "export const status = (p: Problem): number => p.status;",
          "export const format: Format = 'markdown';",
          "export const proposal: components['schemas']['Proposal']['assets'] = ['a', 'b'];",
          '',
        ].join('\n'),
      );
      const program = ts.createProgram([join(dir, 'use.ts')], { strict: true, noEmit: true, target: ts.ScriptTarget.ES2022, module: ts.ModuleKind.ESNext, moduleResolution: ts.ModuleResolutionKind.Bundler, skipLibCheck: true });
      const diagnostics = ts.getPreEmitDiagnostics(program).map((d) => ts.flattenDiagnosticMessageText(d.messageText, '\n'));
      expect(diagnostics).toEqual([]);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
