import { describe, expect, it } from 'vitest';
import {
  encodeIdlePacket,
  encodePacket,
  encodePacketInto,
  packetLength,
} from '../../../src/lib/telemetry';
import type {
  AttitudeRecord,
  BurstRecord,
  EventRecord,
  LoopRecord,
  TelemetryRecord,
} from '../../../src/lib/telemetry';
import { decodeAll } from './collect';
import {
  ascii,
  attitudeUser,
  burstUser,
  concat,
  eventUser,
  loopUser,
  refCrc,
  tmPacket,
} from './hand-built';

// Expected octets are built by hand with Node's Buffer writers (big-endian, IEEE-754 binary32)
// and the npm package crc (crc16ccitt, CRC-16/CCITT-FALSE), following the layouts of the
// telemetry contract: header CCSDS 133.0-B-2 §4.1.3, time CCSDS 301.0-B-4 §3.2, CRC
// ECSS-E-ST-70-41C Annex B.1.

const attitude: AttitudeRecord = {
  kind: 'attitude',
  seq: 321,
  coarse: 800_000_000,
  fine: 12_345,
  mode: 2,
  rate_rad_s: [Math.fround(0.001), Math.fround(-0.0025), Math.fround(3e-5)],
  quaternion: [Math.fround(0.5), Math.fround(-0.5), Math.fround(0.5), Math.fround(0.5)],
  mag_nT: [Math.fround(21_000.5), Math.fround(-3_200.25), Math.fround(-45_000)],
};
const attitudeBytes = tmPacket({ apid: 16, seq: 321 }, 800_000_000, 12_345, [
  ...attitudeUser(2, [0.001, -0.0025, 3e-5], [0.5, -0.5, 0.5, 0.5], [21_000.5, -3_200.25, -45_000]),
]);

const loopFloats = [12.5, 12.25, 0.75, -0.375, 1530, 20.5, 31, 24];
const loop: LoopRecord = {
  kind: 'loop',
  seq: 16_383,
  coarse: 1,
  fine: 65_535,
  loopId: 3,
  status: 0b1101,
  commandedCurrent_a: 12.5,
  measuredCurrent_a: 12.25,
  electrodeVoltage_v: 0.75,
  flowVelocity_m_s: -0.375,
  pressureRise_pa: 1530,
  fluidTemp_c: 20.5,
  electrodeTemp_c: 31,
  magnetTemp_c: 24,
};
const loopBytes = tmPacket({ apid: 32, seq: 16_383 }, 1, 65_535, loopUser(3, 0b1101, loopFloats));

const samples = [0, 1, -1, 32_767, -32_768, 1234];
const burst: BurstRecord = {
  kind: 'burst',
  seq: 7,
  coarse: 2000,
  fine: 0,
  loopId: 0,
  channel: 1,
  sampleRate_hz: 1000,
  scale: Math.fround(0.001),
  offset: -2,
  raw: Int16Array.from(samples),
};
const burstBytes = tmPacket(
  { apid: 48, seq: 7 },
  2000,
  0,
  burstUser(0, 1, 1000, 0.001, -2, samples),
);

const event: EventRecord = {
  kind: 'event',
  seq: 44,
  coarse: 3000,
  fine: 1,
  severity: 3,
  code: 0x0a0b,
  loopId: null,
  text: 'Loop 2 over-current latch set',
};
const eventBytes = tmPacket(
  { apid: 64, seq: 44 },
  3000,
  1,
  eventUser(3, 0x0a0b, 255, ascii('Loop 2 over-current latch set')),
);

const cases: Array<[string, TelemetryRecord, Uint8Array, number]> = [
  ['attitude (APID 16)', attitude, attitudeBytes, 56],
  ['loop (APID 32)', loop, loopBytes, 48],
  ['burst (APID 48)', burst, burstBytes, 28 + 2 * samples.length],
  ['event (APID 64)', event, eventBytes, 19 + event.text.length],
];

