// Runs of samples by the rules documented in the meters' headers (clipping.ts, silence.ts,
// dropouts.ts) and the README, found with plain loops over whole signals.

export interface Run {
  start: number;
  end: number;
}
export interface RunEvent {
  channel: number | null;
  startFrame: number;
  endFrame: number;
  peakValue?: number;
  count?: number;
}

const db20 = (linear: number) => 20 * Math.log10(linear);
/** Loudest |x| of the given channels over frames [from, to), clamped to the stream. */
export function loudest(channels: Float32Array[], from: number, to: number): number {
  let m = 0;
  for (const x of channels)
    for (let i = Math.max(0, from); i < Math.min(to, x.length); i++) m = Math.max(m, Math.abs(x[i]));
  return m;
}

/** Maximal runs of frames where `inRun` holds. */
export function runsWhere(frames: number, inRun: (i: number) => boolean): Run[] {
  const runs: Run[] = [];
  for (let i = 0; i < frames; i++) {
    if (!inRun(i)) continue;
    const start = i;
    while (i < frames && inRun(i)) i++;
    runs.push({ start, end: i });
  }
  return runs;
}

/** Clipping: at least minRun consecutive samples of one polarity with |x| >= threshold; count = length. */
export function referenceClipping(channels: Float32Array[], thresholdLinear: number, minRun: number): RunEvent[] {
  return channels.flatMap((x, channel) => {
    const positive = runsWhere(x.length, (i) => x[i] >= thresholdLinear);
    const negative = runsWhere(x.length, (i) => x[i] <= -thresholdLinear);
    return [...positive, ...negative]
      .filter((r) => r.end - r.start >= minRun)
      .map((r) => ({
        channel,
        startFrame: r.start,
        endFrame: r.end,
        peakValue: db20(loudest([x], r.start, r.end)),
        count: r.end - r.start,
      }));
  });
}

export interface SilenceReading {
  events: RunEvent[];
  silentFrames: number[];
  headFrames: number;
  tailFrames: number;
  allSilent: boolean;
  longestGapFrames: number;
}

/**
 * Silence: |x| below the threshold, per sample. Events for runs of at least the minimum, per channel
 * and for all channels together; head, tail and the longest internal gap (at least 1 ms, sound on
 * both sides) from the all-channel runs of any length.
 */
export function referenceSilence(
  channels: Float32Array[],
  sampleRate: number,
  thresholdDbfs: number,
  minSeconds: number,
): SilenceReading {
  const threshold = 10 ** (thresholdDbfs / 20);
  const frames = channels[0].length;
  const minFrames = Math.max(1, Math.round(minSeconds * sampleRate));
  const regions = (xs: Float32Array[], channel: number | null) =>
    runsWhere(frames, (i) => xs.every((x) => Math.abs(x[i]) < threshold))
      .filter((r) => r.end - r.start >= minFrames)
      .map((r): RunEvent => {
        const peak = loudest(xs, r.start, r.end);
        return { channel, startFrame: r.start, endFrame: r.end, ...(peak > 0 ? { peakValue: db20(peak) } : {}) };
      });
  const all = runsWhere(frames, (i) => channels.every((x) => Math.abs(x[i]) < threshold));
  const head = all.find((r) => r.start === 0);
  const tail = all.find((r) => r.end === frames);
  const gaps = all.filter(
    (r) => r.start > 0 && r.end < frames && r.end - r.start >= Math.max(1, Math.round(0.001 * sampleRate)),
  );
  const perChannel = channels.map((x, c) => regions([x], c));
  return {
    events: [...perChannel.flat(), ...(channels.length > 0 ? regions(channels, null) : [])],
    silentFrames: perChannel.map((events) => events.reduce((s, e) => s + e.endFrame - e.startFrame, 0)),
    headFrames: head ? head.end : 0,
    tailFrames: tail ? frames - tail.start : 0,
    allSilent: frames > 0 && head !== undefined && head.end === frames,
    longestGapFrames: gaps.reduce((m, r) => Math.max(m, r.end - r.start), 0),
  };
}

export interface DropoutSettings {
  minSeconds: number;
  maxSeconds: number;
  thresholdDbfs: number;
  minDropDb: number;
  maxFadeDb: number;
}
export const DROPOUT_DEFAULTS: DropoutSettings = {
  minSeconds: 0.001,
  maxSeconds: 10,
  thresholdDbfs: -60,
  minDropDb: 20,
  maxFadeDb: 20,
};

/**
 * Dropouts, rules 1-5 of src/analysis/dropouts.ts: a near-silent run (ended by sound) of
 * minimum..maximum length, entered abruptly from sound (1 ms edge window at least minDropDb above
 * the threshold, and at most maxFadeDb below the 30 ms before it), and left for sound (the 1 ms
 * from its end). A channel's run is left out when an all-channel run of at least the minimum
 * starts and ends within 1 ms inside it. Mono has only the all-channel runs.
 */
export function referenceDropouts(
  channels: Float32Array[],
  sampleRate: number,
  s: DropoutSettings = DROPOUT_DEFAULTS,
): RunEvent[] {
  const threshold = 10 ** (s.thresholdDbfs / 20);
  const sounding = 10 ** ((s.thresholdDbfs + s.minDropDb) / 20);
  const minFrames = Math.max(1, Math.round(s.minSeconds * sampleRate));
  const maxFrames = Math.round(s.maxSeconds * sampleRate);
  const edge = Math.max(1, Math.round(0.001 * sampleRate));
  const fade = Math.max(1, Math.round(0.03 * sampleRate));
  const frames = channels[0].length;
  const quietRuns = (xs: Float32Array[]) =>
    runsWhere(frames, (i) => xs.every((x) => Math.abs(x[i]) < threshold)).filter(
      (r) => r.end < frames && r.end - r.start >= minFrames,
    );
  const isDropout = (xs: Float32Array[], r: Run) => {
    const edgeLevel = loudest(xs, r.start - edge, r.start);
    const before = loudest(xs, r.start - edge - fade, r.start - edge);
    return (
      r.end - r.start <= maxFrames &&
      edgeLevel >= sounding &&
      before <= edgeLevel * 10 ** (s.maxFadeDb / 20) &&
      loudest(xs, r.end, r.end + edge) >= sounding
    );
  };
  const event = (xs: Float32Array[], channel: number | null, r: Run): RunEvent => {
    const peak = loudest(xs, r.start, r.end);
    return { channel, startFrame: r.start, endFrame: r.end, ...(peak > 0 ? { peakValue: db20(peak) } : {}) };
  };
  const allRuns = quietRuns(channels);
  const events = allRuns.filter((r) => isDropout(channels, r)).map((r) => event(channels, null, r));
  if (channels.length < 2) return events;
  channels.forEach((x, c) => {
    for (const r of quietRuns([x])) {
      const covered = allRuns.some(
        (a) => a.start >= r.start && a.start - r.start < edge && a.end <= r.end && r.end - a.end < edge,
      );
      if (!covered && isDropout([x], r)) events.push(event([x], c, r));
    }
  });
  return events;
}
