import { spawn } from 'node:child_process';
import { beforeAll, describe, expect, it } from 'vitest';
import { sql } from 'kysely';
import { BASE_URL, clientAs, db } from './support';
import { attitudeRecord, concatBytes, loopRecord, loopStream } from './packets';
import { encodePacket, encodeIdlePacket, unixMsToCuc } from '../../src/lib/telemetry';
import { createIngestToken } from '../../src/lib/server/ingest-tokens';
import { findSpacecraftByKey } from '../../src/lib/server/spacecraft';
import { createPool } from '../../src/lib/server/db';
import { ensureDayPartitions } from '../../src/lib/server/telemetry-store';

let token = '';
let spacecraftId = 0;
// Each test works in its own hour of 2026-10 so that they do not see each other's packets.
const hour = (h: number) => Date.UTC(2026, 9, 1 + Math.floor(h / 24), h % 24);

async function post(body: Uint8Array, opts: { token?: string; station?: string; base?: string } = {}) {
  const res = await fetch(`${opts.base ?? BASE_URL}/api/ingest${opts.station ? `?station=${opts.station}` : ''}`, {
    method: 'POST',
    headers: { authorization: `Bearer ${opts.token ?? token}`, 'content-type': 'application/octet-stream' },
    body: Buffer.from(body),
  });
  return { status: res.status, body: await res.json() };
}

async function loopRows(fromMs: number, toMs: number) {
  const r = await sql<{ n: number; h: string }>`
    SELECT count(*)::int AS n, md5(coalesce(string_agg(x::text, '|' ORDER BY time_tag, seq), '')) AS h
    FROM (SELECT time_tag, seq, loop_id, measured_current_a, pressure_rise_pa, batch_id FROM loop_sample
          WHERE spacecraft_id = ${spacecraftId} AND t >= ${new Date(fromMs)} AND t < ${new Date(toMs)}) x`.execute(db);
  return r.rows[0]!;
}

beforeAll(async () => {
  const sc = await findSpacecraftByKey(db, 'MR-3');
  spacecraftId = sc!.id;
  token = (await createIngestToken(db, spacecraftId, 'integration tests', null)).token;
});

