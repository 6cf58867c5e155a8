// `node bin/run.js bench/downmix-cost.ts [seconds]`: what the fold-down readings cost, in ms of CPU
// per audio minute, beside the programme loudness meter on the same blocks (generated programme,
// stereo and 5.1, in memory). Medians of alternating rounds; a benchmark, not a test.
import type { ChannelLabel, Meter, PcmBlock } from '../src/analysis/audio.ts';
import { DownmixMeter } from '../src/analysis/downmix.ts';
import { LoudnessMeter } from '../src/analysis/loudness.ts';
import { programmeBlocks } from '../src/selftest/signals.ts';

// CPU time, not wall time: the machine is shared, and waiting for a core is not the meter's cost.
const cpuMs = () => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
};
const seconds = Number(process.argv[2] ?? 60);
const rate = 48000;
const ROUNDS = 5;

for (const labels of [
  ['L', 'R'],
  ['L', 'R', 'C', 'LFE', 'Ls', 'Rs'],
] as ChannelLabel[][]) {
  const info = { sampleRate: rate, channels: labels.length, channelLabels: labels };
  const blocks: PcmBlock[] = [...programmeBlocks({ sampleRate: rate, channels: labels.length, seconds, seed: 3 })];
  const cases: Record<string, () => Meter<unknown>> = {
    loudness: () => new LoudnessMeter(info),
    'downmix off': () => new DownmixMeter(info, {}),
    downmix: () => new DownmixMeter(info, { enabled: true }),
    'downmix + channel loudness': () => new DownmixMeter(info, { enabled: true, channelLoudness: true }),
  };
  const times: Record<string, number[]> = {};
  for (let round = 0; round < ROUNDS; round++)
    for (const [name, make] of Object.entries(cases)) {
      const meter = make();
      const start = cpuMs();
      for (const b of blocks) meter.push(b);
      meter.result();
      times[name] = [...(times[name] ?? []), ((cpuMs() - start) * 60) / seconds];
    }
  const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
  console.log(`${labels.join(' ')}: ms per audio minute, median of ${ROUNDS}`);
  for (const [name, xs] of Object.entries(times)) console.log(`  ${name.padEnd(28)} ${median(xs).toFixed(1)}`);
}
