import { sql, type Kysely, type Transaction } from 'kysely';
import type { Database, Role } from './db/schema';
import { z } from 'zod';
import { HttpError, parseWith } from './http';
import { insertAuditEntry } from './audit';
import { findRolesByUserId, findUserByEmail, insertUser } from './users';
import { sendAccountLink, voidUserTokens } from './password-reset';
import { personIdSchema, type InvitePersonInput, type UpdatePersonInput } from '../../features/people/people.schema';
import type { AuditQuery } from '../../features/audit/audit.schema';
import { parseUtcDateTime } from '../../features/roster/roster.schema';

type Db = Kysely<Database> | Transaction<Database>;

export type PersonStatus = 'active' | 'invited' | 'disabled';

/** One person as the People page and GET /api/people show them (never a hash). */
export interface PersonRow {
  id: string;
  email: string;
  name: string;
  roles: Role[];
  /** disabled; invited (no password set yet); else active. */
  status: PersonStatus;
  disabled_at: string | null;
  created_at: string;
  /** Sessions that have not expired. */
  sessions: number;
  /** The latest invitation of someone who has not set a password yet. */
  invitation: { expires_at: string; expired: boolean } | null;
}

/** A person id route parameter, or 400 naming it. */
export function personIdParam(value: string | undefined): string {
  return parseWith(z.object({ id: personIdSchema }), { id: value }, 'id parameter').id;
}

const iso = (d: Date | string | null): string | null => (d === null ? null : new Date(d).toISOString());

function peopleQuery(db: Db, now: Date) {
  return db.selectFrom('app_user as u').select((eb) => [
    'u.id',
    'u.email',
    'u.name',
    'u.disabled_at',
    'u.created_at',
    sql<boolean>`u.password_hash IS NOT NULL`.as('has_password'),
    eb.fn
      .coalesce(
        eb.selectFrom('user_role as r').whereRef('r.user_id', '=', 'u.id').select(sql<Role[]>`array_agg(r.role ORDER BY r.role)`.as('roles')),
        sql<Role[]>`'{}'::text[]`,
      )
      .as('roles'),
    eb
      .selectFrom('user_session as s')
      .whereRef('s.user_id', '=', 'u.id')
      .where('s.expires_at', '>', now)
      .select(sql<number>`count(*)::int`.as('n'))
      .as('sessions'),
    eb
      .selectFrom('user_token as t')
      .whereRef('t.user_id', '=', 'u.id')
      .where('t.purpose', '=', 'invite')
      .select('t.expires_at')
      .orderBy('t.id', 'desc')
      .limit(1)
      .as('invite_expires_at'),
  ]);
}

type RawPerson = {
  id: string;
  email: string;
  name: string;
  disabled_at: Date | null;
  created_at: Date;
  has_password: boolean;
  roles: Role[];
  sessions: number | null;
  invite_expires_at: Date | null;
};

function toPersonRow(r: RawPerson, now: Date): PersonRow {
  const status: PersonStatus = r.disabled_at ? 'disabled' : r.has_password ? 'active' : 'invited';
  return {
    id: r.id,
    email: r.email,
    name: r.name,
    roles: r.roles,
    status,
    disabled_at: iso(r.disabled_at),
    created_at: iso(r.created_at)!,
    sessions: r.sessions ?? 0,
    invitation:
      !r.has_password && r.invite_expires_at
        ? { expires_at: iso(r.invite_expires_at)!, expired: new Date(r.invite_expires_at).getTime() <= now.getTime() }
        : null,
  };
}

/** Every person with roles, status, live sessions and pending invitation, by name. */
export async function listPeopleForAdmin(db: Db, now = new Date()): Promise<PersonRow[]> {
  const rows = await peopleQuery(db, now).orderBy('u.name').orderBy('u.email').execute();
  return rows.map((r) => toPersonRow(r, now));
}

/** One person as listPeopleForAdmin shows them, or 404. */
export async function findPersonForAdmin(db: Db, id: string, now = new Date()): Promise<PersonRow> {
  const row = await peopleQuery(db, now).where('u.id', '=', id).executeTakeFirst();
  if (!row) throw new HttpError('NOT_FOUND', `No person with the id ${id}.`);
  return toPersonRow(row, now);
}

/** Serialise changes to people, so that two admins cannot each remove the other's admin role at once. */
async function lockPeople(trx: Transaction<Database>): Promise<void> {
  await sql`SELECT pg_advisory_xact_lock(hashtext('millrace.people'))`.execute(trx);
}

/** Admins other than `exceptId` who can sign in (enabled, password set). */
async function otherWorkingAdmins(trx: Transaction<Database>, exceptId: string): Promise<number> {
  const row = await trx
    .selectFrom('user_role as r')
    .innerJoin('app_user as u', 'u.id', 'r.user_id')
    .select(sql<number>`count(*)::int`.as('n'))
    .where('r.role', '=', 'admin')
    .where('u.id', '!=', exceptId)
    .where('u.disabled_at', 'is', null)
    .where('u.password_hash', 'is not', null)
    .executeTakeFirstOrThrow();
  return row.n;
}

