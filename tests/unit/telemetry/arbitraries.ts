/** fast-check generators of valid telemetry records and of packet streams. */

import fc from 'fast-check';
import { encodeIdlePacket, encodePacket } from '../../../src/lib/telemetry';
import type {
  AttitudeRecord,
  BurstRecord,
  EventRecord,
  LoopRecord,
  TelemetryRecord,
  Vec3,
} from '../../../src/lib/telemetry';
import { concat } from './hand-built';

/** Finite binary32 values (Math.fround keeps them exactly representable on the wire). */
const f32 = fc.float({ noNaN: true, noDefaultInfinity: true }).map(Math.fround);
const vec3: fc.Arbitrary<Vec3> = fc.tuple(f32, f32, f32);
const head = {
  seq: fc.integer({ min: 0, max: 16383 }),
  coarse: fc.integer({ min: 0, max: 0xffff_ffff }),
  fine: fc.integer({ min: 0, max: 0xffff }),
};
const loopId = fc.integer({ min: 0, max: 3 });
const asciiChar = fc.integer({ min: 0, max: 0x7f }).map((c) => String.fromCharCode(c));

export const attitudeArb: fc.Arbitrary<AttitudeRecord> = fc.record({
  kind: fc.constant('attitude' as const),
  ...head,
  mode: fc.integer({ min: 0, max: 3 }),
  rate_rad_s: vec3,
  quaternion: fc.tuple(f32, f32, f32, f32),
  mag_nT: vec3,
});

export const loopArb: fc.Arbitrary<LoopRecord> = fc.record({
  kind: fc.constant('loop' as const),
  ...head,
  loopId,
  status: fc.integer({ min: 0, max: 255 }),
  commandedCurrent_a: f32,
  measuredCurrent_a: f32,
  electrodeVoltage_v: f32,
  flowVelocity_m_s: f32,
  pressureRise_pa: f32,
  fluidTemp_c: f32,
  electrodeTemp_c: f32,
  magnetTemp_c: f32,
});

export const burstArb: fc.Arbitrary<BurstRecord> = fc.record({
  kind: fc.constant('burst' as const),
  ...head,
  loopId,
  channel: fc.constantFrom(0 as const, 1 as const),
  sampleRate_hz: fc.integer({ min: 1, max: 65535 }),
  scale: f32,
  offset: f32,
  raw: fc.int16Array({ minLength: 1, maxLength: 1024 }),
});

export const eventArb: fc.Arbitrary<EventRecord> = fc.record({
  kind: fc.constant('event' as const),
  ...head,
  severity: fc.constantFrom(1 as const, 2 as const, 3 as const, 4 as const),
  code: fc.integer({ min: 0, max: 0xffff }),
  loopId: fc.option(loopId, { nil: null }),
  text: fc.string({ unit: asciiChar, maxLength: 64 }),
});

export const recordArb: fc.Arbitrary<TelemetryRecord> = fc.oneof(
  attitudeArb,
  loopArb,
  burstArb,
  eventArb,
);

/** Either a record or an idle packet (fill length). */
export type StreamItem = { record: TelemetryRecord } | { idleFill: number };

export const streamItemArb: fc.Arbitrary<StreamItem> = fc.oneof(
  { weight: 6, arbitrary: recordArb.map((record) => ({ record })) },
  { weight: 1, arbitrary: fc.integer({ min: 1, max: 40 }).map((idleFill) => ({ idleFill })) },
);

export function encodeItems(items: StreamItem[]): Uint8Array {
  return concat(
    new Uint8Array(0),
    ...items.map((it) =>
      'record' in it ? encodePacket(it.record) : encodeIdlePacket(0, it.idleFill),
    ),
  );
}

/** A valid stream with some octets overwritten: exercises every path, records included. */
export const corruptedStreamArb: fc.Arbitrary<Uint8Array> = fc
  .tuple(
    fc.array(streamItemArb, { minLength: 1, maxLength: 12 }),
    fc.array(fc.tuple(fc.nat(), fc.integer({ min: 0, max: 255 })), { maxLength: 6 }),
    fc.nat(),
  )
  .map(([items, hits, cut]) => {
    const bytes = encodeItems(items);
    for (const [at, value] of hits) bytes[at % bytes.length] = value;
    return bytes.subarray(0, bytes.length - (cut % 4 === 0 ? cut % 30 : 0));
  });
