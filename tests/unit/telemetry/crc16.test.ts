import { Buffer } from 'node:buffer';
import { crc16ccitt } from 'crc';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { crc16, encodePacket } from '../../../src/lib/telemetry';
import { hex } from './hand-built';

describe('crc16 check values (ECSS-E-ST-70-41C Annex B.1)', () => {
  it.each([
    ['"123456789"', new TextEncoder().encode('123456789'), 0x29b1],
    ['empty', new Uint8Array(0), 0xffff],
    ['00 00', hex('00 00'), 0x1d0f],
    ['00 00 00', hex('00 00 00'), 0xcc9c],
    ['AB CD EF 01', hex('AB CD EF 01'), 0x04a2],
    ['14 56 F8 9A 00 01', hex('14 56 F8 9A 00 01'), 0x7fd5],
  ])('%s → its published CRC', (_name, bytes, expected) => {
    expect(crc16(bytes)).toBe(expected);
  });

  it('is zero over a whole packet including its own CRC field [derived]', () => {
    const pkt = encodePacket({
      kind: 'event',
      seq: 12,
      coarse: 1000,
      fine: 32768,
      severity: 2,
      code: 0x0102,
      loopId: null,
      text: 'pump 1 restart',
    });
    expect(crc16(pkt)).toBe(0);
  });

  it('honours start and end: same as the CRC of the sub-range copied out', () => {
    const data = new TextEncoder().encode('xx123456789yy');
    expect(crc16(data, 2, 11)).toBe(0x29b1); // ECSS-E-ST-70-41C Annex B.1
    expect(crc16(data, 5, 5)).toBe(0xffff); // ECSS-E-ST-70-41C Annex B.1, empty
  });

  it('refuses a range outside the array', () => {
    expect(() => crc16(new Uint8Array(4), 0, 5)).toThrow(RangeError);
    expect(() => crc16(new Uint8Array(4), 3, 2)).toThrow(RangeError);
    expect(() => crc16(new Uint8Array(4), -1, 2)).toThrow(RangeError);
  });

  it('agrees with the independent npm package crc (crc16ccitt, CRC-16/CCITT-FALSE) on random data', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 300 }), fc.nat(), fc.nat(), (bytes, a, b) => {
        expect(crc16(bytes)).toBe(crc16ccitt(Buffer.from(bytes)));
        const start = bytes.length === 0 ? 0 : a % (bytes.length + 1);
        const end = start + (b % (bytes.length - start + 1));
        expect(crc16(bytes, start, end)).toBe(crc16ccitt(Buffer.from(bytes.subarray(start, end))));
      }),
      { numRuns: 2000 },
    );
  });
});
