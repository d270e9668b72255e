import { createHash, randomBytes } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { sql } from 'kysely';
import { Client, clientAs, db } from './support';
import { insertUser } from '../../src/lib/server/users';
import { createDb, createPool } from '../../src/lib/server/db';
import { migrateToLatest } from '../../src/lib/server/db/migrate';
import { updatePerson } from '../../src/lib/server/people';
import { config } from '../../src/lib/server/config';
import { HttpError } from '../../src/lib/server/http';
import { ROLES } from '../../src/lib/server/db/schema';
import { RESET_LIMITS, RESET_REQUEST_ANSWER, TOKEN_TTL_MS, requestPasswordReset } from '../../src/lib/server/password-reset';
import { ROLE_CHOICES } from '../../src/features/people/people.schema';
import { accessFor } from '../../src/lib/server/auth/access';
import { OPENAPI_EXCLUDED, apiRoutesOfRouteTable, openApiPath } from '../../src/lib/server/openapi';
import { findSpacecraftByKey, insertSpacecraftWithSheet, insertSheet } from '../../src/lib/server/spacecraft';
import { loadDemoSheets } from '../../src/lib/server/seed';
import { spacecraftSheetSchema } from '../../src/lib/spacecraft-sheet.schema';

const tag = randomBytes(3).toString('hex');
const uniqueEmail = (what: string) => `adm-${what}-${tag}-${randomBytes(3).toString('hex')}@millrace.test`;
const sha256 = (s: string) => createHash('sha256').update(s, 'utf8').digest('hex');
const PUBLIC_URL = config().PUBLIC_URL.replace(/\/+$/, '');

let admin: Client;
let adminId: string;

beforeAll(async () => {
  admin = await clientAs('admin');
  adminId = (await (await admin.get('/api/me')).json()).user.id;
});

afterAll(async () => {
  await db.deleteFrom('app_user').where('email', 'like', `adm-%-${tag}-%@millrace.test`).execute();
  await db.deleteFrom('spacecraft').where('key', '=', `DIFF-${tag.toUpperCase()}`).execute();
});

/** The newest outbox message to an address, or undefined. */
async function latestMailTo(email: string, kind: string) {
  return db
    .selectFrom('outbox')
    .selectAll()
    .where(sql<boolean>`${email.toLowerCase()} = ANY(to_addresses)`)
    .where('kind', '=', kind)
    .orderBy('id', 'desc')
    .executeTakeFirst();
}

/** The token of the link in a message's text (the path's last segment). */
function tokenIn(text: string, page: 'invite' | 'reset-password'): string {
  const m = new RegExp(`${PUBLIC_URL.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}/${page}/([A-Za-z0-9_-]+)`).exec(text);
  if (!m) throw new Error(`no ${page} link in:\n${text}`);
  return m[1]!;
}

function postForm(c: Client, path: string, form: Record<string, string>) {
  return c.request('POST', path, { body: new URLSearchParams(form).toString(), headers: { 'content-type': 'application/x-www-form-urlencoded' } });
}

async function newUser(what: string, password = `${what}-password-0001`, roles: (typeof ROLES)[number][] = ['operator']) {
  const email = uniqueEmail(what);
  const id = await insertUser(db, { email, name: `Test ${what}`, password, roles });
  return { id, email, password };
}

async function signedIn(email: string, password: string): Promise<Client> {
  const c = new Client();
  const res = await c.signIn(email, password);
  expect(res.status, `sign-in as ${email}`).toBe(200);
  return c;
}

describe('roles', () => {
  it('the forms offer exactly the roles the database knows', () => {
    expect([...ROLE_CHOICES].sort()).toEqual([...ROLES].sort());
  });
});

