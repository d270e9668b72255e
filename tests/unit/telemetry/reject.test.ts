import { describe, expect, it } from 'vitest';
import { decodeBuffer, encodeIdlePacket, encodePacket } from '../../../src/lib/telemetry';
import type { LoopRecord, RejectReason } from '../../../src/lib/telemetry';
import { decodeAll, reasons } from './collect';
import {
  ascii,
  attitudeUser,
  burstUser,
  concat,
  eventUser,
  header,
  hex,
  loopUser,
  tmPacket,
  u32,
} from './hand-built';

// Every packet here is built by hand (Node's Buffer writers, CRC by the npm package crc,
// crc16ccitt), header per CCSDS 133.0-B-2 §4.1.3, time tag per CCSDS 301.0-B-4 §3.2, CRC per
// ECSS-E-ST-70-41C Annex B.1, user data per the layouts of the telemetry contract.

const ctx = { loopIds: new Set([0, 1]) };
const goodAttitudeUser = attitudeUser(1, [0, 0, 0], [0, 0, 0, 1], [1, 2, 3]);
const goodLoopUser = loopUser(1, 0, [1, 1, 1, 1, 1, 1, 1, 1]);
const goodAttitude = tmPacket({ apid: 16, seq: 1 }, 100, 0, goodAttitudeUser);

function only(bytes: Uint8Array): { reason: RejectReason; offset: number; raw: number[] } {
  const out = decodeAll(bytes, ctx);
  expect(out).toHaveLength(1);
  const o = out[0];
  if (o?.kind !== 'reject') throw new Error(`expected a rejection, got ${JSON.stringify(o)}`);
  return o;
}

function expectReject(bytes: Uint8Array, reason: RejectReason): void {
  expect(only(bytes)).toEqual({ kind: 'reject', offset: 0, reason, raw: [...bytes] });
}

