/**
 * CRC-16 of the packet error control: polynomial 0x1021, initial value 0xFFFF, no reflection,
 * no final XOR (ECSS-E-ST-70-41C Annex B.1; the same code is known as CRC-16/CCITT-FALSE).
 *
 * Slicing-by-8 (Kounavis & Berry 2005, from memory): eight 256-entry tables fold eight octets
 * per step; table k holds the register after one octet followed by k zero octets.
 */

const TABLES: Uint16Array = buildTables();

function buildTables(): Uint16Array {
  const t = new Uint16Array(8 * 256);
  for (let i = 0; i < 256; i++) {
    let c = i << 8;
    for (let bit = 0; bit < 8; bit++)
      c = c & 0x8000 ? ((c << 1) ^ 0x1021) & 0xffff : (c << 1) & 0xffff;
    t[i] = c;
  }
  for (let k = 1; k < 8; k++) {
    for (let i = 0; i < 256; i++) {
      const prev = t[(k - 1) * 256 + i] as number;
      t[k * 256 + i] = ((prev << 8) & 0xffff) ^ (t[prev >>> 8] as number);
    }
  }
  return t;
}

/** CRC-16 (poly 0x1021, init 0xFFFF) of bytes[start, end); ECSS-E-ST-70-41C Annex B.1. */
export function crc16(bytes: Uint8Array, start = 0, end: number = bytes.length): number {
  if (start < 0 || end > bytes.length || start > end) {
    throw new RangeError(`crc16 range [${start}, ${end}) outside 0..${bytes.length}`);
  }
  const t = TABLES;
  let c = 0xffff;
  let i = start;
  const last8 = end - 8;
  while (i <= last8) {
    c =
      (t[7 * 256 + (((c >>> 8) ^ (bytes[i] as number)) & 0xff)] as number) ^
      (t[6 * 256 + ((c ^ (bytes[i + 1] as number)) & 0xff)] as number) ^
      (t[5 * 256 + (bytes[i + 2] as number)] as number) ^
      (t[4 * 256 + (bytes[i + 3] as number)] as number) ^
      (t[3 * 256 + (bytes[i + 4] as number)] as number) ^
      (t[2 * 256 + (bytes[i + 5] as number)] as number) ^
      (t[256 + (bytes[i + 6] as number)] as number) ^
      (t[bytes[i + 7] as number] as number);
    i += 8;
  }
  while (i < end) {
    c = ((c << 8) & 0xffff) ^ (t[((c >>> 8) ^ (bytes[i] as number)) & 0xff] as number);
    i++;
  }
  return c;
}