describe('invitation', () => {
  it('invite → mail in the outbox → the link sets the password once → sign-in works', async () => {
    const email = uniqueEmail('invitee');
    const res = await admin.post('/api/people', { name: 'Ines Invited', email: email.toUpperCase(), roles: ['analyst', 'operator', 'analyst'] });
    expect(res.status).toBe(201);
    const body = await res.json();
    expect(body.person).toMatchObject({ email, name: 'Ines Invited', roles: ['analyst', 'operator'], status: 'invited', sessions: 0 });
    expect(Date.parse(body.invitation.expiresAt) - Date.now()).toBeGreaterThan(TOKEN_TTL_MS.invite - 60_000);

    const mail = await latestMailTo(email, 'invitation');
    expect(mail, 'invitation in the outbox').toBeDefined();
    expect(mail!.state).toBe('queued');
    expect(mail!.subject).toMatch(/invited/i);
    const token = tokenIn(mail!.text_body, 'invite');
    expect(mail!.html_body).toContain(`/invite/${token}`);
    expect(mail!.text_body).toContain('Sana Kowalczyk has invited you');

    // Only the digest is stored.
    const stored = await db.selectFrom('user_token').selectAll().where('user_id', '=', body.person.id).execute();
    expect(stored).toHaveLength(1);
    expect(stored[0]!.token_hash).toBe(sha256(token));
    expect(JSON.stringify(stored)).not.toContain(token);

    // No password yet: sign-in is refused.
    expect((await new Client().signIn(email, 'whatever-password-1')).status).toBe(401);

    const visitor = new Client();
    const page = await visitor.get(`/invite/${token}`);
    expect(page.status).toBe(200);
    expect(page.headers.get('referrer-policy')).toBe('same-origin');
    const html = await page.text();
    expect(html).toContain(email);
    expect(html).toContain('Welcome, Ines Invited');

    const short = await postForm(visitor, `/invite/${token}`, { password: 'short', confirm: 'short' });
    expect(short.status).toBe(400);
    expect(await short.text()).toContain('Use at least 10 characters.');
    const differ = await postForm(visitor, `/invite/${token}`, { password: 'a-long-password-1', confirm: 'a-long-password-2' });
    expect(differ.status).toBe(400);
    expect(await differ.text()).toContain('The two passwords differ');

    const set = await postForm(visitor, `/invite/${token}`, { password: 'ines-chosen-pass-1', confirm: 'ines-chosen-pass-1' });
    expect(set.status).toBe(200);
    expect(await set.text()).toContain('Your password is set');

    const signIn = await new Client().signIn(email, 'ines-chosen-pass-1');
    expect(signIn.status).toBe(200);
    expect((await signIn.json()).user.roles).toEqual(['analyst', 'operator']);

    // Single use.
    const again = await postForm(new Client(), `/invite/${token}`, { password: 'another-pass-12', confirm: 'another-pass-12' });
    expect(again.status).toBe(410);
    expect(await again.text()).toContain('already been used');
    expect((await new Client().signIn(email, 'another-pass-12')).status).toBe(401);

    const audit = await db.selectFrom('audit_log').select(['action', 'actor_id']).where('target_type', '=', 'user').where('target_id', '=', body.person.id).orderBy('id').execute();
    expect(audit).toEqual([
      { action: 'user.invite', actor_id: adminId },
      { action: 'user.invite-accept', actor_id: body.person.id },
    ]);
    const people = (await (await admin.get('/api/people')).json()).people as { email: string; status: string }[];
    expect(people.find((p) => p.email === email)?.status).toBe('active');
  });

  it('refuses an address already in use, no roles, and an unknown role, naming the field', async () => {
    const dup = await admin.post('/api/people', { name: 'Twin', email: 'operator@millrace.test', roles: ['operator'] });
    expect(dup.status).toBe(409);
    expect((await dup.json()).error.fields.email[0]).toMatch(/already has this address/);
    const none = await admin.post('/api/people', { name: 'Nobody', email: uniqueEmail('noroles'), roles: [] });
    expect(none.status).toBe(400);
    expect((await none.json()).error.fields.roles).toEqual(['Give at least one role.']);
    const odd = await admin.post('/api/people', { name: 'Odd', email: uniqueEmail('oddrole'), roles: ['pilot'] });
    expect(odd.status).toBe(400);
    expect(Object.keys((await odd.json()).error.fields)).toEqual(['roles[0]']);
  });

  it('a resent invitation voids the earlier link; an expired one says so', async () => {
    const email = uniqueEmail('resend');
    const made = await (await admin.post('/api/people', { name: 'Rene Resent', email, roles: ['engineer'] })).json();
    const first = tokenIn((await latestMailTo(email, 'invitation'))!.text_body, 'invite');
    const res = await admin.post(`/api/people/${made.person.id}/invitation`);
    expect(res.status).toBe(201);
    const second = tokenIn((await latestMailTo(email, 'invitation'))!.text_body, 'invite');
    expect(second).not.toBe(first);
    expect((await new Client().get(`/invite/${first}`)).status).toBe(410);
    await db
      .updateTable('user_token')
      .set({ created_at: new Date(Date.now() - 80 * 3_600_000), expires_at: new Date(Date.now() - 8 * 3_600_000) })
      .where('token_hash', '=', sha256(second))
      .execute();
    const expired = await new Client().get(`/invite/${second}`);
    expect(expired.status).toBe(410);
    expect(await expired.text()).toContain('This invitation has expired');
    const listed = ((await (await admin.get('/api/people')).json()).people as { id: string; invitation: { expired: boolean } | null }[]).find((p) => p.id === made.person.id);
    expect(listed?.invitation?.expired).toBe(true);
  });
});