describe('rejection reasons, one hand-made packet each', () => {
  it('version 001 → bad version', () => {
    expectReject(tmPacket({ apid: 16, version: 1 }, 100, 0, goodAttitudeUser), 'bad version');
    expectReject(tmPacket({ apid: 16, version: 7 }, 100, 0, goodAttitudeUser), 'bad version');
  });

  it('type bit 1 → telecommand type', () => {
    expectReject(tmPacket({ apid: 16, type: 1 }, 100, 0, goodAttitudeUser), 'telecommand type');
  });

  it('secondary header flag 0 on a non-idle packet → no secondary header', () => {
    expectReject(
      tmPacket({ apid: 16, secondaryHeader: 0 }, 100, 0, goodAttitudeUser),
      'no secondary header',
    );
    expectReject(
      tmPacket({ apid: 32, secondaryHeader: 0 }, 100, 0, goodLoopUser),
      'no secondary header',
    );
  });

  it.each([0, 1, 2])('sequence flags %i (not 11) → segmented packet', (flags) => {
    expectReject(
      tmPacket({ apid: 16, seqFlags: flags }, 100, 0, goodAttitudeUser),
      'segmented packet',
    );
  });

  it.each([0, 17, 33, 0x7fe])('APID %i → unknown apid', (apid) => {
    expectReject(tmPacket({ apid }, 100, 0, goodAttitudeUser), 'unknown apid');
  });

  it('declared length past the end → length past end, the rest of the body as one', () => {
    const cut = goodAttitude.subarray(0, 50);
    expectReject(cut, 'length past end');
    // a good packet, then a header that declares 1000 data octets with only 20 behind it
    const tail = Uint8Array.from([...header({ apid: 32 }, 1000), ...new Array(20).fill(7)]);
    expect(decodeAll(concat(goodAttitude, tail), ctx)).toEqual([
      { kind: 'record', offset: 0, length: 56, rec: expect.objectContaining({ kind: 'attitude' }) },
      { kind: 'reject', offset: 56, reason: 'length past end', raw: [...tail] },
    ]);
    // fewer than 6 octets cannot even hold a header
    expect(decodeAll(concat(goodAttitude, hex('08 10 C0')), ctx).at(-1)).toEqual({
      kind: 'reject',
      offset: 56,
      reason: 'length past end',
      raw: [0x08, 0x10, 0xc0],
    });
  });

  it('length not the layout of the APID → length wrong for apid', () => {
    // attitude and loop with one octet too many and one too few
    expectReject(tmPacket({ apid: 16 }, 1, 0, [...goodAttitudeUser, 0]), 'length wrong for apid');
    expectReject(
      tmPacket({ apid: 16 }, 1, 0, goodAttitudeUser.slice(0, -1)),
      'length wrong for apid',
    );
    expectReject(tmPacket({ apid: 32 }, 1, 0, [...goodLoopUser, 0]), 'length wrong for apid');
    expectReject(tmPacket({ apid: 32 }, 1, 0, goodLoopUser.slice(0, -2)), 'length wrong for apid');
    // burst: declared N 4 with 3 samples; N 0; N 1025 with 1025 samples
    expectReject(
      tmPacket({ apid: 48 }, 1, 0, burstUser(0, 0, 10, 1, 0, [1, 2, 3], 4)),
      'length wrong for apid',
    );
    expectReject(
      tmPacket({ apid: 48 }, 1, 0, burstUser(0, 0, 10, 1, 0, [], 0)),
      'length wrong for apid',
    );
    const big = new Array(1025).fill(5);
    expectReject(
      tmPacket({ apid: 48 }, 1, 0, burstUser(0, 0, 10, 1, 0, big)),
      'length wrong for apid',
    );
    // burst too short to hold its sample count
    expectReject(tmPacket({ apid: 48 }, 1, 0, [0, 0, 0]), 'length wrong for apid');
    // event: L 65 with 65 octets; L 3 with 4 octets of text; too short to hold L
    expectReject(
      tmPacket({ apid: 64 }, 1, 0, eventUser(1, 1, 255, ascii('x'.repeat(65)))),
      'length wrong for apid',
    );
    expectReject(
      tmPacket({ apid: 64 }, 1, 0, [...eventUser(1, 1, 255, ascii('abc')), 0x64]),
      'length wrong for apid',
    );
    expectReject(tmPacket({ apid: 64 }, 1, 0, [1, 0]), 'length wrong for apid');
  });

  it('one flipped bit → crc mismatch, and the CRC is checked before the field values', () => {
    const bad = goodAttitude.slice();
    bad[20] = (bad[20] as number) ^ 0x04;
    expectReject(bad, 'crc mismatch');
    const crcFlip = goodAttitude.slice();
    crcFlip[55] = (crcFlip[55] as number) ^ 0x01;
    expectReject(crcFlip, 'crc mismatch');
    // mode 7 and loop id 9 are bad fields, but a broken CRC says the octets are not to be read
    const mode7 = tmPacket({ apid: 16 }, 1, 0, attitudeUser(7, [0, 0, 0], [0, 0, 0, 1], [0, 0, 0]));
    mode7[30] = (mode7[30] as number) ^ 0xff;
    expectReject(mode7, 'crc mismatch');
    const loop9 = tmPacket({ apid: 32 }, 1, 0, loopUser(9, 0, [1, 1, 1, 1, 1, 1, 1, 1]));
    loop9[14] = (loop9[14] as number) ^ 0xff;
    expectReject(loop9, 'crc mismatch');
  });

  it('loop id the spacecraft does not have → unknown loop id (event 255 allowed)', () => {
    expectReject(
      tmPacket({ apid: 32 }, 1, 0, loopUser(2, 0, [1, 1, 1, 1, 1, 1, 1, 1])),
      'unknown loop id',
    );
    expectReject(tmPacket({ apid: 48 }, 1, 0, burstUser(3, 0, 10, 1, 0, [1])), 'unknown loop id');
    expectReject(tmPacket({ apid: 64 }, 1, 0, eventUser(1, 1, 2, ascii('hi'))), 'unknown loop id');
    expectReject(
      tmPacket({ apid: 64 }, 1, 0, eventUser(1, 1, 254, ascii('hi'))),
      'unknown loop id',
    );
    const none = decodeAll(tmPacket({ apid: 64 }, 1, 0, eventUser(1, 1, 255, ascii('hi'))), ctx);
    expect(none).toMatchObject([
      { kind: 'record', rec: { kind: 'event', loopId: null, text: 'hi' } },
    ]);
  });

  it('NaN or ±Infinity in any float → non-finite value', () => {
    for (const bad of [Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY]) {
      expectReject(
        tmPacket({ apid: 16 }, 1, 0, attitudeUser(1, [0, bad, 0], [0, 0, 0, 1], [0, 0, 0])),
        'non-finite value',
      );
      expectReject(
        tmPacket({ apid: 16 }, 1, 0, attitudeUser(1, [0, 0, 0], [0, 0, 0, bad], [0, 0, 0])),
        'non-finite value',
      );
      expectReject(
        tmPacket({ apid: 16 }, 1, 0, attitudeUser(1, [0, 0, 0], [0, 0, 0, 1], [0, 0, bad])),
        'non-finite value',
      );
      for (let i = 0; i < 8; i++) {
        const floats = [1, 1, 1, 1, 1, 1, 1, 1];
        floats[i] = bad;
        expectReject(tmPacket({ apid: 32 }, 1, 0, loopUser(0, 0, floats)), 'non-finite value');
      }
      expectReject(
        tmPacket({ apid: 48 }, 1, 0, burstUser(0, 0, 10, bad, 0, [1])),
        'non-finite value',
      );
      expectReject(
        tmPacket({ apid: 48 }, 1, 0, burstUser(0, 0, 10, 1, bad, [1])),
        'non-finite value',
      );
    }
    // the largest finite binary32 values are fine, even all ten at once (IEEE 754-2008)
    const max = 3.4028234663852886e38;
    const ok = tmPacket(
      { apid: 16 },
      1,
      0,
      attitudeUser(1, [max, max, max], [max, max, max, max], [max, max, max]),
    );
    expect(decodeAll(ok, ctx)).toMatchObject([{ kind: 'record' }]);
    // a NaN whose payload is not the default one is still NaN (IEEE 754-2008)
    const payloadNaN = tmPacket({ apid: 32 }, 1, 0, [
      0,
      0,
      ...u32(0x7fc0_0001),
      ...new Array(28).fill(0),
    ]);
    expectReject(payloadNaN, 'non-finite value');
  });

  it('values outside their fields → bad field value', () => {
    expectReject(
      tmPacket({ apid: 16 }, 1, 0, attitudeUser(4, [0, 0, 0], [0, 0, 0, 1], [0, 0, 0])),
      'bad field value',
    );
    expectReject(
      tmPacket({ apid: 16 }, 1, 0, attitudeUser(255, [0, 0, 0], [0, 0, 0, 1], [0, 0, 0])),
      'bad field value',
    );
    expectReject(tmPacket({ apid: 48 }, 1, 0, burstUser(0, 2, 10, 1, 0, [1])), 'bad field value');
    expectReject(tmPacket({ apid: 48 }, 1, 0, burstUser(0, 0, 0, 1, 0, [1])), 'bad field value');
    for (const severity of [0, 5, 255]) {
      expectReject(
        tmPacket({ apid: 64 }, 1, 0, eventUser(severity, 1, 255, ascii('x'))),
        'bad field value',
      );
    }
    expectReject(
      tmPacket({ apid: 64 }, 1, 0, eventUser(1, 1, 255, [0x4f, 0xc3, 0xa9])),
      'bad field value',
    );
    expectReject(tmPacket({ apid: 64 }, 1, 0, eventUser(1, 1, 255, [0x80])), 'bad field value');
    // an APID 2047 packet with a secondary header is no CCSDS idle packet
    expectReject(
      Uint8Array.from([...header({ apid: 2047, secondaryHeader: 1 }, 4), 0, 0, 0, 0]),
      'bad field value',
    );
  });

  it('the edges that are valid: mode 3, channel 1, severity 1 and 4, all of ASCII', () => {
    const ok = [
      tmPacket({ apid: 16 }, 1, 0, attitudeUser(3, [0, 0, 0], [0, 0, 0, 1], [0, 0, 0])),
      tmPacket({ apid: 48 }, 1, 0, burstUser(1, 1, 65535, 1, 0, [1])),
      tmPacket({ apid: 64 }, 1, 0, eventUser(1, 0, 0, [0, 0x7f, 0x41])),
      tmPacket({ apid: 64 }, 1, 0, eventUser(4, 65535, 255, [])),
    ];
    for (const p of ok) expect(decodeAll(p, ctx)).toMatchObject([{ kind: 'record' }]);
  });
});

