import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { PacketStreamDecoder, encodePacket, encodePacketInto } from '../../../src/lib/telemetry';
import type { AttitudeRecord, LoopRecord, TelemetryRecord } from '../../../src/lib/telemetry';
import { corruptedStreamArb, encodeItems, streamItemArb } from './arbitraries';
import { FOUR_LOOPS, collector, decodeAll } from './collect';
import type { Outcome } from './collect';
import { concat, header } from './hand-built';

// The streamed decoder must give exactly what the whole-body decoder gives for the same octets
// (the telemetry contract: a recorded pass file is the same byte stream as a request body).

function decodeChunks(bytes: Uint8Array, cuts: number[]): { outcomes: Outcome[]; seen: number } {
  const { visitor, outcomes } = collector();
  const d = new PacketStreamDecoder(FOUR_LOOPS, visitor);
  let from = 0;
  for (const cut of [...cuts].sort((a, b) => a - b)) {
    d.push(bytes.subarray(from, cut));
    from = cut;
  }
  d.push(bytes.subarray(from));
  d.end();
  return { outcomes, seen: d.bytesSeen };
}

const cutsArb = (n: number) => fc.array(fc.integer({ min: 0, max: n }), { maxLength: 12 });

describe('PacketStreamDecoder', () => {
  it('random chunk splits of a valid stream give the records and offsets of decodeBuffer', () => {
    fc.assert(
      fc.property(
        fc.array(streamItemArb, { minLength: 1, maxLength: 15 }).chain((items) => {
          const bytes = encodeItems(items);
          return fc.tuple(fc.constant(bytes), cutsArb(bytes.length));
        }),
        ([bytes, cuts]) => {
          const whole = decodeAll(bytes);
          expect(whole.every((o) => o.kind !== 'reject')).toBe(true);
          const { outcomes, seen } = decodeChunks(bytes, cuts);
          expect(outcomes).toEqual(whole);
          expect(seen).toBe(bytes.length);
        },
      ),
      { numRuns: 500 },
    );
  });

  it('random chunk splits of corrupted or truncated streams give the same outcomes too', () => {
    fc.assert(
      fc.property(
        corruptedStreamArb.chain((bytes) => fc.tuple(fc.constant(bytes), cutsArb(bytes.length))),
        ([bytes, cuts]) => {
          expect(decodeChunks(bytes, cuts).outcomes).toEqual(decodeAll(bytes));
        },
      ),
      { numRuns: 1000 },
    );
  });

  it('one-octet chunks, and empty chunks, change nothing', () => {
    const bytes = encodeItems([
      { record: loopRecord(1) },
      { idleFill: 3 },
      { record: loopRecord(2) },
    ]);
    const every = Array.from({ length: bytes.length }, (_, i) => i);
    expect(decodeChunks(bytes, every).outcomes).toEqual(decodeAll(bytes));
    expect(decodeChunks(bytes, [0, 0, 5, 5, 5, bytes.length]).outcomes).toEqual(decodeAll(bytes));
  });

  it('a partial packet left at end() is rejected length past end at its absolute offset', () => {
    const good = encodePacket(loopRecord(1));
    const partial = encodePacket(loopRecord(2)).subarray(0, 30);
    const { visitor, outcomes } = collector();
    const d = new PacketStreamDecoder(FOUR_LOOPS, visitor);
    d.push(good.subarray(0, 20));
    d.push(concat(good.subarray(20), partial.subarray(0, 3)));
    d.push(partial.subarray(3));
    expect(outcomes).toHaveLength(1);
    d.end();
    expect(outcomes).toEqual([
      { kind: 'record', offset: 0, length: 48, rec: loopRecord(1) },
      { kind: 'reject', offset: 48, reason: 'length past end', raw: [...partial] },
    ]);
    expect(d.bytesSeen).toBe(78);
    d.end(); // a second end() reports nothing more
    expect(outcomes).toHaveLength(2);
    expect(() => d.push(good)).toThrow();
  });

  it('a rejected packet spanning two chunks is handed over as a copy that outlives the chunks', () => {
    const bad = encodePacket(loopRecord(1));
    bad[40] = (bad[40] as number) ^ 0xff;
    const raws: Uint8Array[] = [];
    const d = new PacketStreamDecoder(FOUR_LOOPS, {
      record: () => {},
      reject: (_o, _r, raw) => raws.push(raw),
      idle: () => {},
    });
    const a = bad.slice(0, 25);
    const b = bad.slice(25);
    d.push(a);
    d.push(b);
    a.fill(0);
    b.fill(0);
    d.push(encodePacket(loopRecord(2)));
    d.end();
    expect(raws).toHaveLength(1);
    expect(raws[0]).toEqual(encodePacket(loopRecord(1)).map((x, i) => (i === 40 ? x ^ 0xff : x)));
  });

  it('holds a garbage header declaring 65 535 data octets until the end, then rejects the rest', () => {
    const garbage = Uint8Array.from([...header({ apid: 16 }, 65_536), 1, 2, 3]);
    const good = encodePacket(loopRecord(4));
    const { outcomes } = decodeChunks(concat(garbage, good, good), [4, 9, 60, 100]);
    expect(outcomes).toEqual([
      {
        kind: 'reject',
        offset: 0,
        reason: 'length past end',
        raw: [...concat(garbage, good, good)],
      },
    ]);
  });

  it('decodes a ~150 MB stream in 1 MiB chunks with flat memory and reports its speed', () => {
    const { bytes, packets } = generateStream(150_000_000);
    let records = 0;
    let rejects = 0;
    let lastSeq = -1;
    const d = new PacketStreamDecoder(FOUR_LOOPS, {
      record: (rec: TelemetryRecord) => {
        records++;
        lastSeq = rec.seq;
      },
      reject: () => rejects++,
      idle: () => {},
    });
    // heapUsed holds the records; arrayBuffers would show copies of chunks
    const start = process.memoryUsage();
    let maxHeap = start.heapUsed;
    let maxBuffers = start.arrayBuffers;
    const sample = (): void => {
      const m = process.memoryUsage();
      maxHeap = Math.max(maxHeap, m.heapUsed);
      maxBuffers = Math.max(maxBuffers, m.arrayBuffers);
    };
    const chunk = 1 << 20;
    const t0 = performance.now();
    for (let p = 0, n = 0; p < bytes.length; p += chunk, n++) {
      d.push(bytes.subarray(p, Math.min(bytes.length, p + chunk)));
      if (n % 4 === 0) sample();
    }
    d.end();
    const seconds = (performance.now() - t0) / 1000;
    sample();
    const mbPerS = bytes.length / 1e6 / seconds;
    console.log(
      `stream decode: ${packets} packets, ${(bytes.length / 1e6).toFixed(1)} MB in ${seconds.toFixed(2)} s` +
        ` = ${mbPerS.toFixed(0)} MB/s; heap growth ${((maxHeap - start.heapUsed) / 1e6).toFixed(1)} MB`,
    );
    expect(records).toBe(packets);
    expect(rejects).toBe(0);
    expect(lastSeq).toBe((packets - 1) & 0x3fff);
    expect(d.bytesSeen).toBe(bytes.length);
    expect(maxHeap - start.heapUsed).toBeLessThan(50e6);
    expect(maxBuffers - start.arrayBuffers).toBeLessThan(50e6);
    // "a few seconds" for ~3.5 M packets; generous so that a loaded machine does not fail it
    expect(seconds).toBeLessThan(10);
  });
});

