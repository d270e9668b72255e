/**
 * Decoder of the telemetry contract's packets: a plain concatenation of CCSDS 133.0-B-2 space
 * packets in, typed records, rejections and idle counts out through a visitor.
 *
 * Resynchronisation policy. A plain concatenation has no sync marker, so the only way from one
 * packet to the next is the packet data length field of the primary header.
 * - When fewer than 6 octets remain, or the declared length runs past the end of the data, the
 *   whole rest of the body is rejected as one 'length past end' at that offset. Guessing at a
 *   restart point inside such a tail would invent packets out of fill or of a half-received one.
 * - Otherwise the declared length is trusted and the walk skips to the octet after the packet,
 *   whatever else is wrong with it (bad version, telecommand, unknown APID, bad CRC, ...). A
 *   corrupted length field therefore shifts the walk; the packets it then lands on fail the CRC
 *   or the header checks and are rejected one by one until the walk is in step again or the body
 *   ends. Nothing that fails a check is ever turned into a record.
 * - A streamed body (PacketStreamDecoder) gives exactly what decodeBuffer gives for the same
 *   octets: a packet that straddles two chunks is held until it is complete, and one still
 *   incomplete at end() is rejected as 'length past end' at its offset.
 *
 * Check order, first failure wins: length past end, version, packet type, secondary header flag
 * (non-idle), sequence flags, APID, length for the APID, CRC, loop id, non-finite floats, other
 * field values. An APID 2047 packet with the secondary header flag set is no idle packet (the
 * telemetry contract; CCSDS 133.0-B-2 says the same, from memory) and is refused 'bad field value'.
 * Spare octets and unassigned status bits are not checked, as is usual on receipt.
 *
 * The raw array handed to reject() is a view into the caller's bytes (no copy), covering the
 * declared packet or up to the end of the data; for a packet assembled from two stream chunks it
 * is a fresh copy. Keep a copy if it must outlive the caller's buffer.
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
  burstPacketLength,
  eventPacketLength,
} from './layout';
import { APID } from './types';
import type { RejectReason, TelemetryRecord } from './types';

/** What the decoder needs to know about the spacecraft. */
export interface DecodeContext {
  /** Loop ids the spacecraft has. */
  loopIds: ReadonlySet<number>;
}

/** Receives each packet's outcome, in stream order; offsets are absolute octet offsets. */
export interface PacketVisitor {
  record(rec: TelemetryRecord, offset: number, length: number): void;
  reject(offset: number, reason: RejectReason, raw: Uint8Array): void;
  idle(offset: number): void;
}

const USER = PRIMARY_HEADER_LENGTH + 6;

/**
 * Decodes the complete packet bytes[p, p + len) whose declared length is known to fit.
 * `abs` is its absolute offset; `copyRaw` makes reject() get a copy instead of a view.
 */
function decodePacket(
  b: Uint8Array,
  v: DataView,
  p: number,
  len: number,
  abs: number,
  ctx: DecodeContext,
  visitor: PacketVisitor,
  copyRaw: boolean,
): void {
  const w1 = v.getUint16(p, false);
  const w2 = v.getUint16(p + 2, false);
  const apid = w1 & 0x7ff;
  let reason: RejectReason | null = null;

  if (w1 >>> 13 !== 0) reason = 'bad version';
  else if ((w1 & 0x1000) !== 0) reason = 'telecommand type';
  else if ((w1 & 0x0800) === 0 && apid !== APID.idle) reason = 'no secondary header';
  else if (w2 >>> 14 !== 3) reason = 'segmented packet';
  else if (apid === APID.idle) {
    if ((w1 & 0x0800) === 0) {
      visitor.idle(abs);
      return;
    }
    reason = 'bad field value';
  } else if (apid === APID.attitude) {
    reason = len !== ATTITUDE_PACKET_LENGTH ? 'length wrong for apid' : checkCrc(b, v, p, len);
    if (reason === null) reason = attitude(v, p, w2, abs, len, visitor);
  } else if (apid === APID.loop) {
    reason = len !== LOOP_PACKET_LENGTH ? 'length wrong for apid' : checkCrc(b, v, p, len);
    if (reason === null) reason = loop(v, p, w2, abs, len, ctx, visitor);
  } else if (apid === APID.burst) {
    const n = len >= USER + 6 ? v.getUint16(p + USER + 4, false) : 0;
    reason =
      n < 1 || n > BURST_MAX_SAMPLES || len !== burstPacketLength(n)
        ? 'length wrong for apid'
        : checkCrc(b, v, p, len);
    if (reason === null) reason = burst(v, p, w2, abs, len, n, ctx, visitor);
  } else if (apid === APID.event) {
    const l = len >= USER + 5 ? v.getUint8(p + USER + 4) : -1;
    reason =
      l < 0 || l > EVENT_MAX_TEXT_LENGTH || len !== eventPacketLength(l)
        ? 'length wrong for apid'
        : checkCrc(b, v, p, len);
    if (reason === null) reason = event(b, v, p, w2, abs, len, l, ctx, visitor);
  } else reason = 'unknown apid';

  if (reason !== null) {
    visitor.reject(abs, reason, copyRaw ? b.slice(p, p + len) : b.subarray(p, p + len));
  }
}

