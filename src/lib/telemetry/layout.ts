/** Octet sizes of the telemetry contract's packets (CCSDS 133.0-B-2 space packets). */

import { APID } from './types';

export const PRIMARY_HEADER_LENGTH = 6;
/** CUC time tag, 4 coarse + 2 fine octets (CCSDS 301.0-B-4 §3.2). */
export const TIME_TAG_LENGTH = 6;
export const CRC_LENGTH = 2;
/** Largest space packet: 6 header octets + 65 536 data octets (CCSDS 133.0-B-2 §4.1.3). */
export const MAX_PACKET_LENGTH = 65_542;

export const ATTITUDE_PACKET_LENGTH = 56;
export const LOOP_PACKET_LENGTH = 48;
export const BURST_MAX_SAMPLES = 1024;
export const EVENT_MAX_TEXT_LENGTH = 64;
/** Event loop-id octet meaning "concerns no loop". */
export const EVENT_NO_LOOP = 255;

/** Sequence count is 14 bits and wraps 16383 → 0. */
export const SEQUENCE_COUNT_MASK = 0x3fff;

/**
 * Whole burst packet length for N samples: header, time tag, 14 fixed octets (loop id, channel,
 * rate, count, scale, offset), 2N, CRC; 28 + 2N in all.
 */
export function burstPacketLength(samples: number): number {
  return PRIMARY_HEADER_LENGTH + TIME_TAG_LENGTH + 14 + 2 * samples + CRC_LENGTH;
}

/** Whole event packet length for a text of L octets: header, time tag, 5 octets, L, CRC. */
export function eventPacketLength(textLength: number): number {
  return PRIMARY_HEADER_LENGTH + TIME_TAG_LENGTH + 5 + textLength + CRC_LENGTH;
}

/** The APIDs the decoder accepts, idle included. */
export function isKnownApid(apid: number): boolean {
  return (
    apid === APID.attitude ||
    apid === APID.loop ||
    apid === APID.burst ||
    apid === APID.event ||
    apid === APID.idle
  );
}
