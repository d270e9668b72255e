/**
 * Typed records of the telemetry contract (interface control, version 1).
 * Shared by the decoder (ground), the encoder (simulated feed, tests) and storage.
 */

/** Application process identifiers of the contract. */
export const APID = {
  attitude: 16,
  loop: 32,
  burst: 48,
  event: 64,
  idle: 2047,
} as const;

export type TelemetryApid = (typeof APID)[Exclude<keyof typeof APID, 'idle'>];

/** Fields every telemetry packet with a secondary header carries. */
export interface PacketHead {
  /** 14-bit packet sequence count, per APID. */
  seq: number;
  /** CUC coarse time: whole seconds since 2000-01-01T00:00:00Z (leap seconds ignored). */
  coarse: number;
  /** CUC fine time: units of 2^-16 s. */
  fine: number;
}

export type Vec3 = [number, number, number];

/** APID 16, attitude housekeeping. */
export interface AttitudeRecord extends PacketHead {
  kind: 'attitude';
  /** 0 safe, 1 pointing, 2 slew, 3 momentum unload. */
  mode: number;
  rate_rad_s: Vec3;
  /** q1 q2 q3 q4, scalar last, inertial → body. */
  quaternion: [number, number, number, number];
  mag_nT: Vec3;
}

/** Status bits of loop housekeeping. */
export const LOOP_STATUS = {
  pumpEnabled: 1 << 0,
  overCurrentLatch: 1 << 1,
  heaterOn: 1 << 2,
  flowmeterValid: 1 << 3,
} as const;

/** APID 32, loop housekeeping. */
export interface LoopRecord extends PacketHead {
  kind: 'loop';
  loopId: number;
  status: number;
  commandedCurrent_a: number;
  measuredCurrent_a: number;
  electrodeVoltage_v: number;
  flowVelocity_m_s: number;
  pressureRise_pa: number;
  fluidTemp_c: number;
  electrodeTemp_c: number;
  magnetTemp_c: number;
}

/** APID 48, loop burst capture. Physical value = raw × scale + offset. */
export interface BurstRecord extends PacketHead {
  kind: 'burst';
  loopId: number;
  /** 0 pump pressure rise (Pa), 1 measured pump current (A). */
  channel: 0 | 1;
  sampleRate_hz: number;
  scale: number;
  offset: number;
  /** Raw int16 samples, oldest first; 1–1024 of them. */
  raw: Int16Array;
}

/** APID 64, event report. */
export interface EventRecord extends PacketHead {
  kind: 'event';
  /** 1 info, 2 low, 3 medium, 4 high. */
  severity: 1 | 2 | 3 | 4;
  code: number;
  /** Loop id, or null when the event concerns no loop (255 on the wire). */
  loopId: number | null;
  /** ASCII, at most 64 characters. */
  text: string;
}

export type TelemetryRecord = AttitudeRecord | LoopRecord | BurstRecord | EventRecord;

/** Why a packet was refused; the words are the contract's. */
export type RejectReason =
  | 'bad version'
  | 'telecommand type'
  | 'no secondary header'
  | 'segmented packet'
  | 'unknown apid'
  | 'length past end'
  | 'length wrong for apid'
  | 'crc mismatch'
  | 'unknown loop id'
  | 'non-finite value'
  | 'bad field value'
  /** Refused by the store, not the decoder: a time tag more than a day after arrival. */
  | 'time tag in future';

/** Seconds between the Unix epoch and the contract's epoch, 2000-01-01T00:00:00Z. */
export const EPOCH_2000_UNIX_S = 946_684_800;
