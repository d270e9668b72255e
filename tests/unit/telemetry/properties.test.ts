import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { decodeBuffer, encodePacket } from '../../../src/lib/telemetry';
import type { PacketVisitor } from '../../../src/lib/telemetry';
import { corruptedStreamArb, encodeItems, recordArb, streamItemArb } from './arbitraries';
import { FOUR_LOOPS, decodeAll } from './collect';
import { refCrc } from './hand-built';

// Properties of the codec (property testing with fast-check; CRC checked by the independent npm
// package crc, crc16ccitt, CRC-16/CCITT-FALSE, as in ECSS-E-ST-70-41C Annex B.1).

/** Checks the invariants every decode must keep, whatever the input. */
function checkedVisitor(bytes: Uint8Array): { visitor: PacketVisitor; covered: () => number } {
  let next = 0;
  const visitor: PacketVisitor = {
    record(_rec, offset, length) {
      expect(offset).toBe(next);
      // a record's octets, its CRC included, give CRC 0 [derived]
      expect(refCrc(bytes.subarray(offset, offset + length))).toBe(0);
      next = offset + length;
    },
    reject(offset, _reason, raw) {
      expect(offset).toBe(next);
      expect(raw.length).toBeGreaterThan(0);
      expect([...raw]).toEqual([...bytes.subarray(offset, offset + raw.length)]);
      next = offset + raw.length;
    },
    idle(offset) {
      expect(offset).toBe(next);
      const declared = (((bytes[offset + 4] as number) << 8) | (bytes[offset + 5] as number)) + 7;
      next = offset + declared;
    },
  };
  return { visitor, covered: () => next };
}

describe('codec properties (fast-check)', () => {
  it('random octets never throw; outcomes tile the body; no record fails the CRC', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 600 }), (bytes) => {
        const { visitor, covered } = checkedVisitor(bytes);
        expect(decodeBuffer(bytes, FOUR_LOOPS, visitor).consumed).toBe(bytes.length);
        expect(covered()).toBe(bytes.length);
      }),
      { numRuns: 3000 },
    );
  });

  it('corrupted valid streams never throw; every record passes the CRC', () => {
    fc.assert(
      fc.property(corruptedStreamArb, (bytes) => {
        const { visitor, covered } = checkedVisitor(bytes);
        decodeBuffer(bytes, FOUR_LOOPS, visitor);
        expect(covered()).toBe(bytes.length);
      }),
      { numRuns: 1500 },
    );
  });

  it('any valid record encodes and decodes back exactly', () => {
    fc.assert(
      fc.property(recordArb, (rec) => {
        const bytes = encodePacket(rec);
        expect(refCrc(bytes)).toBe(0);
        expect(decodeAll(bytes)).toEqual([
          { kind: 'record', offset: 0, length: bytes.length, rec },
        ]);
      }),
      { numRuns: 2000 },
    );
  });

  it('a valid stream decodes to its records in order, idle packets counted, nothing rejected', () => {
    fc.assert(
      fc.property(fc.array(streamItemArb, { maxLength: 25 }), (items) => {
        const out = decodeAll(encodeItems(items));
        expect(out.map((o) => (o.kind === 'record' ? o.rec : o.kind))).toEqual(
          items.map((it) => ('record' in it ? it.record : 'idle')),
        );
      }),
      { numRuns: 500 },
    );
  });
});
