// Exports of completed jobs: the flags as CSV, a copy of the stored WAVE with a cue marker at each
// flag (streamed from storage), and a JUnit XML summary of many jobs for CI pipelines.

import { Readable } from 'node:stream';
import { EarmarkError } from '../../errors/index.ts';
import { planMarkedWav } from '../../exports/cue-wav.ts';
import { flagsCsv, flagsOfReport } from '../../exports/flags-csv.ts';
import { JUNIT_WARN_AS, junitXml, summarise, type JunitEntry } from '../../exports/junit.ts';
import { reportFromText } from '../../profiles/report-json.ts';
import { decodeFailureError } from '../../queue/contract.ts';
import type { LocalCopy } from '../../storage/index.ts';
import { principalOf } from './auth.ts';
import type { AppDeps } from '../deps.ts';
import { route, routesPlugin, type RouteSpec } from '../route-spec.ts';
import * as S from '../schemas.ts';

const JOB_ID = 'j_[a-z0-9]{20,40}';
export const MAX_SUMMARY_JOBS = 100;
const WAVE_CONTAINERS: ReadonlySet<string> = new Set(['wav', 'rf64', 'bw64']);

export const exportSpecs = {
  flagsCsv: {
    method: 'GET',
    url: '/v1/jobs/:id/flags.csv',
    operationId: 'getJobFlagsCsv',
    tag: 'jobs',
    scope: 'read',
    summary: "The report's flags as CSV (RFC 4180; column names carry units; formula-like text cells prefixed with ')",
    params: S.JobIdParams,
    responses: {
      200: { description: 'CSV, one row per kept flag', schema: { type: 'string' }, contentType: 'text/csv' },
      ...S.problems(400, 401, 403, 404, 409, 503),
    },
  },
  markersWav: {
    method: 'GET',
    url: '/v1/jobs/:id/markers.wav',
    operationId: 'getJobMarkersWav',
    tag: 'jobs',
    scope: 'read',
    summary:
      'A copy of the stored WAVE, RF64 or BW64 file with a RIFF cue point and LIST/adtl label, note and span length at each flag; the audio bytes unchanged',
    params: S.JobIdParams,
    responses: {
      200: { description: 'WAV audio', schema: { type: 'string', format: 'binary' }, contentType: 'audio/wav' },
      ...S.problems(400, 401, 403, 404, 409, 422, 503),
    },
  },
  junitSummary: {
    method: 'GET',
    url: '/v1/jobs.junit.xml',
    operationId: 'getJobsJunit',
    tag: 'jobs',
    scope: 'read',
    summary: `A JUnit XML summary of up to ${MAX_SUMMARY_JOBS} jobs: fail is a <failure>, a failed job an <error>, a job not finished <skipped>; warn as warnAs says`,
    querystring: {
      type: 'object',
      required: ['ids'],
      additionalProperties: false,
      properties: {
        ids: {
          type: 'string',
          description: `Comma-separated job ids, at most ${MAX_SUMMARY_JOBS}; one test case each, in this order`,
          pattern: `^${JOB_ID}(,${JOB_ID}){0,${MAX_SUMMARY_JOBS - 1}}$`,
        },
        warnAs: { type: 'string', enum: JUNIT_WARN_AS, default: 'pass' },
        name: { type: 'string', maxLength: 200, default: 'earmark', description: 'The test suite name' },
      },
    } as const,
    responses: {
      200: { description: 'JUnit XML', schema: { type: 'string' }, contentType: 'application/xml' },
      ...S.problems(400, 401, 403, 503),
    },
  },
} satisfies Record<string, RouteSpec>;

/** A download name from the delivered file's name: letters, digits, dot, dash, underscore only. */
export function downloadName(fileName: string | undefined, fallback: string, suffix: string): string {
  const base = (fileName ?? '')
    .replace(/\.[^.]*$/, '')
    .replace(/[^A-Za-z0-9._-]+/g, '_')
    .replace(/^[._]+/, '');
  return `${base.slice(0, 100) || fallback}${suffix}`;
}