function checkCrc(b: Uint8Array, v: DataView, p: number, len: number): RejectReason | null {
  const at = p + len - CRC_LENGTH;
  return crc16(b, p, at) === v.getUint16(at, false) ? null : 'crc mismatch';
}

// A sum of finite binary32 values cannot overflow a double (ten of them stay below 3.5e39), so
// the sum is finite exactly when every term is: one test instead of one per float.

function attitude(
  v: DataView,
  p: number,
  w2: number,
  abs: number,
  len: number,
  visitor: PacketVisitor,
): RejectReason | null {
  const u = p + USER;
  const mode = v.getUint8(u);
  const wx = v.getFloat32(u + 2, false);
  const wy = v.getFloat32(u + 6, false);
  const wz = v.getFloat32(u + 10, false);
  const q1 = v.getFloat32(u + 14, false);
  const q2 = v.getFloat32(u + 18, false);
  const q3 = v.getFloat32(u + 22, false);
  const q4 = v.getFloat32(u + 26, false);
  const bx = v.getFloat32(u + 30, false);
  const by = v.getFloat32(u + 34, false);
  const bz = v.getFloat32(u + 38, false);
  if (!Number.isFinite(wx + wy + wz + q1 + q2 + q3 + q4 + bx + by + bz)) return 'non-finite value';
  if (mode > 3) return 'bad field value';
  visitor.record(
    {
      kind: 'attitude',
      seq: w2 & 0x3fff,
      coarse: v.getUint32(p + 6, false),
      fine: v.getUint16(p + 10, false),
      mode,
      rate_rad_s: [wx, wy, wz],
      quaternion: [q1, q2, q3, q4],
      mag_nT: [bx, by, bz],
    },
    abs,
    len,
  );
  return null;
}

function loop(
  v: DataView,
  p: number,
  w2: number,
  abs: number,
  len: number,
  ctx: DecodeContext,
  visitor: PacketVisitor,
): RejectReason | null {
  const u = p + USER;
  const loopId = v.getUint8(u);
  if (!ctx.loopIds.has(loopId)) return 'unknown loop id';
  const ic = v.getFloat32(u + 2, false);
  const im = v.getFloat32(u + 6, false);
  const ev = v.getFloat32(u + 10, false);
  const fv = v.getFloat32(u + 14, false);
  const dp = v.getFloat32(u + 18, false);
  const tf = v.getFloat32(u + 22, false);
  const te = v.getFloat32(u + 26, false);
  const tm = v.getFloat32(u + 30, false);
  if (!Number.isFinite(ic + im + ev + fv + dp + tf + te + tm)) return 'non-finite value';
  visitor.record(
    {
      kind: 'loop',
      seq: w2 & 0x3fff,
      coarse: v.getUint32(p + 6, false),
      fine: v.getUint16(p + 10, false),
      loopId,
      status: v.getUint8(u + 1),
      commandedCurrent_a: ic,
      measuredCurrent_a: im,
      electrodeVoltage_v: ev,
      flowVelocity_m_s: fv,
      pressureRise_pa: dp,
      fluidTemp_c: tf,
      electrodeTemp_c: te,
      magnetTemp_c: tm,
    },
    abs,
    len,
  );
  return null;
}

function burst(
  v: DataView,
  p: number,
  w2: number,
  abs: number,
  len: number,
  n: number,
  ctx: DecodeContext,
  visitor: PacketVisitor,
): RejectReason | null {
  const u = p + USER;
  const loopId = v.getUint8(u);
  if (!ctx.loopIds.has(loopId)) return 'unknown loop id';
  const scale = v.getFloat32(u + 6, false);
  const offset = v.getFloat32(u + 10, false);
  if (!Number.isFinite(scale + offset)) return 'non-finite value';
  const channel = v.getUint8(u + 1);
  const sampleRate = v.getUint16(u + 2, false);
  if (channel > 1 || sampleRate === 0) return 'bad field value';
  const raw = new Int16Array(n);
  for (let i = 0, s = u + 14; i < n; i++, s += 2) raw[i] = v.getInt16(s, false);
  visitor.record(
    {
      kind: 'burst',
      seq: w2 & 0x3fff,
      coarse: v.getUint32(p + 6, false),
      fine: v.getUint16(p + 10, false),
      loopId,
      channel: channel as 0 | 1,
      sampleRate_hz: sampleRate,
      scale,
      offset,
      raw,
    },
    abs,
    len,
  );
  return null;
}

