import { sql, type Kysely, type Transaction } from 'kysely';
import { generateIdFromEntropySize } from 'lucia';
import type { Database, Role } from './db/schema';
import { hashPassword } from './auth/password';

type Db = Kysely<Database> | Transaction<Database>;

/** Find a user (with hash, for sign-in only) by e-mail, case-insensitively. */
export function findUserByEmail(db: Db, email: string) {
  return db
    .selectFrom('app_user')
    .select(['id', 'email', 'name', 'password_hash', 'disabled_at'])
    .where(sql`lower(email)`, '=', email.trim().toLowerCase())
    .executeTakeFirst();
}

/** The roles a user holds. */
export async function findRolesByUserId(db: Db, userId: string): Promise<Role[]> {
  const rows = await db.selectFrom('user_role').select('role').where('user_id', '=', userId).orderBy('role').execute();
  return rows.map((r) => r.role);
}

/** Create a user with roles; returns the new id. */
export async function insertUser(
  db: Db,
  input: { email: string; name: string; password: string | null; roles: Role[] },
): Promise<string> {
  const id = generateIdFromEntropySize(10);
  await db
    .insertInto('app_user')
    .values({
      id,
      email: input.email.trim().toLowerCase(),
      name: input.name,
      password_hash: input.password ? await hashPassword(input.password) : null,
    })
    .execute();
  if (input.roles.length) {
    await db.insertInto('user_role').values(input.roles.map((role) => ({ user_id: id, role }))).execute();
  }
  return id;
}

/** Every user with roles, for the admin's people list (never returns hashes). */
export function listPeople(db: Db) {
  return db
    .selectFrom('app_user as u')
    .select((eb) => [
      'u.id',
      'u.email',
      'u.name',
      'u.disabled_at',
      'u.created_at',
      eb.fn
        .coalesce(
          eb.selectFrom('user_role as r').whereRef('r.user_id', '=', 'u.id').select(sql<Role[]>`array_agg(r.role ORDER BY r.role)`.as('roles')),
          sql<Role[]>`'{}'::text[]`,
        )
        .as('roles'),
    ])
    .orderBy('u.email')
    .execute();
}
