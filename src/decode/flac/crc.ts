// The two FLAC frame checksums (RFC 9639 section 9.1.8 and 9.3).

/** CRC-8, polynomial x^8 + x^2 + x + 1 (0x07), initial 0. */
export const CRC8_TABLE = Uint8Array.from({ length: 256 }, (_, i) => {
  let c = i;
  for (let k = 0; k < 8; k++) c = c & 0x80 ? ((c << 1) ^ 0x07) & 0xff : (c << 1) & 0xff;
  return c;
});

/** CRC-16, polynomial x^16 + x^15 + x^2 + 1 (0x8005), initial 0. */
export const CRC16_TABLE = Uint16Array.from({ length: 256 }, (_, i) => {
  let c = i << 8;
  for (let k = 0; k < 8; k++) c = c & 0x8000 ? (c << 1) ^ 0x8005 : c << 1;
  return c & 0xffff;
});

// Slicing by two: the table for a byte followed by one more (its CRC shifted through 8 zero bits).
const CRC16_TABLE_HI = Uint16Array.from(CRC16_TABLE, (c) => ((c << 8) & 0xffff) ^ CRC16_TABLE[c >> 8]);

/** CRC-16 of b[from, to). */
export function crc16(b: Uint8Array, from: number, to: number): number {
  let c = 0;
  let i = from;
  for (; i + 1 < to; i += 2) {
    const x = c ^ ((b[i] << 8) | b[i + 1]);
    c = CRC16_TABLE_HI[x >> 8] ^ CRC16_TABLE[x & 0xff];
  }
  if (i < to) c = ((c << 8) & 0xffff) ^ CRC16_TABLE[(c >> 8) ^ b[i]];
  return c;
}
