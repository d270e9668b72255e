import fs from 'node:fs/promises';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, beforeEach, describe, expect, it } from 'vitest';
import nodemailer from 'nodemailer';
import { simpleParser } from 'mailparser';
import { clientAs, db } from './support';
import { startRelay, type Relay } from '../../fakes/smtp-relay';
import { findSpacecraftByKey } from '../../src/lib/server/spacecraft';
import { findUserByEmail } from '../../src/lib/server/users';
import { config } from '../../src/lib/server/config';
import { createMailTransport } from '../../src/lib/server/mail/transport';
import { backoffMs, enqueueMail, sendDueMail } from '../../src/lib/server/mail/outbox';
import { enqueueTripMail, flushDigests } from '../../src/lib/server/mail/trip-mail';
import { recipientsFor } from '../../src/lib/server/mail/roster';
import { startMailWorker } from '../../src/lib/server/mail/worker';
import { CAUTION_LINE, formatNumber, formatUtc, type TripMailFacts } from '../../src/lib/server/mail/templates';
import { mailTripsClosedAtHandover } from '../../src/lib/server/mail/trip-mail';
import { runMailRound } from '../../src/lib/server/mail/worker';
import { pool } from '../../src/lib/server/db';
import { runAnalysisJob } from '../../src/lib/server/analysis-job';
import { tripMailHandler } from '../../src/lib/server/trip-mail';
import { handOverLimits } from '../../src/lib/server/trip-engine';
import { insertLimitSet } from '../../src/lib/server/limit-sets';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { DEFAULT_RULES } from '../../src/lib/limits/defaults';
import type { LimitRuleInput } from '../../src/lib/limits/limit-set.schema';
import { fly, sheetOf } from './flight';

const PUBLIC_URL = config().PUBLIC_URL;
const T0 = new Date('2026-12-01T10:00:00Z');
const at = (s: number) => new Date(T0.getTime() + s * 1000);

let mr1: number;
let mr2: number;
const uid: Record<string, string> = {};
/** Every active operator (other tests add some): who is mailed when nobody is on call. */
let operators: string[];

async function freePort(): Promise<number> {
  const srv = net.createServer();
  await new Promise<void>((r) => srv.listen(0, '127.0.0.1', () => r()));
  const port = (srv.address() as net.AddressInfo).port;
  await new Promise<void>((r) => srv.close(() => r()));
  return port;
}

async function emlFiles(dir: string): Promise<string[]> {
  return (await fs.readdir(dir)).filter((f) => f.endsWith('.eml')).sort();
}

/** Trip rows made by this file (the outbox and digest items reference trips), removed at the end. */
const madeTrips: number[] = [];
async function newTrip(over: { spacecraftId?: number; level?: 'caution' | 'warning' } = {}): Promise<number> {
  const r = await db
    .insertInto('trip')
    .values({
      spacecraft_id: over.spacecraftId ?? mr1, loop_id: 0, kind: 'channel-limit', quantity: 'electrode_temp_c', level: over.level ?? 'warning', side: 'high', limit_set_version: 3,
      onset_at: T0, raised_at: T0, value: 212.4, peak_value: 212.4, limit_value: 200, last_value: 212.4, last_at: T0, cleared_at: T0, evidence: '{}',
    })
    .returning('id')
    .executeTakeFirstOrThrow();
  madeTrips.push(r.id);
  return r.id;
}
const newTrips = async (n: number, over: Parameters<typeof newTrip>[0] = {}) => {
  const out: number[] = [];
  for (let i = 0; i < n; i++) out.push(await newTrip(over));
  return out;
};

function facts(over: Partial<TripMailFacts> & { tripId: number }): TripMailFacts {
  return {
    event: 'opened',
    kind: 'limit',
    level: 'warning',
    spacecraftKey: 'MR-1',
    spacecraftId: mr1,
    loopId: 0,
    quantity: 'electrode_temp_c',
    quantityLabel: 'Electrode temperature',
    unit: '°C',
    value: 212.4,
    limit: 200,
    limitSide: 'high',
    at: new Date('2026-12-01T09:58:00Z'),
    limitSetVersion: 3,
    ...over,
  };
}

const queueTrip = (f: TripMailFacts, now: Date) => db.transaction().execute((trx) => enqueueTripMail(trx, f, now, 15));
const outboxRows = () => db.selectFrom('outbox').selectAll().orderBy('id').execute();

beforeAll(async () => {
  mr1 = (await findSpacecraftByKey(db, 'MR-1'))!.id;
  mr2 = (await findSpacecraftByKey(db, 'MR-2'))!.id;
  for (const r of ['operator', 'analyst', 'engineer', 'admin']) uid[r] = (await findUserByEmail(db, `${r}@millrace.test`))!.id;
  const rows = await db
    .selectFrom('app_user as u')
    .innerJoin('user_role as r', 'r.user_id', 'u.id')
    .select('u.email')
    .where('r.role', '=', 'operator')
    .where('u.disabled_at', 'is', null)
    .execute();
  operators = rows.map((r) => r.email.toLowerCase()).sort();
  expect(operators).toContain('operator@millrace.test');
});

