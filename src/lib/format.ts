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
  return new Date(t).toISOString().slice(0, 19).replace('T', ' ');
}
