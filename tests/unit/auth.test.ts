import { describe, expect, it } from 'vitest';
import { allows, isRole, type SessionUser } from '../../src/lib/server/auth/roles';
import { accessFor } from '../../src/lib/server/auth/access';
import { hashPassword, passwordProblem, verifyPassword } from '../../src/lib/server/auth/password';
import { safeNext } from '../../src/lib/server/auth/session';

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