describe('password reset', () => {
  it('answers the same whether or not the address exists, and mails only the real one', async () => {
    const u = await newUser('reset-same');
    const unknown = uniqueEmail('nobody-here');
    const a = await new Client().post('/api/password-reset', { email: u.email });
    const b = await new Client().post('/api/password-reset', { email: unknown });
    expect(a.status).toBe(202);
    expect(b.status).toBe(202);
    const [ja, jb] = [await a.json(), await b.json()];
    expect(ja).toEqual(jb);
    expect(ja.message).toBe(RESET_REQUEST_ANSWER);
    expect(await latestMailTo(u.email, 'password-reset')).toBeDefined();
    expect(await latestMailTo(unknown, 'password-reset')).toBeUndefined();

    // The form page reads the same for both.
    const pa = await (await postForm(new Client(), '/forgot-password', { email: u.email })).text();
    const pb = await (await postForm(new Client(), '/forgot-password', { email: unknown })).text();
    const strip = (h: string) => h.replaceAll(u.email, 'X').replaceAll(unknown, 'X');
    expect(strip(pa)).toEqual(strip(pb));
  });

  it('a reset link works once and ends every session of the account', async () => {
    const u = await newUser('reset-once');
    const before = await signedIn(u.email, u.password);
    expect((await new Client().post('/api/password-reset', { email: u.email })).status).toBe(202);
    const mail = await latestMailTo(u.email, 'password-reset');
    const token = tokenIn(mail!.text_body, 'reset-password');
    expect((await db.selectFrom('user_token').select('token_hash').where('user_id', '=', u.id).where('purpose', '=', 'reset').executeTakeFirstOrThrow()).token_hash).toBe(sha256(token));

    const weak = await new Client().post('/api/password-reset/confirm', { token, password: 'tiny' });
    expect(weak.status).toBe(400);
    expect((await weak.json()).error.fields.password).toEqual(['Use at least 10 characters.']);

    const ok = await new Client().post('/api/password-reset/confirm', { token, password: 'fresh-password-77' });
    expect(ok.status).toBe(200);
    expect((await before.get('/api/me')).status).toBe(401);
    expect((await new Client().signIn(u.email, u.password)).status).toBe(401);
    expect((await new Client().signIn(u.email, 'fresh-password-77')).status).toBe(200);

    const twice = await new Client().post('/api/password-reset/confirm', { token, password: 'third-password-77' });
    expect(twice.status).toBe(404);
    expect((await twice.json()).error.message).toMatch(/already been used/);
    expect((await new Client().get(`/reset-password/${token}`)).status).toBe(410);
    const actions = await db.selectFrom('audit_log').select(['action', 'actor_id']).where('target_id', '=', u.id).orderBy('id').execute();
    expect(actions).toEqual([
      { action: 'password.reset-request', actor_id: null },
      { action: 'password.reset', actor_id: u.id },
    ]);
  });

  it('a reset link expires', async () => {
    const u = await newUser('reset-expiry');
    await new Client().post('/api/password-reset', { email: u.email });
    const token = tokenIn((await latestMailTo(u.email, 'password-reset'))!.text_body, 'reset-password');
    const row = await db.selectFrom('user_token').select(['created_at', 'expires_at']).where('token_hash', '=', sha256(token)).executeTakeFirstOrThrow();
    expect(row.expires_at.getTime() - row.created_at.getTime()).toBe(60 * 60_000);

    const page = await new Client().get(`/reset-password/${token}`);
    expect(page.status).toBe(200);
    expect(await page.text()).toContain(u.email);

    await db
      .updateTable('user_token')
      .set({ created_at: new Date(Date.now() - 2 * 3_600_000), expires_at: new Date(Date.now() - 3_600_000) })
      .where('token_hash', '=', sha256(token))
      .execute();
    const late = await new Client().post('/api/password-reset/confirm', { token, password: 'too-late-password' });
    expect(late.status).toBe(404);
    expect((await late.json()).error.message).toMatch(/expired/);
    const latePage = await postForm(new Client(), `/reset-password/${token}`, { password: 'too-late-password', confirm: 'too-late-password' });
    expect(latePage.status).toBe(410);
    expect((await new Client().signIn(u.email, u.password)).status).toBe(200);
  });

  it('sends nothing to a disabled account, and says nothing different', async () => {
    const u = await newUser('reset-disabled');
    await db.updateTable('app_user').set({ disabled_at: new Date() }).where('id', '=', u.id).execute();
    const res = await new Client().post('/api/password-reset', { email: u.email });
    expect(res.status).toBe(202);
    expect((await res.json()).message).toBe(RESET_REQUEST_ANSWER);
    expect(await latestMailTo(u.email, 'password-reset')).toBeUndefined();
  });

  it('rate-limits per address asked for, the same for an existing and an unknown one', async () => {
    const u = await newUser('reset-limit');
    const unknown = uniqueEmail('limit-unknown');
    const statuses: Record<string, number[]> = { [u.email]: [], [unknown]: [] };
    const bodies: Record<string, unknown[]> = { [u.email]: [], [unknown]: [] };
    for (let i = 0; i <= RESET_LIMITS.perEmail; i++) {
      for (const email of [u.email, unknown]) {
        const res = await new Client().post('/api/password-reset', { email });
        statuses[email]!.push(res.status);
        bodies[email]!.push(await res.json());
      }
    }
    const expected = [...Array(RESET_LIMITS.perEmail).fill(202), 429];
    expect(statuses[u.email]).toEqual(expected);
    expect(statuses[unknown]).toEqual(expected);
    expect(bodies[u.email]).toEqual(bodies[unknown]);
    const mails = await db.selectFrom('outbox').select('id').where(sql<boolean>`${u.email} = ANY(to_addresses)`).where('kind', '=', 'password-reset').execute();
    expect(mails).toHaveLength(RESET_LIMITS.perEmail);
  });

  it('rate-limits per client address across addresses asked for', async () => {
    const address = `198.51.100.${1 + Math.floor(Math.random() * 250)}-${tag}`;
    const now = new Date();
    for (let i = 0; i < RESET_LIMITS.perAddress; i++) await requestPasswordReset(db, { email: uniqueEmail(`spray${i}`), address }, now);
    const err = await requestPasswordReset(db, { email: uniqueEmail('spray-last'), address }, now).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(HttpError);
    expect((err as HttpError).code).toBe('TOO_MANY_REQUESTS');
    expect(Number((err as HttpError).headers?.['retry-after'])).toBeGreaterThan(0);
  });

  it('names a malformed address on the field', async () => {
    const res = await new Client().post('/api/password-reset', { email: 'not-an-address' });
    expect(res.status).toBe(400);
    expect((await res.json()).error.fields.email).toEqual(['Enter a valid e-mail address.']);
  });
});

