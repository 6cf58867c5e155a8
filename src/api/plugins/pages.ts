// The dashboard and report pages and their static assets. Open routes: they carry no data; the
// page scripts fetch everything from the API with the operator's key.

import { readFile } from 'node:fs/promises';
import { fileURLToPath } from 'node:url';
import { EarmarkError } from '../../errors/index.ts';
import { comparePage, dashboardPage, reportPage } from '../../views/pages.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';

const ASSET_DIR = fileURLToPath(new URL('../../views/assets/', import.meta.url));
const ASSET_TYPES: Record<string, string> = {
  'earmark.css': 'text/css; charset=utf-8',
  'common.js': 'text/javascript; charset=utf-8',
  'dashboard.js': 'text/javascript; charset=utf-8',
  'dashboard-upload.js': 'text/javascript; charset=utf-8',
  'report.js': 'text/javascript; charset=utf-8',
  'flag-table.js': 'text/javascript; charset=utf-8',
  'channels.js': 'text/javascript; charset=utf-8',
  'format.js': 'text/javascript; charset=utf-8',
  'head-strip.js': 'text/javascript; charset=utf-8',
  'declared.js': 'text/javascript; charset=utf-8',
  'downmix.js': 'text/javascript; charset=utf-8',
  'dialogue.js': 'text/javascript; charset=utf-8',
  'compare.js': 'text/javascript; charset=utf-8',
  'review.js': 'text/javascript; charset=utf-8',
  'download.js': 'text/javascript; charset=utf-8',
  'report-links.js': 'text/javascript; charset=utf-8',
  'dashboard-select.js': 'text/javascript; charset=utf-8',
};
const ASSET_NAMES = Object.keys(ASSET_TYPES);
const html = { description: 'HTML page', schema: { type: 'string' }, contentType: 'text/html' };
/** No inline script, no third-party origins: the pages load only from this server. */
const CONTENT_SECURITY_POLICY =
  "default-src 'self'; img-src 'self' data:; media-src 'self' blob:; style-src 'self' 'unsafe-inline'; object-src 'none'; base-uri 'none'; frame-ancestors 'none'";

export const pageSpecs = {
  dashboard: {
    method: 'GET',
    url: '/',
    operationId: 'dashboardPage',
    tag: 'pages',
    scope: null,
    summary: 'The queue dashboard (data is fetched with an API key entered in the page)',
    responses: { 200: html },
  },
  report: {
    method: 'GET',
    url: '/jobs/:id',
    operationId: 'reportPage',
    tag: 'pages',
    scope: null,
    summary: 'The per-job report page',
    params: S.JobIdParams,
    responses: {
      200: html,
      400: { description: 'Problem', schema: S.Problem, contentType: 'application/problem+json' },
    },
  },
  compare: {
    method: 'GET',
    url: '/jobs/:id/compare/:otherId',
    operationId: 'comparePage',
    tag: 'pages',
    scope: null,
    summary: 'What changed from one job (the first delivery) to another (the re-delivery)',
    params: {
      type: 'object',
      required: ['id', 'otherId'],
      properties: { id: S.JobIdParams.properties.id, otherId: S.JobIdParams.properties.id },
    } as const,
    responses: {
      200: html,
      400: { description: 'Problem', schema: S.Problem, contentType: 'application/problem+json' },
    },
  },
  asset: {
    method: 'GET',
    url: '/assets/:name',
    operationId: 'pageAsset',
    tag: 'pages',
    scope: null,
    summary: 'Stylesheet and scripts of the pages',
    params: {
      type: 'object',
      required: ['name'],
      properties: { name: { type: 'string', enum: ASSET_NAMES } },
    } as const,
    responses: {
      200: { description: 'Asset', schema: { type: 'string' }, contentType: 'text/plain' },
      400: { description: 'Problem', schema: S.Problem, contentType: 'application/problem+json' },
    },
  },
} satisfies Record<string, RouteSpec>;

export function pagesPlugin() {
  const assets = new Map<string, Promise<string>>();
  const asset = (name: string) => {
    if (!(name in ASSET_TYPES)) throw new EarmarkError('not_found', 'no such asset');
    if (!assets.has(name)) assets.set(name, readFile(`${ASSET_DIR}${name}`, 'utf8'));
    return assets.get(name) as Promise<string>;
  };
  return routesPlugin('earmark-pages', async (app) => {
    route(app, pageSpecs.dashboard, async (_request, reply) =>
      reply
        .type('text/html; charset=utf-8')
        .header('content-security-policy', CONTENT_SECURITY_POLICY)
        .send(dashboardPage()),
    );
    route(app, pageSpecs.report, async (request, reply) => {
      const { id } = request.params;
      return reply
        .type('text/html; charset=utf-8')
        .header('content-security-policy', CONTENT_SECURITY_POLICY)
        .send(reportPage(id));
    });
    route(app, pageSpecs.compare, async (request, reply) =>
      reply
        .type('text/html; charset=utf-8')
        .header('content-security-policy', CONTENT_SECURITY_POLICY)
        .send(comparePage(request.params.id, request.params.otherId)),
    );
    route(app, pageSpecs.asset, async (request, reply) => {
      const { name } = request.params;
      return reply
        .type(ASSET_TYPES[name])
        .header('cache-control', 'no-cache')
        .send(await asset(name));
    });
  });
}
