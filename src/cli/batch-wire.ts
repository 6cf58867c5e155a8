// The messages between a batch lane (batch-lane.ts) and its child (batch-child.ts), over the IPC
// channel: one file asked, one answer (the summary the batch keeps, or the file's error). Both
// sides read what arrives through these checks, never through casts.
import { readFileSync } from 'node:fs';
import { Ajv2020, type ValidateFunction } from 'ajv/dist/2020.js';
import { projectFileUrl } from '../config/paths.ts';
import { parseWireError, type WireError } from '../errors/index.ts';
import type { ReportSummary } from '../exports/junit.ts';

export interface LaneRequest {
  id: number;
  file: string;
}

/** rssBytes: the child's resident memory after the file, so the lane can retire a grown child. */
export type LaneReply = { id: number; rssBytes: number } & ({ report: ReportSummary } | { error: WireError });

export function parseRequest(value: unknown): LaneRequest | null {
  if (!value || typeof value !== 'object' || !('id' in value) || !('file' in value)) return null;
  const { id, file } = value;
  return typeof id === 'number' && typeof file === 'string' ? { id, file } : null;
}

/** The fields of ReportSummary (exports/junit.ts), checked with the report schema's own definitions. */
const REQUIRED = ['verdict', 'headline', 'profile', 'checks', 'flagCounts', 'flagsTotal', 'flags', 'summary'];
let validator: ValidateFunction<ReportSummary> | null = null;

function validateSummary(): ValidateFunction<ReportSummary> {
  if (validator) return validator;
  const schema: { $defs: Record<string, { properties: Record<string, { properties: Record<string, unknown> }> }> } =
    JSON.parse(readFileSync(projectFileUrl('openapi/report.schema.json'), 'utf8'));
  const report = schema.$defs.QcReport.properties;
  const readings = report.summary.properties;
  validator = new Ajv2020({ allErrors: false, strict: false }).compile<ReportSummary>({
    $defs: schema.$defs,
    type: 'object',
    required: REQUIRED,
    properties: {
      ...Object.fromEntries([...REQUIRED, 'unlistedEvents'].map((k) => [k, report[k]])),
      summary: {
        type: 'object',
        required: ['integratedLufs', 'truePeakDbtp'],
        properties: { integratedLufs: readings.integratedLufs, truePeakDbtp: readings.truePeakDbtp },
      },
    },
  });
  return validator;
}

/** An answer as it arrived; null when it is not one (the lane then treats the child as broken). */
export function parseReply(value: unknown): LaneReply | null {
  if (!value || typeof value !== 'object' || !('id' in value) || !('rssBytes' in value)) return null;
  const { id, rssBytes } = value;
  if (typeof id !== 'number' || typeof rssBytes !== 'number') return null;
  if ('error' in value) {
    const error = parseWireError(value.error);
    return error ? { id, rssBytes, error } : null;
  }
  if (!('report' in value)) return null;
  const check = validateSummary();
  return check(value.report) ? { id, rssBytes, report: value.report } : null;
}
