// The report's JSON Schema (draft 2020-12), generated from the QcReport TypeScript interface by
// ts-json-schema-generator, so the schema and the code cannot drift apart. `npm run openapi`
// writes openapi/report.schema.json; a test checks the file is current.
import { createGenerator } from 'ts-json-schema-generator';

type Schema = Record<string, unknown>;

/** Draft-07 `definitions` become 2020-12 `$defs`, and refs follow (the profile schema uses it too). */
export function toDraft2020(value: unknown): unknown {
  if (Array.isArray(value)) return value.map(toDraft2020);
  if (!value || typeof value !== 'object') return value;
  return Object.fromEntries(
    Object.entries(value).map(([key, v]) => {
      if (key === '$ref' && typeof v === 'string') return [key, v.replace('#/definitions/', '#/$defs/')];
      return [key === 'definitions' ? '$defs' : key, toDraft2020(v)];
    }),
  );
}

export function generateReportSchema(): Schema {
  const generated = createGenerator({
    path: new URL('./report.ts', import.meta.url).pathname,
    tsconfig: new URL('../../tsconfig.json', import.meta.url).pathname,
    type: 'QcReport',
    skipTypeCheck: true,
    additionalProperties: false,
  }).createSchema('QcReport');
  const schema = toDraft2020(generated) as Schema;
  return {
    $schema: 'https://json-schema.org/draft/2020-12/schema',
    $id: 'https://earmark.invalid/schemas/report.schema.json',
    title: 'Earmark QC report',
    description:
      'The analysis document plus verdict, checks, flags, correction and provenance. Generated from src/profiles/report.ts.',
    $ref: schema.$ref,
    $defs: schema.$defs,
  };
}
