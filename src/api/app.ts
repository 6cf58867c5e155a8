// The fastify app: one plugin per concern. No listening here: workers/api.ts listens, tests
// listen on a random port.

import multipart from '@fastify/multipart';
import Fastify, { type FastifyInstance } from 'fastify';
import { randomUUID } from 'node:crypto';
import type { Config } from '../config/index.ts';
import type { AppDeps } from './deps.ts';
import { openapiPlugin } from './openapi.ts';
import { authPlugin } from './plugins/auth.ts';
import { errorsPlugin } from './plugins/errors.ts';
import { healthPlugin } from './plugins/health.ts';
import { jobsPlugin } from './plugins/jobs.ts';
import { metricsPlugin } from './plugins/metrics.ts';
import { profilesPlugin } from './plugins/profiles.ts';

export async function buildApp(config: Config, deps: AppDeps): Promise<FastifyInstance> {
  const app = Fastify({
    logger: {
      level: config.logLevel,
      // Never log the Authorization header; only method, route and status per request.
      redact: ['req.headers.authorization'],
      serializers: { req: (req: { method: string; url: string }) => ({ method: req.method, url: req.url.split('?')[0] }) },
    },
    genReqId: (req) => {
      const given = req.headers['x-request-id'];
      return typeof given === 'string' && /^[\w-]{1,64}$/.test(given) ? given : randomUUID();
    },
    requestIdHeader: false,
    bodyLimit: 1024 * 1024,
    return503OnClosing: true,
  });
  app.addHook('onSend', async (request, reply) => { reply.header('x-request-id', request.id); });
  await app.register(Object.assign(errorsPlugin, { [Symbol.for('skip-override')]: true }));
  await app.register(authPlugin(config.apiKeys));
  await app.register(multipart, { limits: { fileSize: config.uploadLimitBytes, files: 1, fields: 10, fieldSize: 64 * 1024, parts: 20 } });
  await app.register(metricsPlugin(deps));
  await app.register(healthPlugin(deps));
  await app.register(openapiPlugin());
  await app.register(jobsPlugin(deps, config.uploadLimitBytes));
  await app.register(profilesPlugin(deps));
  return app;
}