describe('packet encoder and decoder against hand-built octets', () => {
  it.each(cases)('%s encodes octet for octet', (_name, rec, bytes, length) => {
    expect(bytes.length).toBe(length);
    expect(packetLength(rec)).toBe(length);
    expect(encodePacket(rec)).toEqual(bytes);
    expect(refCrc(bytes)).toBe(0); // CRC over a packet incl. its CRC → 0 [derived]
  });

  it.each(cases)('%s decodes to the record', (_name, rec, bytes, length) => {
    expect(decodeAll(bytes)).toEqual([{ kind: 'record', offset: 0, length, rec }]);
  });

  it('event loop id 255 on the wire is null; a loop id is kept', () => {
    const withLoop = tmPacket({ apid: 64, seq: 1 }, 3000, 1, eventUser(1, 2, 2, ascii('x')));
    expect(encodePacket({ ...event, seq: 1, severity: 1, code: 2, loopId: 2, text: 'x' })).toEqual(
      withLoop,
    );
    const out = decodeAll(withLoop);
    expect(out[0]?.kind === 'record' && out[0].rec.kind === 'event' && out[0].rec.loopId).toBe(2);
  });

  it('burst with 1 and with 1024 samples (the limits of N)', () => {
    for (const n of [1, 1024]) {
      const s = Array.from({ length: n }, (_, i) => ((i * 37) % 65_536) - 32_768);
      const bytes = tmPacket({ apid: 48, seq: 3 }, 9, 9, burstUser(1, 0, 50, 2, 0, s));
      const rec: BurstRecord = {
        ...burst,
        seq: 3,
        coarse: 9,
        fine: 9,
        loopId: 1,
        channel: 0,
        sampleRate_hz: 50,
        scale: 2,
        offset: 0,
        raw: Int16Array.from(s),
      };
      expect(encodePacket(rec)).toEqual(bytes);
      expect(decodeAll(bytes)).toEqual([{ kind: 'record', offset: 0, length: 28 + 2 * n, rec }]);
    }
  });

  it('event text of 64 characters, the longest allowed', () => {
    const text = 'A'.repeat(64);
    const bytes = tmPacket({ apid: 64, seq: 0 }, 0, 0, eventUser(4, 0, 0, ascii(text)));
    const rec: EventRecord = {
      ...event,
      seq: 0,
      coarse: 0,
      fine: 0,
      severity: 4,
      code: 0,
      loopId: 0,
      text,
    };
    expect(encodePacket(rec)).toEqual(bytes);
    expect(decodeAll(bytes)).toEqual([{ kind: 'record', offset: 0, length: 83, rec }]);
  });

  it('decoded floats are the binary32 values on the wire', () => {
    const out = decodeAll(attitudeBytes);
    const rec = out[0]?.kind === 'record' ? out[0].rec : null;
    expect(rec?.kind === 'attitude' && rec.rate_rad_s[0]).toBe(Math.fround(0.001));
    expect(rec?.kind === 'attitude' && rec.rate_rad_s[0]).not.toBe(0.001);
  });

  it('encodePacketInto writes at the offset, returns the length, touches nothing else', () => {
    const target = new Uint8Array(200).fill(0xee);
    expect(encodePacketInto(loop, target, 10)).toBe(48);
    expect(encodePacketInto(event, target, 58)).toBe(eventBytes.length);
    expect(target.subarray(10, 58)).toEqual(loopBytes);
    expect(target.subarray(58, 58 + eventBytes.length)).toEqual(eventBytes);
    expect(target.subarray(0, 10).every((b) => b === 0xee)).toBe(true);
    expect(target.subarray(58 + eventBytes.length).every((b) => b === 0xee)).toBe(true);
    expect(() => encodePacketInto(loop, target, 153)).toThrow(RangeError);
    expect(() => encodePacketInto(loop, target, -1)).toThrow(RangeError);
  });

  it('a concatenation decodes in order with absolute offsets, idle packets counted', () => {
    const idle = encodeIdlePacket(0, 20);
    const body = concat(attitudeBytes, idle, loopBytes, burstBytes, idle, eventBytes);
    const offsets = [0, 56, 82, 130, 130 + burstBytes.length, 156 + burstBytes.length];
    expect(decodeAll(body)).toEqual([
      { kind: 'record', offset: offsets[0], length: 56, rec: attitude },
      { kind: 'idle', offset: offsets[1] },
      { kind: 'record', offset: offsets[2], length: 48, rec: loop },
      { kind: 'record', offset: offsets[3], length: burstBytes.length, rec: burst },
      { kind: 'idle', offset: offsets[4] },
      { kind: 'record', offset: offsets[5], length: eventBytes.length, rec: event },
    ]);
  });

  it('refuses to encode what the wire cannot carry', () => {
    expect(() => encodePacket({ ...burst, raw: new Int16Array(0) })).toThrow(RangeError);
    expect(() => encodePacket({ ...burst, raw: new Int16Array(1025) })).toThrow(RangeError);
    expect(() => encodePacket({ ...event, text: 'x'.repeat(65) })).toThrow(RangeError);
    expect(() => encodePacket({ ...event, text: 'Überstrom' })).toThrow(RangeError);
    expect(() => encodePacket({ ...event, loopId: 255 })).toThrow(RangeError);
    expect(() => encodePacket({ ...attitude, mode: 256 })).toThrow(RangeError);
    expect(() => encodePacket({ ...loop, coarse: 2 ** 32 })).toThrow(RangeError);
    expect(() => encodePacket({ ...loop, fine: 65_536 })).toThrow(RangeError);
    expect(() => encodePacket({ ...burst, sampleRate_hz: 70_000 })).toThrow(RangeError);
  });
});
