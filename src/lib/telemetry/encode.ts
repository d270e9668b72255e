/**
 * Encoder of the telemetry contract's packets: CCSDS 133.0-B-2 primary header, CUC time tag
 * (CCSDS 301.0-B-4), user data big-endian with IEEE-754 binary32 floats, CRC-16 packet error
 * control (ECSS-E-ST-70-41C Annex B.1). Values that do not fit their wire field throw RangeError;
 * values that fit but that the decoder refuses (a mode of 7, a NaN) are encoded as given, so that
 * tests and the simulated feed can make faulty packets on purpose.
 */

import { crc16 } from './crc16';
import {
  ATTITUDE_PACKET_LENGTH,
  BURST_MAX_SAMPLES,
  CRC_LENGTH,
  EVENT_MAX_TEXT_LENGTH,
  EVENT_NO_LOOP,
  LOOP_PACKET_LENGTH,
  MAX_PACKET_LENGTH,
  PRIMARY_HEADER_LENGTH,
  SEQUENCE_COUNT_MASK,
  TIME_TAG_LENGTH,
  burstPacketLength,
  eventPacketLength,
} from './layout';
import { APID } from './types';
import type { TelemetryRecord } from './types';

// One 4-octet scratch turns a float into big-endian octets without a view on the target.
const f32View = new DataView(new ArrayBuffer(4));

function putF32(t: Uint8Array, o: number, x: number): void {
  f32View.setFloat32(0, x, false);
  t[o] = f32View.getUint8(0);
  t[o + 1] = f32View.getUint8(1);
  t[o + 2] = f32View.getUint8(2);
  t[o + 3] = f32View.getUint8(3);
}

function putU16(t: Uint8Array, o: number, x: number): void {
  t[o] = x >>> 8;
  t[o + 1] = x & 0xff;
}

function putU32(t: Uint8Array, o: number, x: number): void {
  t[o] = x >>> 24;
  t[o + 1] = (x >>> 16) & 0xff;
  t[o + 2] = (x >>> 8) & 0xff;
  t[o + 3] = x & 0xff;
}

function checkUint(name: string, value: number, max: number): void {
  if (!Number.isInteger(value) || value < 0 || value > max) {
    throw new RangeError(`${name} ${value} does not fit 0..${max}`);
  }
}

function checkText(text: string): void {
  if (text.length > EVENT_MAX_TEXT_LENGTH) {
    throw new RangeError(
      `event text of ${text.length} characters exceeds ${EVENT_MAX_TEXT_LENGTH}`,
    );
  }
  for (let i = 0; i < text.length; i++) {
    if (text.charCodeAt(i) > 0x7f) throw new RangeError(`event text is not ASCII at ${i}`);
  }
}

/** Whole packet length in octets of a record, CRC included. */
export function packetLength(record: TelemetryRecord): number {
  switch (record.kind) {
    case 'attitude':
      return ATTITUDE_PACKET_LENGTH;
    case 'loop':
      return LOOP_PACKET_LENGTH;
    case 'burst':
      return burstPacketLength(record.raw.length);
    case 'event':
      return eventPacketLength(record.text.length);
  }
}

function apidOf(record: TelemetryRecord): number {
  switch (record.kind) {
    case 'attitude':
      return APID.attitude;
    case 'loop':
      return APID.loop;
    case 'burst':
      return APID.burst;
    case 'event':
      return APID.event;
  }
}

function checkRecord(record: TelemetryRecord): void {
  checkUint('sequence count', record.seq, Number.MAX_SAFE_INTEGER);
  checkUint('coarse time', record.coarse, 0xffff_ffff);
  checkUint('fine time', record.fine, 0xffff);
  switch (record.kind) {
    case 'attitude':
      checkUint('attitude mode', record.mode, 0xff);
      break;
    case 'loop':
      checkUint('loop id', record.loopId, 0xff);
      checkUint('loop status', record.status, 0xff);
      break;
    case 'burst': {
      const n = record.raw.length;
      if (n < 1 || n > BURST_MAX_SAMPLES) {
        throw new RangeError(`burst of ${n} samples is outside 1..${BURST_MAX_SAMPLES}`);
      }
      checkUint('loop id', record.loopId, 0xff);
      checkUint('burst channel', record.channel, 0xff);
      checkUint('sample rate', record.sampleRate_hz, 0xffff);
      break;
    }
    case 'event':
      checkUint('event severity', record.severity, 0xff);
      checkUint('event code', record.code, 0xffff);
      // 255 on the wire means "no loop", so a loop id must stay below it to round-trip.
      if (record.loopId !== null) checkUint('event loop id', record.loopId, EVENT_NO_LOOP - 1);
      checkText(record.text);
      break;
  }
}

