// Trip mail and caution digests as plain text and simple HTML. Pure: no I/O, no clock.

/** What a trip message needs to say; built by the trip engine when a trip opens, escalates or clears. */
export interface TripMailFacts {
  tripId: number;
  event: 'opened' | 'escalated' | 'cleared';
  kind: string;
  level: 'caution' | 'warning';
  spacecraftKey: string;
  spacecraftId: number;
  loopId: number | null;
  quantity: string;
  quantityLabel: string;
  unit: string;
  value: number;
  limit: number;
  limitSide: 'high' | 'low';
  at: Date;
  limitSetVersion: number;
  /**
   * Set on a 'cleared' event when the trip was closed by a limit-set handover rather than by its
   * value returning within the limit (the trip's stored cleared_note); `value` is then its last value.
   */
  closedNote?: string | null;
}

/** A caution trip as a digest lists it. */
export interface DigestEntry extends TripMailFacts {
  /** When the trip cleared before the digest went out, else null. */
  clearedAt: Date | null;
}

export interface RenderedMail {
  subject: string;
  text: string;
  html: string;
}

/** The product's caution line, closing every message. */
export const CAUTION_LINE =
  "Trips and estimates support the flight team's decisions; they do not replace the mission's flight rules or the judgement of the responsible engineer.";

/** State colours and icons of the product (the word is always shown beside them). */
export const LEVEL_STYLE = {
  caution: { colour: '#C98A00', icon: '▲' },
  warning: { colour: '#C23B22', icon: '◆' },
  nominal: { colour: '#2F8F6B', icon: '●' },
} as const;

const INK = '#1B2430';
const PAPER = '#F6F5F1';
const MUTED = '#606975';
const RULE = '#DDDAD0';
const GALLIUM = '#5B7C99';

/** Escape text for HTML element content and quoted attribute values. */
export function escapeHtml(s: string): string {
  return s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;').replace(/'/g, '&#39;');
}

/** The trip's Casefile address. */
export function tripUrl(publicUrl: string, tripId: number): string {
  return `${publicUrl.replace(/\/+$/, '')}/trips/${tripId}`;
}

/** A time as "YYYY-MM-DD HH:MM:SS UTC". */
export function formatUtc(d: Date): string {
  return `${d.toISOString().slice(0, 19).replace('T', ' ')} UTC`;
}

const sig = new Intl.NumberFormat('en-US', { maximumSignificantDigits: 6, useGrouping: false });

/** A number with up to six significant figures (exponent form outside 1e-4 … 1e9). */
export function formatNumber(v: number): string {
  if (!Number.isFinite(v)) return String(v);
  const a = Math.abs(v);
  if (a !== 0 && (a < 1e-4 || a >= 1e9)) return v.toExponential(4).replace(/\.?0+e/, 'e');
  return sig.format(v);
}

/** A value with its unit, "212.4 °C"; no unit for dimensionless quantities. */
export function formatQuantity(v: number, unit: string): string {
  return unit ? `${formatNumber(v)} ${unit}` : formatNumber(v);
}

function loopText(loopId: number | null): string {
  return loopId === null ? 'spacecraft body' : `loop L${loopId}`;
}

/** How far past the limit the value is, in the direction of the limit's side (negative: within). */
export function exceedance(f: Pick<TripMailFacts, 'value' | 'limit' | 'limitSide'>): number {
  return f.limitSide === 'high' ? f.value - f.limit : f.limit - f.value;
}

function marginText(f: TripMailFacts): string {
  const d = exceedance(f);
  const pct = f.limit !== 0 ? ` (${formatNumber(Math.round((Math.abs(d) / Math.abs(f.limit)) * 1000) / 10)} %)` : '';
  const side = f.limitSide === 'high' ? 'high' : 'low';
  if (d > 0) return `${f.limitSide === 'high' ? 'above' : 'below'} the ${side} limit by ${formatQuantity(Math.abs(d), f.unit)}${pct}`;
  if (d === 0) return `at the ${side} limit`;
  return `within the ${side} limit by ${formatQuantity(Math.abs(d), f.unit)}${pct}`;
}

function headline(f: TripMailFacts): string {
  const word = f.level.toUpperCase();
  const where = `${f.spacecraftKey}, ${loopText(f.loopId)}`;
  if (f.event === 'opened') return `${word} trip opened on ${where}`;
  if (f.event === 'escalated') return `Trip escalated to ${word} on ${where}`;
  if (f.closedNote) return `${word} trip closed at a limit-set handover on ${where}`;
  return `${word} trip cleared on ${where}`;
}

