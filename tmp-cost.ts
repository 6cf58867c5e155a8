const cpuMs = () => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
};
import type { ChannelLabel, PcmBlock } from './src/analysis/audio.ts';
import { DownmixMeter } from './src/analysis/downmix.ts';
import { LoudnessMeter } from './src/analysis/loudness.ts';
import { programmeBlocks } from './src/selftest/signals.ts';

const rate = 48000;
for (const labels of [
  ['L', 'R'],
  ['L', 'R', 'C', 'LFE', 'Ls', 'Rs'],
] as ChannelLabel[][]) {
  const info = { sampleRate: rate, channels: labels.length, channelLabels: labels };
  const blocks: PcmBlock[] = [...programmeBlocks({ sampleRate: rate, channels: labels.length, seconds: 60, seed: 3 })];
  const cases: Record<string, () => { push(b: PcmBlock): void; result(): unknown }> = {
    loudness: () => new LoudnessMeter(info),
    downmixOff: () => new DownmixMeter(info, {}),
    downmix: () => new DownmixMeter(info, { enabled: true }),
    channelLoudness: () => new DownmixMeter(info, { enabled: true, channelLoudness: true }),
  };
  const times: Record<string, number[]> = {};
  for (let run = 0; run < 5; run++)
    for (const [name, make] of Object.entries(cases)) {
      const meter = make();
      const start = cpuMs();
      for (const b of blocks) meter.push(b);
      meter.result();
      (times[name] ??= []).push(cpuMs() - start);
    }
  const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)];
  console.log(
    labels.length,
    'ch, ms per audio minute (median of 5):',
    Object.fromEntries(Object.entries(times).map(([k, v]) => [k, +median(v).toFixed(1)])),
  );
}
