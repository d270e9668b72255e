/** Shared set-up of the simulated-feed tests: fleet sheets, scenarios, a decoding visitor and a decoder into the physics core's input. */

import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { spacecraftSheetSchema } from '../../../src/lib/spacecraft-sheet.schema';
import type { SpacecraftSheet } from '../../../src/lib/spacecraft-sheet.schema';
import { decodeBuffer } from '../../../src/lib/telemetry/decode';
import { cucToUnixSeconds } from '../../../src/lib/telemetry/cuc';
import type { EventRecord, RejectReason, TelemetryRecord } from '../../../src/lib/telemetry/types';
import type { BurstInput, LoopInput, SpanInput } from '../../../src/lib/physics/analysis';
import { generatePackets } from '../../../ingest/generator';
import { loadScenarioFile, parseScenario } from '../../../ingest/scenario.schema';
import type { Scenario, ScenarioInput } from '../../../ingest/scenario.schema';

export const INGEST_DIR = fileURLToPath(new URL('../../../ingest/', import.meta.url));

/** 2026-11-02T00:00:00Z, inside the demo sheets' validity. */
export const T0 = Date.UTC(2026, 10, 2);

export function loadSheet(key: 'MR-1' | 'MR-2' | 'MR-3'): SpacecraftSheet {
  return spacecraftSheetSchema.parse(JSON.parse(readFileSync(`${INGEST_DIR}fleet/${key}.json`, 'utf8')));
}

export function loadScenario(name: string): Scenario {
  return loadScenarioFile(`${INGEST_DIR}scenarios/${name}.json`);
}

export function scenario(input: Partial<ScenarioInput> = {}): Scenario {
  return parseScenario({ name: 'test', ...input });
}

export interface Decoded {
  records: { rec: TelemetryRecord; offset: number }[];
  rejects: { offset: number; reason: RejectReason }[];
}

/** Decodes consecutive chunks, with offsets counted from the first chunk's start. */
export function decodeChunks(chunks: Iterable<Uint8Array>, loopIds: number[]): Decoded {
  const out: Decoded = { records: [], rejects: [] };
  let base = 0;
  for (const chunk of chunks) {
    decodeBuffer(chunk, { loopIds: new Set(loopIds) }, {
      record: (rec, offset) => out.records.push({ rec, offset }),
      reject: (offset, reason) => out.rejects.push({ offset, reason }),
      idle: () => {},
    }, base);
    base += chunk.length;
  }
  return out;
}

export function ofKind<K extends TelemetryRecord['kind']>(d: Decoded, kind: K): Extract<TelemetryRecord, { kind: K }>[] {
  return d.records.map((r) => r.rec).filter((r): r is Extract<TelemetryRecord, { kind: K }> => r.kind === kind);
}

/** Growable column of numbers, copied out into a typed array at the end. */
class Column {
  private buf = new Float64Array(1024);
  length = 0;
  push(x: number): void {
    if (this.length === this.buf.length) {
      const next = new Float64Array(this.buf.length * 2);
      next.set(this.buf);
      this.buf = next;
    }
    this.buf[this.length++] = x;
  }
  f64(): Float64Array {
    return this.buf.slice(0, this.length);
  }
  f32(): Float32Array {
    return Float32Array.from(this.buf.subarray(0, this.length));
  }
}

const LOOP_FIELDS = ['current_a', 'voltage_v', 'flow_m_s', 'pressure_pa', 'fluidTemp_c', 'electrodeTemp_c', 'magnetTemp_c', 'commanded_a'] as const;

/** What decodeToSpan gives: the physics core's input, the events, and the rejects. */
export interface DecodedSpan {
  input: SpanInput;
  events: EventRecord[];
  rejects: { offset: number; reason: RejectReason }[];
}

/**
 * Decodes packet chunks with the ground's decoder straight into the typed arrays analyseSpan reads
 * (times in Unix seconds from the time tags, bursts in physical units from scale and offset), without
 * keeping a record object per sample.
 */