function event(
  b: Uint8Array,
  v: DataView,
  p: number,
  w2: number,
  abs: number,
  len: number,
  textLength: number,
  ctx: DecodeContext,
  visitor: PacketVisitor,
): RejectReason | null {
  const u = p + USER;
  const loopOctet = v.getUint8(u + 3);
  if (loopOctet !== EVENT_NO_LOOP && !ctx.loopIds.has(loopOctet)) return 'unknown loop id';
  const severity = v.getUint8(u);
  if (severity < 1 || severity > 4) return 'bad field value';
  let text = '';
  for (let i = u + 5, e = u + 5 + textLength; i < e; i++) {
    const c = b[i] as number;
    if (c > 0x7f) return 'bad field value';
    text += String.fromCharCode(c);
  }
  visitor.record(
    {
      kind: 'event',
      seq: w2 & 0x3fff,
      coarse: v.getUint32(p + 6, false),
      fine: v.getUint16(p + 10, false),
      severity: severity as 1 | 2 | 3 | 4,
      code: v.getUint16(u + 1, false),
      loopId: loopOctet === EVENT_NO_LOOP ? null : loopOctet,
      text,
    },
    abs,
    len,
  );
  return null;
}

/**
 * Walks whole packets of b[start, end). Returns where it stopped: `end`, or, when `final` is
 * false, the start of an incomplete packet left for the caller.
 */
function walk(
  b: Uint8Array,
  v: DataView,
  start: number,
  end: number,
  base: number,
  ctx: DecodeContext,
  visitor: PacketVisitor,
  final: boolean,
): number {
  let p = start;
  while (p < end) {
    const left = end - p;
    const len =
      left >= PRIMARY_HEADER_LENGTH ? v.getUint16(p + 4, false) + 7 : MAX_PACKET_LENGTH + 1;
    if (len > left) {
      if (!final) return p;
      visitor.reject(base + p, 'length past end', b.subarray(p, end));
      return end;
    }
    decodePacket(b, v, p, len, base + p, ctx, visitor, false);
    p += len;
  }
  return end;
}

/**
 * Decodes a whole body of concatenated packets; offsets reported are baseOffset + position.
 * Every octet is accounted for (a record, a rejection or an idle packet), so consumed is
 * bytes.length.
 */
export function decodeBuffer(
  bytes: Uint8Array,
  ctx: DecodeContext,
  visitor: PacketVisitor,
  baseOffset = 0,
): { consumed: number } {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  return { consumed: walk(bytes, view, 0, bytes.length, baseOffset, ctx, visitor, true) };
}

/**
 * Decoder for a body that arrives in chunks split anywhere. Only the incomplete packet at the end
 * of a chunk is kept (at most one packet, 65 542 octets); offsets are absolute in the stream.
 */
export class PacketStreamDecoder {
  private readonly ctx: DecodeContext;
  private readonly visitor: PacketVisitor;
  private readonly tail = new Uint8Array(MAX_PACKET_LENGTH);
  private readonly tailView = new DataView(this.tail.buffer);
  private tailLength = 0;
  private tailOffset = 0;
  private seen = 0;
  private ended = false;

  constructor(ctx: DecodeContext, visitor: PacketVisitor) {
    this.ctx = ctx;
    this.visitor = visitor;
  }

  /** Octets pushed so far. */
  get bytesSeen(): number {
    return this.seen;
  }

  /** Decodes every packet that this chunk completes; keeps the incomplete rest. */
  push(chunk: Uint8Array): void {
    if (this.ended) throw new Error('PacketStreamDecoder.push after end()');
    const chunkOffset = this.seen;
    this.seen += chunk.length;
    let pos = 0;

    if (this.tailLength > 0) {
      if (this.tailLength < PRIMARY_HEADER_LENGTH) {
        const take = Math.min(PRIMARY_HEADER_LENGTH - this.tailLength, chunk.length);
        this.tail.set(chunk.subarray(0, take), this.tailLength);
        this.tailLength += take;
        pos = take;
        if (this.tailLength < PRIMARY_HEADER_LENGTH) return;
      }
      const len = this.tailView.getUint16(4, false) + 7;
      const need = len - this.tailLength;
      if (chunk.length - pos < need) {
        this.tail.set(chunk.subarray(pos), this.tailLength);
        this.tailLength += chunk.length - pos;
        return;
      }
      this.tail.set(chunk.subarray(pos, pos + need), this.tailLength);
      pos += need;
      this.tailLength = 0;
      decodePacket(this.tail, this.tailView, 0, len, this.tailOffset, this.ctx, this.visitor, true);
    }

    if (pos >= chunk.length) return;
    const view = new DataView(chunk.buffer, chunk.byteOffset, chunk.byteLength);
    const stop = walk(chunk, view, pos, chunk.length, chunkOffset, this.ctx, this.visitor, false);
    if (stop < chunk.length) {
      this.tail.set(chunk.subarray(stop));
      this.tailLength = chunk.length - stop;
      this.tailOffset = chunkOffset + stop;
    }
  }

  /** Ends the stream: an incomplete packet still held is rejected 'length past end'. */
  end(): void {
    if (this.ended) return;
    this.ended = true;
    if (this.tailLength > 0) {
      const raw = this.tail.slice(0, this.tailLength);
      this.tailLength = 0;
      this.visitor.reject(this.tailOffset, 'length past end', raw);
    }
  }
}