/** Invite someone: an account without a password, and a one-time link to set one, mailed through the outbox. */
export async function invitePerson(
  db: Kysely<Database>,
  input: InvitePersonInput,
  actor: { id: string; name: string },
  now = new Date(),
): Promise<{ person: PersonRow; invitation: { expiresAt: string } }> {
  return db.transaction().execute(async (trx) => {
    await lockPeople(trx);
    const existing = await findUserByEmail(trx, input.email);
    if (existing) throw new HttpError('CONFLICT', `${existing.name} already has the address ${existing.email}.`, { email: [`${existing.name} already has this address.`] });
    const id = await insertUser(trx, { email: input.email, name: input.name, password: null, roles: input.roles });
    const sent = await sendAccountLink(trx, { user: { id, email: input.email, name: input.name }, purpose: 'invite', createdBy: actor.id, invitedBy: actor.name, now });
    await insertAuditEntry(trx, {
      actorId: actor.id,
      action: 'user.invite',
      targetType: 'user',
      targetId: id,
      detail: { email: input.email, name: input.name, roles: input.roles, tokenId: sent.tokenId, expiresAt: sent.expiresAt.toISOString() },
    });
    return { person: await findPersonForAdmin(trx, id, now), invitation: { expiresAt: sent.expiresAt.toISOString() } };
  });
}

/** Send a fresh invitation to someone who has not set a password yet (the earlier link stops working). */
export async function resendInvitation(
  db: Kysely<Database>,
  userId: string,
  actor: { id: string; name: string },
  now = new Date(),
): Promise<{ person: PersonRow; invitation: { expiresAt: string } }> {
  return db.transaction().execute(async (trx) => {
    await lockPeople(trx);
    const user = await trx.selectFrom('app_user').select(['id', 'email', 'name', 'password_hash', 'disabled_at']).where('id', '=', userId).executeTakeFirst();
    if (!user) throw new HttpError('NOT_FOUND', `No person with the id ${userId}.`);
    if (user.disabled_at) throw new HttpError('CONFLICT', `${user.name}'s account is disabled; enable it first.`);
    if (user.password_hash) throw new HttpError('CONFLICT', `${user.name} has already set a password; they can reset it from the sign-in page.`);
    const sent = await sendAccountLink(trx, { user, purpose: 'invite', createdBy: actor.id, invitedBy: actor.name, now });
    await insertAuditEntry(trx, { actorId: actor.id, action: 'user.invite-resend', targetType: 'user', targetId: user.id, detail: { email: user.email, tokenId: sent.tokenId, expiresAt: sent.expiresAt.toISOString() } });
    return { person: await findPersonForAdmin(trx, user.id, now), invitation: { expiresAt: sent.expiresAt.toISOString() } };
  });
}

/**
 * Change someone's roles and/or disable or re-enable the account; each change is audited with
 * what it was before. Disabling ends every session of the person and voids their open links.
 * Nobody can take the admin role from themselves or disable themselves, and the last admin who can
 * sign in keeps the role.
 */
export async function updatePerson(
  db: Kysely<Database>,
  userId: string,
  patch: UpdatePersonInput,
  actor: { id: string },
  now = new Date(),
): Promise<{ person: PersonRow; sessionsEnded: number }> {
  return db.transaction().execute(async (trx) => {
    await lockPeople(trx);
    const user = await trx.selectFrom('app_user').select(['id', 'name', 'email', 'disabled_at', 'password_hash']).where('id', '=', userId).forUpdate().executeTakeFirst();
    if (!user) throw new HttpError('NOT_FOUND', `No person with the id ${userId}.`);
    const before = await findRolesByUserId(trx, userId);
    let sessionsEnded = 0;

    if (patch.roles) {
      const after = patch.roles;
      const same = after.length === before.length && after.every((r, i) => r === before[i]);
      if (!same) {
        const losesAdmin = before.includes('admin') && !after.includes('admin');
        if (losesAdmin && userId === actor.id) {
          throw new HttpError('CONFLICT', 'You cannot take the admin role from yourself; another admin can.', { roles: ['Keep admin on your own account.'] });
        }
        if (losesAdmin && !user.disabled_at && user.password_hash && (await otherWorkingAdmins(trx, userId)) === 0) {
          throw new HttpError('CONFLICT', `${user.name} is the last admin who can sign in; make someone else admin first.`, { roles: ['The last admin keeps the admin role.'] });
        }
        await trx.deleteFrom('user_role').where('user_id', '=', userId).execute();
        await trx.insertInto('user_role').values(after.map((role) => ({ user_id: userId, role }))).execute();
        await insertAuditEntry(trx, {
          actorId: actor.id,
          action: 'user.roles',
          targetType: 'user',
          targetId: userId,
          detail: { before, after, added: after.filter((r) => !before.includes(r)), removed: before.filter((r) => !after.includes(r)) },
        });
      }
    }

    if (patch.disabled === true && !user.disabled_at) {
      if (userId === actor.id) throw new HttpError('CONFLICT', 'You cannot disable your own account; another admin can.', { disabled: ['Not your own account.'] });
      const roles = patch.roles ?? before;
      if (roles.includes('admin') && user.password_hash && (await otherWorkingAdmins(trx, userId)) === 0) {
        throw new HttpError('CONFLICT', `${user.name} is the last admin who can sign in; make someone else admin first.`, { disabled: ['The last admin stays enabled.'] });
      }
      await trx.updateTable('app_user').set({ disabled_at: now }).where('id', '=', userId).execute();
      sessionsEnded = Number((await trx.deleteFrom('user_session').where('user_id', '=', userId).executeTakeFirst()).numDeletedRows);
      await voidUserTokens(trx, userId, now);
      await insertAuditEntry(trx, { actorId: actor.id, action: 'user.disable', targetType: 'user', targetId: userId, detail: { email: user.email, sessionsEnded } });
    } else if (patch.disabled === false && user.disabled_at) {
      await trx.updateTable('app_user').set({ disabled_at: null }).where('id', '=', userId).execute();
      await insertAuditEntry(trx, { actorId: actor.id, action: 'user.enable', targetType: 'user', targetId: userId, detail: { email: user.email, disabledAt: user.disabled_at.toISOString() } });
    }

    return { person: await findPersonForAdmin(trx, userId, now), sessionsEnded };
  });
}

