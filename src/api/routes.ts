// Every module of routes, in the order the OpenAPI document lists them: app.ts registers each one
// and openapi.ts documents each spec, so a new route is a spec and a handler in its module, and a
// new module is one entry here.

import type { FastifyPluginAsync } from 'fastify';
import type { Config } from '../config/index.ts';
import type { AppDeps } from './deps.ts';
import { compareSpecs, comparePlugin } from './plugins/compare.ts';
import { exportSpecs, exportsPlugin } from './plugins/exports.ts';
import { healthPlugin, healthSpecs } from './plugins/health.ts';
import { jobSpecs, jobsPlugin } from './plugins/jobs.ts';
import { packageSpecs, packagesPlugin } from './plugins/packages.ts';
import { pageSpecs, pagesPlugin } from './plugins/pages.ts';
import { profileSpecs, profilesPlugin } from './plugins/profiles.ts';
import { reportViewSpecs, reportViewsPlugin } from './plugins/report-views.ts';
import { rerunSpecs, rerunsPlugin } from './plugins/reruns.ts';
import { signOffSpecs, signOffsPlugin } from './plugins/signoffs.ts';
import { uploadSpecs, uploadsPlugin } from './plugins/uploads.ts';
import type { RouteSpec } from './route-spec.ts';

export interface RouteModule {
  specs: Record<string, RouteSpec>;
  plugin(deps: AppDeps, config: Config): FastifyPluginAsync;
}

export const routeModules: readonly RouteModule[] = [
  { specs: jobSpecs, plugin: (deps, config) => jobsPlugin(deps, config.uploadLimitBytes, config.bodyTimeoutMs) },
  { specs: uploadSpecs, plugin: (deps, config) => uploadsPlugin(deps, config.uploadLimitBytes) },
  { specs: reportViewSpecs, plugin: reportViewsPlugin },
  { specs: compareSpecs, plugin: comparePlugin },
  { specs: rerunSpecs, plugin: rerunsPlugin },
  { specs: signOffSpecs, plugin: signOffsPlugin },
  { specs: exportSpecs, plugin: exportsPlugin },
  { specs: packageSpecs, plugin: packagesPlugin },
  { specs: profileSpecs, plugin: profilesPlugin },
  { specs: pageSpecs, plugin: pagesPlugin },
  { specs: healthSpecs, plugin: healthPlugin },
];