describe('idle packets and resynchronisation', () => {
  const loop: LoopRecord = {
    kind: 'loop',
    seq: 2,
    coarse: 10,
    fine: 20,
    loopId: 0,
    status: 1,
    commandedCurrent_a: 1,
    measuredCurrent_a: 1,
    electrodeVoltage_v: 1,
    flowVelocity_m_s: 1,
    pressureRise_pa: 1,
    fluidTemp_c: 1,
    electrodeTemp_c: 1,
    magnetTemp_c: 1,
  };

  it('idle packets (CCSDS 133.0-B-2 APID 2047) are skipped and counted, whatever their fill', () => {
    const handIdle = Uint8Array.from([
      ...header({ apid: 2047, secondaryHeader: 0 }, 3),
      0x55,
      0xaa,
      0x55,
    ]);
    const body = concat(
      handIdle,
      encodePacket(loop),
      encodeIdlePacket(1, 1),
      encodeIdlePacket(2, 300),
    );
    expect(decodeAll(body, ctx)).toEqual([
      { kind: 'idle', offset: 0 },
      { kind: 'record', offset: 9, length: 48, rec: loop },
      { kind: 'idle', offset: 57 },
      { kind: 'idle', offset: 64 },
    ]);
  });

  it('the declared length is trusted to skip a rejected packet to the next one', () => {
    const badCrc = encodePacket(loop);
    badCrc[30] = (badCrc[30] as number) ^ 1;
    const unknown = tmPacket({ apid: 99 }, 0, 0, [1, 2, 3, 4, 5, 6, 7]);
    const body = concat(badCrc, unknown, encodePacket({ ...loop, seq: 3 }));
    expect(decodeAll(body, ctx)).toEqual([
      { kind: 'reject', offset: 0, reason: 'crc mismatch', raw: [...badCrc] },
      { kind: 'reject', offset: 48, reason: 'unknown apid', raw: [...unknown] },
      { kind: 'record', offset: 48 + unknown.length, length: 48, rec: { ...loop, seq: 3 } },
    ]);
  });

  it('a corrupted length field shifts the walk; what it lands on is rejected, never recorded', () => {
    const first = encodePacket(loop);
    first[5] = 40; // declared 41 → 40: one octet short
    const body = concat(
      first,
      encodePacket({ ...loop, seq: 3 }),
      encodePacket({ ...loop, seq: 4 }),
    );
    const out = decodeAll(body, ctx);
    expect(out[0]).toMatchObject({ kind: 'reject', offset: 0, reason: 'length wrong for apid' });
    // any record that comes out is one of the two genuine packets, at its true offset
    for (const o of out) {
      if (o.kind === 'record') expect([48, 96]).toContain(o.offset);
    }
    expect(reasons(out).length).toBeGreaterThan(1);
  });

  it('an empty body gives nothing', () => {
    expect(decodeAll(new Uint8Array(0), ctx)).toEqual([]);
  });

  it('raw is a view on the caller’s octets, not a copy', () => {
    const body = concat(encodePacket(loop), tmPacket({ apid: 5 }, 0, 0, [1]));
    const views: Uint8Array[] = [];
    const visitor = {
      record: () => {},
      reject: (_o: number, _r: RejectReason, raw: Uint8Array) => views.push(raw),
      idle: () => {},
    };
    decodeBuffer(body, ctx, visitor);
    expect(views).toHaveLength(1);
    expect(views[0]?.buffer).toBe(body.buffer);
    expect(views[0]?.byteOffset).toBe(48);
    expect(views[0]?.length).toBe(body.length - 48);
  });
});
