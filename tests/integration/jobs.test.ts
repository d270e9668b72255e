import fs from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { sql } from 'kysely';
import { clientAs, db, type Client } from './support';
import { startRelay, type Relay } from '../../fakes/smtp-relay';
import { config } from '../../src/lib/server/config';
import { enqueueMail } from '../../src/lib/server/mail/outbox';
import { pool } from '../../src/lib/server/db';
import { pruneJobRuns, runAllDueWork, JOB_RUN_RETENTION_DAYS } from '../../src/lib/server/job-log';
import { DEFAULT_RULES } from '../../src/lib/limits/defaults';
import { fly } from './flight';
import { QUANTITIES } from '../../src/lib/limits/quantities';
import { BODY, loadQuantitySeries } from '../../src/lib/server/trip-engine';
import { runAnalysisJob } from '../../src/lib/server/analysis-job';

/** The quiet defaults: nothing in a healthy flight trips them. */
const RULES = DEFAULT_RULES.filter((r) => r.quantity !== 'data_age_s');

let engineer: Client;
let admin: Client;
let relay: Relay;
let dir: string;

beforeAll(async () => {
  engineer = await clientAs('engineer');
  admin = await clientAs('admin');
  // The built server sends through SMTP_PORT; the launcher starts no relay in test mode.
  dir = await fs.mkdtemp(path.join(os.tmpdir(), 'millrace-jobs-'));
  relay = await startRelay({ port: config().SMTP_PORT, dir });
  await db.deleteFrom('mail_digest_item').execute();
  await db.deleteFrom('outbox').execute();
});

afterAll(async () => {
  await relay?.close();
});

const maxRunId = async () => Number((await db.selectFrom('job_run').select((eb) => eb.fn.max('id').as('m')).executeTakeFirst())?.m ?? 0);

