// Blocks shared between the decoding thread and the meter threads, in one SharedArrayBuffer:
// a ring of slots, each holding a block's samples and its envelope. The main thread fills the
// next free slot and publishes it with one atomic store; every meter thread reads the slot in
// place and releases it with another. No copy per thread, no message per block, and a thread with
// nothing to do sleeps on a futex instead of going round its event loop.
//
// Ordering: plain writes to a slot happen before the Atomics.store that publishes it, and a reader
// reads the slot only after an Atomics.load sees it published (the JavaScript memory model's
// synchronizes-with), so a reader never sees a half-written block. The same holds for releases.

import type { PcmBlock } from '../analysis/audio.ts';
import { ENVELOPE_CHUNK_FRAMES, type BlockEnvelope } from '../analysis/envelope.ts';

/** Slots in the ring: the writer may be this many blocks ahead of the slowest reader, less one. */
export const RING_SLOTS = 4;
export const MAX_RING_READERS = 8;

// Control words (Int32): blocks published, the run's state, a counter both of them bump (what
// readers sleep on, so no wake is lost between a check and the sleep), blocks released per reader,
// then each slot's frame count.
const PUBLISHED = 0;
const STATE = 1;
const EPOCH = 2;
const RELEASED = 3;
const SLOT_FRAMES = RELEASED + MAX_RING_READERS;
const CONTROL_BYTES = 8 * Math.ceil(((SLOT_FRAMES + RING_SLOTS) * 4) / 8);

// State 0 (the buffer's initial zero): running.
/** No block follows the last published one. */
const ENDED = 1;
/** The run was abandoned: readers stop without a result. */
const CANCELLED = 2;

/** What a thread needs to open the ring (structured-clonable: the buffer is shared, not copied). */
export interface RingShape {
  readonly buffer: SharedArrayBuffer;
  readonly channels: number;
  readonly capacityFrames: number;
  readonly withEnvelope: boolean;
}

interface Slot {
  channelData: Float32Array[];
  maxAbs: Float32Array[];
  minAbs: Float32Array[];
  blockMaxAbs: Float64Array;
}

function slotBytes(channels: number, capacityFrames: number, withEnvelope: boolean): number {
  const chunks = withEnvelope ? Math.ceil(capacityFrames / ENVELOPE_CHUNK_FRAMES) : 0;
  // Float64 first so every part stays aligned; the total is rounded to 8 bytes.
  return 8 * Math.ceil((channels * 8 + channels * capacityFrames * 4 + 2 * channels * chunks * 4) / 8);
}

export function createRing(channels: number, capacityFrames: number, withEnvelope: boolean): RingShape {
  const bytes = CONTROL_BYTES + RING_SLOTS * slotBytes(channels, capacityFrames, withEnvelope);
  return { buffer: new SharedArrayBuffer(bytes), channels, capacityFrames, withEnvelope };
}

export class BlockRing {
  private readonly control: Int32Array;
  private readonly slots: Slot[] = [];

  constructor(readonly shape: RingShape) {
    const { buffer, channels, capacityFrames, withEnvelope } = shape;
    this.control = new Int32Array(buffer, 0, CONTROL_BYTES / 4);
    const chunks = withEnvelope ? Math.ceil(capacityFrames / ENVELOPE_CHUNK_FRAMES) : 0;
    const size = slotBytes(channels, capacityFrames, withEnvelope);
    for (let s = 0; s < RING_SLOTS; s++) {
      let at = CONTROL_BYTES + s * size;
      const take = (bytesPer: number, count: number) => {
        const from = at;
        at += bytesPer * count;
        return from;
      };
      const blockMaxAbs = new Float64Array(buffer, take(8, channels), channels);
      const channelData = Array.from(
        { length: channels },
        () => new Float32Array(buffer, take(4, capacityFrames), capacityFrames),
      );
      const maxAbs = Array.from({ length: channels }, () => new Float32Array(buffer, take(4, chunks), chunks));
      const minAbs = Array.from({ length: channels }, () => new Float32Array(buffer, take(4, chunks), chunks));
      this.slots.push({ channelData, maxAbs, minAbs, blockMaxAbs });
    }
  }

  get published(): number {
    return Atomics.load(this.control, PUBLISHED);
  }
  get cancelled(): boolean {
    return Atomics.load(this.control, STATE) === CANCELLED;
  }
  released(reader: number): number {
    return Atomics.load(this.control, RELEASED + reader);
  }

