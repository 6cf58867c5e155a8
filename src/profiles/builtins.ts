// Built-in delivery profiles. Each number names its published source; how well each was
// verified is said beside it (see test/profiles/builtins.test.ts for the same notes).
// Copy one (`earmark profiles <id>`), rename it and tighten it for a house profile.

import { EarmarkError } from '../errors/index.ts';
import { loadProfileFile, parseProfile } from './schema.ts';
import type { Profile } from './types.ts';

const R128 = 'EBU R 128 V5 (2023)';

const definitions: Profile[] = [
  {
    id: 'ebu-r128', name: 'EBU R 128 programme', version: '1.0.0',
    description: 'Broadcast programme normalised to -23.0 LUFS; the +/-1.0 LU deviation R 128 permits where exact normalisation is not achievable; true peak at most -1 dBTP.',
    basis: `${R128} items h and m`,
    timecode: { frameRate: '25' },
    rules: [
      { id: 'programme-loudness', type: 'integrated-loudness', severity: 'fail', targetLufs: -23, toleranceLu: 1, source: `${R128} item h` },
      { id: 'true-peak', type: 'true-peak', severity: 'fail', maxDbtp: -1, source: `${R128} item m (linear production audio)` },
    ],
  },
  {
    id: 'ebu-r128-short-form', name: 'EBU R 128 short-form (adverts, promos)', version: '1.0.0',
    description: 'R 128 programme rules plus a maximum short-term loudness of -18 LUFS (target + 5 LU) for adverts, promos and trailers.',
    basis: 'EBU Tech 3343 section 9.1 (R 128 s1), with EBU R 128 V5 (2023) items h and m',
    timecode: { frameRate: '25' },
    rules: [
      // Tech 3343 9.1 gives -23.0 LUFS; the +/-1.0 LU is R 128 item h applied to short-form (our reading).
      { id: 'programme-loudness', type: 'integrated-loudness', severity: 'fail', targetLufs: -23, toleranceLu: 1, source: `EBU Tech 3343 9.1; tolerance ${R128} item h` },
      { id: 'true-peak', type: 'true-peak', severity: 'fail', maxDbtp: -1, source: `EBU Tech 3343 9.1; ${R128} item m` },
      { id: 'short-term-max', type: 'short-term-max', severity: 'fail', maxLufs: -18, source: 'EBU Tech 3343 9.1' },
    ],
  },
  {
    id: 'atsc-a85', name: 'ATSC A/85 television', version: '1.0.0',
    description: 'US television: -24 LKFS +/-2 dB, true peak at most -2 dBTP. Target and tolerance from a text copy; the -2 dBTP is from memory and not yet verified against A/85:2013.',
    basis: 'ATSC A/85:2013 (recommended practice)',
    timecode: { frameRate: '29.97-df' },
    rules: [
      { id: 'programme-loudness', type: 'integrated-loudness', severity: 'fail', targetLufs: -24, toleranceLu: 2, source: 'ATSC A/85:2013 (secondary copy)' },
      { id: 'true-peak', type: 'true-peak', severity: 'fail', maxDbtp: -2, source: 'ATSC A/85:2013 (from memory, unverified)' },
    ],
  },
  {
    id: 'streaming-aes', name: 'AES streaming and network delivery', version: '1.0.0',
    description: 'Streamed programme between -20 and -16 LUFS integrated, true peak at most -1.0 dBTP. Values from quotations of the published text (secondary).',
    basis: 'AES TD1004.1.15-10 (2015)',
    timecode: { frameRate: '25' },
    rules: [
      { id: 'programme-loudness', type: 'integrated-loudness', severity: 'fail', minLufs: -20, maxLufs: -16, source: 'AES TD1004.1.15-10 (secondary quotation)' },
      { id: 'true-peak', type: 'true-peak', severity: 'fail', maxDbtp: -1, source: 'AES TD1004.1.15-10 (secondary quotation)' },
    ],
  },
  {
    id: 'podcast', name: 'Podcast (common practice)', version: '1.0.0',
    description: 'Stereo spoken-word episodes at -16 LUFS +/-1 LU, true peak at most -1 dBTP. Common practice, no published standard; stereo and clipping rules warn only.',
    basis: 'common practice (no published specification)',
    timecode: { frameRate: '25' },
    rules: [
      { id: 'programme-loudness', type: 'integrated-loudness', severity: 'fail', targetLufs: -16, toleranceLu: 1, source: 'common practice' },
      { id: 'true-peak', type: 'true-peak', severity: 'fail', maxDbtp: -1, source: 'common practice' },
      { id: 'stereo', type: 'channels', severity: 'warn', count: 2, source: 'common practice (the -16 LUFS figure is for stereo)' },
      { id: 'clipping', type: 'clipping', severity: 'warn', maxRuns: 0, minRunSamples: 3, source: 'common practice' },
    ],
  },
];

/** Validated once at load: a broken built-in is a bug, not user input. */
export const BUILTIN_PROFILES: readonly Profile[] = definitions.map((p) => parseProfile(p, `built-in ${p.id}`));

export function builtinProfile(id: string): Profile {
  const found = BUILTIN_PROFILES.find((p) => p.id === id);
  if (!found) throw new EarmarkError('unknown_profile', `no built-in profile "${id}"; built-ins: ${BUILTIN_PROFILES.map((p) => p.id).join(', ')}`, { field: 'profile', id });
  return structuredClone(found);
}

/** A built-in id, or a path to a JSON profile (anything with a slash or ending in .json). */
export async function resolveProfile(idOrPath: string): Promise<Profile> {
  if (idOrPath.endsWith('.json') || idOrPath.includes('/') || idOrPath.includes('\\')) return loadProfileFile(idOrPath);
  return builtinProfile(idOrPath);
}
