// One description per route: fastify gets the request schemas and the auth scope from it,
// the OpenAPI document gets everything, and the handler's params and query types come from the
// same schemas through the json-schema-to-ts type provider (declare them `as const`).
// Responses are validated against the document in tests rather than by fastify's serializer,
// which would silently drop fields that do not fit.

import type { JsonSchemaToTsProvider } from '@fastify/type-provider-json-schema-to-ts';
import type {
  ContextConfigDefault,
  FastifyInstance,
  FastifyPluginAsync,
  RawReplyDefaultExpression,
  RawRequestDefaultExpression,
  RawServerDefault,
  RouteGenericInterface,
  RouteHandlerMethod,
} from 'fastify';
import fp from 'fastify-plugin';
import type { JSONSchema } from 'json-schema-to-ts';
import type { Scope } from '../config/index.ts';
import { AUTH_PLUGIN } from './plugins/auth.ts';
import { ERRORS_PLUGIN } from './plugins/errors.ts';

type Schema = Record<string, unknown>;

/** An object schema of named string/number members (path parameters, query strings). */
export type ObjectSchema = JSONSchema & {
  readonly type: 'object';
  readonly properties: Readonly<Record<string, JSONSchema>>;
  readonly required?: readonly string[];
};

export interface ResponseSpec {
  description: string;
  schema?: Schema;
  contentType?: string;
  headers?: Record<string, string>;
}

export interface RouteSpec {
  method: 'GET' | 'POST' | 'PUT' | 'DELETE';
  url: string;
  operationId: string;
  summary: string;
  tag: string;
  /** Scope the API key needs; null for open routes. */
  scope: Scope | null;
  params?: ObjectSchema;
  querystring?: ObjectSchema;
  /** Request bodies by content type; only JSON ones are validated by fastify. The handler sees
   * the body as unknown: a route with more than one content type reads it by type itself. */
  body?: Record<string, Schema>;
  headers?: Record<string, { description: string; schema: Schema }>;
  responses: Record<number, ResponseSpec>;
}

declare module 'fastify' {
  interface FastifyContextConfig {
    scope?: Scope | null;
  }
}

/** What the type provider reads: the spec's params and query schemas. */
interface RequestSchemas<S extends RouteSpec> {
  params: S['params'];
  querystring: S['querystring'];
}

export type RouteHandler<S extends RouteSpec> = RouteHandlerMethod<
  RawServerDefault,
  RawRequestDefaultExpression,
  RawReplyDefaultExpression,
  RouteGenericInterface,
  ContextConfigDefault,
  RequestSchemas<S>,
  JsonSchemaToTsProvider
>;

export function route<const S extends RouteSpec>(app: FastifyInstance, spec: S, handler: RouteHandler<S>): void {
  const jsonBody = spec.body?.['application/json'];
  const schema: RequestSchemas<S> & { body?: unknown } = {
    params: spec.params,
    querystring: spec.querystring,
    ...(jsonBody ? { body: { content: { 'application/json': { schema: jsonBody } } } } : {}),
  };
  // Fastify warns about a schema key that is present but undefined.
  for (const key of ['params', 'querystring'] as const)
    if (schema[key] === undefined) Reflect.deleteProperty(schema, key);
  app.withTypeProvider<JsonSchemaToTsProvider>().route<RouteGenericInterface, ContextConfigDefault, RequestSchemas<S>>({
    method: spec.method,
    url: spec.url,
    config: { scope: spec.scope },
    schema,
    handler,
  });
}

/** A plugin of routes: named, kept encapsulated, and refused at startup unless the error handler,
 * auth (the scope check every route relies on) and any other plugin it names are registered. */
export function routesPlugin(
  name: string,
  register: FastifyPluginAsync,
  dependencies: string[] = [],
): FastifyPluginAsync {
  return fp(register, {
    name,
    fastify: '5.x',
    encapsulate: true,
    dependencies: [ERRORS_PLUGIN, AUTH_PLUGIN, ...dependencies],
  });
}