export function decodeToSpan(chunks: Iterable<Uint8Array>, sheet: SpacecraftSheet): DecodedSpan {
  const att = { t: new Column(), rx: new Column(), ry: new Column(), rz: new Column(), mx: new Column(), my: new Column(), mz: new Column() };
  const loops = new Map<number, { t: Column } & Record<(typeof LOOP_FIELDS)[number], Column>>();
  for (const l of sheet.loops) {
    loops.set(l.id, { t: new Column(), current_a: new Column(), voltage_v: new Column(), flow_m_s: new Column(), pressure_pa: new Column(), fluidTemp_c: new Column(), electrodeTemp_c: new Column(), magnetTemp_c: new Column(), commanded_a: new Column() });
  }
  const bursts: BurstInput[] = [];
  const events: EventRecord[] = [];
  const rejects: DecodedSpan['rejects'] = [];
  const ctx = { loopIds: new Set(sheet.loops.map((l) => l.id)) };
  let base = 0;
  for (const chunk of chunks) {
    decodeBuffer(chunk, ctx, {
      record: (rec) => {
        const t = cucToUnixSeconds(rec.coarse, rec.fine);
        if (rec.kind === 'attitude') {
          att.t.push(t);
          att.rx.push(rec.rate_rad_s[0]); att.ry.push(rec.rate_rad_s[1]); att.rz.push(rec.rate_rad_s[2]);
          att.mx.push(rec.mag_nT[0]); att.my.push(rec.mag_nT[1]); att.mz.push(rec.mag_nT[2]);
        } else if (rec.kind === 'loop') {
          const c = loops.get(rec.loopId)!;
          c.t.push(t);
          c.current_a.push(rec.measuredCurrent_a); c.voltage_v.push(rec.electrodeVoltage_v); c.flow_m_s.push(rec.flowVelocity_m_s);
          c.pressure_pa.push(rec.pressureRise_pa); c.fluidTemp_c.push(rec.fluidTemp_c); c.electrodeTemp_c.push(rec.electrodeTemp_c);
          c.magnetTemp_c.push(rec.magnetTemp_c); c.commanded_a.push(rec.commandedCurrent_a);
        } else if (rec.kind === 'burst') {
          const values = new Float32Array(rec.raw.length);
          for (let i = 0; i < values.length; i++) values[i] = rec.raw[i]! * rec.scale + rec.offset;
          bursts.push({ loopId: rec.loopId, t_s: t, sampleRate_hz: rec.sampleRate_hz, channel: rec.channel, values });
        } else events.push(rec);
      },
      reject: (offset, reason) => rejects.push({ offset, reason }),
      idle: () => {},
    }, base);
    base += chunk.length;
  }
  const loopInputs: LoopInput[] = [...loops.entries()].map(([loopId, c]) => ({
    loopId,
    t_s: c.t.f64(),
    current_a: c.current_a.f32(),
    voltage_v: c.voltage_v.f32(),
    flow_m_s: c.flow_m_s.f32(),
    pressure_pa: c.pressure_pa.f32(),
    fluidTemp_c: c.fluidTemp_c.f32(),
    electrodeTemp_c: c.electrodeTemp_c.f32(),
    magnetTemp_c: c.magnetTemp_c.f32(),
    commanded_a: c.commanded_a.f32(),
  }));
  return {
    input: {
      attitude: { t_s: att.t.f64(), rate_x: att.rx.f32(), rate_y: att.ry.f32(), rate_z: att.rz.f32(), mag_x: att.mx.f32(), mag_y: att.my.f32(), mag_z: att.mz.f32() },
      loops: loopInputs,
      bursts,
    },
    events,
    rejects,
  };
}

/** Runs generatePackets over `seconds` from T0 and decodes the result into the physics core's input. */
export function generateSpan(sheet: SpacecraftSheet, sc: Scenario, seconds: number): DecodedSpan {
  return decodeToSpan(generatePackets({ sheet, scenario: sc, startMs: T0, durationMs: seconds * 1000 }), sheet);
}
