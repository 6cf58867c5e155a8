// Built-in delivery profiles. Each number names its published source; how well each was
// verified is said beside it (see test/profiles/builtins.test.ts for the same notes).
// Copy one (`earmark profiles <id>`), rename it and tighten it for a house profile.

import { EarmarkError } from '../errors/index.ts';
import { loadProfileFile, parseProfile } from './schema.ts';
import { DEFAULT_PHASE_MIN_CORRELATION, type Profile } from './types.ts';

const R128 = 'EBU R 128 V5 (2023)';

const definitions: Profile[] = [
  {
    id: 'ebu-r128',
    name: 'EBU R 128 programme',
    version: '1.0.0',
    description:
      'Broadcast programme normalised to -23.0 LUFS; the +/-1.0 LU deviation R 128 permits where exact normalisation is not achievable; true peak at most -1 dBTP.',
    basis: `${R128} items h and m`,
    timecode: { frameRate: '25' },
    rules: [
      {
        id: 'programme-loudness',
        type: 'integrated-loudness',
        severity: 'fail',
        targetLufs: -23,
        toleranceLu: 1,
        source: `${R128} item h`,
      },
      {
        id: 'true-peak',
        type: 'true-peak',
        severity: 'fail',
        maxDbtp: -1,
        source: `${R128} item m (linear production audio)`,
      },
    ],
  },
  {
    id: 'ebu-r128-short-form',
    name: 'EBU R 128 short-form (adverts, promos)',
    version: '1.0.0',
    description:
      'R 128 programme rules plus a maximum short-term loudness of -18 LUFS (target + 5 LU) for adverts, promos and trailers.',
    basis: 'EBU Tech 3343 section 9.1 (R 128 s1), with EBU R 128 V5 (2023) items h and m',
    timecode: { frameRate: '25' },
    rules: [
      // Tech 3343 9.1 gives -23.0 LUFS; the +/-1.0 LU is R 128 item h applied to short-form (our reading).
      {
        id: 'programme-loudness',
        type: 'integrated-loudness',
        severity: 'fail',
        targetLufs: -23,
        toleranceLu: 1,
        source: `EBU Tech 3343 9.1; tolerance ${R128} item h`,
      },
      {
        id: 'true-peak',
        type: 'true-peak',
        severity: 'fail',
        maxDbtp: -1,
        source: `EBU Tech 3343 9.1; ${R128} item m`,
      },
      { id: 'short-term-max', type: 'short-term-max', severity: 'fail', maxLufs: -18, source: 'EBU Tech 3343 9.1' },
    ],
  },
  {
    id: 'atsc-a85',
    name: 'ATSC A/85 television',
    version: '1.0.0',
    description:
      'US television: -24 LKFS +/-2 dB, true peak at most -2 dBTP. Target and tolerance from a text copy; the -2 dBTP is from memory and not yet verified against A/85:2013.',
    basis: 'ATSC A/85:2013 (recommended practice)',
    timecode: { frameRate: '29.97-df' },
    rules: [
      {
        id: 'programme-loudness',
        type: 'integrated-loudness',
        severity: 'fail',
        targetLufs: -24,
        toleranceLu: 2,
        source: 'ATSC A/85:2013 (secondary copy)',
      },
      {
        id: 'true-peak',
        type: 'true-peak',
        severity: 'fail',
        maxDbtp: -2,
        source: 'ATSC A/85:2013 (from memory, unverified)',
      },
    ],
  },
  {
    id: 'streaming-aes',
    name: 'AES streaming and network delivery',
    version: '1.0.0',
    description:
      'Streamed programme between -20 and -16 LUFS integrated, true peak at most -1.0 dBTP. Values from quotations of the published text (secondary).',
    basis: 'AES TD1004.1.15-10 (2015)',
    timecode: { frameRate: '25' },
    rules: [
      {
        id: 'programme-loudness',
        type: 'integrated-loudness',
        severity: 'fail',
        minLufs: -20,
        maxLufs: -16,
        source: 'AES TD1004.1.15-10 (secondary quotation)',
      },
      {
        id: 'true-peak',
        type: 'true-peak',
        severity: 'fail',
        maxDbtp: -1,
        source: 'AES TD1004.1.15-10 (secondary quotation)',
      },
    ],
  },
  {
    id: 'streaming-dialogue-anchored',
    name: 'Streaming, anchored on dialogue where there is speech',
    version: '1.0.0',
    description:
      'Assorted streamed content: dialogue-gated loudness -18 LUFS within 1 LU where speech fills at least 10 % of the programme, else programme loudness -18 LUFS within 2 LU; true peak at most -1 dBTP. Values from quotations of AES TD1008 (secondary). TD1008 states the tolerances upward only; they apply both ways here, and the 10 % speech share that makes dialogue measurable is our choice.',
    basis: 'AES TD1008.1.21-9 (2021) Table 1 (secondary quotation)',
    timecode: { frameRate: '25' },
    rules: [
      {
        id: 'anchor-loudness',
        type: 'integrated-loudness',
        severity: 'fail',
        targetLufs: -18,
        toleranceLu: 2,
        dialogueAnchor: { minSpeechSharePercent: 10, toleranceLu: 1 },
        source:
          'AES TD1008 Table 1 (secondary): dialogue -18 LUFS +1 LU where measurable, else -18 LUFS +2 LU; both ways and the 10 % share our choice',
      },
      {
        id: 'true-peak',
        type: 'true-peak',
        severity: 'fail',
        maxDbtp: -1,
        source: 'AES TD1008, at the codec input of lossy-encoded streams (secondary quotation)',
      },
    ],
  },
  {
    id: 'podcast',
    name: 'Podcast (common practice)',
    version: '1.0.0',
    description:
      'Stereo spoken-word episodes at -16 LUFS +/-1 LU, true peak at most -1 dBTP. Common practice, no published standard; stereo and clipping rules warn only.',
    basis: 'common practice (no published specification)',
    timecode: { frameRate: '25' },
    rules: [
      {
        id: 'programme-loudness',
        type: 'integrated-loudness',
        severity: 'fail',
        targetLufs: -16,
        toleranceLu: 1,
        source: 'common practice',
      },
      { id: 'true-peak', type: 'true-peak', severity: 'fail', maxDbtp: -1, source: 'common practice' },
      {
        id: 'stereo',
        type: 'channels',
        severity: 'warn',
        count: 2,
        source: 'common practice (the -16 LUFS figure is for stereo)',
      },
      { id: 'clipping', type: 'clipping', severity: 'warn', maxRuns: 0, minRunSamples: 3, source: 'common practice' },
    ],
  },
  ...deliveryProfiles(),
];