afterAll(async () => {
  if (madeTrips.length) await db.deleteFrom('trip').where('id', 'in', madeTrips).execute();
});

beforeEach(async () => {
  await db.deleteFrom('mail_digest_item').execute();
  await db.deleteFrom('outbox').execute();
  await db.deleteFrom('on_call_shift').execute();
});

describe('outbox and worker', () => {
  let dir: string;
  let relay: Relay | null = null;
  beforeEach(async () => {
    dir = await fs.mkdtemp(path.join(os.tmpdir(), 'millrace-mail-'));
  });
  afterAll(async () => {
    await relay?.close();
  });

  it('keeps trip mail queued with growing attempts and backoff while the relay is down, then delivers each message exactly once', async () => {
    const port = await freePort();
    const transport = createMailTransport({ SMTP_HOST: '127.0.0.1', SMTP_PORT: port, SMTP_USER: undefined, SMTP_PASS: undefined });
    const [t1, t2, t3] = (await newTrips(3)) as [number, number, number];
    await queueTrip(facts({ tripId: t1 }), at(0));
    await queueTrip(facts({ tripId: t2, event: 'escalated', loopId: 1, value: 0.41, limit: 0.5, limitSide: 'low', quantity: 'flow_velocity_m_s', quantityLabel: 'Flow velocity', unit: 'm/s' }), at(0));
    await queueTrip(facts({ tripId: t3, event: 'cleared', value: 190 }), at(0));
    expect((await outboxRows()).map((r) => r.message_key)).toEqual([`trip:${t1}:opened:warning`, `trip:${t2}:escalated:warning`, `trip:${t3}:cleared:warning`]);

    // Relay down: every attempt fails and is put off 30 s, 60 s, 120 s …
    expect(await sendDueMail(db, transport, at(0))).toEqual({ sent: 0, retried: 3, failed: 0 });
    let rows = await outboxRows();
    for (const r of rows) {
      expect(r).toMatchObject({ state: 'queued', attempts: 1 });
      expect(r.next_attempt_at.toISOString()).toBe(at(30).toISOString());
      expect(r.last_error).toMatch(/ECONNREFUSED/);
    }
    expect(await sendDueMail(db, transport, at(29))).toEqual({ sent: 0, retried: 0, failed: 0 });
    expect(await sendDueMail(db, transport, at(30))).toEqual({ sent: 0, retried: 3, failed: 0 });
    rows = await outboxRows();
    expect(rows.map((r) => [r.attempts, r.next_attempt_at.toISOString()])).toEqual(rows.map(() => [2, at(30 + 60).toISOString()]));
    expect(await sendDueMail(db, transport, at(90))).toEqual({ sent: 0, retried: 3, failed: 0 });
    rows = await outboxRows();
    expect(rows.every((r) => r.attempts === 3 && r.next_attempt_at.getTime() === at(90).getTime() + backoffMs(3))).toBe(true);
    expect(backoffMs(3)).toBe(120_000);

    // Relay back: the next due round delivers all three, once.
    relay = await startRelay({ port, dir });
    expect(await sendDueMail(db, transport, at(210))).toEqual({ sent: 3, retried: 0, failed: 0 });
    expect(await emlFiles(dir)).toHaveLength(3);
    rows = await outboxRows();
    expect(rows.every((r) => r.state === 'sent' && r.attempts === 4 && r.sent_at?.getTime() === at(210).getTime() && r.last_error === null)).toBe(true);
    expect(await sendDueMail(db, transport, at(7200))).toEqual({ sent: 0, retried: 0, failed: 0 });
    expect(await emlFiles(dir)).toHaveLength(3);

    // The warning as the operator receives it: numbers, level, time, link, caution line.
    const mails = await Promise.all((await emlFiles(dir)).map(async (f) => simpleParser(await fs.readFile(path.join(dir, f)))));
    const warning = mails.find((m) => m.subject?.startsWith('[Millrace] WARNING'))!;
    expect(warning.subject).toBe('[Millrace] WARNING · MR-1 L0 electrode temperature 212.4 °C (high limit 200 °C)');
    expect(warning.to && !Array.isArray(warning.to) ? warning.to.value.map((a) => a.address) : []).toEqual(operators);
    for (const s of ['212.4 °C', '200 °C (high)', 'WARNING', '2026-12-01 09:58:00 UTC', `${PUBLIC_URL}/trips/${t1}`, CAUTION_LINE]) expect(warning.text).toContain(s);
    expect(warning.html).toContain(`href="${PUBLIC_URL}/trips/${t1}"`);
    expect(warning.messageId).toBe(`<outbox-${rows[0]!.id}@localhost>`);
    expect(warning.headers.get('x-millrace-message-key')).toBe(`trip:${t1}:opened:warning`);
    const low = mails.find((m) => m.subject?.startsWith('[Millrace] Escalated'))!;
    expect(low.text).toContain('0.41 m/s, below the low limit by 0.09 m/s (18 %)');
    await relay.close();
    relay = null;
  });

  it('makes one row when the same key is queued twice', async () => {
    const mail = { messageKey: 'test:dup', kind: 'test', to: ['Operator@Millrace.test', 'operator@millrace.test'], subject: 's', text: 't' };
    const first = await db.transaction().execute((trx) => enqueueMail(trx, mail));
    const second = await db.transaction().execute((trx) => enqueueMail(trx, { ...mail, subject: 'other' }));
    expect(first).toBeTypeOf('number');
    expect(second).toBeNull();
    const rows = await outboxRows();
    expect(rows).toHaveLength(1);
    expect(rows[0]).toMatchObject({ subject: 's', to_addresses: ['operator@millrace.test'] });
    const t = await newTrip();
    expect(await queueTrip(facts({ tripId: t }), at(0))).toMatchObject({ route: 'message', duplicate: false });
    expect(await queueTrip(facts({ tripId: t }), at(5))).toMatchObject({ route: 'message', duplicate: true, outboxId: null });
    expect(await outboxRows()).toHaveLength(2);
  });

  it('rolls the message back with the caller\'s transaction', async () => {
    const t = await newTrip();
    await expect(
      db.transaction().execute(async (trx) => {
        await enqueueTripMail(trx, facts({ tripId: t }), at(0), 15);
        throw new Error('the trip insert failed');
      }),
    ).rejects.toThrow('the trip insert failed');
    expect(await outboxRows()).toHaveLength(0);
  });

  it('gives up after 12 attempts, and at once on a permanent refusal (552 over the size limit)', async () => {
    const port = await freePort();
    const transport = createMailTransport({ SMTP_HOST: '127.0.0.1', SMTP_PORT: port, SMTP_USER: undefined, SMTP_PASS: undefined });
    const id = (await db.transaction().execute((trx) => enqueueMail(trx, { messageKey: 'test:tired', kind: 'test', to: ['operator@millrace.test'], subject: 's', text: 't', notBefore: at(0) })))!;
    await db.updateTable('outbox').set({ attempts: 11 }).where('id', '=', id).execute();
    expect(await sendDueMail(db, transport, at(0))).toEqual({ sent: 0, retried: 0, failed: 1 });
    expect(await db.selectFrom('outbox').select(['state', 'attempts']).where('id', '=', id).executeTakeFirstOrThrow()).toEqual({ state: 'failed', attempts: 12 });

    relay = await startRelay({ port, dir, sizeLimit: 2048 });
    await db.transaction().execute((trx) => enqueueMail(trx, { messageKey: 'test:big', kind: 'test', to: ['operator@millrace.test'], subject: 'big', text: 'x'.repeat(8000), notBefore: at(0) }));
    expect(await sendDueMail(db, transport, at(1))).toEqual({ sent: 0, retried: 0, failed: 1 });
    const big = await db.selectFrom('outbox').select(['state', 'attempts', 'last_error']).where('message_key', '=', 'test:big').executeTakeFirstOrThrow();
    expect(big.state).toBe('failed');
    expect(big.attempts).toBe(1);
    expect(big.last_error).toMatch(/552/);
    expect(await emlFiles(dir)).toHaveLength(0);
    await relay.close();
    relay = null;
  });

  it('stores a message with nobody to send it to as failed, with the reason', async () => {
    const id = await db.transaction().execute((trx) => enqueueMail(trx, { messageKey: 'test:nobody', kind: 'test', to: [], subject: 's', text: 't' }));
    const row = await db.selectFrom('outbox').select(['state', 'last_error']).where('id', '=', id!).executeTakeFirstOrThrow();
    expect(row.state).toBe('failed');
    expect(row.last_error).toMatch(/No recipient/);
  });
});

