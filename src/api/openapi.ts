// The OpenAPI 3.1 document, built from the route specs and schemas the app itself uses, so the
// document cannot drift from the routes. openapi/openapi.yaml is this, written by `npm run openapi`.

import { ENGINE_VERSION } from '../engine/document.ts';
import { metricsSpecs } from './plugins/metrics.ts';
import { route, routesPlugin, type RouteSpec } from './route-spec.ts';
import { routeModules } from './routes.ts';
import { components } from './schemas.ts';

type Schema = Record<string, unknown>;

const openapiSpec: RouteSpec = {
  method: 'GET',
  url: '/openapi.json',
  operationId: 'openapi',
  tag: 'health',
  scope: null,
  summary: 'This document',
  responses: { 200: { description: 'OpenAPI 3.1 document', schema: { type: 'object' } } },
};

/** Every route: the route modules', then /metrics (registered with its hook) and this document's. */
export const allSpecs: RouteSpec[] = [
  ...routeModules.flatMap((m) => Object.values(m.specs)),
  ...Object.values(metricsSpecs),
  openapiSpec,
];

const byIdentity = new Map<unknown, string>(Object.entries(components).map(([name, schema]) => [schema, name]));

/** Deep copy that turns every component object (by identity) into a $ref. */
function withRefs(value: unknown, root = true): unknown {
  if (!root && byIdentity.has(value)) return { $ref: `#/components/schemas/${byIdentity.get(value)}` };
  if (Array.isArray(value)) return value.map((v) => withRefs(v, false));
  if (value && typeof value === 'object')
    return Object.fromEntries(Object.entries(value).map(([k, v]) => [k, withRefs(v, false)]));
  return value;
}

const toOpenApiPath = (url: string) => url.replace(/:(\w+)/g, '{$1}');

function parameters(spec: RouteSpec): Schema[] {
  const out: Schema[] = [];
  for (const [where, schema] of [
    ['path', spec.params],
    ['query', spec.querystring],
  ] as const) {
    if (!schema) continue;
    const required: readonly string[] = schema.required ?? [];
    for (const [name, s] of Object.entries(schema.properties))
      out.push({ name, in: where, required: where === 'path' || required.includes(name), schema: withRefs(s, false) });
  }
  for (const [name, h] of Object.entries(spec.headers ?? {}))
    out.push({ name, in: 'header', required: false, description: h.description, schema: h.schema });
  return out;
}

/** Every keyed route is rate limited per key (plugins/rate-limit.ts). */
const RATE_LIMITED = {
  description: 'Too many requests for this API key (see Retry-After)',
  schema: components.Problem,
  contentType: 'application/problem+json',
  headers: { 'Retry-After': 'Seconds until the key may send again' },
};

function operation(spec: RouteSpec): Schema {
  const responses: Schema = {};
  const all = spec.scope ? { ...spec.responses, 429: spec.responses[429] ?? RATE_LIMITED } : spec.responses;
  for (const [status, r] of Object.entries(all)) {
    responses[status] = {
      description: r.description,
      ...(r.headers
        ? {
            headers: Object.fromEntries(
              Object.entries(r.headers).map(([n, d]) => [n, { description: d, schema: { type: 'string' } }]),
            ),
          }
        : {}),
      ...(r.schema
        ? { content: { [r.contentType ?? 'application/json']: { schema: withRefs(r.schema, false) } } }
        : {}),
    };
  }
  return {
    operationId: spec.operationId,
    summary: spec.summary,
    tags: [spec.tag],
    ...(spec.scope ? { security: [{ apiKey: [spec.scope] }], 'x-earmark-scope': spec.scope } : { security: [] }),
    ...(parameters(spec).length > 0 ? { parameters: parameters(spec) } : {}),
    ...(spec.body
      ? {
          requestBody: {
            required: true,
            content: Object.fromEntries(
              Object.entries(spec.body).map(([type, schema]) => [type, { schema: withRefs(schema, false) }]),
            ),
          },
        }
      : {}),
    responses,
  };
}

export function buildOpenApiDocument(): Schema {
  const paths: Record<string, Schema> = {};
  for (const spec of allSpecs) {
    const path = toOpenApiPath(spec.url);
    paths[path] = { ...(paths[path] ?? {}), [spec.method.toLowerCase()]: operation(spec) };
  }
  return {
    openapi: '3.1.0',
    info: {
      title: 'Earmark audio QC API',
      version: ENGINE_VERSION,
      description: 'Submit audio for delivery-profile QC, follow the job, fetch the report.',
    },
    servers: [{ url: '/' }],
    security: [{ apiKey: [] }],
    tags: [{ name: 'jobs' }, { name: 'packages' }, { name: 'profiles' }, { name: 'health' }, { name: 'pages' }],
    paths,
    components: {
      securitySchemes: { apiKey: { type: 'http', scheme: 'bearer', description: 'An API key from EARMARK_API_KEYS.' } },
      schemas: Object.fromEntries(Object.entries(components).map(([name, schema]) => [name, withRefs(schema, true)])),
    },
  };
}

export function openapiPlugin() {
  const doc = buildOpenApiDocument();
  return routesPlugin('earmark-openapi', async (app) => {
    route(app, openapiSpec, async () => doc);
  });
}
