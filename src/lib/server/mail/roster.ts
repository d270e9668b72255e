import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database, Role } from '../db/schema';
import type { SessionUser } from '../auth/roles';
import { HttpError } from '../http';
import { insertAuditEntry } from '../audit';

type Db = Kysely<Database> | Transaction<Database>;

/**
 * The e-mail addresses to alert for a spacecraft at time `at`: every active user with a shift
 * [starts_at, ends_at) covering it. When nobody is on call, every active operator is alerted
 * instead, so that an unstaffed roster never silences a trip.
 */
export async function recipientsFor(db: Db, spacecraftId: number, at: Date): Promise<string[]> {
  const onCall = await db
    .selectFrom('on_call_shift as s')
    .innerJoin('app_user as u', 'u.id', 's.user_id')
    .select(sql<string>`lower(u.email)`.as('email'))
    .distinct()
    .where('s.spacecraft_id', '=', spacecraftId)
    .where('s.starts_at', '<=', at)
    .where('s.ends_at', '>', at)
    .where('u.disabled_at', 'is', null)
    .orderBy('email')
    .execute();
  if (onCall.length) return onCall.map((r) => r.email);
  const operators = await db
    .selectFrom('user_role as r')
    .innerJoin('app_user as u', 'u.id', 'r.user_id')
    .select(sql<string>`lower(u.email)`.as('email'))
    .distinct()
    .where('r.role', '=', 'operator')
    .where('u.disabled_at', 'is', null)
    .orderBy('email')
    .execute();
  return operators.map((r) => r.email);
}

export interface OnCallShift {
  id: number;
  userId: string;
  userName: string;
  userEmail: string;
  startsAt: string;
  endsAt: string;
  createdByName: string | null;
}

/** A spacecraft's shifts that end after `since`, in time order. */
export async function listOnCallShifts(db: Db, spacecraftId: number, since: Date): Promise<OnCallShift[]> {
  const rows = await db
    .selectFrom('on_call_shift as s')
    .innerJoin('app_user as u', 'u.id', 's.user_id')
    .leftJoin('app_user as c', 'c.id', 's.created_by')
    .select(['s.id', 's.user_id', 'u.name', 'u.email', 's.starts_at', 's.ends_at', 'c.name as created_by_name'])
    .where('s.spacecraft_id', '=', spacecraftId)
    .where('s.ends_at', '>', since)
    .orderBy('s.starts_at')
    .orderBy('s.id')
    .execute();
  return rows.map((r) => ({
    id: r.id,
    userId: r.user_id,
    userName: r.name,
    userEmail: r.email,
    startsAt: r.starts_at.toISOString(),
    endsAt: r.ends_at.toISOString(),
    createdByName: r.created_by_name,
  }));
}

export interface OnCallCandidate {
  id: string;
  name: string;
  email: string;
  roles: Role[];
}

/** The active users who can be put on call (anyone holding a role). */
export async function listOnCallCandidates(db: Db): Promise<OnCallCandidate[]> {
  const rows = await db
    .selectFrom('app_user as u')
    .innerJoin('user_role as r', 'r.user_id', 'u.id')
    .select(['u.id', 'u.name', 'u.email', sql<Role[]>`array_agg(r.role ORDER BY r.role)`.as('roles')])
    .where('u.disabled_at', 'is', null)
    .groupBy(['u.id', 'u.name', 'u.email'])
    .orderBy('u.name')
    .execute();
  return rows;
}

/** Who is on call now for each spacecraft, by spacecraft id (names only). */
export async function listOnCallNow(db: Db, at: Date): Promise<Map<number, string[]>> {
  const rows = await db
    .selectFrom('on_call_shift as s')
    .innerJoin('app_user as u', 'u.id', 's.user_id')
    .select(['s.spacecraft_id', 'u.name'])
    .where('s.starts_at', '<=', at)
    .where('s.ends_at', '>', at)
    .where('u.disabled_at', 'is', null)
    .orderBy('u.name')
    .execute();
  const out = new Map<number, string[]>();
  for (const r of rows) out.set(r.spacecraft_id, [...(out.get(r.spacecraft_id) ?? []), r.name]);
  return out;
}

/**
 * Add a shift. Roster edits of one spacecraft are serialised by locking its row, so two people
 * cannot book overlapping shifts for the same user at once. Audited in the same transaction.
 */