describe('POST /api/ingest', () => {
  it('stores a body and answers in the contract shape; a resend is all duplicates and changes no row', async () => {
    const t0 = hour(0);
    const body = loopStream(500, t0, 100);
    const first = await post(body, { station: 'ribeira' });
    expect(first.status).toBe(200);
    expect(first.body).toEqual({ accepted: 500, duplicates: 0, rejected: [], gaps: [] });
    const before = await loopRows(t0, t0 + 3_600_000);
    expect(before.n).toBe(500);
    const again = await post(body, { station: 'north-fell' });
    expect(again.body).toEqual({ accepted: 0, duplicates: 500, rejected: [], gaps: [] });
    expect(await loopRows(t0, t0 + 3_600_000)).toEqual(before);
  });

  it('stores the exact float32 values and time tags', async () => {
    const t0 = hour(1) + 123.456;
    const rec = loopRecord(7, t0, 2, 6.3);
    expect((await post(encodePacket(rec))).body.accepted).toBe(1);
    const row = await db
      .selectFrom('loop_sample')
      .selectAll()
      .where('spacecraft_id', '=', spacecraftId)
      .where('time_tag', '=', rec.coarse * 65536 + rec.fine)
      .executeTakeFirstOrThrow();
    expect(row.loop_id).toBe(2);
    expect(row.measured_current_a).toBe(rec.measuredCurrent_a);
    expect(row.pressure_rise_pa).toBe(rec.pressureRise_pa);
    // JavaScript dates hold whole milliseconds; the exact time is the time tag.
    expect(Math.abs(row.t.getTime() - t0)).toBeLessThan(1);
  });

  it('accepts requests out of time order and fills the gap the first one left', async () => {
    const t0 = hour(2);
    const late = loopStream(100, t0 + 10_000, 100); // seq 100..199
    const early = loopStream(100, t0, 0); // seq 0..99
    const tail = encodePacket(loopRecord(250, t0 + 30_000));
    const a = await post(concatBytes([late, tail]));
    expect(a.body.accepted).toBe(101);
    expect(a.body.gaps).toEqual([{ apid: 32, from: 200, to: 249 }]);
    const b = await post(early);
    expect(b.body.accepted).toBe(100);
    expect(b.body.gaps).toEqual([]);
    expect((await loopRows(t0, t0 + 3_600_000)).n).toBe(201);
    const open = await db.selectFrom('sequence_gap').select(['from_seq', 'to_seq', 'missing', 'filled_at']).where('spacecraft_id', '=', spacecraftId).where('after_time_tag', '>=', 0).execute();
    expect(open.some((g) => g.from_seq === 200 && g.to_seq === 249 && g.missing === 50 && g.filled_at === null)).toBe(true);
    // The missing run arrives in a playback dump: the gap is marked filled.
    const fill = concatBytes(Array.from({ length: 50 }, (_, i) => encodePacket(loopRecord(200 + i, t0 + 20_000 + i * 100))));
    expect((await post(fill)).body).toMatchObject({ accepted: 50, gaps: [] });
    const after = await db.selectFrom('sequence_gap').select(['filled_at']).where('spacecraft_id', '=', spacecraftId).where('from_seq', '=', 200).where('to_seq', '=', 249).executeTakeFirstOrThrow();
    expect(after.filled_at).not.toBeNull();
  });

  it('detects a gap across the 14-bit wrap of the sequence count', async () => {
    const t0 = hour(3);
    const body = concatBytes([16381, 16382, 16383, 2, 3].map((s, i) => encodePacket(loopRecord(s, t0 + i * 100))));
    const r = await post(body);
    expect(r.body.accepted).toBe(5);
    expect(r.body.gaps).toEqual([{ apid: 32, from: 0, to: 1 }]);
  });

  it('two requests committing at once that fill each other leave no open gap', async () => {
    // A live request (counts 500–509) and the playback of the counts before it (100–499) arrive
    // together, as from two stations: whichever commits second must see the other's packets.
    for (let round = 0; round < 12; round++) {
      const t0 = hour(100 + round); // clear of the day after hour(8) that the kill test counts
      expect((await post(loopStream(100, t0, 0))).body.accepted).toBe(100); // counts 0–99 already stored
      const playback = loopStream(400, t0 + 10_000, 100);
      const live = loopStream(10, t0 + 50_000, 500);
      const answers = await Promise.all([post(playback), post(live)]);
      expect(answers.map((a) => a.body.accepted)).toEqual([400, 10]);
      const open = await db
        .selectFrom('sequence_gap')
        .select(['from_seq', 'to_seq'])
        .where('spacecraft_id', '=', spacecraftId)
        .where('apid', '=', 32)
        .where('filled_at', 'is', null)
        .where('after_time_tag', '>=', (t0 / 1000 - 946_684_800) * 65536)
        .where('before_time_tag', '<', (t0 / 1000 + 3600 - 946_684_800) * 65536)
        .execute();
      expect(open, `round ${round}`).toEqual([]);
    }
  });

  it('finds a lost event report although events come many minutes apart', async () => {
    const t0 = hour(50);
    const ev = (seq: number, ms: number) => {
      const { coarse, fine } = unixMsToCuc(ms);
      return encodePacket({ kind: 'event', seq, coarse, fine, severity: 2, code: 7, loopId: null, text: `event ${seq}` });
    };
    // Counts 40 and 41 never arrive; the next event comes 40 min after the last one received.
    const r = await post(concatBytes([ev(38, t0), ev(39, t0 + 20 * 60_000), ev(42, t0 + 60 * 60_000)]));
    expect(r.body).toMatchObject({ accepted: 3, gaps: [{ apid: 64, from: 40, to: 41 }] });
    // Counts of one APID more than an hour apart are not compared (the counters may have restarted).
    const later = await post(ev(50, t0 + 3 * 3_600_000)); // two hours after the last one
    expect(later.body.gaps).toEqual([]);
  });

  it('stores the good packets of a body with bad ones and lists each bad one by offset and reason', async () => {
    const t0 = hour(4);
    const good1 = encodePacket(loopRecord(0, t0));
    const corrupt = encodePacket(loopRecord(1, t0 + 100));
    corrupt[20] = corrupt[20]! ^ 0xff;
    const unknownLoop = encodePacket(loopRecord(2, t0 + 200, 3)); // MR-3 has loops 0, 1, 2
    const idle = encodeIdlePacket(0, 10);
    const good2 = encodePacket(attitudeRecord(5, t0 + 300));
    const body = concatBytes([good1, corrupt, unknownLoop, idle, good2]);
    const r = await post(body);
    expect(r.status).toBe(200);
    expect(r.body.accepted).toBe(2);
    expect(r.body.rejected).toEqual([
      { offset: 48, reason: 'crc mismatch' },
      { offset: 96, reason: 'unknown loop id' },
    ]);
    const q = await db.selectFrom('quarantine_packet').select(['offset_bytes', 'reason', 'raw']).where('spacecraft_id', '=', spacecraftId).orderBy('id', 'desc').limit(2).execute();
    expect(q.map((x) => x.reason).sort()).toEqual(['crc mismatch', 'unknown loop id']);
    expect(Buffer.compare(q.find((x) => x.reason === 'crc mismatch')!.raw, Buffer.from(corrupt))).toBe(0);
    const batch = await db.selectFrom('ingest_batch').select(['idle', 'rejected', 'accepted']).orderBy('id', 'desc').limit(1).executeTakeFirstOrThrow();
    expect(batch).toEqual({ idle: 1, rejected: 2, accepted: 2 });
  });

  it('answers 400 with a reason when nothing in the body is a packet', async () => {
    const r = await post(new Uint8Array([1, 2, 3, 4, 5, 6, 7, 8, 9]));
    expect(r.status).toBe(400);
    expect(r.body.error.message).toMatch(/No packet/);
    expect(r.body.rejected[0]).toEqual({ offset: 0, reason: 'length past end' });
  });

  it('refuses a missing, unknown or revoked token with 401', async () => {
    const body = loopStream(1, hour(5));
    expect((await post(body, { token: 'mrt_nope' })).status).toBe(401);
    const admin = await clientAs('admin');
    const created = await admin.post('/api/spacecraft/MR-3/tokens', { label: 'to revoke' });
    expect(created.status).toBe(201);
    const { id, token: fresh } = await created.json();
    expect((await post(body, { token: fresh })).status).toBe(200);
    expect((await admin.request('DELETE', `/api/spacecraft/MR-3/tokens/${id}`)).status).toBe(200);
    expect((await post(body, { token: fresh })).status).toBe(401);
    const listed = await (await admin.get('/api/spacecraft/MR-3/tokens')).json();
    const row = listed.tokens.find((t: { id: number }) => t.id === id);
    expect(row.revoked_at).not.toBeNull();
    expect(row.last_used_at).not.toBeNull();
    expect(JSON.stringify(listed)).not.toContain(fresh);
  });

  it('answers 413 beyond 8 MiB and stores nothing of it', async () => {
    const t0 = hour(6);
    const n = Math.ceil((8 * 1024 * 1024) / 48) + 10;
    const r = await post(loopStream(n, t0, 0));
    expect(r.status).toBe(413);
    expect(r.body.error.code).toBe('PAYLOAD_TOO_LARGE');
    expect((await loopRows(t0, t0 + 86_400_000)).n).toBe(0);
  });

  it('rejects an unknown station and a wrong content type, naming the field', async () => {
    const body = loopStream(1, hour(7));
    const r = await post(body, { station: 'atlantis' });
    expect(r.status).toBe(400);
    expect(r.body.error.fields.station[0]).toMatch(/atlantis/);
    const res = await fetch(`${BASE_URL}/api/ingest`, { method: 'POST', headers: { authorization: `Bearer ${token}`, 'content-type': 'application/json' }, body: '{}' });
    expect(res.status).toBe(400);
    expect((await res.json()).error.fields['content-type']).toBeDefined();
  });

  it('many concurrent requests whose packets fall on days without partitions all succeed and store every packet', async () => {
    // Six days of 2026-08 that nothing else writes to: each request makes the server create
    // their partitions, 24 requests at once.
    const days = Array.from({ length: 6 }, (_, d) => Date.UTC(2026, 7, 10 + d));
    const bodies = Array.from({ length: 24 }, (_, i) =>
      concatBytes(days.flatMap((day, d) => [loopStream(20, day + i * 60_000, (i * 200 + d * 20) % 16384), encodePacket(attitudeRecord(i, day + i * 60_000 + 5))])),
    );
    const answers = await Promise.all(bodies.map((b) => post(b)));
    expect(answers.map((a) => a.status)).toEqual(bodies.map(() => 200));
    expect(answers.map((a) => a.body.accepted)).toEqual(bodies.map(() => 6 * 21));
    expect(answers.flatMap((a) => a.body.rejected)).toEqual([]);
    const r = await sql<{ n: number }>`SELECT count(*)::int AS n FROM loop_sample WHERE spacecraft_id = ${spacecraftId} AND t >= ${new Date(days[0]!)} AND t < ${new Date(days[5]! + 86_400_000)}`.execute(db);
    expect(r.rows[0]!.n).toBe(24 * 6 * 20);
    const a = await sql<{ n: number }>`SELECT count(*)::int AS n FROM attitude_sample WHERE spacecraft_id = ${spacecraftId} AND t >= ${new Date(days[0]!)} AND t < ${new Date(days[5]! + 86_400_000)}`.execute(db);
    expect(a.rows[0]!.n).toBe(24 * 6);
  });

  it('partitions created by many sessions at once for the same new days: none fails, all exist', async () => {
    // As several server processes would: each its own pool, all starting on the same names at once.
    const pools = Array.from({ length: 12 }, () => createPool(process.env.DATABASE_URL!, 1));
    try {
      const days = Array.from({ length: 5 }, (_, d) => Math.floor(Date.UTC(2026, 6, 1 + d) / 86_400_000));
      await Promise.all(pools.map((p) => p.query('SELECT 1'))); // connected before the race starts
      const outcomes = await Promise.allSettled(pools.map((p) => ensureDayPartitions(p, days)));
      expect(outcomes.filter((o) => o.status === 'rejected').map((o) => String((o as PromiseRejectedResult).reason))).toEqual([]);
      const r = await sql<{ n: number }>`SELECT count(*)::int AS n FROM pg_class WHERE relname ~ '_p2026070[1-5]$'`.execute(db);
      expect(r.rows[0]!.n).toBe(5 * 4);
    } finally {
      await Promise.all(pools.map((p) => p.end()));
    }
  });

  it('refuses a time tag more than a day ahead of arrival, keeps its bytes, and makes no partition for it', async () => {
    const now = Date.now();
    const past = encodePacket(loopRecord(100, hour(48))); // clear of the other tests' hours
    const soon = encodePacket(loopRecord(101, now + 12 * 3_600_000)); // a clock 12 h fast: kept
    const far = encodePacket(loopRecord(102, now + 40 * 86_400_000));
    const r = await post(concatBytes([past, far, soon]));
    expect(r.status).toBe(200);
    expect(r.body).toMatchObject({ accepted: 2, duplicates: 0, rejected: [{ offset: 48, reason: 'time tag in future' }] });
    const q = await db.selectFrom('quarantine_packet').select(['reason', 'raw', 'offset_bytes']).where('spacecraft_id', '=', spacecraftId).orderBy('id', 'desc').limit(1).executeTakeFirstOrThrow();
    expect(q.reason).toBe('time tag in future');
    expect(Number(q.offset_bytes)).toBe(48);
    expect(Buffer.compare(q.raw, Buffer.from(far))).toBe(0);
    const day = new Date(now + 40 * 86_400_000).toISOString().slice(0, 10).replaceAll('-', '');
    const part = await sql<{ t: string | null }>`SELECT to_regclass(${`loop_sample_p${day}`})::text AS t`.execute(db);
    expect(part.rows[0]!.t).toBeNull();
  });

  it('a server killed mid-request stores nothing of it; the resend stores all', async () => {
    const port = 4000 + Math.floor(Math.random() * 500);
    // The child's sessions carry their own name, so that only its COPY counts below (the cluster
    // may be shared with other test databases or a running demo).
    const appName = `millrace-kill-test-${port}`;
    const child = spawn(process.execPath, ['dist/server/entry.mjs'], { env: { ...process.env, PORT: String(port), HOST: '127.0.0.1', PGAPPNAME: appName }, stdio: 'ignore' });
    const base = `http://127.0.0.1:${port}`;
    for (let i = 0; i < 100; i++) {
      try {
        await fetch(`${base}/sign-in`);
        break;
      } catch {
        await new Promise((r) => setTimeout(r, 100));
      }
    }
    const t0 = hour(8);
    const n = 170_000; // just under 8 MiB
    const body = loopStream(n, t0, 0);
    const pending = post(body, { base }).catch(() => null);
    // Wait until that server is inside its transaction, then kill it without warning.
    let seen = false;
    for (let i = 0; i < 2000 && !seen; i++) {
      const r = await sql<{ n: number }>`SELECT count(*)::int AS n FROM pg_stat_activity WHERE application_name = ${appName} AND datname = current_database() AND state <> 'idle' AND query LIKE 'COPY %loop_sample%'`.execute(db);
      seen = r.rows[0]!.n > 0;
      if (!seen) await new Promise((r) => setTimeout(r, 5));
    }
    child.kill('SIGKILL');
    expect(seen).toBe(true);
    expect(await pending).toBeNull();
    // Give PostgreSQL a moment to notice the dropped connection and roll back.
    for (let i = 0; i < 50; i++) {
      const r = await sql<{ n: number }>`SELECT count(*)::int AS n FROM pg_stat_activity WHERE application_name = ${appName} AND datname = current_database()`.execute(db);
      if (r.rows[0]!.n === 0) break;
      await new Promise((r) => setTimeout(r, 100));
    }
    expect((await loopRows(t0, t0 + 86_400_000)).n).toBe(0);
    const resend = await post(body);
    expect(resend.status).toBe(200);
    expect(resend.body.accepted).toBe(n);
    expect((await loopRows(t0, t0 + 86_400_000)).n).toBe(n);
  });
});
