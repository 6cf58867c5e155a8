// One schema serves the CLI, the API and the pages: openapi/report.schema.json, generated from
// the QcReport interface. It must be current, and real reports must validate against it.
import { readFileSync } from 'node:fs';
import { Ajv2020 } from 'ajv/dist/2020.js';
import { afterAll, describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.ts';
import { builtinProfile } from '../../src/profiles/index.ts';
import { generateReportSchema } from '../../src/profiles/report-schema.ts';
import { checkFile, setRange, tempDir, writeTone } from './helpers.ts';

const committed = JSON.parse(readFileSync(new URL('../../openapi/report.schema.json', import.meta.url), 'utf8'));
const ajv = new Ajv2020({ allErrors: true, strict: false });
const validate = ajv.compile(committed);
const { dir, cleanup } = tempDir();
afterAll(cleanup);

describe('openapi/report.schema.json', () => {
  it('is what `npm run openapi` generates from src/profiles/report.ts', () => {
    expect(committed).toEqual(generateReportSchema());
  });

  it('validates a failing report with flags, and rejects fields it does not know', async () => {
    // Clipped tone with BWF time reference: flags, timecode origin, correction all present.
    const path = await writeTone(dir, {
      segments: [{ seconds: 6, peakDbfs: -3 }],
      edit: setRange(48000, 48100, 1),
      timeReferenceSamples: 48000 * 3600,
    });
    const report = await checkFile(path, builtinProfile('ebu-r128-short-form'));
    expect(report.flags.length).toBeGreaterThan(0);
    const json = JSON.parse(JSON.stringify(report));
    expect(validate(json), ajv.errorsText(validate.errors)).toBe(true);
    expect(validate({ ...json, surprise: 1 })).toBe(false);
    expect(validate({ ...json, verdict: 'maybe' })).toBe(false);
  });

  it('validates what `earmark check --json` prints', async () => {
    const path = await writeTone(dir, { segments: [{ seconds: 4, peakDbfs: -23 }] });
    let out = '';
    const code = await main(['check', path, '--profile', 'ebu-r128', '--json'], {
      stdout: (t) => {
        out += t;
      },
      stderr: () => undefined,
    });
    expect([0, 1, 2]).toContain(code);
    expect(validate(JSON.parse(out)), ajv.errorsText(validate.errors)).toBe(true);
  });
});
