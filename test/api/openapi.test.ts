// The OpenAPI document: valid OpenAPI 3.1 (checked by @seriousme/openapi-schema-validator
// against the published OAS 3.1 schema), current with the code, and covering every route.

import { Validator, type SpecData } from '@seriousme/openapi-schema-validator';
import { describe, expect, it } from 'vitest';
import { allSpecs, buildOpenApiDocument } from '../../src/api/openapi.ts';
import { openapiDocument } from '../service/openapi-check.ts';

describe('openapi/openapi.yaml', () => {
  it('is a valid OpenAPI 3.1 document', async () => {
    const validator = new Validator();
    const result = await validator.validate(structuredClone(openapiDocument) as unknown as SpecData);
    expect(result.errors ?? []).toEqual([]);
    expect(result.valid).toBe(true);
    expect(validator.version).toBe('3.1');
  });

  it('is what `npm run openapi` writes from the route specs', () => {
    expect(openapiDocument).toEqual(JSON.parse(JSON.stringify(buildOpenApiDocument())));
  });

  it('documents every route with an operation id, a scope or open access, and problem responses', () => {
    const doc = buildOpenApiDocument() as {
      paths: Record<
        string,
        Record<string, { operationId: string; responses: Record<string, unknown>; security: unknown[] }>
      >;
    };
    for (const spec of allSpecs) {
      const op = doc.paths[spec.url.replace(/:(\w+)/g, '{$1}')][spec.method.toLowerCase()];
      expect(op.operationId).toBe(spec.operationId);
      if (spec.scope) expect(Object.keys(op.responses)).toContain('401');
      else expect(op.security).toEqual([]);
    }
    const open = allSpecs
      .filter((s) => s.scope === null)
      .map((s) => s.url)
      .sort();
    expect(open).toEqual([
      '/',
      '/assets/:name',
      '/healthz',
      '/jobs/:id',
      '/jobs/:id/compare/:otherId',
      '/openapi.json',
      '/readyz',
    ]);
  });
});