/** The subject, body text and HTML of one trip message. */
export function renderTripMail(f: TripMailFacts, publicUrl: string): RenderedMail {
  const url = tripUrl(publicUrl, f.tripId);
  const loop = f.loopId === null ? '' : ` L${f.loopId}`;
  const handover = f.event === 'cleared' && !!f.closedNote;
  const tag = f.event === 'opened' ? f.level.toUpperCase() : f.event === 'escalated' ? `Escalated to ${f.level.toUpperCase()}` : handover ? 'Closed at limit handover' : 'Cleared';
  const relation = f.event === 'cleared' && !handover ? 'back to' : handover ? 'last' : '';
  const subject = `[Millrace] ${tag} · ${f.spacecraftKey}${loop} ${f.quantityLabel.toLowerCase()} ${relation ? `${relation} ` : ''}${formatQuantity(f.value, f.unit)} (${f.limitSide} limit ${formatQuantity(f.limit, f.unit)})`;
  const levelLine = handover ? `${f.level.toUpperCase()} (closed at handover)` : f.event === 'cleared' ? `${f.level.toUpperCase()} (now cleared)` : f.level.toUpperCase();
  const rows: [string, string][] = [
    ['Spacecraft', f.spacecraftKey],
    ['Loop', f.loopId === null ? '— (spacecraft body)' : `L${f.loopId}`],
    ['Quantity', `${f.quantityLabel} (${f.quantity})`],
    [handover ? 'Last value' : 'Value', `${formatQuantity(f.value, f.unit)}, ${marginText(f)}`],
    ['Limit', `${formatQuantity(f.limit, f.unit)} (${f.limitSide}), limit set version ${f.limitSetVersion}`],
    ['Level', levelLine],
    ['Time', formatUtc(f.at)],
    ...(handover ? ([['Note', f.closedNote!]] as [string, string][]) : []),
    ['Trip', url],
  ];
  const width = Math.max(...rows.map(([k]) => k.length)) + 2;
  const text = [
    headline(f),
    '',
    ...rows.map(([k, v]) => `${`${k}:`.padEnd(width)}${v}`),
    '',
    handover
      ? 'The limit set that raised this trip was retired, so the trip can no longer clear on its own and was closed; the value was last outside its limit. The new limit set raises its own trip if the condition persists. Review the trip and resolve it in its Casefile.'
      : f.event === 'cleared'
        ? 'The value is back within its limit. Review the trip and resolve it in its Casefile.'
        : 'Open the trip to acknowledge it and see the evidence.',
    '',
    '--',
    CAUTION_LINE,
    '',
  ].join('\n');

  // A handover closes a trip whose condition may still be live: it keeps its level's colour.
  const style = f.event === 'cleared' && !handover ? LEVEL_STYLE.nominal : LEVEL_STYLE[f.level];
  const levelHtml = `<strong style="color:${style.colour}">${style.icon} ${escapeHtml(levelLine)}</strong>`;
  const htmlRows = rows
    .map(([k, v]) => {
      const cell = k === 'Level' ? levelHtml : k === 'Trip' ? `<a href="${escapeHtml(url)}" style="color:${GALLIUM}">${escapeHtml(url)}</a>` : escapeHtml(v);
      return `<tr><th align="left" style="padding:4px 12px 4px 0;color:${MUTED};font-weight:500;vertical-align:top">${escapeHtml(k)}</th><td style="padding:4px 0;font-variant-numeric:tabular-nums">${cell}</td></tr>`;
    })
    .join('\n');
  const html = page(
    escapeHtml(subject),
    `<h1 style="font-size:18px;margin:0 0 12px 0;color:${INK}">${headlineHtml(f)}</h1>
<table role="presentation" cellpadding="0" cellspacing="0" style="border-collapse:collapse;font-size:14px">
${htmlRows}
</table>
<p style="margin:16px 0"><a href="${escapeHtml(url)}" style="color:${GALLIUM};font-weight:600">Open trip ${f.tripId} in Millrace</a></p>`,
  );
  return { subject, text, html };
}

function headlineHtml(f: TripMailFacts): string {
  const style = LEVEL_STYLE[f.level];
  const word = `<span style="color:${style.colour}">${style.icon} ${f.level.toUpperCase()}</span>`;
  const where = escapeHtml(`${f.spacecraftKey}, ${loopText(f.loopId)}`);
  if (f.event === 'opened') return `${word} trip opened on ${where}`;
  if (f.event === 'escalated') return `Trip escalated to ${word} on ${where}`;
  if (f.closedNote) return `${word} trip closed at a limit-set handover on ${where}`;
  return `${word} trip cleared on ${where}`;
}

