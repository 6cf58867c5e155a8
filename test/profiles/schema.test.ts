// Profile validation (openapi/profile.schema.json + cross-field rules): every rejection is an
// invalid_profile EarmarkError naming the JSON path of the bad field.

import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import {
  BUILTIN_PROFILES,
  builtinProfile,
  loadProfileFile,
  parseProfile,
  resolveProfile,
} from '../../src/profiles/index.ts';
import { checkFile, checkOf, tempDir, writeTone } from './helpers.ts';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

const base = () => ({
  id: 'house',
  name: 'House',
  version: '1.0.0',
  description: 'd',
  basis: 'house rule',
  rules: [
    { id: 'loud', type: 'integrated-loudness', severity: 'fail', targetLufs: -23, toleranceLu: 1 },
    { id: 'tp', type: 'true-peak', severity: 'fail', maxDbtp: -1 },
    { id: 'clip', type: 'clipping', severity: 'warn' },
  ] as Record<string, unknown>[],
});

type Edit = (p: ReturnType<typeof base>) => void;
const invalid: Array<[string, Edit, string]> = [
  [
    'unknown top-level key',
    (p) => {
      (p as Record<string, unknown>).extends = 'ebu-r128';
    },
    'extends',
  ],
  [
    'unknown rule key',
    (p) => {
      p.rules[1].ceiling = -1;
    },
    'rules[1].ceiling',
  ],
  [
    'true peak out of range',
    (p) => {
      p.rules[1].maxDbtp = 12;
    },
    'rules[1].maxDbtp',
  ],
  [
    'wrong type',
    (p) => {
      p.rules[2].maxRuns = 'none';
    },
    'rules[2].maxRuns',
  ],
  [
    'unknown rule type',
    (p) => {
      p.rules[2].type = 'loudness-war';
    },
    'rules[2].type',
  ],
  [
    'bad severity',
    (p) => {
      p.rules[0].severity = 'error';
    },
    'rules[0].severity',
  ],
  [
    'missing required',
    (p) => {
      delete p.rules[1].maxDbtp;
    },
    'rules[1].maxDbtp',
  ],
  [
    'missing top-level field',
    (p) => {
      delete (p as Partial<typeof p>).basis;
    },
    'basis',
  ],
  [
    'tolerance without target',
    (p) => {
      delete p.rules[0].targetLufs;
    },
    'rules[0].targetLufs',
  ],
  [
    'target without tolerance or range',
    (p) => {
      delete p.rules[0].toleranceLu;
    },
    'rules[0].toleranceLu',
  ],
  [
    'tolerance and range',
    (p) => {
      p.rules[0].minLufs = -24;
    },
    'rules[0].toleranceLu',
  ],
  [
    'min above max',
    (p) => {
      p.rules.push({ id: 'lra', type: 'loudness-range', severity: 'warn', minLu: 20, maxLu: 5 });
    },
    'rules[3].minLu',
  ],
  [
    'duplicate rule id',
    (p) => {
      p.rules[2].id = 'tp';
    },
    'rules[2].id',
  ],
  [
    'clipping settings disagree',
    (p) => {
      p.rules[2].minRunSamples = 3;
      p.rules.push({ id: 'clip2', type: 'clipping', severity: 'fail', minRunSamples: 5 });
    },
    'rules[3].minRunSamples',
  ],
  [
    'bad frame rate',
    (p) => {
      (p as Record<string, unknown>).timecode = { frameRate: '29.97' };
    },
    'timecode.frameRate',
  ],
  [
    'bad id',
    (p) => {
      p.id = 'House Rules!';
    },
    'id',
  ],
];

describe('profile validation', () => {
  it('accepts the base profile and every built-in', () => {
    expect(parseProfile(base()).rules).toHaveLength(3);
    expect(BUILTIN_PROFILES.map((p) => p.id)).toEqual([
      'ebu-r128',
      'ebu-r128-short-form',
      'atsc-a85',
      'streaming-aes',
      'streaming-dialogue-anchored',
      'podcast',
      'delivery-broadcast-stereo',
      'delivery-broadcast-5-1',
      'delivery-online',
      'delivery-podcast',
    ]);
  });

  it.each(invalid)('rejects %s (field named)', (_, edit, field) => {
    const p = base();
    edit(p);
    let thrown: unknown;
    try {
      parseProfile(p);
    } catch (e) {
      thrown = e;
    }
    expect(thrown).toMatchObject({ code: 'invalid_profile', details: { field } });
    expect((thrown as Error).message).toContain(field);
  });

  it('reports all problems at once in details.issues', () => {
    const p = base();
    p.rules[1].maxDbtp = 12;
    p.rules[2].bogus = true;
    let thrown: unknown;
    try {
      parseProfile(p);
    } catch (e) {
      thrown = e;
    }
    const issues = (thrown as { details: { issues: Array<{ field: string }> } }).details.issues;
    expect(issues.map((i) => i.field)).toEqual(expect.arrayContaining(['rules[1].maxDbtp', 'rules[2].bogus']));
  });

  it('rejects a file that is not JSON, and an unknown built-in id', async () => {
    const path = join(dir, 'broken.json');
    writeFileSync(path, '{ "id": ');
    await expect(loadProfileFile(path)).rejects.toMatchObject({
      code: 'invalid_profile',
      details: { field: 'profile' },
    });
    await expect(resolveProfile('ebu-r129')).rejects.toMatchObject({ code: 'unknown_profile' });
  });

  it('a built-in copied into a house profile and tightened (+/-0.5 LU) fails where the built-in passes', async () => {
    const house = {
      ...builtinProfile('ebu-r128'),
      id: 'house-r128-tight',
      basis: 'house rule (tightened from EBU R 128 V5 item h)',
    };
    house.rules = house.rules.map((r) => (r.type === 'integrated-loudness' ? { ...r, toleranceLu: 0.5 } : r));
    const path = join(dir, 'house.json');
    writeFileSync(path, JSON.stringify(house));
    const tone = await writeTone(dir, { segments: [{ seconds: 6, peakDbfs: -22.3 }] });
    expect(checkOf(await checkFile(tone, builtinProfile('ebu-r128')), 'programme-loudness').passed).toBe(true);
    expect(checkOf(await checkFile(tone, await resolveProfile(path)), 'programme-loudness').passed).toBe(false);
  });
});
