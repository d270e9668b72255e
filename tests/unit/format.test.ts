import { describe, expect, it } from 'vitest';
import { countText, formatUtc, formatValue, sizeParts, utcClock, utcText } from '../../src/lib/format';

describe('display formatting', () => {
  it('writes one instant the same way whatever form it comes in, always in UTC', () => {
    const iso = '2026-12-02T06:21:17.345Z';
    for (const t of [iso, Date.parse(iso), new Date(iso), '2026-12-02T07:21:17.345+01:00']) expect(formatUtc(t)).toBe('2026-12-02 06:21:17');
    expect(utcText(iso)).toBe('2026-12-02 06:21:17');
    expect(utcClock(iso)).toBe('06:21:17');
    expect(utcText(null)).toBe('—');
    // text that is not a time is shown as it came rather than thrown on
    expect(formatUtc('not a time')).toBe('not a time');
  });

  it('counts, sizes and readouts', () => {
    expect(countText(3457294)).toBe('3,457,294');
    expect(sizeParts(1023)).toEqual(['1023', 'B']);
    expect(sizeParts(1536)).toEqual(['1.5', 'KiB']);
    expect(sizeParts(8 * 1048576)).toEqual(['8.0', 'MiB']);
    expect(formatValue(0.0004567)).toBe('4.567e-4');
    expect(formatValue(6.9312)).toBe('6.931');
    expect(formatValue(Number.NaN)).toBe('—');
  });
});
