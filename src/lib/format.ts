/** Display formatting shared by every screen: readouts, UTC times, counts, sizes. */

/** A number with sensible significant figures for a readout. */
export function formatValue(v: number | null | undefined, digits = 4): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '—';
  const a = Math.abs(v);
  if (a !== 0 && (a < 1e-3 || a >= 1e6)) return v.toExponential(Math.max(0, digits - 1));
  return Number(v.toPrecision(digits)).toString();
}

/** A UTC timestamp as "YYYY-MM-DD HH:MM:SS". */
export function formatUtc(t: string | number | Date | null | undefined): string {
  if (t === null || t === undefined) return '—';
  const d = new Date(t);
  if (Number.isNaN(d.getTime())) return String(t);
  return d.toISOString().slice(0, 19).replace('T', ' ');
}

/** An ISO instant (or null) as "YYYY-MM-DD HH:MM:SS" UTC, the column saying so. */
export const utcText = (iso: string | null | undefined): string => formatUtc(iso);

/** An ISO instant as "HH:MM:SS" (UTC). */
export function utcClock(iso: string | null | undefined): string {
  return iso ? formatUtc(iso).slice(11) : '—';
}

const COUNT = new Intl.NumberFormat('en-US');

/** A whole count with thousands separators. */
export function countText(n: number): string {
  return COUNT.format(n);
}

/** A byte size in B, KiB or MiB, with its unit apart so it can be styled lighter. */
export function sizeParts(bytes: number): [string, string] {
  if (bytes < 1024) return [String(bytes), 'B'];
  if (bytes < 1024 * 1024) return [(bytes / 1024).toFixed(1), 'KiB'];
  return [(bytes / 1048576).toFixed(1), 'MiB'];
}

/** Names of the contract's APIDs. */
export const APID_NAMES: Record<number, string> = { 16: 'attitude', 32: 'loop', 48: 'burst', 64: 'event' };