describe('change password', () => {
  it('needs the current password and the policy; ends the other sessions, keeps this one', async () => {
    const u = await newUser('changer');
    const here = await signedIn(u.email, u.password);
    const elsewhere = await signedIn(u.email, u.password);

    const wrong = await here.post('/api/account/password', { currentPassword: 'not-my-password', newPassword: 'brand-new-pass-1' });
    expect(wrong.status).toBe(400);
    expect((await wrong.json()).error.fields).toEqual({ currentPassword: ['That is not your current password.'] });
    const weak = await here.post('/api/account/password', { currentPassword: u.password, newPassword: 'short' });
    expect(weak.status).toBe(400);
    expect((await weak.json()).error.fields).toEqual({ newPassword: ['Use at least 10 characters.'] });
    const same = await here.post('/api/account/password', { currentPassword: u.password, newPassword: u.password });
    expect(same.status).toBe(400);
    expect((await same.json()).error.fields.newPassword[0]).toMatch(/different/);
    expect((await new Client().signIn(u.email, 'brand-new-pass-1')).status).toBe(401);

    const ok = await here.post('/api/account/password', { currentPassword: u.password, newPassword: 'brand-new-pass-1' });
    expect(ok.status).toBe(200);
    expect(await ok.json()).toEqual({ changed: true, otherSessionsEnded: 1 });
    expect((await here.get('/api/me')).status).toBe(200);
    expect((await elsewhere.get('/api/me')).status).toBe(401);
    expect((await new Client().signIn(u.email, u.password)).status).toBe(401);
    expect((await new Client().signIn(u.email, 'brand-new-pass-1')).status).toBe(200);
    const entry = await db.selectFrom('audit_log').select(['actor_id', 'detail']).where('action', '=', 'password.change').where('target_id', '=', u.id).executeTakeFirstOrThrow();
    expect(entry).toEqual({ actor_id: u.id, detail: { otherSessionsEnded: 1 } });
  });

  it('is refused without a session', async () => {
    expect((await new Client().post('/api/account/password', { currentPassword: 'x', newPassword: 'y' })).status).toBe(401);
  });
});