export function exportsPlugin(deps: AppDeps) {
  return routesPlugin('earmark-exports', async (app) => {
    const reportOf = async (tenant: string, id: string) =>
      reportFromText(await deps.jobs.report(tenant, id), `the report of job ${id}`);

    route(app, exportSpecs.flagsCsv, async (request, reply) => {
      const { id } = request.params;
      const report = await reportOf(principalOf(request).tenant, id);
      return reply
        .type('text/csv; charset=utf-8; header=present')
        .header('content-disposition', `attachment; filename="${downloadName(report.file?.name, id, '.flags.csv')}"`)
        .send(flagsCsv([flagsOfReport(report)]));
    });

    route(app, exportSpecs.markersWav, async (request, reply) => {
      const { id } = request.params;
      const tenant = principalOf(request).tenant;
      const report = await reportOf(tenant, id);
      // Refused before any copy from the object store.
      if (!WAVE_CONTAINERS.has(report.format.container))
        throw new EarmarkError(
          'markers_need_wave',
          `job ${id} checked a ${report.format.container} file; markers can be written only into a WAVE, RF64 or BW64 file`,
        );
      const job = await deps.jobs.completed(tenant, id);
      const sourceKey =
        job.returnvalue?.sourceKey ?? (job.data.source.kind === 'upload' ? job.data.source.storageKey : null);
      if (!sourceKey) throw new EarmarkError('not_found', `the audio of job ${id} was not kept`);
      let copy: LocalCopy | null = null;
      try {
        copy = await deps.storage.localCopy(sourceKey);
        const plan = await planMarkedWav(copy.path, report.flags);
        const body = Readable.from(plan.chunks(), { objectMode: false });
        const held = copy;
        copy = null; // released when the body ends or the client goes away
        body.once('close', () => void held.release().catch(() => undefined));
        return reply
          .type('audio/wav')
          .header('content-length', String(plan.sizeBytes))
          .header(
            'content-disposition',
            `attachment; filename="${downloadName(report.file?.name, id, '.markers.wav')}"`,
          )
          .send(body);
      } catch (error) {
        // The stored audio is gone after the retention period; never leak its path.
        if (error instanceof EarmarkError && error.code === 'file_not_found')
          throw new EarmarkError('not_found', `the audio of job ${id} is past its retention period`);
        throw error;
      } finally {
        await copy?.release().catch(() => undefined);
      }
    });

    route(app, exportSpecs.junitSummary, async (request, reply) => {
      const tenant = principalOf(request).tenant;
      const ids = [...new Set(request.query.ids.split(','))];
      const jobs = await deps.jobs.read(tenant, ids);
      const entries: JunitEntry[] = [];
      for (const id of ids) {
        const loaded = jobs.get(id);
        const source = loaded?.job.data.source;
        // The file name for a person, the id to tell two deliveries of one name apart.
        const name = source?.kind === 'upload' ? `${source.fileName} [${id}]` : id;
        if (!loaded) entries.push({ name: id, error: { code: 'not_found', message: `no job ${id}` } });
        else if (loaded.state === 'failed') entries.push({ name, error: decodeFailureError(loaded.job.failedReason) });
        else if (loaded.state !== 'completed') entries.push({ name, pending: `job ${id} is ${loaded.state}` });
        else {
          try {
            entries.push({ name, report: summarise(await reportOf(tenant, id)) });
          } catch (error) {
            if (!(error instanceof EarmarkError)) throw error;
            entries.push({ name, error: { code: error.code, message: error.message } });
          }
        }
      }
      const { warnAs = 'pass', name = 'earmark' } = request.query;
      return reply
        .type('application/xml; charset=utf-8')
        .send(junitXml(entries, { warnAs, suiteName: name, timestamp: new Date().toISOString() }));
    });
  });
}
