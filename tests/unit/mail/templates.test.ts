import { describe, expect, it } from 'vitest';
import MailComposer from 'nodemailer/lib/mail-composer';
import { simpleParser } from 'mailparser';
import {
  CAUTION_LINE,
  escapeHtml,
  exceedance,
  formatNumber,
  formatUtc,
  periodStartOf,
  renderDigest,
  renderTripMail,
  tripUrl,
  type TripMailFacts,
} from '../../../src/lib/server/mail/templates';

const URL = 'http://127.0.0.1:4321';
const base: TripMailFacts = {
  tripId: 4711,
  event: 'opened',
  kind: 'limit',
  level: 'warning',
  spacecraftKey: 'MR-2',
  spacecraftId: 2,
  loopId: 1,
  quantity: 'electrode_temp_c',
  quantityLabel: 'Electrode temperature',
  unit: '°C',
  value: 212.4,
  limit: 200,
  limitSide: 'high',
  at: new Date('2026-12-01T10:07:42.250Z'),
  limitSetVersion: 3,
};

/** Build the MIME message with nodemailer and read it back with mailparser: two independent libraries. */
async function roundTrip(m: { subject: string; text?: string; html?: string }) {
  const raw = await new MailComposer({ from: 'Millrace <millrace@localhost>', to: 'op@millrace.test', ...m }).compile().build();
  return { raw: raw.toString('utf8'), mail: await simpleParser(raw) };
}

describe('trip message', () => {
  it('names spacecraft, loop, quantity, value, limit, level, UTC time and the trip link', () => {
    const m = renderTripMail(base, URL);
    expect(m.subject).toBe('[Millrace] WARNING · MR-2 L1 electrode temperature 212.4 °C (high limit 200 °C)');
    for (const part of ['MR-2', 'L1', 'Electrode temperature (electrode_temp_c)', '212.4 °C', '200 °C (high), limit set version 3', 'WARNING', '2026-12-01 10:07:42 UTC']) {
      expect(m.text).toContain(part);
      expect(m.html).toContain(escapeHtml(part));
    }
    expect(m.text).toContain('above the high limit by 12.4 °C (6.2 %)');
    expect(m.text).toContain(`${URL}/trips/4711`);
    expect(m.html).toContain(`href="${URL}/trips/4711"`);
    expect(m.text.trimEnd().endsWith(CAUTION_LINE)).toBe(true);
    expect(m.html).toContain(escapeHtml(CAUTION_LINE));
    // The level word in the product's warning colour, with its icon: never colour alone.
    expect(m.html).toMatch(/<strong style="color:#C23B22">◆ WARNING<\/strong>/);
  });

  it('says "escalated" and "cleared", and a cleared trip is shown in the nominal colour', () => {
    const esc = renderTripMail({ ...base, event: 'escalated' }, URL);
    expect(esc.subject).toMatch(/^\[Millrace\] Escalated to WARNING · MR-2 L1/);
    expect(esc.text.split('\n')[0]).toBe('Trip escalated to WARNING on MR-2, loop L1');
    const clr = renderTripMail({ ...base, event: 'cleared', value: 195 }, URL);
    expect(clr.subject).toBe('[Millrace] Cleared · MR-2 L1 electrode temperature back to 195 °C (high limit 200 °C)');
    expect(clr.text).toContain('within the high limit by 5 °C (2.5 %)');
    expect(clr.text).toContain('WARNING (now cleared)');
    expect(clr.html).toContain('color:#2F8F6B');
  });

  it('handles a low limit, a body quantity without a loop and a caution level', () => {
    const m = renderTripMail({ ...base, level: 'caution', loopId: null, quantity: 'flow_velocity_m_s', quantityLabel: 'Flow velocity', unit: 'm/s', value: 0.042, limit: 0.05, limitSide: 'low' }, URL);
    expect(m.text).toContain('Loop:');
    expect(m.text).toContain('— (spacecraft body)');
    expect(m.text).toContain('below the low limit by 0.008 m/s (16 %)');
    expect(m.html).toContain('color:#C98A00');
  });

  it('escapes what comes from data in the HTML (checked by mailparser deriving text from the HTML)', async () => {
    const evil = { ...base, quantityLabel: '<script>alert(1)</script> & "temp"', spacecraftKey: 'MR-1' };
    const m = renderTripMail(evil, URL);
    expect(m.html).not.toContain('<script>');
    // mailparser (html-to-text) reads the HTML as a browser would: the label comes back as text.
    const { mail } = await roundTrip({ subject: m.subject, html: m.html });
    expect(mail.text).toContain('<script>alert(1)</script> & "temp"');
  });

  it('survives MIME encoding: subject, text and HTML read back unchanged; no line over 998 octets (Resnick, RFC 5322, 2008, §2.1.1)', async () => {
    const m = renderTripMail(base, URL);
    const { raw, mail } = await roundTrip(m);
    expect(mail.subject).toBe(m.subject);
    expect(mail.text?.replace(/\r\n/g, '\n')).toBe(m.text);
    expect(mail.html && mail.html.replace(/\r\n/g, '\n')).toBe(m.html);
    for (const line of raw.split('\r\n')) expect(Buffer.byteLength(line)).toBeLessThanOrEqual(998);
  });
});

