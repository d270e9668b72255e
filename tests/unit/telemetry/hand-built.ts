/**
 * Builds packets octet by octet for the codec tests, with Node's Buffer writers and the
 * independent npm package crc (crc16ccitt, CRC-16/CCITT-FALSE), so that no expected byte comes
 * from the code under test.
 */

import { Buffer } from 'node:buffer';
import { crc16ccitt } from 'crc';

/** Octets from hex text such as "18 73 C0 19". */
export function hex(text: string): Uint8Array {
  const clean = text.replace(/\s+/g, '');
  return new Uint8Array(Buffer.from(clean, 'hex'));
}

export function u8(x: number): number[] {
  return [x & 0xff];
}

export function u16(x: number): number[] {
  const b = Buffer.alloc(2);
  b.writeUInt16BE(x);
  return [...b];
}

export function u32(x: number): number[] {
  const b = Buffer.alloc(4);
  b.writeUInt32BE(x);
  return [...b];
}

export function i16(x: number): number[] {
  const b = Buffer.alloc(2);
  b.writeInt16BE(x);
  return [...b];
}

export function f32(x: number): number[] {
  const b = Buffer.alloc(4);
  b.writeFloatBE(x);
  return [...b];
}

/** CRC-16/CCITT-FALSE of the octets by the independent npm package crc. */
export function refCrc(bytes: Uint8Array | number[]): number {
  return crc16ccitt(Buffer.from(bytes instanceof Uint8Array ? bytes : Uint8Array.from(bytes)));
}

/** Octets followed by their CRC-16 (computed by the npm package crc). */
export function withCrc(octets: number[]): Uint8Array {
  return Uint8Array.from([...octets, ...u16(refCrc(octets))]);
}

export interface HeaderFields {
  version?: number;
  type?: number;
  secondaryHeader?: number;
  apid: number;
  seqFlags?: number;
  seq?: number;
}

/** Primary header words per CCSDS 133.0-B-2 §4.1.3 for a data field of dataOctets octets. */
export function header(h: HeaderFields, dataOctets: number): number[] {
  const w1 =
    ((h.version ?? 0) << 13) | ((h.type ?? 0) << 12) | ((h.secondaryHeader ?? 1) << 11) | h.apid;
  const w2 = ((h.seqFlags ?? 3) << 14) | (h.seq ?? 0);
  return [...u16(w1), ...u16(w2), ...u16(dataOctets - 1)];
}

/** A telemetry packet: header, CUC time tag, user data, CRC (declared length fits the data). */
export function tmPacket(
  h: HeaderFields,
  coarse: number,
  fine: number,
  user: number[],
): Uint8Array {
  const data = [...u32(coarse), ...u16(fine), ...user];
  return withCrc([...header(h, data.length + 2), ...data]);
}

/** Attitude user data (APID 16), 42 octets. */
export function attitudeUser(mode: number, rate: number[], q: number[], mag: number[]): number[] {
  return [mode, 0, ...rate.flatMap(f32), ...q.flatMap(f32), ...mag.flatMap(f32)];
}

/** Loop user data (APID 32), 34 octets. */
export function loopUser(loopId: number, status: number, floats: number[]): number[] {
  return [loopId, status, ...floats.flatMap(f32)];
}

/** Burst user data (APID 48), 10 + 2N octets, N taken from the samples. */
export function burstUser(
  loopId: number,
  channel: number,
  rate: number,
  scale: number,
  offset: number,
  samples: number[],
  declaredN = samples.length,
): number[] {
  return [
    loopId,
    channel,
    ...u16(rate),
    ...u16(declaredN),
    ...f32(scale),
    ...f32(offset),
    ...samples.flatMap(i16),
  ];
}

/** Event user data (APID 64), 5 + L octets. */
export function eventUser(severity: number, code: number, loop: number, text: number[]): number[] {
  return [severity, ...u16(code), loop, text.length, ...text];
}

export function ascii(text: string): number[] {
  return [...Buffer.from(text, 'latin1')];
}

export function concat(...parts: Uint8Array[]): Uint8Array {
  return new Uint8Array(Buffer.concat(parts));
}