/** One audit entry as the audit page and GET /api/audit show it. */
export interface AuditEntryRow {
  id: number;
  at: string;
  actor_id: string | null;
  actor_name: string | null;
  actor_email: string | null;
  action: string;
  target_type: string;
  target_id: string;
  /** The person's name when the target is a user. */
  target_name: string | null;
  detail: unknown;
}

export interface AuditPage {
  total: number;
  page: number;
  pageSize: number;
  entries: AuditEntryRow[];
  /** What the filters can choose from: everyone who has an entry, every action and target type on record. */
  facets: { actors: { id: string | null; name: string; email: string | null }[]; actions: string[]; targetTypes: string[] };
}

/** The audit log, newest first, filtered by actor ("system" = no person), action, target type and time (from inclusive, to exclusive). */
export async function listAuditLog(db: Db, q: AuditQuery): Promise<AuditPage> {
  let query = db.selectFrom('audit_log as a');
  if (q.actor === 'system') query = query.where('a.actor_id', 'is', null);
  else if (q.actor) query = query.where('a.actor_id', '=', q.actor);
  if (q.action) query = query.where('a.action', '=', q.action);
  if (q.targetType) query = query.where('a.target_type', '=', q.targetType);
  const from = q.from ? parseUtcDateTime(q.from) : null;
  const to = q.to ? parseUtcDateTime(q.to) : null;
  if (from) query = query.where('a.at', '>=', from);
  if (to) query = query.where('a.at', '<', to);

  const [count, rows, actors, actions, targetTypes] = await Promise.all([
    query.select(sql<number>`count(*)::int`.as('n')).executeTakeFirstOrThrow(),
    query
      .leftJoin('app_user as u', 'u.id', 'a.actor_id')
      .leftJoin('app_user as tu', (j) => j.on('a.target_type', '=', 'user').onRef('tu.id', '=', 'a.target_id'))
      .select(['a.id', 'a.at', 'a.actor_id', 'u.name as actor_name', 'u.email as actor_email', 'a.action', 'a.target_type', 'a.target_id', 'tu.name as target_name', 'a.detail'])
      .orderBy('a.at', 'desc')
      .orderBy('a.id', 'desc')
      .limit(q.pageSize)
      .offset((q.page - 1) * q.pageSize)
      .execute(),
    db
      .selectFrom('audit_log as a')
      .leftJoin('app_user as u', 'u.id', 'a.actor_id')
      .select(['a.actor_id', 'u.name', 'u.email'])
      .distinct()
      .execute(),
    db.selectFrom('audit_log').select('action').distinct().orderBy('action').execute(),
    db.selectFrom('audit_log').select('target_type').distinct().orderBy('target_type').execute(),
  ]);
  return {
    total: count.n,
    page: q.page,
    pageSize: q.pageSize,
    entries: rows.map((r) => ({ ...r, at: r.at.toISOString() })),
    facets: {
      actors: actors
        .map((a) => ({ id: a.actor_id, name: a.actor_id === null ? 'System (no person)' : (a.name ?? 'A removed account'), email: a.email }))
        .sort((x, y) => (x.id === null ? 1 : y.id === null ? -1 : x.name.localeCompare(y.name))),
      actions: actions.map((a) => a.action),
      targetTypes: targetTypes.map((t) => t.target_type),
    },
  };
}
