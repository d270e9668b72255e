/**
 * Contact windows of the simulated feed. For now a fixed schedule (every 15 minutes a 10-minute
 * pass, staggered per spacecraft, stations taken in turn); it is the one place to replace with
 * predicted passes from the element sets later.
 */

/** One contact window of a spacecraft with a ground station. */
export interface Pass {
  station: string;
  aosMs: number;
  losMs: number;
}

/** Ground stations of the demo (the keys the seed data registers). */
export const DEFAULT_STATIONS: readonly string[] = ['north-fell', 'ribeira', 'karoo-ridge'];

export interface PassScheduleOptions {
  stations?: readonly string[];
  /** Time from one AOS to the next, ms (default 15 min). */
  periodMs?: number;
  /** Pass length, ms (default 10 min); must be shorter than the period. */
  durationMs?: number;
}

const DEFAULT_PERIOD_MS = 15 * 60_000;
const DEFAULT_DURATION_MS = 10 * 60_000;

/** FNV-1a 32-bit hash of a string (Fowler, Noll & Vo), to stagger spacecraft deterministically. */
function fnv1a(text: string): number {
  let h = 0x811c9dc5;
  for (let i = 0; i < text.length; i++) {
    h ^= text.charCodeAt(i);
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  return h >>> 0;
}

/**
 * Passes of a spacecraft that overlap [fromMs, toMs), in time order: every `periodMs` a pass of
 * `durationMs`, the phase and the first station depending on the spacecraft key, the stations
 * taken in turn. Passes of one spacecraft never overlap.
 */
export function passSchedule(spacecraftKey: string, fromMs: number, toMs: number, opts: PassScheduleOptions = {}): Pass[] {
  const stations = opts.stations && opts.stations.length > 0 ? opts.stations : DEFAULT_STATIONS;
  const period = opts.periodMs ?? DEFAULT_PERIOD_MS;
  const duration = opts.durationMs ?? DEFAULT_DURATION_MS;
  if (!(period > 0) || !(duration > 0) || duration >= period) {
    throw new RangeError(`pass duration ${duration} ms must be positive and shorter than the period ${period} ms`);
  }
  if (!(toMs > fromMs)) return [];
  const hash = fnv1a(spacecraftKey);
  // Stagger by whole minutes so AOS falls on a minute boundary; keys spread over the period.
  const phase = ((hash % Math.floor(period / 60_000)) * 60_000) % period;
  const stationShift = (hash >>> 8) % stations.length;
  const first = Math.floor((fromMs - phase - duration) / period) + 1;
  const out: Pass[] = [];
  for (let n = first; ; n++) {
    const aos = phase + n * period;
    if (aos >= toMs) break;
    const los = aos + duration;
    if (los <= fromMs) continue;
    const idx = (((n + stationShift) % stations.length) + stations.length) % stations.length;
    out.push({ station: stations[idx]!, aosMs: aos, losMs: los });
  }
  return out;
}

/** The pass under way at `ms`, if any. */
export function passAt(spacecraftKey: string, ms: number, opts: PassScheduleOptions = {}): Pass | null {
  return passSchedule(spacecraftKey, ms, ms + 1, opts).find((p) => p.aosMs <= ms && ms < p.losMs) ?? null;
}

/** The last pass that ended at or before `ms`, searching back up to a day. */
export function lastPassBefore(spacecraftKey: string, ms: number, opts: PassScheduleOptions = {}): Pass | null {
  const passes = passSchedule(spacecraftKey, ms - 86_400_000, ms, opts).filter((p) => p.losMs <= ms);
  return passes.at(-1) ?? null;
}
