// Channel relations by the rules documented in src/analysis/channel-relations.ts: uncentred
// correlation r = sum(ab) / sqrt(sum(a^2) sum(b^2)); 3 s phase windows from the stream start (a last
// partial window judged when it holds at least half a window), flagged when both channels reach
// -50 dBFS RMS in it and r < -0.5, consecutive flagged windows one event; LFE pairs not judged;
// exact copies (a = b, a = -b) and near copies (|r| > 0.9999, RMS within 0.01 dB); dead channels.
import type { ChannelPairRelation } from '../../../src/analysis/channel-relations.ts';

/** The document's per-pair shape (a type only: the readings are computed here). */
export type PairReading = ChannelPairRelation;

export interface RelationEvent {
  kind: 'dead_channel' | 'duplicate_channel' | 'inverted_channel' | 'phase_problem';
  channel: number;
  otherChannel?: number;
  startFrame: number;
  endFrame: number;
  peakValue?: number;
  count?: number;
}

const dot = (a: Float32Array, b: Float32Array, from = 0, to = a.length) => {
  let s = 0;
  for (let i = from; i < to; i++) s += a[i] * b[i];
  return s;
};

export function referenceRelations(
  channels: Float32Array[],
  labels: readonly string[],
  sampleRate: number,
): { deadChannels: number[]; pairs: PairReading[]; events: RelationEvent[] } {
  const frames = channels[0].length;
  const windowFrames = Math.round(3 * sampleRate);
  const floorPower = 10 ** (-50 / 10);
  const energy = channels.map((x) => dot(x, x));
  const deadChannels = channels.flatMap((_, c) => (frames > 0 && energy[c] === 0 ? [c] : []));
  const events: RelationEvent[] = deadChannels.map((c) => ({
    kind: 'dead_channel',
    channel: c,
    startFrame: 0,
    endFrame: frames,
  }));
  const pairs: PairReading[] = [];
  for (let a = 0; a < channels.length; a++) {
    for (let b = a + 1; b < channels.length; b++) {
      const [xa, xb] = [channels[a], channels[b]];
      const phaseChecked = ![labels[a], labels[b]].some((l) => l === 'LFE' || l === 'LFE2');
      let minWindowCorrelation: number | null = null,
        phaseProblemWindows = 0;
      let open: (RelationEvent & { peakValue: number; count: number }) | null = null;
      for (let start = 0; start < frames; start += windowFrames) {
        const end = Math.min(frames, start + windowFrames);
        if (!phaseChecked || 2 * (end - start) < windowFrames) continue;
        const [ea, eb] = [dot(xa, xa, start, end), dot(xb, xb, start, end)];
        const r = dot(xa, xb, start, end) / Math.sqrt(ea * eb);
        const judged = ea / (end - start) >= floorPower && eb / (end - start) >= floorPower;
        if (judged) minWindowCorrelation = Math.min(minWindowCorrelation ?? Infinity, r);
        if (judged && r < -0.5) {
          phaseProblemWindows++;
          if (open) {
            open.endFrame = end;
            open.count++;
            open.peakValue = Math.min(open.peakValue, r);
          } else
            open = {
              kind: 'phase_problem',
              channel: a,
              otherChannel: b,
              startFrame: start,
              endFrame: end,
              peakValue: r,
              count: 1,
            };
        } else if (open) {
          events.push(open);
          open = null;
        }
      }
      if (open) events.push(open);
      const withSignal = energy[a] > 0 && energy[b] > 0;
      const correlation = withSignal ? dot(xa, xb) / Math.sqrt(energy[a] * energy[b]) : null;
      const sameLevel = withSignal && Math.abs(10 * Math.log10(energy[a] / energy[b])) <= 0.01;
      const identical = withSignal && xa.every((v, i) => v === xb[i]);
      const inverted = withSignal && xa.every((v, i) => v === -xb[i]);
      const nearIdentical = correlation !== null && sameLevel && correlation > 0.9999;
      const nearInverted = correlation !== null && sameLevel && correlation < -0.9999;
      pairs.push({
        channel: a,
        otherChannel: b,
        correlation,
        identical,
        inverted,
        nearIdentical,
        nearInverted,
        phaseChecked,
        minWindowCorrelation,
        phaseProblemWindows,
      });
      // The later channel is the copy of the earlier one.
      const whole = {
        channel: b,
        otherChannel: a,
        startFrame: 0,
        endFrame: frames,
        ...(correlation === null ? {} : { peakValue: correlation }),
      };
      if (identical || nearIdentical) events.push({ kind: 'duplicate_channel', ...whole });
      if (inverted || nearInverted) events.push({ kind: 'inverted_channel', ...whole });
    }
  }
  return { deadChannels, pairs, events };
}