describe('mail worker', () => {
  it('sends what is queued on its own, round after round, and stops cleanly', async () => {
    const dir = await fs.mkdtemp(path.join(os.tmpdir(), 'millrace-worker-'));
    const relay = await startRelay({ port: 0, dir });
    const lines: string[] = [];
    const worker = startMailWorker(db, nodemailer.createTransport({ host: '127.0.0.1', port: relay.port, secure: false }), { intervalMs: 50, log: (l) => lines.push(l) });
    try {
      await db.transaction().execute((trx) => enqueueMail(trx, { messageKey: 'test:worker-1', kind: 'test', to: ['operator@millrace.test'], subject: 'w1', text: 't' }));
      await db.transaction().execute((trx) => enqueueMail(trx, { messageKey: 'test:worker-2', kind: 'test', to: ['operator@millrace.test'], subject: 'w2', text: 't' }));
      const until = Date.now() + 10_000;
      while (Date.now() < until && (await emlFiles(dir)).length < 2) await new Promise((r) => setTimeout(r, 50));
    } finally {
      await worker.stop();
      await relay.close();
    }
    expect(await emlFiles(dir)).toHaveLength(2);
    expect((await outboxRows()).map((r) => r.state)).toEqual(['sent', 'sent']);
    expect(lines.join('\n')).toMatch(/sent [12]/);
  });
});

