/**
 * CCSDS unsegmented time code (CUC, CCSDS 301.0-B-4 §3.2) with 4 coarse and 2 fine octets, on the
 * contract's agency-defined epoch 2000-01-01T00:00:00Z. Leap seconds are ignored: coarse time is
 * Unix time minus 946 684 800 s.
 */

import { EPOCH_2000_UNIX_S } from './types';

const FINE_PER_S = 65_536;
const EPOCH_MS = EPOCH_2000_UNIX_S * 1000;
const MAX_COARSE = 0xffff_ffff;

/** Unix milliseconds of a CUC time (fractional: one fine unit is 2^-16 s ≈ 15.26 µs). */
export function cucToUnixMs(coarse: number, fine: number): number {
  return (coarse + EPOCH_2000_UNIX_S) * 1000 + (fine * 1000) / FINE_PER_S;
}

/** Unix seconds of a CUC time. */
export function cucToUnixSeconds(coarse: number, fine: number): number {
  return coarse + EPOCH_2000_UNIX_S + fine / FINE_PER_S;
}

/** CUC time of Unix milliseconds, fine rounded to the nearest 2^-16 s with carry into coarse. */
export function unixMsToCuc(ms: number): { coarse: number; fine: number } {
  if (!Number.isFinite(ms)) throw new RangeError(`time ${ms} ms is not finite`);
  const sinceEpoch = ms - EPOCH_MS;
  let coarse = Math.floor(sinceEpoch / 1000);
  let remMs = sinceEpoch - coarse * 1000;
  if (remMs < 0) {
    coarse -= 1;
    remMs += 1000;
  } else if (remMs >= 1000) {
    coarse += 1;
    remMs -= 1000;
  }
  // remMs * 65536 is exact (power of two), so the one division is the only rounding before round().
  let fine = Math.round((remMs * FINE_PER_S) / 1000);
  if (fine >= FINE_PER_S) {
    coarse += 1;
    fine -= FINE_PER_S;
  }
  if (coarse < 0 || coarse > MAX_COARSE) {
    throw new RangeError(`time ${ms} ms is outside the 32-bit CUC range from 2000-01-01`);
  }
  return { coarse, fine };
}

/** coarse·65536 + fine: the exact integer time tag (< 2^48) that identifies a packet's time. */
export function timeTag(coarse: number, fine: number): number {
  return coarse * FINE_PER_S + fine;
}

/**
 * ISO 8601 UTC text of a CUC time with six fractional digits (microseconds, the resolution of a
 * PostgreSQL timestamp; distinct fine values stay distinct since 2^-16 s > 1 µs).
 */
export function cucToIso(coarse: number, fine: number): string {
  const whole = new Date((coarse + EPOCH_2000_UNIX_S) * 1000).toISOString();
  const micros = Math.round((fine * 1_000_000) / FINE_PER_S);
  return `${whole.slice(0, 19)}.${String(micros).padStart(6, '0')}Z`;
}
