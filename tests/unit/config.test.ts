import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/lib/server/config';

describe('parseConfig', () => {
  it('gives defaults for the local demo', () => {
    const c = parseConfig({});
    expect(c.DATABASE_URL).toBe('postgres://millrace@127.0.0.1:54329/millrace');
    expect(c.SMTP_PORT).toBe(2525);
    expect(c.cookieSecure).toBe(false);
    expect(c.DEMO_MODE).toBe(false);
  });
  it('turns secure cookies on behind https unless told otherwise', () => {
    expect(parseConfig({ PUBLIC_URL: 'https://millrace.example.org' }).cookieSecure).toBe(true);
    expect(parseConfig({ PUBLIC_URL: 'https://millrace.example.org', COOKIE_SECURE: '0' }).cookieSecure).toBe(false);
  });
  it('coerces numbers and flags', () => {
    const c = parseConfig({ SMTP_PORT: '587', DIGEST_MINUTES: '5', DEMO_MODE: 'true' });
    expect(c.SMTP_PORT).toBe(587);
    expect(c.DIGEST_MINUTES).toBe(5);
    expect(c.DEMO_MODE).toBe(true);
  });
  it('names every bad variable', () => {
    expect(() => parseConfig({ DATABASE_URL: 'mysql://x', SMTP_PORT: '99999' })).toThrowError(/DATABASE_URL[\s\S]*SMTP_PORT|SMTP_PORT[\s\S]*DATABASE_URL/);
  });
});
