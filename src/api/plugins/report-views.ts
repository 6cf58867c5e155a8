// Views of a completed job for the report page: the loudness plot (SVG, drawn on the server by
// the same pure function the tests check) and short listening excerpts cut from the stored audio.

import { EarmarkError } from '../../errors/index.ts';
import { MAX_EXCERPT_SECONDS } from '../../engine/excerpt.ts';
import { ExcerptRunner } from '../../engine/excerpt-runner.ts';
import { reportFromText } from '../../profiles/report-json.ts';
import type { LocalCopy } from '../../storage/index.ts';
import { renderReportPlot } from '../../views/report-plot.ts';
import { principalOf } from './auth.ts';
import type { AppDeps } from '../deps.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';

export const reportViewSpecs = {
  plot: {
    method: 'GET',
    url: '/v1/jobs/:id/plot.svg',
    operationId: 'getJobPlot',
    tag: 'jobs',
    scope: 'read',
    summary: 'Momentary and short-term loudness over time with the target band and one marker per flag (SVG)',
    params: S.JobIdParams,
    responses: {
      200: { description: 'SVG image', schema: { type: 'string' }, contentType: 'image/svg+xml' },
      ...S.problems(400, 401, 403, 404, 409, 503),
    },
  },
  excerpt: {
    method: 'GET',
    url: '/v1/jobs/:id/excerpt',
    operationId: 'getJobExcerpt',
    tag: 'jobs',
    scope: 'read',
    summary: `A WAV (24-bit PCM) of a span of the stored audio, at most ${MAX_EXCERPT_SECONDS} s, for listening to a flag`,
    params: S.JobIdParams,
    querystring: {
      type: 'object',
      required: ['startSeconds', 'endSeconds'],
      additionalProperties: false,
      properties: { startSeconds: { type: 'number', minimum: 0 }, endSeconds: { type: 'number', exclusiveMinimum: 0 } },
    } as const,
    responses: {
      200: { description: 'WAV audio', schema: { type: 'string', format: 'binary' }, contentType: 'audio/wav' },
      ...S.problems(400, 401, 403, 404, 409, 503),
    },
  },
} satisfies Record<string, RouteSpec>;

export function reportViewsPlugin(deps: AppDeps) {
  return routesPlugin('earmark-report-views', async (app) => {
    // Excerpts decode on threads of their own, a few at a time: never on this event loop.
    const excerpts = new ExcerptRunner();
    app.addHook('onClose', async () => {
      await excerpts.close();
    });

    route(app, reportViewSpecs.plot, async (request, reply) => {
      const json = await deps.jobs.report(principalOf(request).tenant, request.params.id);
      return reply.type('image/svg+xml').send(renderReportPlot(reportFromText(json, 'the stored report')));
    });

    route(app, reportViewSpecs.excerpt, async (request, reply) => {
      const { id } = request.params;
      const { startSeconds, endSeconds } = request.query;
      const job = await deps.jobs.completed(principalOf(request).tenant, id);
      const sourceKey =
        job.returnvalue?.sourceKey ?? (job.data.source.kind === 'upload' ? job.data.source.storageKey : null);
      if (!sourceKey) throw new EarmarkError('not_found', `the audio of job ${id} was not kept`);
      // A client that goes away ends its thread.
      const gone = new AbortController();
      reply.raw.on('close', () => {
        if (!reply.raw.writableEnded) gone.abort();
      });
      let excerpt: Awaited<ReturnType<typeof excerpts.cut>>;
      // The object-store backend fetches what the excerpt reads into a temp file (storage/s3.ts).
      let copy: LocalCopy | null = null;
      try {
        copy = await deps.storage.excerptCopy(sourceKey, startSeconds, endSeconds);
        excerpt = await excerpts.cut(copy.path, startSeconds, endSeconds, gone.signal);
      } catch (error) {
        if (gone.signal.aborted) return reply;
        // The stored audio is gone after the retention period; never leak its path.
        if (error instanceof EarmarkError && error.code === 'file_not_found')
          throw new EarmarkError('not_found', `the audio of job ${id} is past its retention period`);
        throw error;
      } finally {
        await copy?.release().catch(() => undefined);
      }
      return reply
        .type('audio/wav')
        .header('content-disposition', `inline; filename="excerpt-${id}.wav"`)
        .header('x-excerpt-start-seconds', excerpt.startSeconds.toFixed(6))
        .header('x-excerpt-end-seconds', excerpt.endSeconds.toFixed(6))
        .send(Buffer.from(excerpt.wav.buffer, excerpt.wav.byteOffset, excerpt.wav.byteLength));
    });
  });
}
