// The fastify app: one plugin per concern. No listening here: workers/api.ts listens, tests
// listen on a random port.

import multipart from '@fastify/multipart';
import Fastify, { type FastifyBaseLogger, type FastifyInstance } from 'fastify';
import { randomUUID } from 'node:crypto';
import type { ServerResponse } from 'node:http';
import type { Socket } from 'node:net';
import pino, { type Logger } from 'pino';
import type { Config } from '../config/index.ts';
import type { AppDeps } from './deps.ts';
import { openapiPlugin } from './openapi.ts';
import { authPlugin } from './plugins/auth.ts';
import { EarmarkError } from '../errors/index.ts';
import { clientProblem, errorsPlugin, frameworkProblem, rawProblem } from './plugins/errors.ts';
import { jsonBodyPlugin } from './plugins/json-body.ts';
import { metricsPlugin } from './plugins/metrics.ts';
import { rateLimitPlugin } from './plugins/rate-limit.ts';
import { routeModules } from './routes.ts';

/** Requests are logged as method and path only: no headers (keys), no query strings. */
const serializers = {
  req: (req: { method: string; url: string }) => ({ method: req.method, url: req.url.split('?')[0] }),
};

export async function buildApp(config: Config, deps: AppDeps, logger?: Logger): Promise<FastifyInstance> {
  const base = logger ?? pino({ level: config.logLevel });
  const app = Fastify({
    loggerInstance: base.child({ component: 'api' }, { serializers }) as FastifyBaseLogger,
    genReqId: (req) => {
      const given = req.headers['x-request-id'];
      return typeof given === 'string' && /^[\w-]{1,64}$/.test(given) ? given : randomUUID();
    },
    requestIdHeader: false,
    bodyLimit: 1024 * 1024,
    return503OnClosing: true,
    // A whole request must arrive within requestTimeoutMs (generous: multi-GB uploads on slow
    // links); the idle bound below is what stops stalled ones.
    requestTimeout: config.requestTimeoutMs,
    // Node checks both bounds on this interval (30 s by default: too coarse for short settings).
    http: {
      connectionsCheckingInterval: Math.min(30_000, Math.max(250, Math.floor(config.requestTimeoutMs / 4))),
      headersTimeout: Math.min(60_000, config.requestTimeoutMs),
    },
    connectionTimeout: config.bodyTimeoutMs,
    keepAliveTimeout: Math.min(72_000, config.bodyTimeoutMs),
    frameworkErrors: frameworkProblem,
    clientErrorHandler: (error: NodeJS.ErrnoException, socket) => {
      if (error.code === 'ECONNRESET' || socket.destroyed) return;
      if (socket.writable && socket.bytesWritten === 0) socket.write(rawProblem(clientProblem(error)));
      socket.destroy();
    },
  });
  // Idle connection (connectionTimeout): with a request still open (a stalled upload) it gets a
  // 408 and the socket is closed, which ends the upload and removes its temp file.
  app.server.on('timeout', (socket: Socket) => {
    const open = openResponses.get(socket);
    openResponses.delete(socket);
    if (open && !open.headersSent && socket.writable)
      socket.end(
        rawProblem(new EarmarkError('request_timeout', `nothing arrived for ${config.bodyTimeoutMs} ms`)),
        () => socket.destroy(),
      );
    else socket.destroy();
  });
  const openResponses = new WeakMap<Socket, ServerResponse>();
  app.addHook('onRequest', async (request, reply) => {
    openResponses.set(request.raw.socket, reply.raw);
  });
  app.addHook('onResponse', async (request) => {
    openResponses.delete(request.raw.socket);
  });
  app.addHook('onSend', async (request, reply) => {
    reply.header('x-request-id', request.id);
  });
  await app.register(errorsPlugin);
  await app.register(jsonBodyPlugin);
  await app.register(authPlugin(config.apiKeys));
  await app.register(
    rateLimitPlugin(config.rateLimitPerMinute, { redis: deps.redis, queuePrefix: config.queuePrefix }),
  );
  // Generous parser limits: past them the parser stops reading mid-body; upload-form.ts allows 10 fields.
  await app.register(multipart, {
    limits: { fileSize: config.uploadLimitBytes, files: 1, fields: 100, fieldSize: 64 * 1024, parts: 110 },
  });
  // Before the routes: its onResponse hook counts every request.
  await app.register(metricsPlugin(deps));
  await app.register(openapiPlugin());
  for (const module of routeModules) await app.register(module.plugin(deps, config));
  return app;
}
