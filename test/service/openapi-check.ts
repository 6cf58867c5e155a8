// Checks real responses against openapi/openapi.yaml: the path and status must be documented,
// the content type must match, and the body must validate against the documented schema.

import { readFileSync } from 'node:fs';
import { Ajv2020 } from 'ajv/dist/2020.js';
import type { Response } from 'supertest';
import { parse } from 'yaml';

type Doc = {
  paths: Record<
    string,
    Record<string, { responses: Record<string, { content?: Record<string, { schema: unknown }> }> }>
  >;
};

export const openapiDocument = parse(
  readFileSync(new URL('../../openapi/openapi.yaml', import.meta.url), 'utf8'),
) as Doc & Record<string, unknown>;

const ajv = new Ajv2020({ strict: false, validateFormats: false, discriminator: true, allErrors: true });
ajv.addSchema(openapiDocument as object, 'openapi');

const templates = Object.keys(openapiDocument.paths).map((template) => ({
  template,
  pattern: new RegExp(`^${template.replace(/\{[^}]+\}/g, '[^/]+')}$`),
}));

const pointer = (...parts: string[]) => parts.map((p) => p.replace(/~/g, '~0').replace(/\//g, '~1')).join('/');

export function assertConforms(res: Response): void {
  const req = (res as unknown as { req: { method: string; path: string } }).req;
  const path = req.path.split('?')[0];
  const template = templates.find((t) => t.pattern.test(path))?.template;
  if (!template) throw new Error(`OpenAPI: ${req.method} ${path} is not documented`);
  const operation = openapiDocument.paths[template][req.method.toLowerCase()];
  if (!operation) throw new Error(`OpenAPI: ${req.method} ${template} is not documented`);
  const response = operation.responses[String(res.status)];
  if (!response) throw new Error(`OpenAPI: ${req.method} ${template} answered ${res.status}, which is not documented`);
  if (!response.content) {
    if (res.text) throw new Error(`OpenAPI: ${req.method} ${template} ${res.status} has a body but documents none`);
    return;
  }
  const type = String(res.headers['content-type'] ?? '').split(';')[0];
  const documented = Object.keys(response.content);
  if (!documented.includes(type))
    throw new Error(
      `OpenAPI: ${req.method} ${template} ${res.status} sent ${type}, documented ${documented.join(', ')}`,
    );
  // HTML, SVG and audio bodies are documented by content type: check that one is there.
  if (type !== 'text/plain' && !type.includes('json')) {
    const bytes = Buffer.isBuffer(res.body) ? res.body.length : (res.text ?? '').length;
    if (bytes === 0) throw new Error(`OpenAPI: ${req.method} ${template} ${res.status} sent an empty ${type} body`);
    return;
  }
  const ref = `openapi#/${pointer('paths', template, req.method.toLowerCase(), 'responses', String(res.status), 'content', type, 'schema')}`;
  const validate = ajv.getSchema(ref);
  if (!validate) throw new Error(`OpenAPI: no schema at ${ref}`);
  const body = type === 'text/plain' ? res.text : res.body;
  if (!validate(body))
    throw new Error(
      `OpenAPI: ${req.method} ${template} ${res.status} body does not match: ${ajv.errorsText(validate.errors)}`,
    );
}
