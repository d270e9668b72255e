import { concatBytes } from './bytes';
import { encodePacket, unixMsToCuc, type LoopRecord, type AttitudeRecord } from '../../src/lib/telemetry';

export { concatBytes };

/** A loop housekeeping record at a time, with plausible values. */
export function loopRecord(seq: number, ms: number, loopId = 0, current = 5): LoopRecord {
  const { coarse, fine } = unixMsToCuc(ms);
  return {
    kind: 'loop',
    seq,
    coarse,
    fine,
    loopId,
    status: 0b1001,
    commandedCurrent_a: current,
    measuredCurrent_a: Math.fround(current * 0.99),
    electrodeVoltage_v: Math.fround(0.2 + current * 0.04),
    flowVelocity_m_s: Math.fround(current * 0.01),
    pressureRise_pa: Math.fround(current * 120),
    fluidTemp_c: 21.5,
    electrodeTemp_c: 23.25,
    magnetTemp_c: 20.75,
  };
}

/** An attitude record at a time. */
export function attitudeRecord(seq: number, ms: number): AttitudeRecord {
  const { coarse, fine } = unixMsToCuc(ms);
  return { kind: 'attitude', seq, coarse, fine, mode: 1, rate_rad_s: [0.001, -0.002, 0.0005], quaternion: [0, 0, 0, 1], mag_nT: [21000, -3000, 40000] };
}

/** n loop packets at 10 Hz from seq0 (wrapping at 14 bits), encoded back to back. */
export function loopStream(n: number, startMs: number, seq0 = 0, loopId = 0): Uint8Array {
  return concatBytes(Array.from({ length: n }, (_, i) => encodePacket(loopRecord((seq0 + i) % 16384, startMs + i * 100, loopId, 4 + (i % 7)))));
}
