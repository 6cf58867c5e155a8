// A whole decoded stream as one array per channel (the blocks copied, as a decoder may reuse them).
import type { DecodedAudio } from '../../src/decode/types.ts';

export async function decodeAll(d: DecodedAudio): Promise<Float32Array[]> {
  const parts: Float32Array[][] = [];
  for await (const b of d.blocks) parts.push(b.channelData.map((c) => Float32Array.from(c.subarray(0, b.frames))));
  return Array.from({ length: d.format.channels }, (_, c) => {
    const out = new Float32Array(parts.reduce((n, p) => n + p[c].length, 0));
    let at = 0;
    for (const p of parts) {
      out.set(p[c], at);
      at += p[c].length;
    }
    return out;
  });
}