describe('caution digests', () => {
  it('gathers three caution trips into one digest per period; a warning goes out on its own at once', async () => {
    // Period 10:00–10:15 UTC (15 min).
    const [c1, c2, c3, w9] = (await newTrips(4)) as [number, number, number, number];
    await queueTrip(facts({ tripId: c1, level: 'caution', value: 201, at: at(60) }), at(60));
    await queueTrip(facts({ tripId: c2, level: 'caution', loopId: 1, value: 203.5, at: at(300) }), at(300));
    await queueTrip(facts({ tripId: c3, level: 'caution', quantity: 'magnet_temp_c', quantityLabel: 'Magnet temperature', value: 81.25, limit: 80, at: at(540) }), at(540));
    // A caution that clears before its digest is folded into it, not mailed alone.
    expect(await queueTrip(facts({ tripId: c2, level: 'caution', event: 'cleared', value: 198, at: at(600) }), at(600))).toMatchObject({ route: 'digest-cleared' });
    expect(await queueTrip(facts({ tripId: w9, level: 'warning', value: 230, at: at(420) }), at(420))).toMatchObject({ route: 'message', duplicate: false });
    // The same caution opening again is de-duplicated.
    expect(await queueTrip(facts({ tripId: c1, level: 'caution', value: 201, at: at(60) }), at(700))).toMatchObject({ route: 'digest', duplicate: true });

    expect((await outboxRows()).map((r) => r.message_key)).toEqual([`trip:${w9}:opened:warning`]);
    expect(await flushDigests(db, at(899), 15)).toBe(0);
    expect(await flushDigests(db, at(900), 15)).toBe(1);
    expect(await flushDigests(db, at(960), 15)).toBe(0);

    const rows = await outboxRows();
    expect(rows.map((r) => r.message_key)).toEqual([`trip:${w9}:opened:warning`, `digest:${mr1}:2026-12-01T10:00:00.000Z`]);
    const digest = rows[1]!;
    expect(digest.kind).toBe('trip.digest');
    expect(digest.subject).toBe('[Millrace] CAUTION digest · MR-1 · 3 trips 2026-12-01 10:00–10:15 UTC');
    expect([...digest.text_body.matchAll(/\/trips\/(\d+)/g)].map((m) => Number(m[1]))).toEqual([c1, c2, c3]);
    for (const id of [c1, c2, c3]) expect(digest.text_body).toContain(`${PUBLIC_URL}/trips/${id}`);
    expect(digest.text_body).toContain('Magnet temperature: 81.25 °C (high limit 80 °C, limit set v3)');
    expect(digest.text_body).toContain('cleared 10:10:00 UTC');
    expect(digest.to_addresses).toEqual(operators);

    // A clear that comes after the digest went out is mailed on its own.
    expect(await queueTrip(facts({ tripId: c3, level: 'caution', event: 'cleared', value: 79, limit: 80, at: at(1000) }), at(1000))).toMatchObject({ route: 'message' });
    expect((await outboxRows()).at(-1)?.message_key).toBe(`trip:${c3}:cleared:caution`);

    // Through the relay: one digest, one warning, one clear.
    const dir = await fs.mkdtemp(path.join(os.tmpdir(), 'millrace-digest-'));
    const relay = await startRelay({ port: 0, dir });
    try {
      const transport = nodemailer.createTransport({ host: '127.0.0.1', port: relay.port, secure: false });
      expect(await sendDueMail(db, transport, at(1001))).toEqual({ sent: 3, retried: 0, failed: 0 });
      expect(await emlFiles(dir)).toHaveLength(3);
    } finally {
      await relay.close();
    }
  });

  it('sends one digest per recipient set when the roster changed within the period', async () => {
    await db.insertInto('on_call_shift').values({ spacecraft_id: mr1, user_id: uid.engineer!, starts_at: at(-3600), ends_at: at(300), created_by: uid.admin! }).execute();
    const [d1, d2] = (await newTrips(2)) as [number, number];
    const d3 = await newTrip({ spacecraftId: mr2 });
    await queueTrip(facts({ tripId: d1, level: 'caution', at: at(60) }), at(60));
    await queueTrip(facts({ tripId: d2, level: 'caution', at: at(400) }), at(400));
    await queueTrip(facts({ tripId: d3, level: 'caution', spacecraftId: mr2, spacecraftKey: 'MR-2', at: at(400) }), at(400));
    expect(await flushDigests(db, at(900), 15)).toBe(3);
    const rows = await outboxRows();
    expect(rows.map((r) => [r.message_key.replace(/:\d+$/, ':<item>'), r.to_addresses])).toEqual(
      expect.arrayContaining([
        [`digest:${mr1}:2026-12-01T10:00:00.000Z`, ['engineer@millrace.test']],
        [`digest:${mr1}:2026-12-01T10:00:00.000Z:<item>`, operators],
        [`digest:${mr2}:2026-12-01T10:00:00.000Z`, operators],
      ]),
    );
  });
});

