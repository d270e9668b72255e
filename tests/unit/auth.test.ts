import { describe, expect, it } from 'vitest';
import { allows, isRole, type SessionUser } from '../../src/lib/server/auth/roles';
import { accessFor } from '../../src/lib/server/auth/access';
import { hashPassword, passwordProblem, verifyPassword } from '../../src/lib/server/auth/password';
import { safeNext } from '../../src/lib/server/auth/session';
import { ADMIN_NAV, NAV, navEntry } from '../../src/lib/nav';

const user = (...roles: SessionUser['roles']): SessionUser => ({ id: 'u', email: 'u@x.test', name: 'U', roles });

describe('role checks', () => {
  it('public admits anyone, signed-in admits any user', () => {
    expect(allows('public', null)).toBe(true);
    expect(allows('signed-in', null)).toBe(false);
    expect(allows('signed-in', user())).toBe(true);
  });
  it('a role list admits holders of any listed role only', () => {
    expect(allows(['admin'], user('operator'))).toBe(false);
    expect(allows(['engineer', 'admin'], user('operator', 'engineer'))).toBe(true);
    expect(allows(['admin'], null)).toBe(false);
  });
  it('isRole knows the four roles', () => {
    expect(['operator', 'analyst', 'engineer', 'admin'].every(isRole)).toBe(true);
    expect(isRole('root')).toBe(false);
  });
  it('routes without a rule, or methods without a rule, are denied', () => {
    expect(accessFor('/no-such-route', 'GET')).toBeNull();
    expect(accessFor('/api/people', 'DELETE')).toBeNull();
    expect(accessFor('/api/people', 'HEAD')).toEqual(['admin']);
  });
  it('only relative same-site paths are followed after sign-in', () => {
    expect(safeNext('/trips?x=1')).toBe('/trips?x=1');
    expect(safeNext('//evil.example')).toBe('/');
    expect(safeNext('https://evil.example')).toBe('/');
    expect(safeNext(null)).toBe('/');
  });
  it('refuses paths a browser would turn into another origin', () => {
    // WHATWG URL parsing (what browsers do with a Location header) reads "\\" as "/" in http(s)
    // URLs and strips tab, LF and CR anywhere in the input, so each of these leaves the site.
    const escapes = [
      '/\\evil.example',
      '/\\/evil.example',
      '\\/evil.example',
      '/\t/evil.example',
      '/\n/evil.example',
      '/\r/evil.example',
      '/\u0000/evil.example',
      '/\u007f/evil.example',
      ' //evil.example',
      '///evil.example',
      'evil.example',
      '',
      undefined,
    ];
    for (const next of escapes) expect(safeNext(next), JSON.stringify(next)).toBe('/');
    // The premise, checked against the platform's own URL parser: without the guard these escape.
    expect(new URL('/\\evil.example', 'http://x.invalid').host).toBe('evil.example');
    expect(new URL('/\t/evil.example', 'http://x.invalid').host).toBe('evil.example');
  });
  it('keeps ordinary same-site paths, queries and fragments as given', () => {
    for (const next of ['/', '/trips/12', '/limits/MR-1?tab=diff#row-3', '/search?q=a%2F%2Fb', '/a//b']) {
      expect(safeNext(next)).toBe(next);
    }
  });
});

describe('navigation follows the route table', () => {
  const everyone = [null, user(), user('operator'), user('analyst'), user('engineer'), user('admin'), user('operator', 'engineer')];
  it('shows each entry to exactly those its page admits', () => {
    for (const n of [...NAV, ...ADMIN_NAV]) {
      const rule = accessFor(n.href, 'GET');
      expect(rule, n.href).not.toBeNull();
      for (const u of everyone) expect(allows(n.access, u), `${n.href} for ${u?.roles.join('+') ?? 'anonymous'}`).toBe(allows(rule!, u));
    }
  });
  it('keeps the admin strip to admins and the limit bench to engineers and admins', () => {
    expect(ADMIN_NAV.every((n) => !allows(n.access, user('operator', 'analyst', 'engineer')) && allows(n.access, user('admin')))).toBe(true);
    const bench = NAV.find((n) => n.href === '/limits')!;
    expect([user('operator'), user('analyst'), user('engineer'), user('admin')].map((u) => allows(bench.access, u))).toEqual([false, false, true, true]);
  });
  it('refuses an entry for a page without a rule', () => {
    expect(() => navEntry('/no-such-page', 'Nowhere')).toThrow(/Nowhere \(\/no-such-page\) has no GET rule/);
  });
});

describe('password hashing (argon2id)', () => {
  it('round-trips and refuses a wrong password', async () => {
    const h = await hashPassword('correct horse battery');
    expect(h.startsWith('$argon2id$')).toBe(true);
    expect(await verifyPassword(h, 'correct horse battery')).toBe(true);
    expect(await verifyPassword(h, 'correct horse batterx')).toBe(false);
  });
  it('salts: the same password hashes differently twice', async () => {
    expect(await hashPassword('same password!')).not.toBe(await hashPassword('same password!'));
  });
  it('treats a malformed hash as a failed check', async () => {
    expect(await verifyPassword('not-a-hash', 'x')).toBe(false);
  });
  it('has a length policy', () => {
    expect(passwordProblem('short')).toMatch(/10/);
    expect(passwordProblem('long enough password')).toBeNull();
  });
});
