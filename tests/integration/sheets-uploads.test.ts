import fs from 'node:fs';
import http from 'node:http';
import path from 'node:path';
import { sql } from 'kysely';
import { describe, expect, it } from 'vitest';
import { BASE_URL, clientAs, db } from './support';
import { attitudeRecord, concatBytes, loopRecord, loopStream } from './packets';
import { crc16, encodePacket } from '../../src/lib/telemetry';
import { findSpacecraftByKey } from '../../src/lib/server/spacecraft';
import { pool } from '../../src/lib/server/db';
import { UPLOAD_BATCH_PACKETS, UPLOAD_REPORT_LIST_MAX, ingestStream } from '../../src/lib/server/ingest';

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

describe('POST /api/spacecraft', () => {
  it('creates a spacecraft from its first sheet, lists it, and answers a second create of the key 409 naming spacecraft.key', async () => {
    const engineer = await clientAs('engineer');
    const sheet = mr1();
    sheet.spacecraft = { key: 'TS-NEW-1', name: 'Tailrace Test Article' };
    const res = await engineer.post('/api/spacecraft', sheet);
    expect(res.status).toBe(201);
    expect(await res.json()).toEqual({ spacecraft: { key: 'TS-NEW-1' } });
    const list = await (await (await clientAs('operator')).get('/api/spacecraft')).json();
    const listed = list.spacecraft.find((c: { key: string }) => c.key === 'TS-NEW-1');
    expect(listed).toMatchObject({ name: 'Tailrace Test Article', sheetEffectiveFrom: '2026-11-01T00:00:00.000Z' });
    expect(listed.loops).toHaveLength(1);
    const again = await engineer.post('/api/spacecraft', { ...sheet, spacecraft: { key: 'TS-NEW-1', name: 'Another Name' } });
    expect(again.status).toBe(409);
    const { error } = await again.json();
    expect(error.code).toBe('CONFLICT');
    expect(error.fields['spacecraft.key'][0]).toMatch(/TS-NEW-1/);
    // Nothing of the refused create was stored.
    const sc = await findSpacecraftByKey(db, 'TS-NEW-1');
    expect(sc!.name).toBe('Tailrace Test Article');
    expect(await db.selectFrom('spacecraft_sheet').select('id').where('spacecraft_id', '=', sc!.id).execute()).toHaveLength(1);
  });

  it('names a misspelt key by its JSON path instead of quietly using a default', async () => {
    const engineer = await clientAs('engineer');
    const sheet = mr1();
    sheet.spacecraft = { key: 'TS-NEW-2', name: 'Misspelt' };
    sheet.loops[0].fluids = sheet.loops[0].fluid;
    delete sheet.loops[0].fluid;
    const res = await engineer.post('/api/spacecraft', sheet);
    expect(res.status).toBe(400);
    expect((await res.json()).error.fields['loops[0].fluids'][0]).toMatch(/"fluids" is not a field/);
    expect(await findSpacecraftByKey(db, 'TS-NEW-2')).toBeUndefined();
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

  it('stores a mostly rejected file in bounded transactions, quarantines every reject, and lists only the first in its answer', async () => {
    const t0 = Date.UTC(2026, 9, 22, 5);
    const nBad = 250_000;
    const bad = loopStream(nBad, t0, 0);
    for (let i = 0; i < nBad; i++) bad[i * 48 + 47] = bad[i * 48 + 47]! ^ 0x5a; // every CRC wrong
    const good = loopStream(10, t0 + nBad * 100 + 1000, nBad % 16384);
    const file = concatBytes([bad, good]);
    const operator = await clientAs('operator');
    const form = new FormData();
    form.append('file', new Blob([Buffer.from(file)]), 'mostly-bad.bin');
    const res = await fetch(`${BASE_URL}/api/uploads/packets?spacecraft=MR-1`, { method: 'POST', headers: { cookie: operator.cookie, origin: BASE_URL }, body: form });
    expect(res.status).toBe(201);
    const report = await res.json();
    expect(report).toMatchObject({ accepted: 10, duplicates: 0, bytes: file.byteLength, rejectedCount: nBad, rejectedOmitted: nBad - UPLOAD_REPORT_LIST_MAX });
    expect(report.rejected).toHaveLength(UPLOAD_REPORT_LIST_MAX);
    expect(report.rejected[0]).toEqual({ offset: 0, reason: 'crc mismatch' });
    expect(report.rejected[UPLOAD_REPORT_LIST_MAX - 1]).toEqual({ offset: (UPLOAD_REPORT_LIST_MAX - 1) * 48, reason: 'crc mismatch' });
    // Each transaction held at most UPLOAD_BATCH_PACKETS packets (one chunk's worth over at most).
    const batches = await db.selectFrom('ingest_batch').select(['id', 'rejected', 'accepted']).where('upload_id', '=', report.uploadId).orderBy('id').execute();
    expect(batches.length).toBeGreaterThanOrEqual(Math.ceil(nBad / (UPLOAD_BATCH_PACKETS + 30_000)));
    expect(batches.reduce((n, b) => n + b.rejected, 0)).toBe(nBad);
    for (const b of batches) expect(b.rejected + b.accepted).toBeLessThan(UPLOAD_BATCH_PACKETS + 30_000);
    const q = await sql<{ n: number }>`SELECT count(*)::int AS n FROM quarantine_packet WHERE batch_id = ANY(${batches.map((b) => b.id)})`.execute(db);
    expect(q.rows[0]!.n).toBe(nBad);
    const up = await db.selectFrom('packet_upload').select(['status', 'report']).where('id', '=', report.uploadId).executeTakeFirstOrThrow();
    expect(up.status).toBe('done');
    expect(up.report).toMatchObject({ rejectedCount: nBad, accepted: 10 });
  }, 180_000);

  it("quarantines an upload's packets with time tags far ahead with their exact bytes, however the file is chunked", async () => {
    const sc = await findSpacecraftByKey(db, 'MR-1');
    const up = await db.insertInto('packet_upload').values({ spacecraft_id: sc!.id, file_name: 'chunks.bin', stored_path: '' }).returning('id').executeTakeFirstOrThrow();
    const t0 = Date.UTC(2026, 9, 23, 1);
    const far = Date.now() + 100 * 86_400_000;
    const packets = [
      encodePacket(loopRecord(1, t0)),
      encodePacket(loopRecord(2, far)),
      encodePacket(attitudeRecord(3, far + 100)),
      encodePacket(loopRecord(3, t0 + 200)),
      encodePacket(attitudeRecord(4, t0 + 300)),
      encodePacket(loopRecord(4, far + 300)),
    ];
    // Hand-pick a spare octet that the decoder does not check: the stored bytes must be the ones sent.
    packets[2]![13] = 0x77;
    const crcAt = packets[2]!.length - 2;
    const c = crc16(packets[2]!, 0, crcAt);
    packets[2]![crcAt] = c >> 8;
    packets[2]![crcAt + 1] = c & 0xff;
    const file = concatBytes(packets);
    for (const size of [7, 50, 4096]) {
      async function* chunks() {
        for (let o = 0; o < file.length; o += size) yield file.slice(o, o + size);
      }
      const r = await ingestStream(pool, db, chunks(), { spacecraftId: sc!.id, stationId: null, uploadId: up.id });
      const offsets = packets.map((_, i) => packets.slice(0, i).reduce((n, p) => n + p.length, 0));
      expect(r.rejected).toEqual([1, 2, 5].map((i) => ({ offset: offsets[i], reason: 'time tag in future' })));
      const batchIds = (await db.selectFrom('ingest_batch').select('id').where('upload_id', '=', up.id).orderBy('id', 'desc').limit(1).execute()).map((b) => b.id);
      const q = await db.selectFrom('quarantine_packet').select(['offset_bytes', 'raw']).where('batch_id', 'in', batchIds).orderBy('offset_bytes').execute();
      expect(q.map((x) => Number(x.offset_bytes))).toEqual([1, 2, 5].map((i) => offsets[i]));
      for (const [k, i] of [1, 2, 5].entries()) expect(Buffer.compare(q[k]!.raw, Buffer.from(packets[i]!))).toBe(0);
    }
  });

  it('an upload the browser breaks off leaves the server up, marks it failed, removes the partial file, and refuses its re-ingest', async () => {
    const operator = await clientAs('operator');
    const boundary = 'millrace-abort-test';
    const url = new URL(`${BASE_URL}/api/uploads/packets?spacecraft=MR-1`);
    const before = await db.selectFrom('packet_upload').select(sql<number>`coalesce(max(id), 0)::int`.as('id')).executeTakeFirstOrThrow();
    const req = http.request({
      host: url.hostname,
      port: url.port,
      path: url.pathname + url.search,
      method: 'POST',
      headers: { cookie: operator.cookie, origin: BASE_URL, 'content-type': `multipart/form-data; boundary=${boundary}`, 'transfer-encoding': 'chunked' },
    });
    req.on('error', () => undefined); // the socket is destroyed on purpose
    req.write(`--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="broken.bin"\r\nContent-Type: application/octet-stream\r\n\r\n`);
    req.write(Buffer.from(loopStream(40_000, Date.UTC(2026, 9, 25, 4)))); // 1.9 MB of the file, then the line drops
    // Wait until the server has started keeping the file, then break the connection.
    let row: { id: number; status: string; stored_path: string } | undefined;
    for (let i = 0; i < 200 && !row; i++) {
      row = await db.selectFrom('packet_upload').select(['id', 'status', 'stored_path']).where('id', '>', before.id).executeTakeFirst();
      if (!row) await new Promise((r) => setTimeout(r, 25));
    }
    expect(row).toBeDefined();
    const kept = row!.stored_path;
    expect(path.isAbsolute(kept)).toBe(true);
    req.destroy();
    let status = row!.status;
    for (let i = 0; i < 200 && status === 'receiving'; i++) {
      await new Promise((r) => setTimeout(r, 50));
      status = (await db.selectFrom('packet_upload').select('status').where('id', '=', row!.id).executeTakeFirstOrThrow()).status;
    }
    expect(status).toBe('failed');
    const after = await db.selectFrom('packet_upload').select(['stored_path', 'report']).where('id', '=', row!.id).executeTakeFirstOrThrow();
    expect(after.stored_path).toBe('');
    expect(String((after.report as { error?: string }).error)).toMatch(/ended early/);
    expect(fs.existsSync(kept)).toBe(false);
    // The server is still up, and will not ingest the broken file again.
    expect((await operator.get('/api/spacecraft')).status).toBe(200);
    const again = await operator.post(`/api/uploads/${row!.id}/reingest`);
    expect(again.status).toBe(409);
    expect((await again.json()).error.fields.status[0]).toMatch(/failed/);
  });

  // Last: the client's connection that took the early 500 is not reused by a later request.
  it('answers a disk error while keeping the file with a clear 500, removes the partial file, and keeps serving', async () => {
    const dir = process.env.UPLOAD_DIR!;
    fs.mkdirSync(dir, { recursive: true });
    // The next upload ids' files are made links to /dev/full, whose every write fails ENOSPC.
    const seq = await sql<{ last_value: number; is_called: boolean }>`SELECT last_value::int, is_called FROM packet_upload_id_seq`.execute(db);
    const next = seq.rows[0]!.is_called ? seq.rows[0]!.last_value + 1 : seq.rows[0]!.last_value;
    const links = Array.from({ length: 5 }, (_, i) => path.join(dir, `${next + i}-full.bin`));
    for (const l of links) {
      fs.rmSync(l, { force: true });
      fs.symlinkSync('/dev/full', l);
    }
    try {
      const operator = await clientAs('operator');
      const form = new FormData();
      form.append('file', new Blob([Buffer.from(loopStream(20_000, Date.UTC(2026, 9, 24, 2)))]), 'full.bin');
      const res = await fetch(`${BASE_URL}/api/uploads/packets?spacecraft=MR-1`, { method: 'POST', headers: { cookie: operator.cookie, origin: BASE_URL }, body: form });
      expect(res.status).toBe(500);
      const { error } = await res.json();
      expect(error.message).toMatch(/could not be written to the server's disk \(ENOSPC/);
      expect(error.message).toMatch(/partial file was removed/);
      const row = await db.selectFrom('packet_upload').select(['id', 'status', 'stored_path']).orderBy('id', 'desc').limit(1).executeTakeFirstOrThrow();
      expect(row).toMatchObject({ status: 'failed', stored_path: '' });
      const used = path.join(dir, `${row.id}-full.bin`);
      expect(links).toContain(used);
      expect(() => fs.lstatSync(used)).toThrow(/ENOENT/);
      // The server is still up.
      expect((await operator.get('/api/spacecraft')).status).toBe(200);
    } finally {
      for (const l of links) fs.rmSync(l, { force: true });
    }
  });
});