describe('on-call roster', () => {
  it('recipientsFor picks whoever is on call at that time, and every operator when nobody is', async () => {
    const shift = (user: string, from: string, to: string, sc = mr1) =>
      db.insertInto('on_call_shift').values({ spacecraft_id: sc, user_id: uid[user]!, starts_at: new Date(from), ends_at: new Date(to), created_by: uid.admin! }).execute();
    await shift('engineer', '2026-12-01T08:00Z', '2026-12-01T12:00Z');
    await shift('analyst', '2026-12-01T11:00Z', '2026-12-01T14:00Z');
    await shift('admin', '2026-12-01T00:00Z', '2026-12-02T00:00Z', mr2);
    expect(await recipientsFor(db, mr1, new Date('2026-12-01T07:59:59Z'))).toEqual(operators);
    expect(await recipientsFor(db, mr1, new Date('2026-12-01T08:00:00Z'))).toEqual(['engineer@millrace.test']);
    expect(await recipientsFor(db, mr1, new Date('2026-12-01T11:30:00Z'))).toEqual(['analyst@millrace.test', 'engineer@millrace.test']);
    // Shifts are half-open: at 12:00 the engineer is off.
    expect(await recipientsFor(db, mr1, new Date('2026-12-01T12:00:00Z'))).toEqual(['analyst@millrace.test']);
    expect(await recipientsFor(db, mr1, new Date('2026-12-01T15:00:00Z'))).toEqual(operators);
    expect(await recipientsFor(db, mr2, new Date('2026-12-01T09:00:00Z'))).toEqual(['admin@millrace.test']);

    // Trip mail goes to whoever is on call when it is queued, not to whoever was on call at the
    // data's time (playback of 09:00 data queued at 13:00: the engineer's shift ended at 12:00).
    const [p1, p2] = (await newTrips(2, { level: 'caution' })) as [number, number];
    await queueTrip(facts({ tripId: p1, at: new Date('2026-12-01T09:00:00Z') }), new Date('2026-12-01T13:00:00Z'));
    expect((await outboxRows())[0]!.to_addresses).toEqual(['analyst@millrace.test']);
    // A caution's digest line is addressed the same way.
    await queueTrip(facts({ tripId: p2, level: 'caution', at: new Date('2026-12-01T09:00:00Z') }), new Date('2026-12-01T15:00:00Z'));
    expect((await db.selectFrom('mail_digest_item').select('to_addresses').where('trip_id', '=', p2).executeTakeFirstOrThrow()).to_addresses).toEqual(operators);
  });

  it('is edited through the API by operators (field errors, overlaps refused, audited) and only viewed by analysts', async () => {
    const day = new Date(Math.ceil(Date.now() / 86_400_000) * 86_400_000 + 86_400_000);
    const local = (hours: number) => new Date(day.getTime() + hours * 3_600_000).toISOString().slice(0, 16);
    const iso = (hours: number) => new Date(day.getTime() + hours * 3_600_000).toISOString();
    const operator = await clientAs('operator');
    const analyst = await clientAs('analyst');
    let res = await operator.post('/api/roster/MR-1', { userId: uid.engineer, startsAt: local(8), endsAt: local(6) });
    expect(res.status).toBe(400);
    expect((await res.json()).error.fields).toEqual({ endsAt: ['"To" must be after "From".'] });
    res = await operator.post('/api/roster/MR-1', { userId: 'no-such-user', startsAt: local(8), endsAt: local(20) });
    expect(res.status).toBe(400);
    expect((await res.json()).error.fields.userId).toBeDefined();

    res = await operator.post('/api/roster/MR-1', { userId: uid.engineer, startsAt: local(8), endsAt: local(20) });
    expect(res.status).toBe(201);
    const { id } = await res.json();
    res = await operator.post('/api/roster/MR-1', { userId: uid.engineer, startsAt: local(19), endsAt: local(26) });
    expect(res.status).toBe(409);
    expect((await res.json()).error.fields.startsAt[0]).toMatch(/Overlaps/);
    expect((await analyst.post('/api/roster/MR-1', { userId: uid.engineer, startsAt: local(32), endsAt: local(44) })).status).toBe(403);

    const view = await (await analyst.get('/api/roster/MR-1')).json();
    expect(view.canEdit).toBe(false);
    expect(view.candidates).toEqual([]);
    expect(view.shifts.map((s: { id: number; startsAt: string; endsAt: string; userEmail: string }) => [s.id, s.startsAt, s.endsAt, s.userEmail])).toEqual([
      [id, iso(8), iso(20), 'engineer@millrace.test'],
    ]);
    expect(await recipientsFor(db, mr1, new Date(iso(12)))).toEqual(['engineer@millrace.test']);

    expect((await analyst.request('DELETE', `/api/roster/MR-1/${id}`)).status).toBe(403);
    expect((await operator.request('DELETE', `/api/roster/MR-2/${id}`)).status).toBe(404);
    expect((await operator.request('DELETE', `/api/roster/MR-1/${id}`)).status).toBe(200);
    expect((await operator.request('DELETE', `/api/roster/MR-1/${id}`)).status).toBe(404);
    const audit = await db.selectFrom('audit_log').select(['action', 'actor_id', 'detail']).where('target_type', '=', 'on_call_shift').where('target_id', '=', String(id)).orderBy('id').execute();
    expect(audit.map((a) => [a.action, a.actor_id])).toEqual([
      ['on_call.add', uid.operator],
      ['on_call.remove', uid.operator],
    ]);
    expect(audit[0]!.detail).toMatchObject({ spacecraftId: mr1, userId: uid.engineer, startsAt: iso(8) });
  });
});