  /** The arrays block `index` is written into, so a decoder can fill them in place. */
  channelDataFor(index: number): readonly Float32Array[] {
    return this.slots[index % RING_SLOTS].channelData;
  }

  // ---- writer (the main thread) ----

  /** Writes block `index` into its slot (samples the decoder already put there are not copied) and publishes it. */
  publish(index: number, block: PcmBlock, envelope: BlockEnvelope | undefined): void {
    const { capacityFrames, channels, withEnvelope } = this.shape;
    if (block.frames > capacityFrames)
      throw new RangeError(`block of ${block.frames} frames exceeds the ring's ${capacityFrames}`);
    if (withEnvelope && !envelope) throw new RangeError('the ring carries envelopes but the block has none');
    const slot = this.slots[index % RING_SLOTS];
    for (let c = 0; c < channels; c++) {
      const from = block.channelData[c],
        to = slot.channelData[c];
      if (from.buffer !== to.buffer || from.byteOffset !== to.byteOffset) to.set(from.subarray(0, block.frames));
      if (envelope) {
        slot.maxAbs[c].set(envelope.maxAbs[c].subarray(0, envelope.chunks));
        slot.minAbs[c].set(envelope.minAbs[c].subarray(0, envelope.chunks));
      }
    }
    if (envelope) slot.blockMaxAbs.set(envelope.blockMaxAbs.subarray(0, channels));
    this.control[SLOT_FRAMES + (index % RING_SLOTS)] = block.frames;
    Atomics.store(this.control, PUBLISHED, index + 1);
    this.wakeReaders();
  }

  /** Marks the end of the stream (ENDED) or an abandoned run (CANCELLED) and wakes every reader. */
  finish(cancelled = false): void {
    Atomics.store(this.control, STATE, cancelled ? CANCELLED : ENDED);
    this.wakeReaders();
  }

  private wakeReaders(): void {
    Atomics.add(this.control, EPOCH, 1);
    Atomics.notify(this.control, EPOCH);
  }

  /**
   * Resolves once slot `index` may be written: every reader has released block index - RING_SLOTS.
   * `check` runs after each wake and throws to abandon the wait (a reader failed).
   */
  async waitWritable(index: number, readers: number, check: () => void): Promise<void> {
    const needed = index - RING_SLOTS + 1;
    for (let r = 0; r < readers; r++) {
      for (let seen = this.released(r); seen < needed; seen = this.released(r)) {
        check();
        const wait = Atomics.waitAsync(this.control, RELEASED + r, seen, 100);
        if (wait.async) await wait.value;
      }
    }
    check();
  }

  /** Wakes a writer waiting on `reader` (used when that reader fails, so the writer sees it). */
  wakeWriter(reader: number): void {
    Atomics.notify(this.control, RELEASED + reader);
  }

  // ---- readers (the meter threads) ----

  /** Blocks the calling thread until block `index` is published (true) or the stream ended or was cancelled (false). */
  waitReadable(index: number): boolean {
    for (;;) {
      const epoch = Atomics.load(this.control, EPOCH);
      const state = Atomics.load(this.control, STATE);
      if (state === CANCELLED) return false;
      if (Atomics.load(this.control, PUBLISHED) > index) return true;
      // Every block was published before the end was marked.
      if (state === ENDED) return false;
      // Any publish or finish after the epoch was read changes it, so this cannot sleep through one;
      // the timeout is a second line of defence.
      Atomics.wait(this.control, EPOCH, epoch, 1000);
    }
  }

  /** Block `index` as the meters read it, in place in its slot. */
  block(index: number): PcmBlock {
    const slot = this.slots[index % RING_SLOTS];
    const frames = this.control[SLOT_FRAMES + (index % RING_SLOTS)];
    const full = frames === this.shape.capacityFrames;
    const channelData = full ? slot.channelData : slot.channelData.map((x) => x.subarray(0, frames));
    if (!this.shape.withEnvelope) return { channelData, frames };
    const envelope: BlockEnvelope = {
      chunks: Math.ceil(frames / ENVELOPE_CHUNK_FRAMES),
      maxAbs: slot.maxAbs,
      minAbs: slot.minAbs,
      blockMaxAbs: slot.blockMaxAbs,
    };
    return { channelData, frames, envelope };
  }

  release(reader: number, index: number): void {
    Atomics.store(this.control, RELEASED + reader, index + 1);
    Atomics.notify(this.control, RELEASED + reader);
  }
}
