/** Display formatting shared by the ingest screens: UTC times, counts, sizes. */

const COUNT = new Intl.NumberFormat('en-US');

/** An ISO instant as "YYYY-MM-DD HH:MM:SS" (UTC; the column says so). */
export function utcText(iso: string | null | undefined): string {
  if (!iso) return '—';
  return iso.slice(0, 19).replace('T', ' ');
}

/** An ISO instant as "HH:MM:SS" (UTC). */
export function utcClock(iso: string | null | undefined): string {
  if (!iso) return '—';
  return iso.slice(11, 19);
}

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