function page(title: string, body: string): string {
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>${title}</title></head>
<body style="margin:0;padding:24px;background:${PAPER};color:${INK};font-family:'Inter Tight',system-ui,sans-serif">
<div style="max-width:680px;margin:0 auto;background:#FFFFFD;border:1px solid ${RULE};border-radius:6px;padding:20px">
${body}
<p style="margin:20px 0 0 0;padding-top:12px;border-top:1px solid ${RULE};font-size:12px;color:${MUTED}">${escapeHtml(CAUTION_LINE)}</p>
</div>
</body></html>
`;
}

/** The period [start, start + minutes) that contains t, aligned to whole periods since the Unix epoch (UTC). */
export function periodStartOf(t: Date, minutes: number): Date {
  const ms = minutes * 60_000;
  return new Date(Math.floor(t.getTime() / ms) * ms);
}

/** One digest of a spacecraft's caution trips of a period. */
export function renderDigest(input: { spacecraftKey: string; periodStart: Date; periodEnd: Date; entries: DigestEntry[] }, publicUrl: string): RenderedMail {
  const entries = [...input.entries].sort((a, b) => a.at.getTime() - b.at.getTime() || a.tripId - b.tripId);
  const n = entries.length;
  const span = `${formatUtc(input.periodStart).slice(0, 16)}–${formatUtc(input.periodEnd).slice(11, 16)} UTC`;
  const subject = `[Millrace] CAUTION digest · ${input.spacecraftKey} · ${n} trip${n === 1 ? '' : 's'} ${span}`;
  const lines = entries.map((e) => {
    const state = e.clearedAt ? `${e.closedNote ? 'closed at limit handover' : 'cleared'} ${formatUtc(e.clearedAt).slice(11)}` : 'open';
    return [
      `- ${formatUtc(e.at)}  ${e.loopId === null ? 'body' : `L${e.loopId}`}  ${e.quantityLabel}: ${formatQuantity(e.value, e.unit)} (${e.limitSide} limit ${formatQuantity(e.limit, e.unit)}, limit set v${e.limitSetVersion})  CAUTION, ${state}`,
      `  ${tripUrl(publicUrl, e.tripId)}`,
    ].join('\n');
  });
  const text = [
    `CAUTION digest for ${input.spacecraftKey}: ${n} caution trip${n === 1 ? '' : 's'} raised ${span}`,
    '',
    ...lines,
    '',
    'Warnings are mailed at once; cautions are gathered here.',
    '',
    '--',
    CAUTION_LINE,
    '',
  ].join('\n');

  const c = LEVEL_STYLE.caution;
  const th = (s: string, right = false) => `<th align="${right ? 'right' : 'left'}" style="padding:4px 8px;border-bottom:1px solid ${RULE};color:${MUTED};font-size:12px;font-weight:500">${s}</th>`;
  const td = (s: string, right = false, wrap = false) =>
    `<td align="${right ? 'right' : 'left'}" style="padding:4px 8px;border-bottom:1px solid ${RULE};font-variant-numeric:tabular-nums${wrap ? '' : ';white-space:nowrap'}">${s}</td>`;
  const rows = entries
    .map((e) => {
      const url = tripUrl(publicUrl, e.tripId);
      const state = e.clearedAt ? `${e.closedNote ? 'closed at limit handover' : 'cleared'} ${escapeHtml(formatUtc(e.clearedAt).slice(11))}` : 'open';
      return `<tr>${td(escapeHtml(formatUtc(e.at)))}${td(e.loopId === null ? 'body' : `L${e.loopId}`)}${td(escapeHtml(e.quantityLabel), false, true)}${td(escapeHtml(formatQuantity(e.value, e.unit)), true)}${td(escapeHtml(`${formatQuantity(e.limit, e.unit)} ${e.limitSide}`), true)}${td(`<span style="color:${c.colour};font-weight:600">${c.icon} CAUTION</span> ${state}`)}${td(`<a href="${escapeHtml(url)}" style="color:${GALLIUM}">Trip ${e.tripId}</a>`)}</tr>`;
    })
    .join('\n');
  const html = page(
    escapeHtml(subject),
    `<h1 style="font-size:18px;margin:0 0 4px 0"><span style="color:${c.colour}">${c.icon} CAUTION</span> digest for ${escapeHtml(input.spacecraftKey)}</h1>
<p style="margin:0 0 12px 0;color:${MUTED}">${n} caution trip${n === 1 ? '' : 's'} raised ${escapeHtml(span)}</p>
<table cellpadding="0" cellspacing="0" style="border-collapse:collapse;font-size:13px;width:100%">
<thead><tr>${th('Time (UTC)')}${th('Loop')}${th('Quantity')}${th('Value', true)}${th('Limit', true)}${th('Level')}${th('Trip')}</tr></thead>
<tbody>
${rows}
</tbody>
</table>
<p style="margin:12px 0 0 0;font-size:12px;color:${MUTED}">Warnings are mailed at once; cautions are gathered here.</p>`,
  );
  return { subject, text, html };
}