/**
 * Delivery profiles: the standard's loudness and peak rules plus what a QC desk checks a delivery
 * for (format, edges, clipping, dropouts, gaps, channels, phase, DC). They judge the reconstructed
 * true peak, which does not under-read as the Annex 2 example filter can (see analysis/reconstructed-peak.ts).
 */
function deliveryProfiles(): Profile[] {
  const CP = 'common practice';
  const defects = (layout: 'stereo' | 'surround'): Profile['rules'] => [
    {
      id: 'no-clipping',
      type: 'clipping',
      severity: 'fail',
      maxRuns: 0,
      minRunSamples: 3,
      source: `${CP} (3 samples within 0.01 dB of full scale)`,
    },
    { id: 'no-dropouts', type: 'dropouts', severity: 'fail', maxCount: 0, source: CP },
    {
      id: 'no-dead-air',
      type: 'silence-gap',
      severity: 'warn',
      maxSeconds: 10,
      source: `${CP} (dead-air alarms trip at about 5-30 s below -50 to -60 dBFS; from memory)`,
    },
    // A silent LFE or surround pair can be intended in 5.1: there a dead channel warns.
    { id: 'no-dead-channel', type: 'dead-channel', severity: layout === 'stereo' ? 'fail' : 'warn', source: CP },
    { id: 'no-inverted-channel', type: 'inverted-channels', severity: 'fail', source: CP },
    {
      id: 'no-duplicate-channel',
      type: 'duplicate-channels',
      severity: 'warn',
      source: `${CP} (dual mono may be intended: warn)`,
    },
    {
      id: 'phase',
      type: 'phase',
      severity: 'warn',
      minCorrelation: DEFAULT_PHASE_MIN_CORRELATION,
      maxWindows: 0,
      source: `${CP} (3 s windows below ${DEFAULT_PHASE_MIN_CORRELATION} correlation)`,
    },
    { id: 'dc-offset', type: 'dc-offset', severity: 'warn', maxDbfs: -50, source: `${CP} (from memory)` },
  ];
  const broadcastLoudness: Profile['rules'] = [
    {
      id: 'programme-loudness',
      type: 'integrated-loudness',
      severity: 'fail',
      targetLufs: -23,
      toleranceLu: 1,
      measurementToleranceLu: 0.2,
      source: `${R128} item h (±1.0 LU), item i (±0.2 LU measurement tolerance)`,
    },
    {
      id: 'true-peak',
      type: 'true-peak',
      severity: 'fail',
      maxDbtp: -1,
      reading: 'reconstructed',
      source: `${R128} item m; judged on the reconstructed peak`,
    },
    {
      id: 'sample-rate',
      type: 'sample-rate',
      severity: 'fail',
      allowedHz: [48000],
      source: `${CP} (broadcast production runs at 48 kHz)`,
    },
    { id: 'bit-depth', type: 'bit-depth', severity: 'fail', minBits: 24, source: CP },
    { id: 'head-silence', type: 'head-silence', severity: 'warn', maxSeconds: 10, source: CP },
    { id: 'tail-silence', type: 'tail-silence', severity: 'warn', maxSeconds: 10, source: CP },
  ];
  return [
    {
      id: 'delivery-broadcast-stereo',
      name: 'Broadcast programme delivery, stereo',
      version: '1.0.0',
      description:
        'Stereo programme for broadcast: EBU R 128 loudness with its production and measurement tolerances, reconstructed true peak at most -1 dBTP, 48 kHz 24-bit L R, and the defects a QC desk rejects.',
      basis: `${R128} items h, i and m; format and defect rules common practice`,
      timecode: { frameRate: '25' },
      rules: [
        ...broadcastLoudness,
        { id: 'layout', type: 'channels', severity: 'fail', count: 2, layout: ['L', 'R'], source: CP },
        ...defects('stereo'),
      ],
    },
    {
      id: 'delivery-broadcast-5-1',
      name: 'Broadcast programme delivery, 5.1',
      version: '1.0.0',
      description:
        'Surround programme for broadcast: EBU R 128 loudness over all channels (LFE excluded, BS.1770-5), reconstructed true peak at most -1 dBTP, 48 kHz 24-bit L R C LFE Ls Rs, and the defects a QC desk rejects.',
      basis: `${R128} items h, i and m; ITU-R BS.1770-5 channel weights; format and defect rules common practice`,
      timecode: { frameRate: '25' },
      rules: [
        ...broadcastLoudness,
        {
          id: 'layout',
          type: 'channels',
          severity: 'fail',
          count: 6,
          layout: ['L', 'R', 'C', 'LFE', 'Ls', 'Rs'],
          source: `${CP} (WAVE/SMPTE order)`,
        },
        ...defects('surround'),
      ],
    },
    {
      id: 'delivery-online',
      name: 'Streaming and online delivery',
      version: '1.0.0',
      description:
        'Programme for streaming: integrated loudness -20 to -16 LUFS, reconstructed true peak at most -1 dBTP at the codec input, 44.1 or 48 kHz, at least 16-bit, stereo, and the defects a QC desk rejects.',
      basis: 'AES TD1004.1.15-10 (2015) and TD1008 (secondary quotations); format and defect rules common practice',
      timecode: { frameRate: '25' },
      rules: [
        {
          id: 'programme-loudness',
          type: 'integrated-loudness',
          severity: 'fail',
          minLufs: -20,
          maxLufs: -16,
          targetLufs: -18,
          source: 'AES TD1004.1.15-10 (secondary quotation); -18 LUFS correction target from AES TD1008 (secondary)',
        },
        {
          id: 'true-peak',
          type: 'true-peak',
          severity: 'fail',
          maxDbtp: -1,
          reading: 'reconstructed',
          source: 'AES TD1008 ("not exceed -1 dBTP at the codec input"; secondary quotation)',
        },
        { id: 'sample-rate', type: 'sample-rate', severity: 'fail', allowedHz: [44100, 48000], source: CP },
        { id: 'bit-depth', type: 'bit-depth', severity: 'fail', minBits: 16, source: CP },
        { id: 'layout', type: 'channels', severity: 'fail', count: 2, source: CP },
        { id: 'head-silence', type: 'head-silence', severity: 'warn', maxSeconds: 5, source: CP },
        { id: 'tail-silence', type: 'tail-silence', severity: 'warn', maxSeconds: 5, source: CP },
        ...defects('stereo'),
      ],
    },
    {
      id: 'delivery-podcast',
      name: 'Podcast episode delivery',
      version: '1.0.0',
      description:
        'Spoken-word episode: -16 LUFS ±1 LU, reconstructed true peak at most -1 dBTP, 44.1 or 48 kHz, no dropouts or dead channels; mono or stereo. Common practice: no published specification.',
      basis: 'common practice (no published specification)',
      timecode: { frameRate: '25' },
      rules: [
        {
          id: 'programme-loudness',
          type: 'integrated-loudness',
          severity: 'fail',
          targetLufs: -16,
          toleranceLu: 1,
          source: CP,
        },
        { id: 'true-peak', type: 'true-peak', severity: 'fail', maxDbtp: -1, reading: 'reconstructed', source: CP },
        { id: 'sample-rate', type: 'sample-rate', severity: 'fail', allowedHz: [44100, 48000], source: CP },
        { id: 'bit-depth', type: 'bit-depth', severity: 'warn', minBits: 16, source: CP },
        { id: 'head-silence', type: 'head-silence', severity: 'warn', maxSeconds: 2, source: CP },
        { id: 'tail-silence', type: 'tail-silence', severity: 'warn', maxSeconds: 5, source: CP },
        { id: 'clipping', type: 'clipping', severity: 'warn', maxRuns: 0, minRunSamples: 3, source: CP },
        { id: 'no-dropouts', type: 'dropouts', severity: 'fail', maxCount: 0, source: CP },
        { id: 'no-dead-air', type: 'silence-gap', severity: 'warn', maxSeconds: 5, source: CP },
        { id: 'no-dead-channel', type: 'dead-channel', severity: 'fail', source: CP },
        { id: 'no-inverted-channel', type: 'inverted-channels', severity: 'fail', source: CP },
        {
          id: 'phase',
          type: 'phase',
          severity: 'warn',
          minCorrelation: DEFAULT_PHASE_MIN_CORRELATION,
          maxWindows: 0,
          source: CP,
        },
        { id: 'dc-offset', type: 'dc-offset', severity: 'warn', maxDbfs: -50, source: `${CP} (from memory)` },
      ],
    },
  ];
}