describe('people admin', () => {
  it('disabling ends the sessions at once; enabling lets the person back in; both audited', async () => {
    const u = await newUser('disable-me');
    const c1 = await signedIn(u.email, u.password);
    const c2 = await signedIn(u.email, u.password);
    const res = await admin.request('PATCH', `/api/people/${u.id}`, { json: { disabled: true } });
    expect(res.status).toBe(200);
    const body = await res.json();
    expect(body.sessionsEnded).toBe(2);
    expect(body.person.status).toBe('disabled');
    expect(await db.selectFrom('user_session').select('id').where('user_id', '=', u.id).execute()).toEqual([]);
    expect((await c1.get('/api/me')).status).toBe(401);
    expect((await c2.get('/api/me')).status).toBe(401);
    const refused = await new Client().signIn(u.email, u.password);
    expect(refused.status).toBe(401);
    expect((await refused.json()).error.message).toMatch(/disabled/);

    const back = await admin.request('PATCH', `/api/people/${u.id}`, { json: { disabled: false } });
    expect(back.status).toBe(200);
    expect((await back.json()).person.status).toBe('active');
    expect((await new Client().signIn(u.email, u.password)).status).toBe(200);
    const entries = await db.selectFrom('audit_log').select(['action', 'actor_id', 'detail']).where('target_id', '=', u.id).orderBy('id').execute();
    expect(entries.map((e) => [e.action, e.actor_id])).toEqual([
      ['user.disable', adminId],
      ['user.enable', adminId],
    ]);
    expect(entries[0]!.detail).toMatchObject({ sessionsEnded: 2 });
  });

  it('role changes take effect on the next request and are audited with before and after', async () => {
    const u = await newUser('roles', undefined, ['operator']);
    const c = await signedIn(u.email, u.password);
    const res = await admin.request('PATCH', `/api/people/${u.id}`, { json: { roles: ['engineer', 'operator', 'engineer'] } });
    expect(res.status).toBe(200);
    expect((await res.json()).person.roles).toEqual(['engineer', 'operator']);
    expect((await (await c.get('/api/me')).json()).user.roles).toEqual(['engineer', 'operator']);
    const entry = await db.selectFrom('audit_log').select(['actor_id', 'detail']).where('action', '=', 'user.roles').where('target_id', '=', u.id).executeTakeFirstOrThrow();
    expect(entry).toEqual({ actor_id: adminId, detail: { before: ['operator'], after: ['engineer', 'operator'], added: ['engineer'], removed: [] } });

    // The same roles again: nothing to record.
    await admin.request('PATCH', `/api/people/${u.id}`, { json: { roles: ['operator', 'engineer'] } });
    expect(await db.selectFrom('audit_log').select('id').where('action', '=', 'user.roles').where('target_id', '=', u.id).execute()).toHaveLength(1);

    const none = await admin.request('PATCH', `/api/people/${u.id}`, { json: { roles: [] } });
    expect(none.status).toBe(400);
    expect((await none.json()).error.fields.roles).toEqual(['Give at least one role.']);
    const extra = await admin.request('PATCH', `/api/people/${u.id}`, { json: { roles: ['operator'], name: 'New Name' } });
    expect(extra.status).toBe(400);
    const missing = await admin.request('PATCH', `/api/people/nosuchperson`, { json: { roles: ['operator'] } });
    expect(missing.status).toBe(404);
  });

  it('an admin cannot take their own admin role or disable themselves', async () => {
    const self = await admin.request('PATCH', `/api/people/${adminId}`, { json: { roles: ['operator'] } });
    expect(self.status).toBe(409);
    expect((await self.json()).error.fields.roles).toBeDefined();
    const off = await admin.request('PATCH', `/api/people/${adminId}`, { json: { disabled: true } });
    expect(off.status).toBe(409);
    expect((await (await admin.get('/api/me')).json()).user.roles).toEqual(['admin']);
  });

  it('the last admin who can sign in keeps the role and stays enabled (on a database of its own)', async () => {
    const name = `millrace_admins_${tag}`;
    await sql.raw(`CREATE DATABASE ${name}`).execute(db);
    const url = new URL(process.env.DATABASE_URL!);
    url.pathname = `/${name}`;
    const pool = createPool(url.toString(), 2);
    const own = createDb(pool);
    try {
      await migrateToLatest(own);
      const a = await insertUser(own, { email: 'a@millrace.test', name: 'Admin A', password: 'admin-a-password', roles: ['admin'] });
      const b = await insertUser(own, { email: 'b@millrace.test', name: 'Admin B', password: 'admin-b-password', roles: ['admin', 'engineer'] });
      // Two admins: A may take B's admin role.
      expect((await updatePerson(own, b, { roles: ['engineer'] }, { id: a })).person.roles).toEqual(['engineer']);
      // Now A is the only one; nobody else can take it (here B, were B still an admin, or an invited admin).
      const invited = await insertUser(own, { email: 'c@millrace.test', name: 'Invited C', password: null, roles: ['admin'] });
      const demote = await updatePerson(own, a, { roles: ['operator'] }, { id: invited }).catch((e: unknown) => e);
      expect(demote).toBeInstanceOf(HttpError);
      expect((demote as HttpError).code).toBe('CONFLICT');
      expect((demote as HttpError).message).toMatch(/last admin who can sign in/);
      const disable = await updatePerson(own, a, { disabled: true }, { id: invited }).catch((e: unknown) => e);
      expect((disable as HttpError).fields).toEqual({ disabled: ['The last admin stays enabled.'] });
      // Once B is admin again, A may be demoted.
      await updatePerson(own, b, { roles: ['admin', 'engineer'] }, { id: a });
      expect((await updatePerson(own, a, { roles: ['operator'] }, { id: b })).person.roles).toEqual(['operator']);
    } finally {
      await own.destroy();
      await sql.raw(`DROP DATABASE ${name} WITH (FORCE)`).execute(db);
    }
  });

  it('the People page lists everyone with status', async () => {
    const res = await admin.get('/admin/people');
    expect(res.status).toBe(200);
    const html = await res.text();
    expect(html).toContain('Invite someone');
    expect(html).toContain('operator@millrace.test');
  });
});

