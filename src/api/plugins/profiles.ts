// Profile routes: built-ins plus the tenant's own, versioned on every PUT.

import { EarmarkError } from '../../errors/index.ts';
import type { AppDeps } from '../deps.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';
import { principalOf } from './auth.ts';

export const profileSpecs = {
  list: {
    method: 'GET',
    url: '/v1/profiles',
    operationId: 'listProfiles',
    tag: 'profiles',
    scope: 'read',
    summary: 'Built-in and own profiles (current versions)',
    responses: { 200: { description: 'Profiles', schema: S.ProfileList }, ...S.problems(401, 403, 503) },
  },
  get: {
    method: 'GET',
    url: '/v1/profiles/:id',
    operationId: 'getProfile',
    tag: 'profiles',
    scope: 'read',
    summary: 'One profile, current version',
    params: S.ProfileIdParams,
    responses: { 200: { description: 'The profile', schema: S.ProfileEntry }, ...S.problems(400, 401, 403, 404, 503) },
  },
  put: {
    method: 'PUT',
    url: '/v1/profiles/:id',
    operationId: 'putProfile',
    tag: 'profiles',
    scope: 'admin',
    summary: 'Store a new version of an own profile (the server assigns `version`)',
    params: S.ProfileIdParams,
    body: {
      'application/json': {
        type: 'object',
        description: 'A delivery profile (schema Profile); id and version may be left out.',
      },
    },
    responses: {
      200: { description: 'The stored version', schema: S.ProfileEntry },
      ...S.problems(400, 401, 403, 415, 503),
    },
  },
  remove: {
    method: 'DELETE',
    url: '/v1/profiles/:id',
    operationId: 'deleteProfile',
    tag: 'profiles',
    scope: 'admin',
    summary: 'Remove an own profile (its versions stay readable in the reports that name them)',
    params: S.ProfileIdParams,
    responses: { 204: { description: 'Removed' }, ...S.problems(400, 401, 403, 404, 503) },
  },
} satisfies Record<string, RouteSpec>;

export function profilesPlugin(deps: AppDeps) {
  return routesPlugin('earmark-profiles', async (app) => {
    route(app, profileSpecs.list, async (request) => ({
      items: await deps.profiles.list(principalOf(request).tenant),
    }));
    route(app, profileSpecs.get, async (request) => {
      const { id } = request.params;
      const entry = await deps.profiles.get(principalOf(request).tenant, id);
      if (!entry) throw new EarmarkError('not_found', `no profile ${id}`);
      return entry;
    });
    route(app, profileSpecs.put, async (request) => {
      const { id } = request.params;
      const entry = await deps.profiles.put(principalOf(request).tenant, id, request.body);
      request.log.info({ profileId: id, version: entry.profile.version }, 'profile stored');
      return entry;
    });
    route(app, profileSpecs.remove, async (request, reply) => {
      const { id } = request.params;
      if (!(await deps.profiles.remove(principalOf(request).tenant, id)))
        throw new EarmarkError('not_found', `no profile ${id}`);
      return reply.code(204).send();
    });
  });
}