/** Validated once at load: a broken built-in is a bug, not user input. */
export const BUILTIN_PROFILES: readonly Profile[] = definitions.map((p) => parseProfile(p, `built-in ${p.id}`));

export function builtinProfile(id: string): Profile {
  const found = BUILTIN_PROFILES.find((p) => p.id === id);
  if (!found)
    throw new EarmarkError(
      'unknown_profile',
      `no built-in profile "${id}"; built-ins: ${BUILTIN_PROFILES.map((p) => p.id).join(', ')}`,
      { field: 'profile', id },
    );
  return structuredClone(found);
}

/** A built-in id, or a path to a JSON profile (anything with a slash or ending in .json). */
export async function resolveProfile(idOrPath: string): Promise<Profile> {
  if (idOrPath.endsWith('.json') || idOrPath.includes('/') || idOrPath.includes('\\')) {
    const profile = await loadProfileFile(idOrPath);
    // A house profile that reused a built-in id would make two different rule sets answer to one name in reports.
    if (BUILTIN_PROFILES.some((p) => p.id === profile.id)) {
      throw new EarmarkError(
        'invalid_profile',
        `${idOrPath}: id "${profile.id}" is a built-in profile's id; give the house profile its own id`,
        { field: 'id' },
      );
    }
    return profile;
  }
  return builtinProfile(idOrPath);
}
