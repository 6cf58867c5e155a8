// A report read back from JSON (a `check --json` file, a stored job's report): validated against
// openapi/report.schema.json, generated from QcReport, so what comes in is what the code reads.

import { readFileSync } from 'node:fs';
import { Ajv2020, type ValidateFunction } from 'ajv/dist/2020.js';
import { projectFileUrl } from '../config/paths.ts';
import { EarmarkError } from '../errors/index.ts';
import { REPORT_VERSION, type QcReport } from './report.ts';

let validator: ValidateFunction<QcReport> | null = null;

function validate(): ValidateFunction<QcReport> {
  if (!validator) {
    const schema: Record<string, unknown> = JSON.parse(
      readFileSync(projectFileUrl('openapi/report.schema.json'), 'utf8'),
    );
    validator = new Ajv2020({ allErrors: false, strict: false }).compile<QcReport>(schema);
  }
  return validator;
}

/** `what` names the input in the error ("the old report"). */
export function reportFromJson(value: unknown, what: string): QcReport {
  const check = validate();
  if (check(value)) return value;
  const e = check.errors?.[0];
  const version = value && typeof value === 'object' && 'reportVersion' in value ? String(value.reportVersion) : 'none';
  throw new EarmarkError(
    'invalid_argument',
    `${what} is not an Earmark report of version ${REPORT_VERSION} (its reportVersion: ${version})${e ? `: ${e.instancePath || '/'} ${e.message ?? ''}` : ''}`,
    { field: what },
  );
}

/** Parses JSON text, then validates it as above. */
export function reportFromText(text: string, what: string): QcReport {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch (error) {
    throw new EarmarkError(
      'invalid_argument',
      `${what} is not valid JSON: ${error instanceof Error ? error.message : String(error)}`,
      {
        field: what,
      },
    );
  }
  return reportFromJson(value, what);
}