function loopRecord(seq: number): LoopRecord {
  return {
    kind: 'loop',
    seq,
    coarse: 700_000_000 + seq,
    fine: 0,
    loopId: seq % 4,
    status: 0b1001,
    commandedCurrent_a: 10,
    measuredCurrent_a: 9.75,
    electrodeVoltage_v: 0.125,
    flowVelocity_m_s: 0.5,
    pressureRise_pa: 1500,
    fluidTemp_c: 20,
    electrodeTemp_c: 25,
    magnetTemp_c: 22,
  };
}

/** Attitude and loop packets, a record object patched per packet and written in place. */
function generateStream(target: number): { bytes: Uint8Array; packets: number } {
  const buf = new Uint8Array(target);
  const att: AttitudeRecord = {
    kind: 'attitude',
    seq: 0,
    coarse: 700_000_000,
    fine: 0,
    mode: 1,
    rate_rad_s: [1e-3, -2e-3, 5e-4],
    quaternion: [0, 0, 0, 1],
    mag_nT: [20_000, -3_000, 15_000],
  };
  const loop = loopRecord(0);
  let off = 0;
  let k = 0;
  while (off + 56 <= target) {
    const rec = k % 5 === 0 ? att : loop;
    rec.seq = k & 0x3fff;
    rec.fine = k & 0xffff;
    if (rec.kind === 'loop') rec.loopId = k % 4;
    off += encodePacketInto(rec, buf, off);
    k++;
  }
  return { bytes: buf.subarray(0, off), packets: k };
}
