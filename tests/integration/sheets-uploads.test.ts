import fs from 'node:fs';
import { describe, expect, it } from 'vitest';
import { BASE_URL, clientAs, db } from './support';
import { concatBytes, loopRecord, loopStream } from './packets';
import { encodePacket } from '../../src/lib/telemetry';
import { findSpacecraftByKey } from '../../src/lib/server/spacecraft';

const mr1 = () => JSON.parse(fs.readFileSync('ingest/fleet/MR-1.json', 'utf8'));

describe('spacecraft sheets', () => {
  it('names the JSON path and the problem of every error', async () => {
    const engineer = await clientAs('engineer');
    const bad = mr1();
    bad.effectiveFrom = 'next tuesday';
    bad.massProperties.inertia_kg_m2 = [[1, 0, 0], [0, 1, 0], [0, 0, 3]]; // 3 > 1 + 1
    bad.loops[0].axis = [1, 1, 0];
    bad.loops[0].shape = { kind: 'triangle', side_m: 1 };
    bad.loops[0].channel.alongField_m = -0.003;
    const res = await engineer.post('/api/spacecraft/MR-1/sheets', bad);
    expect(res.status).toBe(400);
    const { error } = await res.json();
    expect(error.code).toBe('BAD_REQUEST');
    expect(error.fields['effectiveFrom'][0]).toMatch(/ISO 8601/);
    expect(error.fields['massProperties.inertia_kg_m2'][0]).toMatch(/triangle inequality/);
    expect(error.fields['loops[0].axis'][0]).toMatch(/unit vector/);
    expect(error.fields['loops[0].shape.kind'][0]).toMatch(/circle.*rounded-rectangle/);
    expect(error.fields['loops[0].channel.alongField_m'][0]).toMatch(/greater than 0/);
  });

  it('refuses an asymmetric or indefinite inertia', async () => {
    const engineer = await clientAs('engineer');
    const asym = mr1();
    asym.massProperties.inertia_kg_m2[0][1] = 0.5;
    let body = await (await engineer.post('/api/spacecraft/MR-1/sheets', asym)).json();
    expect(body.error.fields['massProperties.inertia_kg_m2[0][1]'][0]).toMatch(/symmetric/);
    const neg = mr1();
    neg.massProperties.inertia_kg_m2 = [[1, 0, 0], [0, 1, 0], [0, 0, -0.5]];
    body = await (await engineer.post('/api/spacecraft/MR-1/sheets', neg)).json();
    expect(body.error.fields['massProperties.inertia_kg_m2'][0]).toMatch(/positive definite/);
  });

  it('stores a valid sheet effective-dated, refuses the same date twice, and an operator may not add one', async () => {
    const engineer = await clientAs('engineer');
    const sheet = mr1();
    sheet.effectiveFrom = '2026-11-20T00:00:00Z';
    sheet.loops[0].pumpStations[0].field_T = 0.3; // ideal kT falls by a quarter
    const ok = await engineer.post('/api/spacecraft/MR-1/sheets', sheet);
    expect(ok.status).toBe(201);
    const made = await ok.json();
    expect(made.idealKtShifts[0].loopId).toBe(0);
    expect(made.idealKtShifts[0].change).toBeCloseTo(-0.25, 6);
    expect((await engineer.post('/api/spacecraft/MR-1/sheets', sheet)).status).toBe(409);
    const operator = await clientAs('operator');
    expect((await operator.post('/api/spacecraft/MR-1/sheets', sheet)).status).toBe(403);
    const list = await (await operator.get('/api/spacecraft/MR-1/sheets')).json();
    expect(list.sheets.map((s: { effective_from: string }) => s.effective_from.slice(0, 10))).toEqual(['2026-11-20', '2026-11-01']);
    const wrongKey = mr1();
    wrongKey.effectiveFrom = '2026-11-21T00:00:00Z';
    expect((await (await engineer.post('/api/spacecraft/MR-2/sheets', wrongKey)).json()).error.fields['spacecraft.key'][0]).toMatch(/MR-2/);
  });
});

describe('POST /api/uploads/packets', () => {
  it('streams a pass file, keeps it on disk, reports like ingest, and re-ingests as duplicates', async () => {
    const t0 = Date.UTC(2026, 9, 20, 3);
    const good = loopStream(3000, t0, 10);
    const bad = encodePacket(loopRecord(3010, t0 + 300_100));
    bad[30] = bad[30]! ^ 0x55;
    const file = concatBytes([good, bad, encodePacket(loopRecord(3020, t0 + 300_200))]);
    const operator = await clientAs('operator');
    const form = new FormData();
    form.append('file', new Blob([Buffer.from(file)]), 'pass-0420.bin');
    const res = await fetch(`${BASE_URL}/api/uploads/packets?spacecraft=MR-1&station=karoo-ridge`, { method: 'POST', headers: { cookie: operator.cookie, origin: BASE_URL }, body: form });
    expect(res.status).toBe(201);
    const report = await res.json();
    expect(report).toMatchObject({ accepted: 3001, duplicates: 0, bytes: file.byteLength, idle: 0 });
    expect(report.rejected).toEqual([{ offset: 3000 * 48, reason: 'crc mismatch' }]);
    // The corrupted packet (seq 3010) is rejected, so 3010..3019 are missing.
    expect(report.gaps).toEqual([{ apid: 32, from: 3010, to: 3019 }]);
    const up = await db.selectFrom('packet_upload').selectAll().where('id', '=', report.uploadId).executeTakeFirstOrThrow();
    expect(up.status).toBe('done');
    expect(Buffer.compare(fs.readFileSync(up.stored_path), Buffer.from(file))).toBe(0);
    const sc = await findSpacecraftByKey(db, 'MR-1');
    expect(up.spacecraft_id).toBe(sc!.id);
    const again = await operator.post(`/api/uploads/${report.uploadId}/reingest`);
    expect(again.status).toBe(200);
    expect(await again.json()).toMatchObject({ accepted: 0, duplicates: 3001 });
  });

  it('refuses an upload without a file, naming the field', async () => {
    const operator = await clientAs('operator');
    const form = new FormData();
    form.append('note', 'no file here');
    const res = await fetch(`${BASE_URL}/api/uploads/packets?spacecraft=MR-1`, { method: 'POST', headers: { cookie: operator.cookie, origin: BASE_URL }, body: form });
    expect(res.status).toBe(400);
    expect((await res.json()).error.fields.file).toBeDefined();
  });
});