describe('audit log', () => {
  const action = `test.filter-${tag}`;
  beforeAll(async () => {
    const u = await newUser('audit-actor');
    await db
      .insertInto('audit_log')
      .values([
        { at: new Date('2026-01-01T10:00:00Z'), actor_id: u.id, action, target_type: 'test_thing', target_id: 'a', detail: JSON.stringify({ n: 1 }) },
        { at: new Date('2026-01-01T11:00:00Z'), actor_id: null, action, target_type: 'test_thing', target_id: 'b', detail: JSON.stringify({ before: 1, after: 2 }) },
        { at: new Date('2026-01-01T12:00:00Z'), actor_id: u.id, action, target_type: 'other_thing', target_id: 'c', detail: JSON.stringify({}) },
      ])
      .execute();
  });

  it('filters by action, target type, actor and time (from inclusive, to exclusive)', async () => {
    const get = async (q: string) => {
      const res = await admin.get(`/api/audit?${q}`);
      expect(res.status, q).toBe(200);
      return res.json() as Promise<{ total: number; entries: { target_id: string; actor_id: string | null; at: string }[]; facets: { actions: string[]; targetTypes: string[] } }>;
    };
    const all = await get(`action=${action}`);
    expect(all.entries.map((e) => e.target_id)).toEqual(['c', 'b', 'a']);
    expect(all.facets.actions).toContain(action);
    expect(all.facets.targetTypes).toEqual(expect.arrayContaining(['test_thing', 'other_thing']));
    expect((await get(`action=${action}&targetType=test_thing`)).entries.map((e) => e.target_id)).toEqual(['b', 'a']);
    expect((await get(`action=${action}&actor=system`)).entries.map((e) => e.target_id)).toEqual(['b']);
    const actorId = all.entries.find((e) => e.target_id === 'a')!.actor_id!;
    expect((await get(`action=${action}&actor=${actorId}`)).entries.map((e) => e.target_id)).toEqual(['c', 'a']);
    expect((await get(`action=${action}&from=2026-01-01T10:00:00Z&to=2026-01-01T12:00:00Z`)).entries.map((e) => e.target_id)).toEqual(['b', 'a']);
    expect((await get(`action=${action}&from=${encodeURIComponent('2026-01-01 10:30')}`)).entries.map((e) => e.target_id)).toEqual(['c', 'b']);
    const paged = await get(`action=${action}&pageSize=2&page=2`);
    expect(paged.total).toBe(3);
    expect(paged.entries.map((e) => e.target_id)).toEqual(['a']);
  });

  it('records the admin changes of this file too, and refuses bad filters by field', async () => {
    const roles = await (await admin.get('/api/audit?action=user.roles&targetType=user')).json();
    expect(roles.total).toBeGreaterThan(0);
    for (const e of roles.entries) expect(e).toMatchObject({ action: 'user.roles', target_type: 'user', actor_id: adminId, actor_name: 'Sana Kowalczyk' });
    const bad = await admin.get('/api/audit?from=yesterday&to=2026-01-01T00:00:00Z&page=0');
    expect(bad.status).toBe(400);
    expect(Object.keys((await bad.json()).error.fields).sort()).toEqual(['from', 'page']);
    const backwards = await admin.get('/api/audit?from=2026-01-02T00:00:00Z&to=2026-01-01T00:00:00Z');
    expect((await backwards.json()).error.fields.to).toEqual(['"to" must be after "from".']);
  });

  it('the audit page renders the filtered entries', async () => {
    const res = await admin.get(`/admin/audit?action=${action}&targetType=other_thing`);
    expect(res.status).toBe(200);
    const html = await res.text();
    expect(html).toContain(action);
    expect(html).toContain('other_thing');
  });
});

