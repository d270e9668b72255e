import fs from 'node:fs';
import { beforeAll, describe, expect, it } from 'vitest';
import { Client, clientAs, db } from './support';
import { pool } from '../../src/lib/server/db';
import { generatePackets } from '../../ingest/generator';
import { parseScenario, type Scenario } from '../../ingest/scenario.schema';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { insertLimitSet } from '../../src/lib/server/limit-sets';
import { DEFAULT_RULES } from '../../src/lib/limits/defaults';
import type { LimitRuleInput, LimitSetInput } from '../../src/lib/limits/limit-set.schema';
import { ingestBody } from '../../src/lib/server/ingest';
import { runAnalysisJob } from '../../src/lib/server/analysis-job';
import { cancelBacktest, executeBacktest, findBacktest, insertBacktest, type BacktestView } from '../../src/lib/server/backtest';
import type { LimitSetView } from '../../src/lib/server/limit-review';

let counter = 0;
const sheetOf = (file: string, key: string): SpacecraftSheet => {
  const s = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync(`ingest/fleet/${file}.json`, 'utf8')));
  return { ...s, spacecraft: { key, name: `Bench ${key}` } };
};

/** A fresh spacecraft flying a scenario for `minutes`, ingested, with the default limits active. */
async function fly(file: string, scenarioName: string, minutes: number) {
  const key = `LB${Date.now().toString(36).toUpperCase().slice(-5)}-${++counter}`;
  const sheet = sheetOf(file, key);
  const created = await db.transaction().execute(async (trx) => {
    const sc = await insertSpacecraftWithSheet(trx, { ...sheet, effectiveFrom: '2026-01-01T00:00:00Z' }, null);
    const set = await insertLimitSet(trx, sc.id, { name: 'Default limits', notes: '', rules: DEFAULT_RULES }, null, 'active');
    return { sc, set };
  });
  const scenario: Scenario = parseScenario(JSON.parse(fs.readFileSync(`ingest/scenarios/${scenarioName}.json`, 'utf8')));
  const endMs = Math.floor(Date.now() / 60_000) * 60_000 - 60_000;
  const startMs = endMs - minutes * 60_000;
  for (const chunk of generatePackets({ sheet, scenario, startMs, durationMs: minutes * 60_000, chunkBytes: 4 << 20 })) {
    await ingestBody(pool, db, chunk.slice(), { spacecraftId: created.sc.id, stationId: null, tokenId: null }, endMs + 5_000);
  }
  return { sc: { id: created.sc.id, key }, activeSetId: created.set.id, startMs, endMs, scenario };
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const body = async <T>(res: Response): Promise<T> => (await res.json()) as T;

/** Poll a backtest through the API until it ends; returns it and the progress values seen. */
async function waitForBacktest(c: Client, id: number): Promise<{ b: BacktestView; seen: number[] }> {
  const seen: number[] = [];
  for (let i = 0; i < 1200; i++) {
    const res = await c.get(`/api/backtests/${id}`);
    expect(res.status).toBe(200);
    const { backtest } = await body<{ backtest: BacktestView }>(res);
    seen.push(backtest.progress);
    if (backtest.status !== 'queued' && backtest.status !== 'running') return { b: backtest, seen };
    await sleep(50);
  }
  throw new Error(`backtest ${id} did not finish`);
}

const effectiveness = (over: Partial<LimitRuleInput>): LimitRuleInput => ({
  quantity: 'effectiveness', loopId: null, cautionHigh: null, warningHigh: null, cautionLow: 0.55, warningLow: 0.45, clearHigh: null, clearLow: 0.6, persistence: 3, rationale: '', ...over,
});

async function newDraft(c: Client, key: string): Promise<LimitSetView> {
  const res = await c.post('/api/limit-sets', { spacecraft: key });
  expect(res.status, await res.clone().text()).toBe(201);
  return (await body<{ set: LimitSetView }>(res)).set;
}

async function put(c: Client, id: number, input: LimitSetInput) {
  return c.request('PUT', `/api/limit-sets/${id}`, { json: input });
}

async function runBacktest(c: Client, setId: number) {
  const res = await c.post(`/api/limit-sets/${setId}/backtests`, {});
  expect(res.status, await res.clone().text()).toBe(202);
  const { backtest } = await body<{ backtest: BacktestView }>(res);
  expect(['queued', 'running', 'done']).toContain(backtest.status);
  return waitForBacktest(c, backtest.id);
}

describe('Limit bench on a known fault (torque-constant loss on loop 0)', () => {
  let flown: Awaited<ReturnType<typeof fly>>;
  let engineer: Client;
  let engineer2: Client;

  beforeAll(async () => {
    flown = await fly('MR-1', 'torque-constant-loss', 25);
    const s = await runAnalysisJob(db, pool, flown.sc);
    expect(s.status).toBe('done');
    engineer = await clientAs('engineer');
    engineer2 = new Client();
    expect((await engineer2.signIn('engineer2@millrace.test')).status).toBe(200);
  }, 240_000);

  it('the backtest of the active set finds exactly the trips the live scheduler raised on the same data', async () => {
    const live = await db
      .selectFrom('trip')
      .select(['quantity', 'loop_id', 'level', 'side', 'onset_at', 'cleared_at', 'value', 'limit_value', 'peak_value'])
      .where('spacecraft_id', '=', flown.sc.id)
      .where('quantity', '!=', 'data_age_s')
      .orderBy('onset_at')
      .orderBy('loop_id')
      .execute();
    // The fault must have tripped live, or the comparison says nothing.
    expect(live.some((t) => t.quantity === 'effectiveness' && t.loop_id === 0)).toBe(true);

    const started = await insertBacktest(db, flown.activeSetId, {}, null);
    expect(await executeBacktest(db, started.id)).toBe('done');
    const result = (await findBacktest(db, started.id))!.result!;
    expect(result.baseline).toBeNull();
    const replayed = result.trips.filter((t) => t.quantity !== 'data_age_s');
    const key = (t: { quantity: string; loopId: number | null; level: string; side: string; onsetMs: number; clearedMs: number | null; value: number; limit: number }) =>
      `${t.quantity}|${t.loopId}|${t.level}|${t.side}|${t.onsetMs}|${t.clearedMs}|${t.value}|${t.limit}`;
    expect(replayed.map(key).sort()).toEqual(
      live.map((t) => key({ quantity: t.quantity, loopId: t.loop_id, level: t.level, side: t.side, onsetMs: t.onset_at.getTime(), clearedMs: t.cleared_at?.getTime() ?? null, value: t.value, limit: t.limit_value })).sort(),
    );
    // A cleared trip's worst value is final in both.
    for (const t of live.filter((x) => x.cleared_at)) expect(replayed.find((r) => r.onsetMs === t.onset_at.getTime() && r.quantity === t.quantity)!.peak).toBe(t.peak_value);
  });

  it('a tight draft trips on loop 0 after the fault starts and a loose draft does not, both beside the active set', async () => {
    const fault = flown.scenario.faults[0]!;
    const rampStart = flown.startMs + fault.start_s * 1000;

    const tight = await newDraft(engineer, flown.sc.key);
    expect(tight.status).toBe('draft');
    expect(tight.rules).toHaveLength(DEFAULT_RULES.length);
    expect((await put(engineer, tight.id, { name: 'Tight effectiveness', notes: '', rules: [effectiveness({ cautionLow: 0.6, warningLow: 0.5, clearLow: 0.63 })] })).status).toBe(200);
    const t = await runBacktest(engineer, tight.id);
    expect(t.b.status).toBe('done');
    expect(t.b.progress).toBe(100);
    const tr = t.b.result!;
    const draftTrips = tr.trips.filter((x) => x.set === 'draft');
    expect(draftTrips.length).toBeGreaterThan(0);
    expect(new Set(draftTrips.map((x) => `${x.quantity}:${x.loopId}`))).toEqual(new Set(['effectiveness:0']));
    const first = Math.min(...draftTrips.map((x) => x.onsetMs));
    expect(first).toBeGreaterThanOrEqual(rampStart - 60_000);
    expect(first - rampStart).toBeLessThan(10 * 60_000);
    expect(tr.baseline).toMatchObject({ id: flown.activeSetId, status: 'active' });
    expect(tr.trips.filter((x) => x.set === 'baseline' && x.quantity === 'effectiveness' && x.loopId === 0).length).toBeGreaterThan(0);
    // Progress only grows, and the chart has the series with the trips on it.
    for (let i = 1; i < t.seen.length; i++) expect(t.seen[i]!).toBeGreaterThanOrEqual(t.seen[i - 1]!);
    expect(tr.series.find((s) => s.quantity === 'effectiveness' && s.loopId === 0)!.points).toBeGreaterThan(15);

    const loose = await newDraft(engineer, flown.sc.key);
    expect((await put(engineer, loose.id, { name: 'Loose effectiveness', notes: '', rules: [effectiveness({ cautionLow: 0.2, warningLow: 0.1, clearLow: 0.25 })] })).status).toBe(200);
    const l = await runBacktest(engineer, loose.id);
    expect(l.b.status).toBe('done');
    expect(l.b.result!.trips.filter((x) => x.set === 'draft')).toEqual([]);
    expect(l.b.result!.rules.filter((x) => x.set === 'draft').map((x) => x.points)).toEqual([tr.rules.find((x) => x.set === 'draft')!.points]);

    // The results are kept with each draft.
    const kept = await body<{ backtests: BacktestView[] }>(await engineer.get(`/api/limit-sets/${tight.id}/backtests`));
    expect(kept.backtests.map((b) => b.id)).toEqual([t.b.id]);
    const view = await body<{ set: LimitSetView }>(await engineer.get(`/api/limit-sets/${loose.id}`));
    expect(view.set.backtests.map((b) => [b.id, b.status, b.rulesDigest === view.set.rulesDigest])).toEqual([[l.b.id, 'done', true]]);
  }, 120_000);

  it('puts every validation error on its field: ordering, persistence, quantity, and the spacecraft’s loops', async () => {
    const d = await newDraft(engineer, flown.sc.key);
    const res = await put(engineer, d.id, {
      name: 'Bad',
      notes: '',
      rules: [
        effectiveness({ cautionLow: 0.4, warningLow: 0.45 }),
        effectiveness({ quantity: 'electrode_temp_mean_c', cautionLow: null, warningLow: null, clearLow: null, cautionHigh: 55, warningHigh: 70, clearHigh: 60 }),
        effectiveness({ persistence: 0 }),
        effectiveness({ quantity: 'warp_factor' }),
      ],
    });
    expect(res.status).toBe(400);
    const e = (await body<{ error: { code: string; fields: Record<string, string[]> } }>(res)).error;
    expect(e.code).toBe('BAD_REQUEST');
    expect(e.fields['rules[0].cautionLow']?.join(' ')).toMatch(/inside \(above\) the low warning level/);
    expect(e.fields['rules[1].clearHigh']?.join(' ')).toMatch(/clear level must lie inside/);
    expect(e.fields['rules[2].persistence']).toEqual(['must be at least 1']);
    expect(e.fields['rules[3].quantity']?.join(' ')).toMatch(/unknown quantity "warp_factor"/);
    // MR-1's sheet has loop 0 only: a loop that is not there is refused on its field.
    const loops = await put(engineer, d.id, { name: 'Bad loop', notes: '', rules: [effectiveness({ loopId: 0 }), effectiveness({ loopId: 2 })] });
    expect(loops.status).toBe(400);
    expect((await body<{ error: { fields: Record<string, string[]> } }>(loops)).error.fields).toEqual({ 'rules[1].loopId': ['this spacecraft has no loop 2 (it has 0)'] });
    // Nothing was stored.
    const after = await body<{ set: LimitSetView }>(await engineer.get(`/api/limit-sets/${d.id}`));
    expect(after.set.rules).toEqual(d.rules);
  });

  it('refuses self-approval; a second engineer returns it with comments, then approves it; the old set retires in the same step; every step is audited', async () => {
    const d = await newDraft(engineer, flown.sc.key);
    const edited: LimitSetInput = { name: 'Earlier effectiveness caution', notes: 'Raise the caution after the bench', rules: [effectiveness({ cautionLow: 0.6, warningLow: 0.5, clearLow: 0.63 }), ...DEFAULT_RULES.slice(1)] };
    expect((await put(engineer, d.id, edited)).status).toBe(200);
    // Only the author edits or submits the draft.
    const foreign = await put(engineer2, d.id, edited);
    expect(foreign.status).toBe(403);
    expect(((await foreign.json()) as { error: { message: string } }).error.message).toMatch(/Only the author/);
    expect((await engineer.post(`/api/limit-sets/${d.id}/submit`, { comment: 'Backtested: trips 2 min earlier on the loop 0 fault' })).status).toBe(200);
    expect((await put(engineer, d.id, edited)).status).toBe(409);

    const self = await engineer.post(`/api/limit-sets/${d.id}/approve`, {});
    expect(self.status).toBe(403);
    const selfError = ((await self.json()) as { error: { code: string; message: string } }).error;
    expect(selfError.code).toBe('FORBIDDEN');
    expect(selfError.message).toMatch(/You wrote limit set v\d+, so you cannot approve it: a different engineer or an admin reviews it/);
    expect((await engineer.post(`/api/limit-sets/${d.id}/return`, { comment: 'mine' })).status).toBe(403);

    const noComment = await engineer2.post(`/api/limit-sets/${d.id}/return`, { comment: ' ' });
    expect(noComment.status).toBe(400);
    expect(Object.keys(((await noComment.json()) as { error: { fields: Record<string, string[]> } }).error.fields)).toEqual(['comment']);
    const returned = await engineer2.post(`/api/limit-sets/${d.id}/return`, { comment: 'Give the clear level a rationale' });
    expect(returned.status).toBe(200);
    expect((await body<{ set: LimitSetView }>(returned)).set.status).toBe('draft');
    expect((await put(engineer, d.id, { ...edited, rules: edited.rules.map((r, i) => (i === 0 ? { ...r, rationale: 'Bench: 0.6 trips the loop 0 fault earlier' } : r)) })).status).toBe(200);
    expect((await engineer.post(`/api/limit-sets/${d.id}/submit`, {})).status).toBe(200);

    // The fault's trip under the old set is still live when the new set takes over.
    const liveBefore = await db.selectFrom('trip').select('id').where('limit_set_id', '=', flown.activeSetId).where('cleared_at', 'is', null).execute();
    expect(liveBefore.length).toBeGreaterThan(0);
    const approved = await engineer2.post(`/api/limit-sets/${d.id}/approve`, { comment: 'Agreed' });
    expect(approved.status, await approved.clone().text()).toBe(200);
    const a = await body<{ set: LimitSetView; retired: number }>(approved);
    expect(a.set.status).toBe('active');
    expect(a.retired).toBe(flown.activeSetId);
    expect(a.set.reviews.map((r) => [r.action, r.comment])).toEqual([
      ['submitted', 'Backtested: trips 2 min earlier on the loop 0 fault'],
      ['returned', 'Give the clear level a rationale'],
      ['submitted', ''],
      ['approved', 'Agreed'],
    ]);
    const sets = await db.selectFrom('limit_set').select(['id', 'status', 'activated_at', 'retired_at']).where('spacecraft_id', '=', flown.sc.id).execute();
    expect(sets.filter((s) => s.status === 'active').map((s) => s.id)).toEqual([d.id]);
    const old = sets.find((s) => s.id === flown.activeSetId)!;
    expect(old.status).toBe('retired');
    // One transaction: the old set retired at the very instant the new one became active.
    expect(old.retired_at!.getTime()).toBe(sets.find((s) => s.id === d.id)!.activated_at!.getTime());
    // A second approval has nothing to approve.
    expect((await engineer2.post(`/api/limit-sets/${d.id}/approve`, {})).status).toBe(409);

    // Handover: the old set's live trips are closed with a note (not as if the value had returned), and
    // the new rules start where the old ones had judged through, so the next run raises no second trip
    // for the excursion that already has one.
    const closed = await db.selectFrom('trip').select(['id', 'cleared_at', 'cleared_note', 'state']).where('id', 'in', liveBefore.map((t) => t.id)).execute();
    for (const t of closed) {
      expect(t.cleared_at!.getTime()).toBe(old.retired_at!.getTime());
      expect(t.cleared_note).toMatch(new RegExp(`limit set v\\d+ retired and v${a.set.version} judges this quantity from`));
      expect(t.state).toBe('open');
    }
    // Each closed trip is told to the on-call operators: a message of its own, or a line in the digest.
    const closedIds = liveBefore.map((t) => t.id);
    const mailed = await db.selectFrom('outbox').select('trip_id').where('trip_id', 'in', closedIds).where('message_key', 'like', 'trip:%:cleared:%').execute();
    const digested = await db.selectFrom('mail_digest_item').select('trip_id').where('trip_id', 'in', closedIds).where('cleared_at', 'is not', null).execute();
    for (const id of closedIds) expect(mailed.some((m) => m.trip_id === id) || digested.some((m) => m.trip_id === id), `trip ${id} closed at the handover without mail`).toBe(true);
    const seeded = await db.selectFrom('rule_cursor as c').innerJoin('limit_rule as r', 'r.id', 'c.rule_id').select(['r.quantity', 'c.loop_id']).where('r.limit_set_id', '=', d.id).execute();
    expect(seeded.some((c) => c.quantity === 'effectiveness' && c.loop_id === 0)).toBe(true);
    expect((await runAnalysisJob(db, pool, flown.sc, { nowMs: flown.endMs + 5_000 })).status).toBe('done');
    const raisedByNew = await db.selectFrom('trip').select('id').where('limit_set_id', '=', d.id).execute();
    expect(raisedByNew).toEqual([]);

    // The history shows what changed against the version before.
    const diff = await body<{ previous: { id: number; status: string } | null; diff: { changed: { quantity: string; fields: { field: string; before: unknown; after: unknown }[] }[]; added: unknown[]; removed: unknown[] } }>(
      await engineer.get(`/api/limit-sets/${d.id}/diff`),
    );
    expect(diff.previous).toMatchObject({ id: flown.activeSetId, status: 'retired' });
    expect(diff.diff.added).toEqual([]);
    expect(diff.diff.removed).toEqual([]);
    expect(diff.diff.changed).toEqual([
      {
        key: 'effectiveness|all', quantity: 'effectiveness', label: 'Effectiveness (kT / ideal)', loopId: null,
        fields: [
          { field: 'cautionLow', before: 0.55, after: 0.6 },
          { field: 'warningLow', before: 0.45, after: 0.5 },
          { field: 'clearLow', before: 0.6, after: 0.63 },
          { field: 'rationale', before: DEFAULT_RULES[0]!.rationale, after: 'Bench: 0.6 trips the loop 0 fault earlier' },
        ],
      },
    ]);

    const audit = await db.selectFrom('audit_log').select(['action', 'target_id', 'actor_id']).where('target_type', '=', 'limit_set').where('target_id', 'in', [String(d.id), String(flown.activeSetId)]).orderBy('id').execute();
    const ids = await db.selectFrom('app_user').select(['id', 'email']).where('email', 'in', ['engineer@millrace.test', 'engineer2@millrace.test']).execute();
    const who = (id: string | null) => ids.find((u) => u.id === id)?.email.split('@')[0] ?? 'nobody';
    expect(audit.filter((x) => x.target_id === String(d.id)).map((x) => `${x.action}:${who(x.actor_id)}`)).toEqual([
      'limit-set.create:engineer',
      'limit-set.draft:engineer',
      'limit-set.update:engineer',
      'limit-set.submit:engineer',
      'limit-set.return:engineer2',
      'limit-set.update:engineer',
      'limit-set.submit:engineer',
      'limit-set.approve:engineer2',
    ]);
    expect(audit.filter((x) => x.target_id === String(flown.activeSetId)).map((x) => `${x.action}:${who(x.actor_id)}`)).toContain('limit-set.retire:engineer2');
    // The backtests of the earlier test were audited against their drafts.
    const started = await db.selectFrom('audit_log').select('id').where('action', '=', 'backtest.start').where('target_type', '=', 'limit_set').execute();
    expect(started.length).toBeGreaterThanOrEqual(2);
  });

  it('lists the versions of a spacecraft; a backtest cancelled before it ran does not run; a finished one cannot be cancelled', async () => {
    const list = await body<{ sets: { id: number; version: number; status: string }[] }>(await engineer.get(`/api/limit-sets?spacecraft=${flown.sc.key}`));
    expect(list.sets.length).toBeGreaterThanOrEqual(5);
    expect(list.sets.map((s) => s.version)).toEqual([...list.sets.map((s) => s.version)].sort((x, y) => y - x));
    expect(list.sets.filter((s) => s.status === 'active')).toHaveLength(1);

    const d = list.sets.find((s) => s.status === 'draft')!;
    const queued = await insertBacktest(db, d.id, {}, null);
    const me = await db.selectFrom('app_user').select('id').where('email', '=', 'engineer@millrace.test').executeTakeFirstOrThrow();
    expect((await cancelBacktest(db, queued.id, me.id)).status).toBe('cancelled');
    expect(await executeBacktest(db, queued.id)).toBe('cancelled');
    expect((await findBacktest(db, queued.id))!.result).toBeNull();
    const res = await engineer.post(`/api/backtests/${queued.id}/cancel`, {});
    expect(res.status).toBe(409);
    // A span given by hand must end after it starts.
    const bad = await engineer.post(`/api/limit-sets/${d.id}/backtests`, { from: '2026-11-30T00:00:00Z', to: '2026-11-01T00:00:00Z' });
    expect(bad.status).toBe(400);
    expect(Object.keys(((await bad.json()) as { error: { fields: Record<string, string[]> } }).error.fields)).toEqual(['to']);
  });
});