describe('Mailbox and Outbox endpoints', () => {
  it('list what the relay caught in MAILBOX_DIR, read one message parsed, and show the outbox to admins', async () => {
    const relay = await startRelay({ port: 0, dir: config().MAILBOX_DIR });
    try {
      const t = nodemailer.createTransport({ host: '127.0.0.1', port: relay.port, secure: false });
      await t.sendMail({ from: 'Millrace <millrace@localhost>', to: 'operator@millrace.test', subject: 'Mailbox check 7', text: 'plain part', html: '<p>html <b>part</b></p>' });
    } finally {
      await relay.close();
    }
    const admin = await clientAs('admin');
    const list = await (await admin.get('/api/mailbox')).json();
    const entry = list.messages.find((m: { subject: string }) => m.subject === 'Mailbox check 7');
    expect(entry).toMatchObject({ envelopeTo: ['operator@millrace.test'], envelopeFrom: 'millrace@localhost' });
    const msg = await (await admin.get(`/api/mailbox/${entry.id}`)).json();
    expect(msg).toMatchObject({ subject: 'Mailbox check 7', text: 'plain part', to: 'operator@millrace.test' });
    expect(msg.html).toContain('<b>part</b>');
    expect((await admin.get('/api/mailbox/..%2F..%2Fpackage.json')).status).toBe(404);

    await db.transaction().execute((trx) => enqueueMail(trx, { messageKey: 'test:outbox-view', kind: 'test', to: ['operator@millrace.test'], subject: 'Queued one', text: 't' }));
    const outbox = await (await admin.get('/api/outbox')).json();
    expect(outbox.counts.queued).toBe(1);
    expect(outbox.rows[0]).toMatchObject({ message_key: 'test:outbox-view', state: 'queued', attempts: 0, last_error: null });
  });
});

/** Warning-only effectiveness limit: every trip opens as a warning and is mailed on its own at once. */
const WARNING_ONLY: LimitRuleInput[] = [
  { quantity: 'effectiveness', loopId: null, cautionHigh: null, warningHigh: null, cautionLow: null, warningLow: 0.45, clearHigh: null, clearLow: 0.6, persistence: 3, rationale: 'test: warning only' },
];

