// Cross-check against an independent implementation: the npm package ebur128-wasm (a Rust
// BS.1770 / EBU R 128 meter compiled to WebAssembly). Tolerances: integrated +-0.1 LU, true peak
// +-0.2 dB (the two use different interpolation filters; BS.1770-5 Annex 2 only gives an example).
import { beforeAll, describe, expect, it } from 'vitest';
import { LoudnessMeter } from '../../src/analysis/loudness.ts';
import { TruePeakMeter } from '../../src/analysis/true-peak.ts';
import { programmeBlocks } from '../../src/selftest/signals.ts';
import { loadEbur128Reference, type Ebur128Reference } from '../helpers/ebur128-reference.ts';

let reference: Ebur128Reference;
beforeAll(async () => {
  reference = await loadEbur128Reference();
});

describe('agreement with ebur128-wasm on programme-like signals', () => {
  for (const sampleRate of [44100, 48000, 96000]) {
    for (const channels of [1, 2]) {
      it(`${sampleRate} Hz, ${channels === 1 ? 'mono' : 'stereo'}: integrated within 0.1 LU, true peak within 0.2 dB`, () => {
        const [block] = [
          ...programmeBlocks({
            sampleRate,
            channels,
            seconds: 20,
            seed: sampleRate + channels,
            blockFrames: 1 << 23,
            levelDbfs: -24,
          }),
        ];
        const info = {
          sampleRate,
          channels,
          channelLabels: channels === 1 ? ['M' as const] : ['L' as const, 'R' as const],
        };
        const loudness = new LoudnessMeter(info);
        const truePeak = new TruePeakMeter(info);
        loudness.push(block);
        truePeak.push(block);
        const [left, right] = block.channelData;
        const refIntegrated =
          channels === 1
            ? reference.integratedMono(sampleRate, left)
            : reference.integratedStereo(sampleRate, left, right);
        const refTruePeak =
          channels === 1 ? reference.truePeakMono(sampleRate, left) : reference.truePeakStereo(sampleRate, left, right);
        expect(Math.abs(loudness.result().integratedLufs! - refIntegrated)).toBeLessThan(0.1);
        expect(Math.abs(truePeak.result().truePeakDbtp! - refTruePeak)).toBeLessThan(0.2);
      });
    }
  }
});
