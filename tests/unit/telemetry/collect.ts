/** A visitor that records every outcome of the decoder, for comparing runs in tests. */

import type { PacketVisitor, RejectReason, TelemetryRecord } from '../../../src/lib/telemetry';
import { decodeBuffer } from '../../../src/lib/telemetry';

export type Outcome =
  | { kind: 'record'; offset: number; length: number; rec: TelemetryRecord }
  | { kind: 'reject'; offset: number; reason: RejectReason; raw: number[] }
  | { kind: 'idle'; offset: number };

export function collector(): { visitor: PacketVisitor; outcomes: Outcome[] } {
  const outcomes: Outcome[] = [];
  const visitor: PacketVisitor = {
    record(rec, offset, length) {
      outcomes.push({ kind: 'record', offset, length, rec });
    },
    reject(offset, reason, raw) {
      outcomes.push({ kind: 'reject', offset, reason, raw: [...raw] });
    },
    idle(offset) {
      outcomes.push({ kind: 'idle', offset });
    },
  };
  return { visitor, outcomes };
}

export const FOUR_LOOPS = { loopIds: new Set([0, 1, 2, 3]) };

/** Every outcome of decodeBuffer over bytes. */
export function decodeAll(bytes: Uint8Array, ctx = FOUR_LOOPS, baseOffset = 0): Outcome[] {
  const { visitor, outcomes } = collector();
  const { consumed } = decodeBuffer(bytes, ctx, visitor, baseOffset);
  if (consumed !== bytes.length) throw new Error(`consumed ${consumed} of ${bytes.length}`);
  return outcomes;
}

/** The reasons of the rejections among outcomes. */
export function reasons(outcomes: Outcome[]): RejectReason[] {
  return outcomes.flatMap((o) => (o.kind === 'reject' ? [o.reason] : []));
}
