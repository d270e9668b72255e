/** CCSDS 133.0-B-2 §4.1.3 space-packet primary header, 6 octets, big-endian. */

import { PRIMARY_HEADER_LENGTH } from './layout';

export interface PrimaryHeader {
  /** 3 bits; 0 for version-1 space packets. */
  versionNumber: number;
  /** 1 bit; 0 telemetry, 1 telecommand. */
  packetType: number;
  /** 1 bit; 1 when a secondary header follows. */
  secondaryHeaderFlag: number;
  /** 11 bits. */
  apid: number;
  /** 2 bits; 0 continuation, 1 first, 2 last, 3 unsegmented. */
  sequenceFlags: number;
  /** 14 bits. */
  sequenceCount: number;
  /** 16 bits; octets in the packet data field minus 1. */
  dataLengthField: number;
}

/** Reads the primary header at offset (CCSDS 133.0-B-2 §4.1.3). */
export function readPrimaryHeader(bytes: Uint8Array, offset = 0): PrimaryHeader {
  if (offset < 0 || offset + PRIMARY_HEADER_LENGTH > bytes.length) {
    throw new RangeError(`primary header at ${offset} runs past ${bytes.length} octets`);
  }
  const w1 = ((bytes[offset] as number) << 8) | (bytes[offset + 1] as number);
  const w2 = ((bytes[offset + 2] as number) << 8) | (bytes[offset + 3] as number);
  const len = ((bytes[offset + 4] as number) << 8) | (bytes[offset + 5] as number);
  return {
    versionNumber: w1 >>> 13,
    packetType: (w1 >>> 12) & 1,
    secondaryHeaderFlag: (w1 >>> 11) & 1,
    apid: w1 & 0x7ff,
    sequenceFlags: w2 >>> 14,
    sequenceCount: w2 & 0x3fff,
    dataLengthField: len,
  };
}

function checkField(name: string, value: number, max: number): void {
  if (!Number.isInteger(value) || value < 0 || value > max) {
    throw new RangeError(`${name} ${value} outside 0..${max}`);
  }
}

/** Writes a primary header at offset (CCSDS 133.0-B-2 §4.1.3); every field must fit its bits. */
export function writePrimaryHeader(target: Uint8Array, offset: number, h: PrimaryHeader): void {
  checkField('version number', h.versionNumber, 7);
  checkField('packet type', h.packetType, 1);
  checkField('secondary header flag', h.secondaryHeaderFlag, 1);
  checkField('APID', h.apid, 0x7ff);
  checkField('sequence flags', h.sequenceFlags, 3);
  checkField('sequence count', h.sequenceCount, 0x3fff);
  checkField('data length field', h.dataLengthField, 0xffff);
  if (offset < 0 || offset + PRIMARY_HEADER_LENGTH > target.length) {
    throw new RangeError(`primary header at ${offset} runs past ${target.length} octets`);
  }
  const w1 =
    (h.versionNumber << 13) | (h.packetType << 12) | (h.secondaryHeaderFlag << 11) | h.apid;
  const w2 = (h.sequenceFlags << 14) | h.sequenceCount;
  target[offset] = w1 >>> 8;
  target[offset + 1] = w1 & 0xff;
  target[offset + 2] = w2 >>> 8;
  target[offset + 3] = w2 & 0xff;
  target[offset + 4] = h.dataLengthField >>> 8;
  target[offset + 5] = h.dataLengthField & 0xff;
}
