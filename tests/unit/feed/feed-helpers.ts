/** Shared set-up of the simulated-feed tests: fleet sheets, scenarios and a decoding visitor. */

import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { spacecraftSheetSchema } from '../../../src/lib/spacecraft-sheet.schema';
import type { SpacecraftSheet } from '../../../src/lib/spacecraft-sheet.schema';
import { decodeBuffer } from '../../../src/lib/telemetry/decode';
import type { RejectReason, TelemetryRecord } from '../../../src/lib/telemetry/types';
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
