const cpuMs = () => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
};
import type { PcmBlock } from './src/analysis/audio.ts';
import { DownmixMeter } from './src/analysis/downmix.ts';
import { LoudnessMeter } from './src/analysis/loudness.ts';
import { programmeBlocks } from './src/selftest/signals.ts';
const rate = 48000;
const blocks: PcmBlock[] = [...programmeBlocks({ sampleRate: rate, channels: 2, seconds: 60, seed: 3 })];
const mono = blocks.map((b) => ({ channelData: [b.channelData[0]], frames: b.frames }));
const stereoInfo = { sampleRate: rate, channels: 2, channelLabels: ['L', 'R'] as const };
const cases: Record<string, () => number> = {
  stereoLoudness: () => {
    const m = new LoudnessMeter({ ...stereoInfo, channelLabels: ['L', 'R'] });
    const s = cpuMs();
    for (const b of blocks) m.push(b);
    m.result();
    return cpuMs() - s;
  },
  monoLoudness: () => {
    const m = new LoudnessMeter({ sampleRate: rate, channels: 1, channelLabels: ['M'] });
    const s = cpuMs();
    for (const b of mono) m.push(b);
    m.result();
    return cpuMs() - s;
  },
  downmix: () => {
    const m = new DownmixMeter({ ...stereoInfo, channelLabels: ['L', 'R'] }, { enabled: true });
    const s = cpuMs();
    for (const b of blocks) m.push(b);
    m.result();
    return cpuMs() - s;
  },
};
const times: Record<string, number[]> = {};
for (let r = 0; r < 7; r++) for (const [k, f] of Object.entries(cases)) (times[k] ??= []).push(f());
console.log(Object.fromEntries(Object.entries(times).map(([k, v]) => [k, v.map((x) => x.toFixed(0)).join(' ')])));
