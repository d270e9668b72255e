import { describe, expect, it } from 'vitest';
import { backoffMs, isPermanentFailure, MAX_ATTEMPTS } from '../../../src/lib/server/mail/outbox';
import { createOnCallShiftInputSchema, parseUtcDateTime } from '../../../src/features/roster/roster.schema';
import { fieldsOf } from '../../../src/lib/server/http';

describe('retry schedule (truncated exponential backoff, common practice)', () => {
  it('doubles from 30 s and stops growing at 30 min', () => {
    expect([1, 2, 3, 4, 5, 6, 7, 8, 12].map((n) => backoffMs(n) / 1000)).toEqual([30, 60, 120, 240, 480, 960, 1800, 1800, 1800]);
  });
  it('spans about three hours before giving up', () => {
    let total = 0;
    for (let n = 1; n < MAX_ATTEMPTS; n++) total += backoffMs(n);
    expect(MAX_ATTEMPTS).toBe(12);
    expect(total / 3_600_000).toBeCloseTo(3.025, 3);
  });
});

describe('which relay answers end the retries (Klensin, "Simple Mail Transfer Protocol", RFC 5321, 2008, §4.2.1)', () => {
  it.each([
    [{ code: 'EENVELOPE', responseCode: 550 }, true], // mailbox unavailable
    [{ code: 'EENVELOPE', responseCode: 501 }, true], // bad address syntax
    [{ code: 'EMESSAGE', responseCode: 552 }, true], // too big
    [{ code: 'EENVELOPE' }, true], // no valid recipient at all, refused by the client
    [{ code: 'EENVELOPE', responseCode: 451 }, false], // 4yz: transient
    [{ code: 'EMESSAGE', responseCode: 451 }, false],
    [{ code: 'EENVELOPE', responseCode: 530 }, false], // authentication required (RFC 4954): configuration
    [{ code: 'EAUTH', responseCode: 535 }, false],
    [{ code: 'ECONNECTION' }, false],
    [{ code: 'ETIMEDOUT' }, false],
    [new Error('connect ECONNREFUSED 127.0.0.1:2525'), false],
  ])('%o → permanent %s', (err, permanent) => expect(isPermanentFailure(err)).toBe(permanent));
});

describe('on-call shift input', () => {
  it('reads the form field as UTC and takes ISO 8601 with a zone', () => {
    expect(parseUtcDateTime('2026-12-01T08:00')?.toISOString()).toBe('2026-12-01T08:00:00.000Z');
    expect(parseUtcDateTime('2026-12-01 08:00')?.toISOString()).toBe('2026-12-01T08:00:00.000Z');
    expect(parseUtcDateTime('2026-12-01T08:00:30')?.toISOString()).toBe('2026-12-01T08:00:30.000Z');
    expect(parseUtcDateTime('2026-12-01T08:00:00+02:00')?.toISOString()).toBe('2026-12-01T06:00:00.000Z');
    expect(parseUtcDateTime('2026-02-30T08:00')).toBeNull();
    expect(parseUtcDateTime('2026-12-01T24:00')).toBeNull();
    expect(parseUtcDateTime('tomorrow')).toBeNull();
  });

  it('puts the errors on the fields: who, and "to" after "from"', () => {
    const r = createOnCallShiftInputSchema.safeParse({ userId: '', startsAt: '2026-12-02T08:00', endsAt: '2026-12-02T06:00' });
    expect(r.success).toBe(false);
    const fields = fieldsOf(r.error!);
    expect(fields.userId).toEqual(['Choose who is on call.']);
    expect(fields.endsAt).toEqual(['"To" must be after "From".']);
    const same = fieldsOf(createOnCallShiftInputSchema.safeParse({ userId: 'u', startsAt: '2026-12-02T08:00', endsAt: '2026-12-02T08:00' }).error!);
    expect(same.endsAt).toEqual(['"To" must be after "From".']);
    const long = fieldsOf(createOnCallShiftInputSchema.safeParse({ userId: 'u', startsAt: '2026-12-01T00:00', endsAt: '2027-01-02T00:00' }).error!);
    expect(long.endsAt).toEqual(['A shift is at most 31 days.']);
    const bad = fieldsOf(createOnCallShiftInputSchema.safeParse({ userId: 'u', startsAt: 'soon', endsAt: '' }).error!);
    expect(bad.startsAt?.[0]).toMatch(/date and time/);
    expect(bad.endsAt?.[0]).toBe('Required.');
    expect(createOnCallShiftInputSchema.safeParse({ userId: 'u', startsAt: '2026-12-02T08:00', endsAt: '2026-12-02T20:00' }).success).toBe(true);
  });
});
