// Time-located findings of the meters. Positions are sample-accurate (frames from the start
// of the stream); seconds are derived from them by the runner's sample rate.

export type EventKind =
  | 'clipping' // run of consecutive samples at or near full scale
  | 'dropout' // short abrupt loss inside programme: digital zero or a fall to a noise floor (dropouts.ts)
  | 'silence' // below a level for at least a duration (one channel, or all together)
  | 'true_peak_over' // true peak above the configured ceiling
  | 'reconstructed_over' // reconstructed (band-limited) peak above the configured ceiling (reconstructed-peak.ts)
  | 'dead_channel' // digital silence for the whole stream
  | 'duplicate_channel' // a channel that is an identical copy of another
  | 'inverted_channel' // a channel that is a polarity-inverted copy of another
  | 'phase_problem' // a window of strongly negative inter-channel correlation
  | 'loud_short_term' // short-term loudness (3 s) above a configured limit
  | 'loud_momentary' // momentary loudness (400 ms) above a configured limit
  | 'downmix_clipping'; // run of samples of the Lo/Ro downmix at or over full scale (downmix.ts)

export interface AnalysisEvent {
  kind: EventKind;
  /** Channel index, or null when the event concerns all channels together. */
  channel: number | null;
  /** For pair events (duplicate, inverted, phase): the other channel. */
  otherChannel?: number;
  startFrame: number;
  /** Exclusive end. */
  endFrame: number;
  startSeconds: number;
  endSeconds: number;
  /** Most extreme level inside the event, in the unit the kind uses (dBFS, dBTP, correlation). */
  peakValue?: number;
  /** Number of raw detections merged into this event (e.g. overs in one span). */
  count?: number;
}

/**
 * How every meter result lists its events: at most the meter's cap of them kept, every one found
 * counted. `E` narrows the kind where a meter has one.
 */
export interface EventList<E extends AnalysisEvent = AnalysisEvent> {
  /** The kept events, in the order the meter documents. */
  events: E[];
  /** Every event found, kept or not. */
  eventsTotal: number;
  /** True when some found events were not kept (eventsTotal > events.length). */
  eventsTruncated: boolean;
  /** Every event found, kept or not, by kind (sums to eventsTotal). */
  eventsByKind: Partial<Record<EventKind, number>>;
}

/** Meters keep at most this many events unless told otherwise. */
export const DEFAULT_MAX_EVENTS = 10_000;

/** An event as a meter finds it; the log adds the seconds. */
export type FoundEvent = Omit<AnalysisEvent, 'startSeconds' | 'endSeconds'>;

/** Caps the events a meter keeps; counts continue past the cap so reports stay honest. */
export class EventLog {
  readonly events: AnalysisEvent[] = [];
  total = 0;
  private readonly byKind: Partial<Record<EventKind, number>> = {};

  constructor(
    private readonly sampleRate: number,
    private readonly maxEvents = DEFAULT_MAX_EVENTS,
  ) {}

  add(event: FoundEvent): void {
    this.total++;
    this.byKind[event.kind] = (this.byKind[event.kind] ?? 0) + 1;
    if (this.events.length >= this.maxEvents) return;
    this.events.push({
      ...event,
      startSeconds: event.startFrame / this.sampleRate,
      endSeconds: event.endFrame / this.sampleRate,
    });
  }

  get truncated(): boolean {
    return this.total > this.events.length;
  }

  /** The kept events (in the order given, else as added) with the count of all found. */
  list(order?: (a: AnalysisEvent, b: AnalysisEvent) => number): EventList {
    const events = order ? [...this.events].sort(order) : this.events;
    return { events, eventsTotal: this.total, eventsTruncated: this.truncated, eventsByKind: { ...this.byKind } };
  }
}

/** By start frame. */
export function byStart(a: FoundEvent, b: FoundEvent): number {
  return a.startFrame - b.startFrame;
}

/** By start frame, then channel (all-channel events first). */
export function byStartThenChannel(a: FoundEvent, b: FoundEvent): number {
  return a.startFrame - b.startFrame || (a.channel ?? -1) - (b.channel ?? -1);
}

/** By end frame, then channel (all-channel events first). */
export function byEndThenChannel(a: FoundEvent, b: FoundEvent): number {
  return a.endFrame - b.endFrame || (a.channel ?? -1) - (b.channel ?? -1);
}
