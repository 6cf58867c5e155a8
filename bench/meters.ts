// `node bin/run.js bench/meters.ts [file] [seconds]`: per-meter push time on blocks decoded into
// memory once (so decode is timed separately). Medians of alternating rounds; a benchmark, not a test.
import { openAudioFile } from '../src/decode/index.ts';
import type { PcmBlock, StreamInfo, Meter } from '../src/analysis/audio.ts';
import { AnalysisRunner, METER_NAMES, METERS } from '../src/analysis/runner.ts';

import { ReconstructedPeakMeter as RefReconstructedPeak } from '../test/helpers/reference-meters/reconstructed-peak.ts';
import { DropoutMeter as RefDropouts } from '../test/helpers/reference-meters/dropouts.ts';
import { EnvelopeBuilder } from '../src/analysis/envelope.ts';

const [file, secondsArg, only] = process.argv.slice(2);
const limitSeconds = Number(secondsArg ?? 120);
const decodeStarted = performance.now();
const decoded = await openAudioFile(file);
const info: StreamInfo = {
  sampleRate: decoded.format.sampleRate,
  channels: decoded.format.channels,
  channelLabels: decoded.format.channelLabels,
};
const blocks: PcmBlock[] = [];
let frames = 0;
for await (const block of decoded.blocks) {
  blocks.push({ frames: block.frames, channelData: block.channelData.map((c) => c.slice()) });
  frames += block.frames;
  if (frames >= limitSeconds * info.sampleRate) break;
}
const audioSeconds = frames / info.sampleRate;
console.log(
  `${audioSeconds.toFixed(0)} s of audio decoded+copied in ${((performance.now() - decodeStarted) / 1000).toFixed(2)} s`,
);

// Every registered meter by its registry name (runner.ts METERS), then the runner of them all.
const makers: Record<string, () => Meter<unknown>> = {
  ...Object.fromEntries(METER_NAMES.map((name) => [name, () => METERS[name].create(info, {})])),
  runner: () => new AnalysisRunner(info),
  // The straightforward implementations the optimised meters replaced, for side-by-side ratios.
  'reconstructedPeak ref': () => new RefReconstructedPeak(info),
  'dropouts ref': () => new RefDropouts(info),
  // The shared pass alone (each meter above computes its own when pushed alone; the runner computes it once).
  envelope: () => {
    const builder = new EnvelopeBuilder();
    return {
      push: (b: PcmBlock) => {
        builder.build(b);
      },
      result: () => null,
    };
  },
};
// A name picks that meter alone, else every meter whose name starts with it.
if (only)
  for (const name of Object.keys(makers))
    if (only in makers ? name !== only : !name.startsWith(only)) delete makers[name];
const times: Record<string, number[]> = {};
for (let round = 0; round < 7; round++) {
  for (const [name, make] of Object.entries(makers)) {
    const meter = make();
    const t0 = performance.now();
    for (const block of blocks) meter.push(block);
    meter.result();
    (times[name] ??= []).push(performance.now() - t0);
  }
}
// A registered meter's line ends with its registry thread cost, which a stereo file's reading updates.
function registryCost(name: string): string {
  const meter = METER_NAMES.find((n) => n === name);
  return meter ? `  (registry ${METERS[meter].costMsPerMinute})` : '';
}
for (const [name, t] of Object.entries(times)) {
  const ms = Math.min(...t); // the least disturbed round: other processes share the cores
  console.log(
    `${name.padEnd(11)} ${((ms * 60) / audioSeconds).toFixed(1).padStart(6)} ms per audio minute  ${((audioSeconds * 1000) / ms).toFixed(0).padStart(6)}x realtime${registryCost(name)}`,
  );
}
