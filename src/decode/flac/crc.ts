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

/** CRC-16 of b[from, to), one byte at a time: the definition the tables below speed up. */
export function crc16Bytewise(b: Uint8Array, from: number, to: number): number {
  let c = 0;
  for (let i = from; i < to; i++) c = ((c << 8) & 0xffff) ^ CRC16_TABLE[(c >> 8) ^ b[i]];
  return c;
}

// Slicing by four: T[k][v] is the CRC of byte v followed by k zero bytes; the CRC is linear, so
// four bytes take four independent lookups.
const zeroByte = (t: Uint16Array): Uint16Array => t.map((c) => ((c << 8) & 0xffff) ^ CRC16_TABLE[c >> 8]);
const T1 = zeroByte(CRC16_TABLE);
const T2 = zeroByte(T1);
const T3 = zeroByte(T2);

/** CRC-16 of b[from, to). */
export function crc16(b: Uint8Array, from: number, to: number): number {
  let c = 0;
  let i = from;
  for (; i + 3 < to; i += 4) c = T3[(c >> 8) ^ b[i]] ^ T2[(c & 0xff) ^ b[i + 1]] ^ T1[b[i + 2]] ^ CRC16_TABLE[b[i + 3]];
  for (; i < to; i++) c = ((c << 8) & 0xffff) ^ CRC16_TABLE[(c >> 8) ^ b[i]];
  return c;
}