describe('run all due work', () => {
  it('POST /api/jobs/run refreshes passes, analyses every spacecraft, runs a mail round, and records each part; a spacecraft whose analysis fails does not stop the others', async () => {
    const healthy = await fly('MR-1', 'healthy', 6, { rules: RULES, prefix: 'J' });
    const broken = await fly('MR-3', 'healthy', 3, { rules: RULES, prefix: 'K' });
    // A sheet row that no longer passes the sheet schema (loops is not a list): its analysis must fail.
    const good = await db.selectFrom('spacecraft_sheet').select(['id', 'sheet']).where('spacecraft_id', '=', broken.sc.id).executeTakeFirstOrThrow();
    await sql`UPDATE spacecraft_sheet SET sheet = jsonb_set(sheet, '{loops}', '"not a list"') WHERE id = ${good.id}`.execute(db);
    // a message waiting in the outbox for the mail round
    await db.transaction().execute((trx) => enqueueMail(trx, { messageKey: 'test:jobs-run', kind: 'test', to: ['operator@millrace.test'], subject: 'Jobs run check', text: 't' }));
    // stale pass predictions for the healthy spacecraft: none computed yet
    await db.deleteFrom('pass_horizon').where('spacecraft_id', '=', healthy.sc.id).execute();
    const before = await maxRunId();
    try {
      const res = await engineer.post('/api/jobs/run');
      expect(res.status).toBe(200);
      const s = await res.json();
      expect(Object.keys(s).sort()).toEqual(['jobs', 'mail', 'passes']);

      expect(s.passes.status).toBe('done');
      expect(s.passes.recomputed.map((r: { spacecraftId: number }) => r.spacecraftId)).toContain(healthy.sc.id);

      const a = s.jobs.find((j: { spacecraftKey: string }) => j.spacecraftKey === healthy.sc.key);
      const b = s.jobs.find((j: { spacecraftKey: string }) => j.spacecraftKey === broken.sc.key);
      expect(a).toMatchObject({ status: 'done' });
      expect(a.windows).toBeGreaterThanOrEqual(5);
      expect(b.status).toBe('failed');
      expect(b.error).toMatch(/loops/);
      // the fleet, the demo spacecraft included, was analysed
      const fleet = await db.selectFrom('spacecraft').select('key').execute();
      expect(s.jobs.map((j: { spacecraftKey: string }) => j.spacecraftKey).sort()).toEqual(fleet.map((f) => f.key).sort());
      expect(s.jobs.filter((j: { status: string }) => j.status === 'failed').map((j: { spacecraftKey: string }) => j.spacecraftKey)).toEqual([broken.sc.key]);

      expect(s.mail.status).toBe('done');
      expect(s.mail.sent).toBeGreaterThanOrEqual(1);
      const sent = await db.selectFrom('outbox').select(['state', 'id']).where('message_key', '=', 'test:jobs-run').executeTakeFirstOrThrow();
      expect(sent.state).toBe('sent');
      const emls = (await fs.readdir(dir)).filter((f) => f.endsWith('.eml'));
      const bodies = await Promise.all(emls.map((f) => fs.readFile(path.join(dir, f), 'utf8')));
      expect(bodies.filter((b) => b.includes('Subject: Jobs run check'))).toHaveLength(1);

      // Job log: one passes run, one analysis run per spacecraft (the failed one with its error), one mail run
      const log = await (await admin.get('/api/jobs')).json();
      const runs = log.runs.filter((r: { id: number }) => Number(r.id) > before);
      expect(runs.filter((r: { job: string }) => r.job === 'passes')).toHaveLength(1);
      expect(runs.filter((r: { job: string }) => r.job === 'mail')).toHaveLength(1);
      expect(runs.filter((r: { job: string }) => r.job === 'analysis')).toHaveLength(fleet.length);
      const mailRun = runs.find((r: { job: string }) => r.job === 'mail');
      expect(mailRun.detail).toMatchObject({ status: 'done', sent: s.mail.sent, retried: s.mail.retried, failed: s.mail.failed, digests: s.mail.digests });
      expect(mailRun.finished_at).not.toBeNull();
      const passRun = runs.find((r: { job: string }) => r.job === 'passes');
      expect(passRun.detail.status).toBe('done');
      expect(passRun.detail.recomputed).toHaveLength(s.passes.recomputed.length);
      const failed = runs.find((r: { job: string; spacecraft: string }) => r.job === 'analysis' && r.spacecraft === broken.sc.key);
      expect(failed.error).toMatch(/loops/);
      expect(failed.detail.status).toBe('failed');
      expect(runs.find((r: { job: string; spacecraft: string }) => r.job === 'analysis' && r.spacecraft === healthy.sc.key).error).toBeNull();

      // audited, and only engineers and admins may run it
      const audit = await db.selectFrom('audit_log').select(['action', 'detail']).where('action', '=', 'jobs.run').orderBy('id', 'desc').executeTakeFirstOrThrow();
      expect(audit.detail).toMatchObject({ spacecraft: fleet.length, mailSent: s.mail.sent });
      expect((await (await clientAs('analyst')).post('/api/jobs/run')).status).toBe(403);
    } finally {
      await db.updateTable('spacecraft_sheet').set({ sheet: JSON.stringify(good.sheet) }).where('id', '=', good.id).execute();
    }
  }, 120_000);

  it('runAllDueWork without a transport leaves the mail round out (the scheduler: its worker sends)', async () => {
    await db.transaction().execute((trx) => enqueueMail(trx, { messageKey: 'test:jobs-nomail', kind: 'test', to: ['operator@millrace.test'], subject: 's', text: 't' }));
    const before = await maxRunId();
    const s = await runAllDueWork(db, pool, { transport: null });
    expect(s.mail).toBeUndefined();
    expect(s.passes.status).toBe('done');
    expect(s.jobs.length).toBeGreaterThan(0);
    const jobs = await db.selectFrom('job_run').select('job').where('id', '>', before).execute();
    expect(jobs.some((j) => j.job === 'mail')).toBe(false);
    expect(jobs.filter((j) => j.job === 'passes')).toHaveLength(1);
    expect((await db.selectFrom('outbox').select('state').where('message_key', '=', 'test:jobs-nomail').executeTakeFirstOrThrow()).state).toBe('queued');
  }, 60_000);
});

