// Where each speaker role sits, and the loudness weight that follows from it.
//
// ITU-R BS.1770-5 Annex 3 (Table 4) weights a channel by its loudspeaker's position: 1.41 for
// azimuth 60-120 degrees either side with elevation under 30 degrees, 1.0 elsewhere, LFE
// excluded. The positions are the nominal ones of ITU-R BS.2051 (its loudspeaker labels, e.g.
// M+110 = middle layer, 110 degrees left), as the ITU-R BS.2094 common definitions give them
// (read in ebu/libadm resources/common_definitions.xml). Azimuth is positive to the left.

import type { ChannelLabel } from './audio.ts';

export interface SpeakerPosition {
  /** The ITU-R BS.2051 loudspeaker label of the nominal position. */
  bs2051: string;
  azimuthDegrees: number;
  elevationDegrees: number;
}

const at = (bs2051: string, azimuthDegrees: number, elevationDegrees: number): SpeakerPosition => ({
  bs2051,
  azimuthDegrees,
  elevationDegrees,
});

/**
 * Nominal position per role; null for the LFE channels (excluded from loudness) and for
 * 'unknown'. Roles BS.2051 places in a range take the value its common definitions use: the
 * upper layer at 30 degrees elevation, top front at 45 and top back at 135 degrees azimuth as in
 * 7.1.4 (System J; 5.1.4's U+030/U+110 fall in the same weight zone).
 */
export const SPEAKER_POSITIONS: { readonly [L in ChannelLabel]: SpeakerPosition | null } = {
  M: at('M+000', 0, 0), // mono on the centre loudspeaker (common practice)
  L: at('M+030', 30, 0),
  R: at('M-030', -30, 0),
  C: at('M+000', 0, 0),
  LFE: null,
  LFE2: null,
  Ls: at('M+110', 110, 0),
  Rs: at('M-110', -110, 0),
  Lss: at('M+090', 90, 0),
  Rss: at('M-090', -90, 0),
  Lrs: at('M+135', 135, 0),
  Rrs: at('M-135', -135, 0),
  Lc: at('M+022', 22, 0), // BS.2094 FrontLeftOfCentre (WAVE front left of centre)
  Rc: at('M-022', -22, 0),
  Cs: at('M+180', 180, 0),
  Lw: at('M+060', 60, 0),
  Rw: at('M-060', -60, 0),
  Lsc: at('M+SC', 25, 0), // screen edge: BS.2094 gives 25 degrees, locked to the screen
  Rsc: at('M-SC', -25, 0),
  Tc: at('T+000', 0, 90),
  Tfl: at('U+045', 45, 30),
  Tfc: at('U+000', 0, 30),
  Tfr: at('U-045', -45, 30),
  Tsl: at('U+090', 90, 30),
  Tsr: at('U-090', -90, 30),
  Tbl: at('U+135', 135, 30),
  Tbc: at('U+180', 180, 30),
  Tbr: at('U-135', -135, 30),
  Bfl: at('B+045', 45, -30),
  Bfc: at('B+000', 0, -30),
  Bfr: at('B-045', -45, -30),
  unknown: null,
};

/** The LFE channels: left out of the loudness sum (BS.1770-5 Annex 1 and Annex 3). */
export function isLowFrequencyChannel(label: ChannelLabel): boolean {
  return label === 'LFE' || label === 'LFE2';
}

const SIDE_WEIGHT = 1.41;

/**
 * ITU-R BS.1770-5 Annex 3 Table 4: 1.41 for |elevation| < 30 and 60 <= |azimuth| <= 120, else 1.0.
 * The closed bounds at 60 and 120 and the absolute elevation are from memory (the check-values
 * sheet has "azimuth 60-120, elevation < 30"); no position used here lies below -30 degrees.
 */
export function weightAtPosition(azimuthDegrees: number, elevationDegrees: number): number {
  const wrapped = ((((azimuthDegrees + 180) % 360) + 360) % 360) - 180;
  const azimuth = Math.abs(wrapped);
  return Math.abs(elevationDegrees) < 30 && azimuth >= 60 && azimuth <= 120 ? SIDE_WEIGHT : 1;
}

/** A role's loudness weight: 0 for LFE, from its position otherwise; 1.0 where nothing says where it is. */
export function loudnessWeight(label: ChannelLabel): number {
  if (isLowFrequencyChannel(label)) return 0;
  const position = SPEAKER_POSITIONS[label];
  return position ? weightAtPosition(position.azimuthDegrees, position.elevationDegrees) : 1;
}

/**
 * Named layouts a file without a channel mask or chna chunk can be declared as, in channel order.
 * 5.1, 7.1, 5.1.4 and 7.1.4 follow the WAVE channel-mask bit order (ksmedia.h SPEAKER_*; 0x3F,
 * 0x63F, 0x2D60F, 0x2D63F). 22.2 follows ITU-R BS.2051 System H (9+10+3) as the BS.2094 common
 * pack AP_00010009 lists it. 9.1.6 is in neither: our order puts the wide pair where the WAVE
 * front-of-centre pair goes (bits 6-7) and the top sides last, as ffmpeg orders its 9.1.6.
 */
export const LAYOUTS = {
  '1.0': ['M'],
  '2.0': ['L', 'R'],
  '5.1': ['L', 'R', 'C', 'LFE', 'Ls', 'Rs'],
  '7.1': ['L', 'R', 'C', 'LFE', 'Lrs', 'Rrs', 'Lss', 'Rss'],
  '5.1.4': ['L', 'R', 'C', 'LFE', 'Ls', 'Rs', 'Tfl', 'Tfr', 'Tbl', 'Tbr'],
  '7.1.4': ['L', 'R', 'C', 'LFE', 'Lrs', 'Rrs', 'Lss', 'Rss', 'Tfl', 'Tfr', 'Tbl', 'Tbr'],
  '9.1.6': ['L', 'R', 'C', 'LFE', 'Lrs', 'Rrs', 'Lw', 'Rw', 'Lss', 'Rss', 'Tfl', 'Tfr', 'Tbl', 'Tbr', 'Tsl', 'Tsr'],
  '22.2': [
    'Lw',
    'Rw',
    'C',
    'LFE',
    'Lrs',
    'Rrs',
    'L',
    'R',
    'Cs',
    'LFE2',
    'Lss',
    'Rss',
    'Tfl',
    'Tfr',
    'Tfc',
    'Tc',
    'Tbl',
    'Tbr',
    'Tsl',
    'Tsr',
    'Tbc',
    'Bfc',
    'Bfl',
    'Bfr',
  ],
} as const satisfies Record<string, readonly ChannelLabel[]>;

export type LayoutName = keyof typeof LAYOUTS;
export const LAYOUT_NAMES = Object.keys(LAYOUTS) as LayoutName[];

export function isLayoutName(value: string): value is LayoutName {
  return Object.hasOwn(LAYOUTS, value);
}