describe('caution digest', () => {
  const entries = [
    { ...base, tripId: 12, level: 'caution' as const, value: 201.5, at: new Date('2026-12-01T10:09:00Z'), clearedAt: null },
    { ...base, tripId: 10, level: 'caution' as const, loopId: 0, value: 203, at: new Date('2026-12-01T10:01:00Z'), clearedAt: new Date('2026-12-01T10:04:30Z') },
    { ...base, tripId: 11, level: 'caution' as const, quantity: 'magnet_temp_c', quantityLabel: 'Magnet temperature', value: 81.25, limit: 80, at: new Date('2026-12-01T10:05:00Z'), clearedAt: null },
  ];
  const d = renderDigest({ spacecraftKey: 'MR-2', periodStart: new Date('2026-12-01T10:00:00Z'), periodEnd: new Date('2026-12-01T10:15:00Z'), entries }, URL);

  it('lists every trip of the period in time order with its numbers and link', () => {
    expect(d.subject).toBe('[Millrace] CAUTION digest · MR-2 · 3 trips 2026-12-01 10:00–10:15 UTC');
    const links = [...d.text.matchAll(/\/trips\/(\d+)/g)].map((x) => Number(x[1]));
    expect(links).toEqual([10, 11, 12]);
    expect(d.text).toContain('Magnet temperature: 81.25 °C (high limit 80 °C, limit set v3)');
    expect(d.text).toContain('CAUTION, cleared 10:04:30 UTC');
    expect(d.html).toContain(`href="${URL}/trips/11"`);
    expect(d.html).toContain('color:#C98A00');
    expect(d.text.trimEnd().endsWith(CAUTION_LINE)).toBe(true);
  });
});

describe('formatting', () => {
  it.each([
    [212.4, '212.4'],
    [200, '200'],
    [0.0421, '0.0421'],
    [-3.5, '-3.5'],
    [1234567.891, '1234570'],
    [2.5e-6, '2.5e-6'],
    [0, '0'],
  ])('formatNumber(%s) = %s', (v, s) => expect(formatNumber(v)).toBe(s));

  it('gives UTC times and the trip address', () => {
    expect(formatUtc(new Date('2026-12-01T23:59:59.999Z'))).toBe('2026-12-01 23:59:59 UTC');
    expect(tripUrl('http://h:1/', 5)).toBe('http://h:1/trips/5');
  });

  it('measures the exceedance towards the limit side', () => {
    expect(exceedance({ value: 5, limit: 3, limitSide: 'high' })).toBe(2);
    expect(exceedance({ value: 5, limit: 3, limitSide: 'low' })).toBe(-2);
  });

  it('cuts time into whole digest periods since the Unix epoch (common practice)', () => {
    expect(periodStartOf(new Date('2026-12-01T10:14:59.999Z'), 15).toISOString()).toBe('2026-12-01T10:00:00.000Z');
    expect(periodStartOf(new Date('2026-12-01T10:15:00Z'), 15).toISOString()).toBe('2026-12-01T10:15:00.000Z');
    expect(periodStartOf(new Date('2026-12-01T10:15:00Z'), 60).toISOString()).toBe('2026-12-01T10:00:00.000Z');
  });
});
