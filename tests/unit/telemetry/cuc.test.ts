import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  EPOCH_2000_UNIX_S,
  cucToIso,
  cucToUnixMs,
  cucToUnixSeconds,
  encodePacket,
  timeTag,
  unixMsToCuc,
} from '../../../src/lib/telemetry';
import { hex } from './hand-built';

const EPOCH_MS = EPOCH_2000_UNIX_S * 1000;
const FINE_MS = 1000 / 65536;

describe('CUC time code (CCSDS 301.0-B-4 §3.2), epoch 2000-01-01T00:00:00Z', () => {
  it('the epoch is Unix 946684800 s (checked with the JavaScript Date built-in)', () => {
    expect(EPOCH_2000_UNIX_S).toBe(Date.UTC(2000, 0, 1) / 1000);
    expect(cucToUnixMs(0, 0)).toBe(Date.UTC(2000, 0, 1));
    expect(cucToIso(0, 0)).toBe('2000-01-01T00:00:00.000000Z');
  });

  it('1000.5 s → T-field 00 00 03 E8 80 00 [derived]', () => {
    const t = unixMsToCuc(EPOCH_MS + 1_000_500);
    expect(t).toEqual({ coarse: 1000, fine: 0x8000 });
    const pkt = encodePacket({
      kind: 'event',
      seq: 0,
      ...t,
      severity: 1,
      code: 1,
      loopId: null,
      text: '',
    });
    expect(pkt.subarray(6, 12)).toEqual(hex('00 00 03 E8 80 00'));
    expect(cucToUnixSeconds(1000, 0x8000)).toBe(EPOCH_2000_UNIX_S + 1000.5);
    expect(cucToIso(1000, 0x8000)).toBe('2000-01-01T00:16:40.500000Z');
  });

  it('ISO text agrees with the JavaScript Date built-in to the millisecond', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 0xffff_ffff }),
        fc.integer({ min: 0, max: 0xffff }),
        (c, f) => {
          const iso = cucToIso(c, f);
          expect(iso).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{6}Z$/);
          const parsed = Date.parse(iso.slice(0, 23) + 'Z');
          expect(Math.abs(parsed - cucToUnixMs(c, f))).toBeLessThan(1);
        },
      ),
    );
  });

  it('one fine unit is 2^-16 s ≈ 15.26 µs (CCSDS 301.0-B-4 §3.2); ISO keeps it apart', () => {
    expect(cucToUnixMs(0, 1) - cucToUnixMs(0, 0)).toBe(FINE_MS);
    expect(cucToIso(0, 1)).toBe('2000-01-01T00:00:00.000015Z');
    expect(cucToIso(0, 65535)).toBe('2000-01-01T00:00:00.999985Z');
  });

  it('rounds fine to the nearest 2^-16 s and carries into coarse', () => {
    expect(unixMsToCuc(EPOCH_MS + 1999.999)).toEqual({ coarse: 2, fine: 0 });
    expect(unixMsToCuc(EPOCH_MS + 1000 + 0.4 * FINE_MS)).toEqual({ coarse: 1, fine: 0 });
    expect(unixMsToCuc(EPOCH_MS + 1000 + 0.6 * FINE_MS)).toEqual({ coarse: 1, fine: 1 });
    fc.assert(
      fc.property(fc.double({ min: EPOCH_MS, max: EPOCH_MS + 4e12, noNaN: true }), (ms) => {
        const { coarse, fine } = unixMsToCuc(ms);
        expect(Number.isInteger(coarse) && Number.isInteger(fine)).toBe(true);
        expect(fine).toBeGreaterThanOrEqual(0);
        expect(fine).toBeLessThan(65536);
        // nearest unit: within half a unit, plus the double rounding of a 1e12-ms number
        expect(Math.abs(cucToUnixMs(coarse, fine) - ms)).toBeLessThanOrEqual(FINE_MS / 2 + 1e-3);
      }),
    );
  });

  it('CUC → Unix ms → CUC round-trips every coarse and fine value', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 0xffff_ffff }),
        fc.integer({ min: 0, max: 0xffff }),
        (c, f) => {
          expect(unixMsToCuc(cucToUnixMs(c, f))).toEqual({ coarse: c, fine: f });
          expect(cucToUnixSeconds(c, f) * 1000).toBeCloseTo(cucToUnixMs(c, f), 2);
        },
      ),
      { numRuns: 5000 },
    );
    expect(unixMsToCuc(cucToUnixMs(0xffff_ffff, 0xffff))).toEqual({
      coarse: 0xffff_ffff,
      fine: 0xffff,
    });
  });

  it('refuses times outside the 32-bit coarse range and non-finite input', () => {
    expect(() => unixMsToCuc(EPOCH_MS - 1)).toThrow(RangeError);
    expect(() => unixMsToCuc(EPOCH_MS + 2 ** 32 * 1000)).toThrow(RangeError);
    expect(() => unixMsToCuc(Number.NaN)).toThrow(RangeError);
  });

  it('timeTag is coarse·65536 + fine, an exact integer that orders like the time', () => {
    expect(timeTag(1000, 0x8000)).toBe(65_536_000 + 32_768);
    expect(timeTag(0xffff_ffff, 0xffff)).toBe(2 ** 48 - 1);
    expect(Number.isSafeInteger(timeTag(0xffff_ffff, 0xffff))).toBe(true);
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 0xffff_ffff }),
        fc.integer({ min: 0, max: 0xffff }),
        fc.integer({ min: 0, max: 0xffff_ffff }),
        fc.integer({ min: 0, max: 0xffff }),
        (c1, f1, c2, f2) => {
          expect(Math.sign(timeTag(c1, f1) - timeTag(c2, f2))).toBe(
            Math.sign(cucToUnixMs(c1, f1) - cucToUnixMs(c2, f2)),
          );
          expect(timeTag(c1, f1) === timeTag(c2, f2)).toBe(c1 === c2 && f1 === f2);
        },
      ),
    );
  });
});
