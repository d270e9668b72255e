import { afterAll, describe, expect, it } from 'vitest';
import { randomBytes } from 'node:crypto';
import { sql } from 'kysely';
import { BASE_URL, Client, clientAs, db } from './support';
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

  it('holds the account limit against parallel attempts', async () => {
    const email = uniqueEmail('parallel');
    await insertUser(db, { email, name: 'Parallel', password: 'right-password-3', roles: ['operator'] });
    const attempts = 20;
    const results = await Promise.all(Array.from({ length: attempts }, () => new Client().signIn(email, 'wrong-password')));
    const statuses = results.map((r) => r.status);
    // A 401 means the attempt got past the limit to the password check; a 429 means it did not.
    const checked = statuses.filter((s) => s === 401).length;
    expect(statuses.every((s) => s === 401 || s === 429), statuses.join(',')).toBe(true);
    expect(checked, statuses.join(',')).toBeLessThanOrEqual(SIGN_IN_LIMITS.perAccount);
    expect(checked).toBeGreaterThan(0);
    const stored = await db.selectFrom('sign_in_attempt').select('failures').where('scope', '=', 'account').where('key', '=', email).executeTakeFirstOrThrow();
    expect(stored.failures).toBe(checked);
    const blocked = await new Client().signIn(email, 'right-password-3');
    expect(blocked.status).toBe(429);
  });

  it('gives back the slot of a refused or successful attempt, so only failures use up the limit', async () => {
    const address = `198.51.100.${Math.floor(Math.random() * 250)}`;
    const email = uniqueEmail('slots');
    await insertUser(db, { email, name: 'Slots', password: 'right-password-4', roles: ['operator'] });
    const now = new Date();
    const count = async (scope: 'account' | 'address', key: string) =>
      (await db.selectFrom('sign_in_attempt').select('failures').where('scope', '=', scope).where('key', '=', key).executeTakeFirst())?.failures ?? 0;
    await expect(checkCredentials(db, { email, password: 'wrong', address }, now)).rejects.toMatchObject({ code: 'UNAUTHORIZED' });
    expect([await count('account', email), await count('address', address)]).toEqual([1, 1]);
    await checkCredentials(db, { email, password: 'right-password-4', address }, now);
    // Success clears the account and returns its own slot on the address (the earlier failure stays).
    expect([await count('account', email), await count('address', address)]).toEqual([0, 1]);
    for (let i = 0; i < SIGN_IN_LIMITS.perAccount; i++) {
      await expect(checkCredentials(db, { email, password: 'wrong', address }, now)).rejects.toMatchObject({ code: 'UNAUTHORIZED' });
    }
    for (let i = 0; i < 3; i++) {
      await expect(checkCredentials(db, { email, password: 'wrong', address }, now)).rejects.toMatchObject({ code: 'TOO_MANY_REQUESTS' });
    }
    expect([await count('account', email), await count('address', address)]).toEqual([SIGN_IN_LIMITS.perAccount, 1 + SIGN_IN_LIMITS.perAccount]);
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

describe('cross-origin form posts', () => {
  const form = () => new URLSearchParams({ email: 'operator@millrace.test', password: 'wrong-password' });
  const post = (origin: string) =>
    fetch(`${BASE_URL}/sign-in`, { method: 'POST', headers: { origin, 'content-type': 'application/x-www-form-urlencoded' }, body: form(), redirect: 'manual' });

  it('refuses a sign-in form posted from another origin with 403', async () => {
    const res = await post('http://evil.example');
    expect(res.status).toBe(403);
    expect(res.headers.getSetCookie().some((c) => c.startsWith('millrace_session='))).toBe(false);
  });

  it('lets the same form through from the app itself (so the 403 above is the origin check)', async () => {
    const res = await post(BASE_URL);
    expect(res.status).toBe(401);
    expect(await res.text()).toContain('E-mail or password is wrong.');
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
