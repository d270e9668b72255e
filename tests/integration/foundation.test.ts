import { afterAll, describe, expect, it } from 'vitest';
import { randomBytes } from 'node:crypto';
import { sql } from 'kysely';
import { Client, clientAs, db } from './support';
import { createDb, createPool } from '../../src/lib/server/db';
import { migrateToLatest, migrator } from '../../src/lib/server/db/migrate';
import { seedDemo } from '../../src/lib/server/seed';
import { insertUser } from '../../src/lib/server/users';
import { checkCredentials, SIGN_IN_LIMITS } from '../../src/lib/server/auth/sign-in';
import { HttpError } from '../../src/lib/server/http';

const uniqueEmail = (tag: string) => `${tag}-${randomBytes(4).toString('hex')}@millrace.test`;

describe('migrations', () => {
  it('migrate up from an empty database, down to nothing, and up again', async () => {
    const name = `millrace_migrate_${randomBytes(3).toString('hex')}`;
    await sql.raw(`CREATE DATABASE ${name}`).execute(db);
    const url = new URL(process.env.DATABASE_URL!);
    url.pathname = `/${name}`;
    const pool = createPool(url.toString(), 2);
    const fresh = createDb(pool);
    try {
      const up = await migrateToLatest(fresh);
      expect(up.results?.every((r) => r.status === 'Success')).toBe(true);
      const tables = await sql<{ n: number }>`SELECT count(*)::int AS n FROM pg_tables WHERE schemaname = 'public' AND tablename IN ('app_user', 'user_session', 'user_role', 'spacecraft', 'spacecraft_sheet', 'ground_station', 'audit_log')`.execute(fresh);
      expect(tables.rows[0]!.n).toBe(7);
      const m = migrator(fresh);
      for (;;) {
        const r = await m.migrateDown();
        expect(r.error).toBeUndefined();
        if (!r.results?.length) break;
      }
      const left = await sql<{ n: number }>`SELECT count(*)::int AS n FROM pg_tables WHERE schemaname = 'public' AND tablename NOT LIKE 'kysely_%'`.execute(fresh);
      expect(left.rows[0]!.n).toBe(0);
      expect((await migrateToLatest(fresh)).error).toBeUndefined();
    } finally {
      await fresh.destroy();
      await sql.raw(`DROP DATABASE ${name} WITH (FORCE)`).execute(db);
    }
  });
});

describe('demo seed', () => {
  it('is idempotent: a second run adds nothing and changes no row', async () => {
    const snapshot = async () =>
      Promise.all(
        ['app_user', 'user_role', 'spacecraft', 'spacecraft_sheet', 'ground_station'].map(async (t) =>
          (await sql<{ h: string }>`SELECT md5(coalesce(string_agg(x::text, '|' ORDER BY x::text), '')) AS h, count(*) AS n FROM ${sql.table(t)} x`.execute(db)).rows[0],
        ),
      );
    await seedDemo(db, 'millrace-demo');
    const before = await snapshot();
    const second = await seedDemo(db, 'millrace-demo');
    expect(second).toEqual({ users: 0, spacecraft: 0, stations: 0 });
    expect(await snapshot()).toEqual(before);
    const craft = await db.selectFrom('spacecraft').select('key').orderBy('key').execute();
    expect(craft.map((c) => c.key)).toEqual(expect.arrayContaining(['MR-1', 'MR-2', 'MR-3']));
  });
});

describe('sign-in', () => {
  it('succeeds with the right password and sets an HttpOnly SameSite cookie', async () => {
    const c = new Client();
    const res = await c.signIn('operator@millrace.test');
    expect(res.status).toBe(200);
    const cookie = res.headers.getSetCookie().find((x) => x.startsWith('millrace_session='))!;
    expect(cookie).toMatch(/HttpOnly/i);
    expect(cookie).toMatch(/SameSite=Lax/i);
    expect((await (await c.get('/api/me')).json()).user.roles).toEqual(['operator']);
  });

  it('refuses a wrong password and an unknown user with the same message', async () => {
    const a = await new Client().signIn('analyst@millrace.test', 'wrong-password');
    const b = await new Client().signIn(uniqueEmail('nobody'), 'wrong-password');
    expect(a.status).toBe(401);
    expect(b.status).toBe(401);
    expect((await a.json()).error.message).toBe((await b.json()).error.message);
  });

  it('rejects a malformed body with field errors', async () => {
    const res = await new Client().post('/api/auth/sign-in', { email: 'not-an-email' });
    expect(res.status).toBe(400);
    const body = await res.json();
    expect(Object.keys(body.error.fields)).toEqual(expect.arrayContaining(['email', 'password']));
  });

  it('rate-limits an account after repeated failures, even with the right password', async () => {
    const email = uniqueEmail('limited');
    await insertUser(db, { email, name: 'Limited', password: 'right-password-1', roles: ['operator'] });
    const c = new Client();
    for (let i = 0; i < SIGN_IN_LIMITS.perAccount; i++) expect((await c.signIn(email, 'wrong')).status).toBe(401);
    const blocked = await c.signIn(email, 'right-password-1');
    expect(blocked.status).toBe(429);
    expect(Number(blocked.headers.get('retry-after'))).toBeGreaterThan(0);
  });

  it('rate-limits an address across accounts', async () => {
    const address = `203.0.113.${Math.floor(Math.random() * 250)}`;
    const now = new Date();
    for (let i = 0; i < SIGN_IN_LIMITS.perAddress; i++) {
      await expect(checkCredentials(db, { email: uniqueEmail('spray'), password: 'x', address }, now)).rejects.toMatchObject({ code: 'UNAUTHORIZED' });
    }
    const err = await checkCredentials(db, { email: 'operator@millrace.test', password: 'millrace-demo', address }, now).catch((e) => e);
    expect(err).toBeInstanceOf(HttpError);
    expect(err.code).toBe('TOO_MANY_REQUESTS');
  });
});

describe('sessions', () => {
  it('sign-out ends the session', async () => {
    const c = await clientAs('engineer');
    const cookie = c.cookie;
    expect((await c.post('/api/auth/sign-out')).status).toBe(200);
    const again = new Client();
    again.cookie = cookie;
    expect((await again.get('/api/me')).status).toBe(401);
  });

  it('an expired session is refused', async () => {
    const c = await clientAs('analyst');
    const id = c.cookie.split('=')[1]!;
    await db.updateTable('user_session').set({ expires_at: new Date(Date.now() - 1000) }).where('id', '=', id).execute();
    expect((await c.get('/api/me')).status).toBe(401);
    expect(await db.selectFrom('user_session').select('id').where('id', '=', id).executeTakeFirst()).toBeUndefined();
  });

  it('a disabled account loses its session', async () => {
    const email = uniqueEmail('disabled');
    const id = await insertUser(db, { email, name: 'Soon Disabled', password: 'right-password-2', roles: ['analyst'] });
    const c = new Client();
    expect((await c.signIn(email, 'right-password-2')).status).toBe(200);
    await db.updateTable('app_user').set({ disabled_at: new Date() }).where('id', '=', id).execute();
    expect((await c.get('/api/me')).status).toBe(401);
  });
});

afterAll(async () => {
  await db.deleteFrom('app_user').where('email', 'like', '%-%@millrace.test').where('email', 'not like', 'engineer2%').execute();
});