/** Writes one full packet (header, time tag, user data, CRC) at offset; returns octets written. */
export function encodePacketInto(
  record: TelemetryRecord,
  target: Uint8Array,
  offset: number,
): number {
  checkRecord(record);
  const length = packetLength(record);
  if (!Number.isInteger(offset) || offset < 0 || offset + length > target.length) {
    throw new RangeError(`packet of ${length} octets at ${offset} does not fit ${target.length}`);
  }

  const t = target;
  const o = offset;
  // version 000, type 0, secondary header 1, APID; sequence flags 11, 14-bit count.
  putU16(t, o, 0x0800 | apidOf(record));
  putU16(t, o + 2, 0xc000 | (record.seq & SEQUENCE_COUNT_MASK));
  putU16(t, o + 4, length - PRIMARY_HEADER_LENGTH - 1);
  putU32(t, o + 6, record.coarse);
  putU16(t, o + 10, record.fine);
  const u = o + PRIMARY_HEADER_LENGTH + TIME_TAG_LENGTH;

  switch (record.kind) {
    case 'attitude': {
      t[u] = record.mode;
      t[u + 1] = 0;
      putF32(t, u + 2, record.rate_rad_s[0]);
      putF32(t, u + 6, record.rate_rad_s[1]);
      putF32(t, u + 10, record.rate_rad_s[2]);
      putF32(t, u + 14, record.quaternion[0]);
      putF32(t, u + 18, record.quaternion[1]);
      putF32(t, u + 22, record.quaternion[2]);
      putF32(t, u + 26, record.quaternion[3]);
      putF32(t, u + 30, record.mag_nT[0]);
      putF32(t, u + 34, record.mag_nT[1]);
      putF32(t, u + 38, record.mag_nT[2]);
      break;
    }
    case 'loop': {
      t[u] = record.loopId;
      t[u + 1] = record.status;
      putF32(t, u + 2, record.commandedCurrent_a);
      putF32(t, u + 6, record.measuredCurrent_a);
      putF32(t, u + 10, record.electrodeVoltage_v);
      putF32(t, u + 14, record.flowVelocity_m_s);
      putF32(t, u + 18, record.pressureRise_pa);
      putF32(t, u + 22, record.fluidTemp_c);
      putF32(t, u + 26, record.electrodeTemp_c);
      putF32(t, u + 30, record.magnetTemp_c);
      break;
    }
    case 'burst': {
      const raw = record.raw;
      t[u] = record.loopId;
      t[u + 1] = record.channel;
      putU16(t, u + 2, record.sampleRate_hz);
      putU16(t, u + 4, raw.length);
      putF32(t, u + 6, record.scale);
      putF32(t, u + 10, record.offset);
      let s = u + 14;
      for (let i = 0; i < raw.length; i++, s += 2) putU16(t, s, (raw[i] as number) & 0xffff);
      break;
    }
    case 'event': {
      const loop = record.loopId === null ? EVENT_NO_LOOP : record.loopId;
      const text = record.text;
      t[u] = record.severity;
      putU16(t, u + 1, record.code);
      t[u + 3] = loop;
      t[u + 4] = text.length;
      for (let i = 0; i < text.length; i++) t[u + 5 + i] = text.charCodeAt(i);
      break;
    }
  }
  const crcAt = o + length - CRC_LENGTH;
  putU16(t, crcAt, crc16(t, o, crcAt));
  return length;
}

/** One full packet of a record as a fresh array. */
export function encodePacket(record: TelemetryRecord): Uint8Array {
  const out = new Uint8Array(packetLength(record));
  encodePacketInto(record, out, 0);
  return out;
}

/** CCSDS idle packet (APID 2047, no secondary header, no CRC) with fillLength zero fill octets. */
export function encodeIdlePacket(seq: number, fillLength: number): Uint8Array {
  const maxFill = MAX_PACKET_LENGTH - PRIMARY_HEADER_LENGTH;
  checkUint('idle fill length', fillLength, maxFill);
  if (fillLength < 1) throw new RangeError('idle fill length must be at least 1 octet');
  checkUint('sequence count', seq, Number.MAX_SAFE_INTEGER);
  const out = new Uint8Array(PRIMARY_HEADER_LENGTH + fillLength);
  putU16(out, 0, APID.idle);
  putU16(out, 2, 0xc000 | (seq & SEQUENCE_COUNT_MASK));
  putU16(out, 4, fillLength - 1);
  return out;
}