describe('job log retention', () => {
  it(`prunes runs older than ${JOB_RUN_RETENTION_DAYS} days and keeps younger ones`, async () => {
    const now = new Date();
    const day = 86_400_000;
    const ids = await db
      .insertInto('job_run')
      .values([
        { job: 'test-prune', spacecraft_id: null, started_at: new Date(now.getTime() - 31 * day) },
        { job: 'test-prune', spacecraft_id: null, started_at: new Date(now.getTime() - 30 * day - 1000) },
        { job: 'test-prune', spacecraft_id: null, started_at: new Date(now.getTime() - 29 * day) },
      ])
      .returning(['id', 'started_at'])
      .execute();
    const deleted = await pruneJobRuns(db, now);
    expect(deleted).toBe(2); // the test database holds no other run that old
    const left = await db.selectFrom('job_run').select('id').where('job', '=', 'test-prune').execute();
    expect(left.map((r) => r.id)).toEqual([ids[2]!.id]);
    await expect(pruneJobRuns(db, now, 0)).rejects.toThrow(/days must be a positive number/);
    await db.deleteFrom('job_run').where('job', '=', 'test-prune').execute();
  });
});

describe('limit quantities through the trip engine', () => {
  it('every quantity read from a table loads its series from a flown spacecraft, the new ones with values', async () => {
    const { sc, startMs, endMs } = await fly('MR-1', 'healthy', 5, { rules: RULES, prefix: 'Q' });
    expect((await runAnalysisJob(db, pool, sc, { nowMs: endMs + 5_000 })).status).toBe('done');
    const counts: Record<string, { points: number; values: number }> = {};
    for (const q of QUANTITIES.filter((x) => x.source !== 'link')) {
      const pts = await loadQuantitySeries(db, sc.id, q, q.scope === 'body' ? BODY : 0, startMs - 60_000, endMs + 60_000);
      counts[q.key] = { points: pts.length, values: pts.filter((p) => p.value !== null && Number.isFinite(p.value)).length };
    }
    // raw channels: one point per 10 Hz sample
    for (const k of ['commanded_current_a', 'mag_x_nt', 'mag_y_nt', 'mag_z_nt']) expect(counts[k]!.values, k).toBeGreaterThan(5 * 60 * 5);
    // per-window figures: every window of the flight
    for (const k of ['kt_nm_per_a', 'kt_stderr_nm_per_a', 'effectiveness_stderr', 'pressure_constant_stderr_pa_per_a', 'loop_momentum_mean_nms', 'loop_momentum_max_abs_nms', 'ledger_stderr_x_nm', 'ledger_stderr_y_nm', 'ledger_stderr_z_nm']) {
      expect(counts[k]!.values, k).toBeGreaterThanOrEqual(3);
    }
    // the drift statistics wait for an hour's baseline: windows are there, values not yet
    for (const k of ['drift_ewma', 'drift_cusum_hi']) expect(counts[k]!.points, k).toBeGreaterThanOrEqual(3);
  }, 60_000);
});