describe('OpenAPI description', () => {
  it('describes every API route of the route table, or lists it as excluded, and nothing else', async () => {
    const anon = await new Client().get('/api/openapi.json');
    expect(anon.status).toBe(401);
    const res = await (await clientAs('operator')).get('/api/openapi.json');
    expect(res.status).toBe(200);
    const doc = (await res.json()) as { openapi: string; paths: Record<string, Record<string, { 'x-access': unknown; requestBody?: { content: Record<string, unknown> } }>>; components: { schemas: Record<string, unknown> } };
    expect(doc.openapi).toMatch(/^3\.0\./);
    const missing: string[] = [];
    for (const r of apiRoutesOfRouteTable()) {
      const [method, route] = r.split(' ') as [string, string];
      if (OPENAPI_EXCLUDED[route]) continue;
      const op = doc.paths[openApiPath(route)]?.[method.toLowerCase()];
      if (!op) missing.push(r);
      else expect(op['x-access'], r).toEqual(accessFor(route, method));
    }
    expect(missing, 'API routes without a description: add them in src/lib/server/openapi.ts').toEqual([]);
    const documented = Object.entries(doc.paths).flatMap(([p, item]) => Object.keys(item).map((m) => `${m.toUpperCase()} ${p}`));
    const known = new Set(apiRoutesOfRouteTable().map((r) => r.replace(/\[([^\]]+)\]/g, '{$1}')));
    expect(documented.filter((d) => !known.has(d))).toEqual([]);
  });

  it('carries the shared schemas: the sheet, the ingest report, sign-in, trips, limit sets', async () => {
    const doc = await (await clientAs('analyst')).get('/api/openapi.json').then((r) => r.json());
    for (const name of ['SpacecraftSheet', 'IngestReport', 'SignInInput', 'LimitSetInput', 'Error', 'Person', 'AuditEntry']) expect(doc.components.schemas[name], name).toBeDefined();
    const ingest = doc.paths['/api/ingest'].post;
    expect(Object.keys(ingest.requestBody.content)).toEqual(['application/octet-stream']);
    expect(ingest.security).toEqual([{ ingestToken: [] }]);
    expect(ingest.responses['200'].content['application/json'].schema.$ref).toBe('#/components/schemas/IngestReport');
    expect(Object.keys(doc.paths['/api/uploads/packets'].post.requestBody.content)).toEqual(['multipart/form-data']);
    expect(doc.paths['/api/auth/sign-in'].post.requestBody.content['application/json'].schema.$ref).toBe('#/components/schemas/SignInInput');
    expect(doc.paths['/api/spacecraft/{key}/sheets'].post.requestBody.content['application/json'].schema.$ref).toBe('#/components/schemas/SpacecraftSheet');
    const tripParams = (doc.paths['/api/trips'].get.parameters as { name: string; in: string }[]).map((p) => `${p.in}:${p.name}`);
    expect(tripParams).toEqual(expect.arrayContaining(['query:state', 'query:spacecraft', 'query:from', 'query:pageSize']));
    expect(doc.paths['/api/trips/{id}/resolve'].post.parameters[0]).toMatchObject({ name: 'id', in: 'path', required: true });
    // The sheet schema keeps the sheet format's structure.
    const sheet = doc.components.schemas.SpacecraftSheet;
    expect(sheet.required).toEqual(expect.arrayContaining(['sheetVersion', 'spacecraft', 'effectiveFrom', 'massProperties', 'orbit', 'loops']));
    expect(sheet.properties.loops.maxItems).toBe(4);
  });

  it('the docs page lists paths, methods, parameters and schemas, with no outside script or stylesheet', async () => {
    const res = await (await clientAs('engineer')).get('/docs/api');
    expect(res.status).toBe(200);
    const html = await res.text();
    for (const s of ['/api/trips/{id}/acknowledge', '/api/ingest', 'application/octet-stream', 'multipart/form-data', 'Parameters', 'pageSize', 'schema-SpacecraftSheet', 'IngestReport']) expect(html, s).toContain(s);
    const external = [...html.matchAll(/<(script|link)\b[^>]*(src|href)="([^"]+)"/g)].map((m) => m[3]!).filter((u) => /^(https?:)?\/\//.test(u));
    expect(external).toEqual([]);
    expect(html).not.toContain('<style>@import');
  });
});

