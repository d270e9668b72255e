import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database } from './db/schema';
import { HttpError } from './http';
import { insertAuditEntry } from './audit';
import { quantityInfo } from '../limits/quantities';
import { mayResolve, RESOLVE_RULE, type TripQuery } from '../trips.schema';
import type { SessionUser } from './auth/roles';

type Db = Kysely<Database> | Transaction<Database>;

function baseQuery(db: Db) {
  return db
    .selectFrom('trip as t')
    .innerJoin('spacecraft as s', 's.id', 't.spacecraft_id')
    .leftJoin('app_user as ack', 'ack.id', 't.acknowledged_by')
    .leftJoin('app_user as res', 'res.id', 't.resolved_by')
    .select([
      't.id', 's.key as spacecraft', 't.loop_id', 't.kind', 't.quantity', 't.level', 't.side', 't.state',
      't.limit_set_version', 't.onset_at', 't.raised_at', 't.escalated_at', 't.cleared_at', 't.cleared_note', 't.value', 't.peak_value', 't.limit_value',
      't.last_value', 't.last_at', 't.acknowledged_at', 't.acknowledge_note', 'ack.name as acknowledged_by', 't.resolved_at', 't.resolution', 'res.name as resolved_by',
    ]);
}

/** A trip row as the API returns it, with the quantity's label and unit. */
export type TripRow = Awaited<ReturnType<typeof listTrips>>['trips'][number];

/**
 * Filtered, sorted, paginated trips (from inclusive, to exclusive, on the onset). State sorts in
 * its workflow order (open, acknowledged, resolved) and level by severity; ties newest first.
 */
export async function listTrips(db: Db, q: TripQuery) {
  let query = baseQuery(db);
  if (q.spacecraft) query = query.where('s.key', '=', q.spacecraft);
  if (q.state) query = query.where('t.state', '=', q.state);
  if (q.kind) query = query.where('t.kind', '=', q.kind);
  if (q.loop === 'none') query = query.where('t.loop_id', 'is', null);
  else if (q.loop !== undefined) query = query.where('t.loop_id', '=', q.loop);
  if (q.from) query = query.where('t.onset_at', '>=', new Date(q.from));
  if (q.to) query = query.where('t.onset_at', '<', new Date(q.to));
  const countRow = await query.clearSelect().select((eb) => eb.fn.countAll<number>().as('n')).executeTakeFirstOrThrow();
  const total = Number(countRow.n);
  const sortExpr =
    q.sort === 'spacecraft'
      ? sql`s.key`
      : q.sort === 'state'
        ? sql`CASE t.state WHEN 'open' THEN 0 WHEN 'acknowledged' THEN 1 ELSE 2 END`
        : q.sort === 'level'
          ? sql`CASE t.level WHEN 'caution' THEN 1 ELSE 2 END`
          : sql.ref(`t.${q.sort}`);
  const rows = await query
    .orderBy(sortExpr, q.order)
    .orderBy('t.id', 'desc')
    .limit(q.pageSize)
    .offset((q.page - 1) * q.pageSize)
    .execute();
  return {
    total,
    page: q.page,
    pageSize: q.pageSize,
    /** The next page's number, or null on the last page. */
    nextPage: q.page * q.pageSize < total ? q.page + 1 : null,
    trips: rows.map((r) => {
      const info = quantityInfo(r.quantity);
      return { ...r, quantityLabel: info?.label ?? r.quantity, unit: info?.unit ?? '', live: r.cleared_at === null };
    }),
  };
}

/** One trip with its evidence; 404 when there is none. */
export async function findTrip(db: Db, id: number) {
  const row = await baseQuery(db).select(['t.evidence', 't.rule_id', 't.limit_set_id', 't.spacecraft_id']).where('t.id', '=', id).executeTakeFirst();
  if (!row) throw new HttpError('NOT_FOUND', `No trip ${id}.`);
  const info = quantityInfo(row.quantity);
  return { ...row, quantityLabel: info?.label ?? row.quantity, unit: info?.unit ?? '', live: row.cleared_at === null };
}

async function lockTrip(trx: Transaction<Database>, id: number) {
  const row = await trx.selectFrom('trip').select(['id', 'state', 'level', 'kind']).where('id', '=', id).forUpdate().executeTakeFirst();
  if (!row) throw new HttpError('NOT_FOUND', `No trip ${id}.`);
  return row;
}

/** Acknowledge an open trip; a warning needs a note. */
export async function acknowledgeTrip(db: Kysely<Database>, id: number, user: SessionUser, note: string) {
  return db.transaction().execute(async (trx) => {
    const t = await lockTrip(trx, id);
    if (t.state !== 'open') throw new HttpError('CONFLICT', `Trip ${id} is already ${t.state}.`);
    if (t.level === 'warning' && note.trim().length === 0) throw new HttpError('BAD_REQUEST', 'A warning needs a note when you acknowledge it.', { note: ['Say what you saw and what you are doing about it.'] });
    await trx.updateTable('trip').set({ state: 'acknowledged', acknowledged_by: user.id, acknowledged_at: new Date(), acknowledge_note: note || null }).where('id', '=', id).execute();
    await insertAuditEntry(trx, { actorId: user.id, action: 'trip.acknowledge', targetType: 'trip', targetId: id, detail: { note } });
    return findTrip(trx, id);
  });
}

/**
 * Resolve an acknowledged trip with its conclusion, under the resolve rule. The conclusion may be
 * supplied by a function run inside the transaction once the rule and state are checked (the
 * Casefile's saved conclusion).
 */
export async function resolveTrip(db: Kysely<Database>, id: number, user: SessionUser, conclusion: string | ((trx: Transaction<Database>) => Promise<string>)) {
  return db.transaction().execute(async (trx) => {
    const t = await lockTrip(trx, id);
    if (!mayResolve(user.roles, t.kind)) throw new HttpError('FORBIDDEN', `Your roles may not resolve a ${t.kind} trip. ${RESOLVE_RULE}`);
    if (t.state === 'resolved') throw new HttpError('CONFLICT', `Trip ${id} is already resolved.`);
    if (t.state === 'open') throw new HttpError('CONFLICT', `Acknowledge trip ${id} before resolving it.`);
    const resolution = typeof conclusion === 'string' ? conclusion : await conclusion(trx);
    await trx.updateTable('trip').set({ state: 'resolved', resolved_by: user.id, resolved_at: new Date(), resolution }).where('id', '=', id).execute();
    await insertAuditEntry(trx, { actorId: user.id, action: 'trip.resolve', targetType: 'trip', targetId: id, detail: { resolution } });
    return findTrip(trx, id);
  });
}

/** Open and acknowledged trips per spacecraft and loop, with their worst level: the Fleet's health. */
export async function liveTripLevels(db: Db) {
  const r = await sql<{ key: string; loop_id: number | null; level: 'caution' | 'warning'; n: number }>`
    SELECT s.key, t.loop_id, t.level, count(*)::int AS n FROM trip t JOIN spacecraft s ON s.id = t.spacecraft_id
    WHERE t.state <> 'resolved' AND t.cleared_at IS NULL GROUP BY 1, 2, 3`.execute(db);
  return r.rows;
}
