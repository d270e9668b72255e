import { describe, expect, it } from 'vitest';
import {
  decodeBuffer,
  encodeIdlePacket,
  encodePacket,
  readPrimaryHeader,
  writePrimaryHeader,
} from '../../../src/lib/telemetry';
import type { LoopRecord } from '../../../src/lib/telemetry';
import { decodeAll } from './collect';
import { header, hex } from './hand-built';

const loopRecord = (seq: number): LoopRecord => ({
  kind: 'loop',
  seq,
  coarse: 5,
  fine: 6,
  loopId: 1,
  status: 0b1001,
  commandedCurrent_a: 10,
  measuredCurrent_a: 9.5,
  electrodeVoltage_v: 0.25,
  flowVelocity_m_s: 0.5,
  pressureRise_pa: 1200,
  fluidTemp_c: 21,
  electrodeTemp_c: 24,
  magnetTemp_c: 22,
});

describe('primary header layout (CCSDS 133.0-B-2 §4.1.3)', () => {
  // Vector from a widely used open-source space-packet library's documentation of the standard.
  const vector = hex('18 73 C0 19 00 04');

  it('reads the published header vector 18 73 C0 19 00 04', () => {
    expect(readPrimaryHeader(vector)).toEqual({
      versionNumber: 0,
      packetType: 1,
      secondaryHeaderFlag: 1,
      apid: 0x073,
      sequenceFlags: 3,
      sequenceCount: 25,
      dataLengthField: 4,
    });
  });

  it('writes the published header vector back octet for octet', () => {
    const out = new Uint8Array(6);
    writePrimaryHeader(out, 0, readPrimaryHeader(vector));
    expect(out).toEqual(vector);
    expect(() => writePrimaryHeader(out, 0, { ...readPrimaryHeader(vector), apid: 0x800 })).toThrow(
      RangeError,
    );
  });

  it('rejects the published vector with its 5 data octets as telecommand type', () => {
    const packet = new Uint8Array([...vector, 1, 2, 3, 4, 5]);
    expect(decodeAll(packet)).toEqual([
      { kind: 'reject', offset: 0, reason: 'telecommand type', raw: [...packet] },
    ]);
  });

  it('encodes version 000, type 0, secondary header 1, APID, flags 11, count, length − 1', () => {
    const pkt = encodePacket(loopRecord(5));
    // APID 32: 000 0 1 000 0010 0000 = 08 20; 11 + count 5 = C0 05; 48 − 6 − 1 = 41 = 00 29
    expect(pkt.subarray(0, 6)).toEqual(hex('08 20 C0 05 00 29'));
    expect([...pkt.subarray(0, 6)]).toEqual(header({ apid: 32, seq: 5 }, 42));
    const h = readPrimaryHeader(pkt);
    expect(h).toEqual({
      versionNumber: 0,
      packetType: 0,
      secondaryHeaderFlag: 1,
      apid: 32,
      sequenceFlags: 3,
      sequenceCount: 5,
      dataLengthField: pkt.length - 7,
    });
  });

  it('masks the sequence count to 14 bits: 16383 is the top, 16384 + 3 wraps to 3', () => {
    expect(encodePacket(loopRecord(16383)).subarray(2, 4)).toEqual(hex('FF FF'));
    expect(encodePacket(loopRecord(16384 + 3)).subarray(2, 4)).toEqual(hex('C0 03'));
    expect(() => encodePacket(loopRecord(-1))).toThrow(RangeError);
    expect(() => encodePacket(loopRecord(1.5))).toThrow(RangeError);
  });

  it('idle packet: APID 2047, no secondary header, fill only, no CRC', () => {
    const idle = encodeIdlePacket(7, 10);
    expect(idle).toEqual(hex('07 FF C0 07 00 09 00 00 00 00 00 00 00 00 00 00'));
    expect(readPrimaryHeader(idle).apid).toBe(2047);
    expect(encodeIdlePacket(16385, 1)).toEqual(hex('07 FF C0 01 00 00 00'));
    expect(encodeIdlePacket(0, 65536).length).toBe(65542); // largest packet, CCSDS 133.0-B-2 §4.1.3
    expect(() => encodeIdlePacket(0, 0)).toThrow(RangeError);
    expect(() => encodeIdlePacket(0, 65537)).toThrow(RangeError);
  });

  it('readPrimaryHeader refuses fewer than 6 octets', () => {
    expect(() => readPrimaryHeader(hex('08 20 C0'))).toThrow(RangeError);
    expect(() => readPrimaryHeader(hex('08 20 C0 05 00 29'), 1)).toThrow(RangeError);
  });

  it('decodeBuffer reports offsets from baseOffset and consumes the whole body', () => {
    const pkt = encodePacket(loopRecord(9));
    const seen: number[] = [];
    const result = decodeBuffer(
      pkt,
      { loopIds: new Set([1]) },
      {
        record: (_r, offset) => seen.push(offset),
        reject: () => seen.push(-1),
        idle: () => seen.push(-2),
      },
      1000,
    );
    expect(result).toEqual({ consumed: 48 });
    expect(seen).toEqual([1000]);
  });
});
