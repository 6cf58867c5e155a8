// Bearer API keys. Keys are compared as SHA-256 digests with timingSafeEqual, checking every
// configured key, so neither the length nor the position of a match shows in the timing.

import { createHash, timingSafeEqual } from 'node:crypto';
import type { FastifyRequest } from 'fastify';
import fp from 'fastify-plugin';
import type { ApiKey, Scope } from '../../config/index.ts';
import { EarmarkError } from '../../errors/index.ts';

/** keyId: a digest prefix naming the key in rate limits, never the key itself. */
export interface Principal {
  tenant: string;
  keyId: string;
  scopes: Scope[];
}

declare module 'fastify' {
  interface FastifyRequest {
    principal: Principal | null;
  }
}

const digest = (s: string) => createHash('sha256').update(s).digest();

export function findKey(
  keys: Array<{ digest: Buffer; entry: ApiKey }>,
  presented: string,
): { entry: ApiKey; keyId: string } | null {
  const given = digest(presented);
  let found: { entry: ApiKey; keyId: string } | null = null;
  for (const k of keys)
    if (timingSafeEqual(k.digest, given)) found = { entry: k.entry, keyId: k.digest.toString('hex').slice(0, 12) };
  return found;
}

/** admin implies submit and read; metrics and operator are only ever granted by name. */
const IMPLIED_BY_ADMIN: readonly Scope[] = ['submit', 'read'];

export function hasScope(principal: Principal, scope: Scope): boolean {
  return principal.scopes.includes(scope) || (IMPLIED_BY_ADMIN.includes(scope) && principal.scopes.includes('admin'));
}

export function requireScope(principal: Principal, scope: Scope): void {
  if (!hasScope(principal, scope)) throw new EarmarkError('forbidden', `this API key lacks the "${scope}" scope`);
}

export function principalOf(request: FastifyRequest): Principal {
  if (!request.principal) throw new EarmarkError('unauthorized', 'a valid API key is required');
  return request.principal;
}

/** Plugins that read `request.principal` declare this name as a dependency. */
export const AUTH_PLUGIN = 'earmark-auth';

export function authPlugin(apiKeys: ApiKey[]) {
  const keys = apiKeys.map((entry) => ({ digest: digest(entry.key), entry }));
  return fp(
    async (app) => {
      app.decorateRequest('principal', null);
      app.addHook('onRequest', async (request) => {
        const scope = request.routeOptions.config?.scope;
        if (!scope) return;
        const header = request.headers.authorization ?? '';
        const match = /^Bearer ([\x21-\x7e]{1,512})$/.exec(header);
        const found = match ? findKey(keys, match[1]) : null;
        if (!found) throw new EarmarkError('unauthorized', 'send a valid API key as "Authorization: Bearer <key>"');
        const { entry, keyId } = found;
        request.principal = { tenant: entry.tenant, keyId, scopes: entry.scopes };
        request.log = request.log.child({ tenant: entry.tenant });
        requireScope(request.principal, scope);
      });
    },
    { name: AUTH_PLUGIN, fastify: '5.x' },
  );
}