describe('sheet history diff', () => {
  it('the history page shows the diff and the ideal-kT caution of a new sheet', async () => {
    const key = `DIFF-${tag.toUpperCase()}`;
    const [demo] = loadDemoSheets();
    const day = 86_400_000;
    const iso = (ms: number) => new Date(Math.floor(ms / 1000) * 1000).toISOString().replace('.000Z', 'Z');
    const first = spacecraftSheetSchema.parse({ ...demo, spacecraft: { key, name: 'Diff Check' }, effectiveFrom: iso(Date.now() - 60 * day) });
    const sc = await insertSpacecraftWithSheet(db, first, null);
    const second = structuredClone(first);
    second.effectiveFrom = iso(Date.now() - 30 * day);
    second.loops[0]!.pumpStations[0]!.field_T *= 1.05;
    second.massProperties.inertia_kg_m2[2]![2] += 0.01;
    await insertSheet(db, sc.id, spacecraftSheetSchema.parse(second), null);
    expect(await findSpacecraftByKey(db, key)).toBeDefined();
    const res = await (await clientAs('analyst')).get(`/spacecraft/${key}/sheets`);
    expect(res.status).toBe(200);
    // React separates adjacent text nodes with empty comments.
    const html = (await res.text()).replace(/<!-- -->/g, '');
    expect(html).toContain('Changes from the previous sheet');
    expect(html).toContain('inertia, L0 changed');
    expect(html).toContain('caution · ideal torque constant moves by more than 3 %');
    expect(html).toContain('pumpStations[0].field_T');
    expect(html).toContain('Izz');
  });
});