export async function addOnCallShift(
  trx: Transaction<Database>,
  input: { spacecraftId: number; userId: string; startsAt: Date; endsAt: Date },
  actorId: string,
): Promise<{ id: number }> {
  if (!(input.endsAt > input.startsAt)) throw new HttpError('BAD_REQUEST', 'The shift has errors; see fields.', { endsAt: ['"To" must be after "From".'] });
  await trx.selectFrom('spacecraft').select('id').where('id', '=', input.spacecraftId).forUpdate().executeTakeFirstOrThrow();
  const user = await trx.selectFrom('app_user').select(['id', 'name', 'disabled_at']).where('id', '=', input.userId).executeTakeFirst();
  if (!user || user.disabled_at) throw new HttpError('BAD_REQUEST', 'The shift has errors; see fields.', { userId: ['Choose an active person.'] });
  const clash = await trx
    .selectFrom('on_call_shift')
    .select(['id', 'starts_at', 'ends_at'])
    .where('spacecraft_id', '=', input.spacecraftId)
    .where('user_id', '=', input.userId)
    .where('starts_at', '<', input.endsAt)
    .where('ends_at', '>', input.startsAt)
    .executeTakeFirst();
  if (clash) {
    const span = `${clash.starts_at.toISOString().slice(0, 16).replace('T', ' ')}–${clash.ends_at.toISOString().slice(0, 16).replace('T', ' ')} UTC`;
    throw new HttpError('CONFLICT', `${user.name} is already on call ${span}.`, { startsAt: [`Overlaps ${user.name}'s shift ${span}.`] });
  }
  const row = await trx
    .insertInto('on_call_shift')
    .values({ spacecraft_id: input.spacecraftId, user_id: input.userId, starts_at: input.startsAt, ends_at: input.endsAt, created_by: actorId })
    .returning('id')
    .executeTakeFirstOrThrow();
  await insertAuditEntry(trx, {
    actorId,
    action: 'on_call.add',
    targetType: 'on_call_shift',
    targetId: row.id,
    detail: { spacecraftId: input.spacecraftId, userId: input.userId, startsAt: input.startsAt.toISOString(), endsAt: input.endsAt.toISOString() },
  });
  return row;
}

/** Remove a shift of a spacecraft; false when there is no such shift. Audited. */
export async function removeOnCallShift(trx: Transaction<Database>, spacecraftId: number, shiftId: number, actorId: string): Promise<boolean> {
  const row = await trx
    .deleteFrom('on_call_shift')
    .where('id', '=', shiftId)
    .where('spacecraft_id', '=', spacecraftId)
    .returning(['id', 'user_id', 'starts_at', 'ends_at'])
    .executeTakeFirst();
  if (!row) return false;
  await insertAuditEntry(trx, {
    actorId,
    action: 'on_call.remove',
    targetType: 'on_call_shift',
    targetId: row.id,
    detail: { spacecraftId, userId: row.user_id, startsAt: row.starts_at.toISOString(), endsAt: row.ends_at.toISOString() },
  });
  return true;
}

/** Who may edit a roster. */
export function canEditRoster(user: SessionUser | null): boolean {
  return !!user && user.roles.some((r) => r === 'operator' || r === 'admin');
}

export interface RosterView {
  spacecraft: { key: string; name: string };
  shifts: OnCallShift[];
  /** Whom a trip of this spacecraft would be mailed to now, and whether that is the fallback. */
  alertsNow: { emails: string[]; fallback: boolean };
  canEdit: boolean;
  candidates: OnCallCandidate[];
}

/** A roster as the page and GET /api/roster/[key] show it: shifts ending after a day ago. */
export async function rosterView(db: Db, sc: { id: number; key: string; name: string }, user: SessionUser | null, now: Date): Promise<RosterView> {
  const canEdit = canEditRoster(user);
  const [shifts, emails, candidates] = await Promise.all([
    listOnCallShifts(db, sc.id, new Date(now.getTime() - 86_400_000)),
    recipientsFor(db, sc.id, now),
    canEdit ? listOnCallCandidates(db) : Promise.resolve([]),
  ]);
  const covering = shifts.some((s) => Date.parse(s.startsAt) <= now.getTime() && Date.parse(s.endsAt) > now.getTime());
  return { spacecraft: { key: sc.key, name: sc.name }, shifts, alertsNow: { emails, fallback: !covering }, canEdit, candidates };
}
