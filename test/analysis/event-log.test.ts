// The one event-list contract every meter result follows (src/analysis/events.ts): at most the
// cap kept, every event found counted, in total and by kind.
import { describe, expect, it } from 'vitest';
import { EventLog } from '../../src/analysis/events.ts';

describe('EventLog', () => {
  it('keeps the first events up to its cap and counts every one, in total and by kind', () => {
    const log = new EventLog(48_000, 2);
    for (let i = 0; i < 5; i++) {
      log.add({
        kind: i % 2 ? 'loud_momentary' : 'loud_short_term',
        channel: null,
        startFrame: i * 10,
        endFrame: i * 10 + 5,
      });
    }
    const list = log.list();
    expect(list.events.map((e) => e.startFrame)).toEqual([0, 10]);
    expect(list.events[1].startSeconds).toBe(10 / 48_000);
    expect(list.eventsTotal).toBe(5);
    expect(list.eventsTruncated).toBe(true);
    // Counts by kind include the events past the cap: 3 short-term (0, 20, 40) and 2 momentary.
    expect(list.eventsByKind).toEqual({ loud_short_term: 3, loud_momentary: 2 });
  });

  it('under its cap: nothing truncated, counts equal the kept events', () => {
    const log = new EventLog(44_100);
    log.add({ kind: 'clipping', channel: 1, startFrame: 7, endFrame: 10 });
    expect(log.list()).toMatchObject({ eventsTotal: 1, eventsTruncated: false, eventsByKind: { clipping: 1 } });
  });
});
