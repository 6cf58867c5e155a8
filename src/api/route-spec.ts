// One description per route: fastify gets the request schemas and the auth scope from it,
// the OpenAPI document gets everything. Responses are validated against the document in tests
// rather than by fastify's serializer, which would silently drop fields that do not fit.

import type { FastifyInstance, FastifyReply, FastifyRequest, RouteHandlerMethod } from 'fastify';
import type { Scope } from '../config/index.ts';

type Schema = Record<string, unknown>;

export interface ResponseSpec { description: string; schema?: Schema; contentType?: string; headers?: Record<string, string> }

export interface RouteSpec {
  method: 'GET' | 'POST' | 'PUT' | 'DELETE';
  url: string;
  operationId: string;
  summary: string;
  tag: string;
  /** Scope the API key needs; null for open routes. */
  scope: Scope | null;
  params?: Schema;
  querystring?: Schema;
  /** Request bodies by content type; only JSON ones are validated by fastify. */
  body?: Record<string, Schema>;
  headers?: Record<string, { description: string; schema: Schema }>;
  responses: Record<number, ResponseSpec>;
}

declare module 'fastify' {
  interface FastifyContextConfig { scope?: Scope | null }
}

export function route(
  app: FastifyInstance,
  spec: RouteSpec,
  handler: (request: FastifyRequest, reply: FastifyReply) => Promise<unknown>,
): void {
  const jsonBody = spec.body?.['application/json'];
  app.route({
    method: spec.method,
    url: spec.url,
    config: { scope: spec.scope },
    schema: {
      ...(spec.params ? { params: spec.params } : {}),
      ...(spec.querystring ? { querystring: spec.querystring } : {}),
      ...(jsonBody ? { body: { content: { 'application/json': { schema: jsonBody } } } } : {}),
    },
    handler: handler as RouteHandlerMethod,
  });
}