describe('a sheet that takes effect in the past', () => {
  it('hands the batches it governs back to the analysis, whose windows from its effective time on then carry it', async () => {
    const { sc, startMs, endMs } = await fly('MR-1', 'healthy', 6, { rules: RULES, prefix: 'B' });
    expect((await runAnalysisJob(db, pool, sc, { nowMs: endMs + 5_000 })).status).toBe('done');
    const windows = () => db.selectFrom('loop_window').select(['window_start', 'sheet_id', 'effectiveness']).where('spacecraft_id', '=', sc.id).where('loop_id', '=', 0).orderBy('window_start').execute();
    const first = await windows();
    expect(first.length).toBeGreaterThanOrEqual(5);
    const firstSheet = first[0]!.sheet_id;
    expect(new Set(first.map((w) => w.sheet_id))).toEqual(new Set([firstSheet]));
    // The engineer corrects the field strength from three minutes into the flight on.
    const switchAt = new Date(Math.ceil((startMs + 3 * 60_000) / 60_000) * 60_000);
    const sheet = JSON.parse(await fs.readFile('ingest/fleet/MR-1.json', 'utf8'));
    sheet.spacecraft = { key: sc.key, name: `Test ${sc.key}` };
    sheet.effectiveFrom = switchAt.toISOString();
    for (const st of sheet.loops[0].pumpStations) st.field_T *= 0.9;
    const res = await engineer.post(`/api/spacecraft/${sc.key}/sheets`, sheet);
    expect(res.status).toBe(201);
    const pending = await db.selectFrom('ingest_batch').select('id').where('spacecraft_id', '=', sc.id).where('analysed_at', 'is', null).execute();
    expect(pending.length).toBeGreaterThan(0);
    expect((await runAnalysisJob(db, pool, sc, { nowMs: endMs + 10_000 })).status).toBe('done');
    const second = await windows();
    const newSheet = await db.selectFrom('spacecraft_sheet').select('id').where('spacecraft_id', '=', sc.id).where('effective_from', '=', switchAt).executeTakeFirstOrThrow();
    const before = second.filter((w) => w.window_start < switchAt);
    const after = second.filter((w) => w.window_start >= switchAt);
    expect(before.length).toBeGreaterThan(0);
    expect(after.length).toBeGreaterThan(0);
    expect(new Set(before.map((w) => w.sheet_id))).toEqual(new Set([firstSheet]));
    expect(new Set(after.map((w) => w.sheet_id))).toEqual(new Set([newSheet.id]));
    // The same estimate of kT against an ideal constant 0.9 of the first sheet's (the ideal kT is
    // proportional to B): each window's effectiveness is 1/0.9 of what it was.
    const was = new Map(first.map((w) => [w.window_start.getTime(), w.effectiveness]));
    const ratios = after.filter((w) => w.effectiveness !== null && was.get(w.window_start.getTime())).map((w) => w.effectiveness! / was.get(w.window_start.getTime())!);
    expect(ratios.length).toBeGreaterThan(0);
    for (const r of ratios) expect(r).toBeCloseTo(1 / 0.9, 3);
    for (const w of before.filter((x) => x.effectiveness !== null)) expect(w.effectiveness! / was.get(w.window_start.getTime())!).toBeCloseTo(1, 3);
  }, 60_000);
});

describe('seeded demo limits', () => {
  it('each demo spacecraft’s active set has measured-current limits at its sheet’s rated current', async () => {
    for (const [key, rated] of [['MR-1', 25], ['MR-2', 30], ['MR-3', 22]] as const) {
      const rules = await db
        .selectFrom('limit_rule as r')
        .innerJoin('limit_set as s', 's.id', 'r.limit_set_id')
        .innerJoin('spacecraft as c', 'c.id', 's.spacecraft_id')
        .select(['r.loop_id', 'r.caution_high', 'r.warning_high', 'r.caution_low', 'r.warning_low', 'r.clear_high'])
        .where('c.key', '=', key)
        .where('s.status', '=', 'active')
        .where('r.quantity', '=', 'measured_current_a')
        .execute();
      expect(rules, key).toEqual([{ loop_id: null, caution_high: rated, warning_high: Math.round(rated * 1.15 * 1000) / 1000, caution_low: -rated, warning_low: -Math.round(rated * 1.15 * 1000) / 1000, clear_high: rated * 0.95 }]);
    }
  });
});