describe('mail of a flown fault', () => {
  it('queues the trip mail in the job while the relay is down, and the worker delivers each message once when it is back, with the trip’s stored figures', async () => {
    // MR-1 flying the torque-constant loss: loop 0's effectiveness halves from minute 10.
    const { sc, endMs } = await fly('MR-1', 'torque-constant-loss', 20, { rules: WARNING_ONLY, prefix: 'M' });
    const nowMs = endMs + 5_000;
    const s = await runAnalysisJob(db, pool, sc, { nowMs, onTripChange: tripMailHandler });
    expect(s.status).toBe('done');
    const trips = await db.selectFrom('trip').selectAll().where('spacecraft_id', '=', sc.id).orderBy('id').execute();
    expect(trips.length).toBeGreaterThan(0);
    expect(trips.every((t) => t.level === 'warning' && t.loop_id === 0 && t.quantity === 'effectiveness')).toBe(true);

    // The job stored one message per trip change in the outbox, in its transaction.
    const keys = trips.flatMap((t) => [`trip:${t.id}:opened:warning`, ...(t.cleared_at ? [`trip:${t.id}:cleared:warning`] : [])]);
    let rows = await outboxRows();
    expect(rows.map((r) => r.message_key).sort()).toEqual([...keys].sort());
    expect(rows.every((r) => r.state === 'queued' && r.attempts === 0 && trips.some((t) => t.id === r.trip_id))).toBe(true);

    // Relay down (nothing listens on the port): a mail round keeps every message queued.
    const port = await freePort();
    const transport = createMailTransport({ SMTP_HOST: '127.0.0.1', SMTP_PORT: port, SMTP_USER: undefined, SMTP_PASS: undefined });
    const now = new Date(nowMs);
    expect(await runMailRound(db, transport, now)).toEqual({ digests: 0, sent: 0, retried: keys.length, failed: 0 });
    rows = await outboxRows();
    expect(rows.every((r) => r.state === 'queued' && r.attempts === 1 && /ECONNREFUSED/.test(r.last_error ?? ''))).toBe(true);

    // The relay comes back; the worker, past the first backoff, sends them.
    const dir = await fs.mkdtemp(path.join(os.tmpdir(), 'millrace-flown-'));
    const relay = await startRelay({ port, dir });
    const later = new Date(nowMs + backoffMs(1));
    const worker = startMailWorker(db, transport, { intervalMs: 50, clock: () => later, log: () => {} });
    try {
      const until = Date.now() + 15_000;
      while (Date.now() < until && (await emlFiles(dir)).length < keys.length) await new Promise((r) => setTimeout(r, 50));
      // a few more rounds: nothing is sent twice
      await new Promise((r) => setTimeout(r, 300));
    } finally {
      await worker.stop();
      await relay.close();
    }
    const files = await emlFiles(dir);
    expect(files).toHaveLength(keys.length);
    const mails = await Promise.all(files.map(async (f) => simpleParser(await fs.readFile(path.join(dir, f)))));
    expect(mails.map((m) => m.headers.get('x-millrace-message-key')).sort()).toEqual([...keys].sort());
    expect((await outboxRows()).every((r) => r.state === 'sent' && r.attempts === 2)).toBe(true);

    for (const t of trips) {
      const opened = mails.find((m) => m.headers.get('x-millrace-message-key') === `trip:${t.id}:opened:warning`)!;
      // the stored trip's onset value, its limit and level, and the link to its Casefile
      expect(opened.subject).toBe(`[Millrace] WARNING · ${sc.key} L0 effectiveness (kt / ideal) ${formatNumber(t.value)} (low limit ${formatNumber(t.limit_value)})`);
      expect(opened.text).toContain(`Value:      ${formatNumber(t.value)}, below the low limit`);
      expect(opened.text).toContain(`Limit:      ${formatNumber(t.limit_value)} (low), limit set version ${t.limit_set_version}`);
      expect(opened.text).toContain('Level:      WARNING');
      expect(opened.text).toContain(`${PUBLIC_URL}/trips/${t.id}`);
      expect(opened.html).toContain(`href="${PUBLIC_URL}/trips/${t.id}"`);
      expect(t.limit_value).toBe(0.45);
      expect(t.value).toBeLessThan(0.45);
    }
  }, 120_000);

  it('playback: a trip in old data is mailed to whoever is on call now, not to whoever was on shift then', async () => {
    const nowMs = Date.now();
    // data of three hours ago, arriving now
    const endMs = Math.floor(nowMs / 60_000) * 60_000 - 3 * 3600_000;
    const { sc } = await fly('MR-1', 'torque-constant-loss', 20, { rules: WARNING_ONLY, endMs, prefix: 'P' });
    await db.insertInto('on_call_shift').values([
      { spacecraft_id: sc.id, user_id: uid.engineer!, starts_at: new Date(endMs - 3600_000), ends_at: new Date(endMs + 3600_000), created_by: uid.admin! },
      { spacecraft_id: sc.id, user_id: uid.analyst!, starts_at: new Date(nowMs - 3600_000), ends_at: new Date(nowMs + 3600_000), created_by: uid.admin! },
    ]).execute();
    expect((await runAnalysisJob(db, pool, sc, { nowMs, onTripChange: tripMailHandler })).status).toBe('done');
    const rows = await db.selectFrom('outbox').innerJoin('trip', 'trip.id', 'outbox.trip_id').select(['outbox.to_addresses', 'trip.onset_at']).where('trip.spacecraft_id', '=', sc.id).execute();
    expect(rows.length).toBeGreaterThan(0);
    for (const r of rows) {
      expect(r.onset_at.getTime()).toBeLessThan(endMs); // the trip is in the engineer's (past) shift
      expect(r.to_addresses).toEqual(['analyst@millrace.test']);
    }
  }, 120_000);
});

describe('trips closed at a limit-set handover', () => {
  it('are mailed as closed at the handover (a warning on its own, a waiting caution in its digest), once', async () => {
    const key = `H${Date.now().toString(36).toUpperCase().slice(-5)}`;
    const { sc, v1 } = await db.transaction().execute(async (trx) => {
      const created = await insertSpacecraftWithSheet(trx, { ...sheetOf('MR-1', key), effectiveFrom: '2026-01-01T00:00:00Z' }, null);
      const v1 = await insertLimitSet(trx, created.id, { name: 'Old', notes: '', rules: DEFAULT_RULES }, null, 'active');
      return { sc: created, v1 };
    });
    const trip = (level: 'caution' | 'warning', quantity: string, cleared: Date | null) =>
      db
        .insertInto('trip')
        .values({
          spacecraft_id: sc.id, loop_id: 0, kind: 'torque-constant-drift', quantity, level, side: 'low', limit_set_id: v1.id, limit_set_version: v1.version,
          onset_at: at(0), raised_at: at(0), value: 0.5, peak_value: 0.41, limit_value: level === 'warning' ? 0.45 : 0.55, last_value: level === 'warning' ? 0.43 : 0.52, last_at: at(60), cleared_at: cleared, evidence: '{}',
        })
        .returning('id')
        .executeTakeFirstOrThrow()
        .then((r) => r.id);
    const warn = await trip('warning', 'effectiveness', null);
    const caut = await trip('caution', 'compensated_effectiveness', null);
    const done = await trip('warning', 'pressure_effectiveness', at(30)); // cleared on its own earlier: not mailed again
    // the caution's opening is still waiting for its digest
    await queueTrip(facts({ tripId: caut, spacecraftId: sc.id, spacecraftKey: key, level: 'caution', quantity: 'compensated_effectiveness', quantityLabel: 'Effectiveness, magnet-temperature compensated', unit: '', value: 0.5, limit: 0.55, limitSide: 'low', at: at(0) }), at(0));

    const handAt = at(120);
    const routes = await db.transaction().execute(async (trx) => {
      const next = await insertLimitSet(trx, sc.id, { name: 'New', notes: '', rules: DEFAULT_RULES }, null, 'draft');
      await trx.updateTable('limit_set').set({ status: 'retired', retired_at: handAt }).where('id', '=', v1.id).execute();
      await trx.updateTable('limit_set').set({ status: 'active', activated_at: handAt }).where('id', '=', next.id).execute();
      const h = await handOverLimits(trx, sc.id, v1, next, [0], handAt);
      expect(h.closed.sort()).toEqual([warn, caut].sort());
      // the call the approval makes after the handover
      return mailTripsClosedAtHandover(trx, [...h.closed, done], handAt);
    });
    expect(routes.map((r) => r.route).sort()).toEqual(['digest-cleared', 'message']);
    const rows = await outboxRows();
    expect(rows.map((r) => r.message_key)).toEqual([`trip:${warn}:cleared:warning`]);
    const m = rows[0]!;
    expect(m.subject).toBe(`[Millrace] Closed at limit handover · ${key} L0 effectiveness (kt / ideal) last 0.43 (low limit 0.45)`);
    expect(m.text_body).toContain(`WARNING trip closed at a limit-set handover on ${key}, loop L0`);
    expect(m.text_body).toContain('Last value: 0.43, below the low limit by 0.02');
    expect(m.text_body).toContain('Level:      WARNING (closed at handover)');
    expect(m.text_body).toContain('Note:       Closed at the handover: limit set v1 retired and v2 judges this quantity from');
    expect(m.text_body).not.toContain('back within its limit');
    expect(m.text_body).toContain(`${PUBLIC_URL}/trips/${warn}`);
    // the caution's digest line says it was closed at the handover
    expect(await flushDigests(db, at(900), 15)).toBe(1);
    const digest = (await outboxRows()).find((r) => r.kind === 'trip.digest')!;
    expect(digest.text_body).toContain(`closed at limit handover ${formatUtc(handAt).slice(11)}`);
    // a second call (say, a repeated handover mail) queues nothing new: the warning's message is a
    // duplicate, and the caution's closure was told by its digest
    const before = (await outboxRows()).length;
    const again = await db.transaction().execute((trx) => mailTripsClosedAtHandover(trx, [warn, caut], handAt));
    expect(again).toEqual([{ route: 'message', outboxId: null, duplicate: true }, { route: 'digest-cleared', itemId: expect.any(Number) }]);
    expect(await outboxRows()).toHaveLength(before);
  });
});

describe('mail rows reference their trip', () => {
  it('refuse an unknown trip, and keep the message (trip reference null) when the trip is deleted', async () => {
    await expect(db.transaction().execute((trx) => enqueueMail(trx, { messageKey: 'test:fk', kind: 'test', to: ['operator@millrace.test'], subject: 's', text: 't', tripId: 2_000_000_000 }))).rejects.toThrow(/outbox_trip_id_fkey/);
    const t = await newTrip({ level: 'caution' });
    const u = await newTrip();
    await queueTrip(facts({ tripId: t, level: 'caution' }), at(0));
    await queueTrip(facts({ tripId: u }), at(0));
    await db.deleteFrom('trip').where('id', 'in', [t, u]).execute();
    const msg = await db.selectFrom('outbox').select(['trip_id', 'message_key']).where('message_key', '=', `trip:${u}:opened:warning`).executeTakeFirstOrThrow();
    expect(msg.trip_id).toBeNull();
    const items = await db.selectFrom('mail_digest_item').select(['trip_id', 'facts']).execute();
    expect(items).toHaveLength(1);
    expect(items[0]!.trip_id).toBeNull();
    expect((items[0]!.facts as { tripId: number }).tripId).toBe(t);
    // the digest still goes out, listing the trip by its id
    expect(await flushDigests(db, at(900), 15)).toBe(1);
  });
});
