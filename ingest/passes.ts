/**
 * Contact windows of the simulated feed. By default they are the passes SGP4 predicts from the
 * spacecraft's element set over the configured ground stations (the same src/lib/orbit predictions
 * the app stores), turned into a contact plan of one station at a time. An explicit
 * `schedule: 'fixed'` gives the old fixed schedule (every 15 minutes a 10-minute pass, stations
 * taken in turn), for tests that need a pass at a known time.
 */

import { findPasses, parseTle, stationFromDegrees, type GroundStation, type Satellite } from '../src/lib/orbit';

/** One contact window of a spacecraft with a ground station. */
export interface Pass {
  station: string;
  aosMs: number;
  losMs: number;
}

/** A ground station as the feed needs it for predicted passes. */
export interface FeedStation {
  key: string;
  latitude_deg: number;
  longitude_deg: number;
  altitude_m: number;
  elevation_mask_deg: number;
}

/** Ground stations of the fixed schedule by default (keys the seed data registers). */
export const DEFAULT_STATIONS: readonly string[] = ['north-fell', 'ribeira', 'karoo-ridge'];

/** The old fixed schedule. */
export interface FixedScheduleOptions {
  schedule: 'fixed';
  stations?: readonly string[];
  /** Time from one AOS to the next, ms (default 15 min). */
  periodMs?: number;
  /** Pass length, ms (default 10 min); must be shorter than the period. */
  durationMs?: number;
}

/** Passes predicted by SGP4 from an element set over ground stations. */
export interface PredictedScheduleOptions {
  schedule?: 'predicted';
  /** The two lines of the spacecraft's element set (its sheet's orbit.tle). */
  tle: readonly [string, string];
  stations: readonly FeedStation[];
}

export type PassScheduleOptions = FixedScheduleOptions | PredictedScheduleOptions;

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

function fixedSchedule(spacecraftKey: string, fromMs: number, toMs: number, opts: FixedScheduleOptions): Pass[] {
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

/** A handover shorter than this is not worth taking: the earlier station keeps the pass. */
export const MIN_HANDOVER_MS = 60_000;

/**
 * A contact plan from passes over several stations: one station at a time. When passes overlap, the
 * station that acquired first keeps the link to its LOS, and the next station that still sees the
 * spacecraft takes over for the rest of its own pass (if at least MIN_HANDOVER_MS remain).
 */
export function contactPlan(passes: readonly Pass[]): Pass[] {
  const sorted = [...passes].sort((a, b) => a.aosMs - b.aosMs || a.losMs - b.losMs);
  const out: Pass[] = [];
  for (const p of sorted) {
    const last = out.at(-1);
    if (!last || p.aosMs >= last.losMs) out.push({ ...p });
    else if (p.losMs - last.losMs >= MIN_HANDOVER_MS) out.push({ station: p.station, aosMs: last.losMs, losMs: p.losMs });
  }
  return out;
}

/** Scan margin beyond a chunk: longer than any pass of a low Earth orbit, so every kept pass is whole. */
const SCAN_MARGIN_MS = 30 * 60_000;
/** Passes are predicted in chunks of this length, on a fixed grid, and kept. */
const CHUNK_MS = 6 * 3_600_000;
/** Contact plans look this far beyond a window for passes that overlap into it. */
const PLAN_MARGIN_MS = 3_600_000;

/** Contact windows of one spacecraft, with predictions computed once per chunk and kept. */
export interface PassSchedule {
  /** Contact windows overlapping [fromMs, toMs), in time order, never overlapping. */
  between(fromMs: number, toMs: number): Pass[];
  /** The contact under way at `ms`, if any. */
  at(ms: number): Pass | null;
  /** The last contact that ended at or before `ms`, searching back up to a day. */
  lastBefore(ms: number): Pass | null;
}

class PredictedSchedule {
  private readonly sat: Satellite;
  private readonly sites: { key: string; station: GroundStation }[];
  private readonly chunks = new Map<number, Pass[]>();

  constructor(opts: PredictedScheduleOptions) {
    this.sat = parseTle(opts.tle[0], opts.tle[1]);
    this.sites = opts.stations.map((s) => ({ key: s.key, station: stationFromDegrees(s.latitude_deg, s.longitude_deg, s.altitude_m, s.elevation_mask_deg) }));
  }

  /** Whole passes over every station with AOS in chunk n. */
  private chunk(n: number): Pass[] {
    const hit = this.chunks.get(n);
    if (hit) return hit;
    const from = n * CHUNK_MS;
    const to = from + CHUNK_MS;
    const out: Pass[] = [];
    for (const site of this.sites) {
      for (const p of findPasses(this.sat, site.station, from - SCAN_MARGIN_MS, to + SCAN_MARGIN_MS)) {
        if (p.inProgressAtStart || p.inProgressAtEnd || p.aosMs < from || p.aosMs >= to) continue;
        out.push({ station: site.key, aosMs: p.aosMs, losMs: p.losMs });
      }
    }
    if (this.chunks.size >= 32) this.chunks.delete(this.chunks.keys().next().value!);
    this.chunks.set(n, out);
    return out;
  }

  between(fromMs: number, toMs: number): Pass[] {
    if (!(toMs > fromMs)) return [];
    const raw: Pass[] = [];
    const first = Math.floor((fromMs - PLAN_MARGIN_MS) / CHUNK_MS);
    const last = Math.floor((toMs + PLAN_MARGIN_MS) / CHUNK_MS);
    for (let n = first; n <= last; n++) raw.push(...this.chunk(n));
    return contactPlan(raw).filter((p) => p.losMs > fromMs && p.aosMs < toMs);
  }
}

/** The contact schedule of a spacecraft: predicted passes, or the fixed schedule when asked for. */
export function createPassSchedule(spacecraftKey: string, opts: PassScheduleOptions): PassSchedule {
  let between: (fromMs: number, toMs: number) => Pass[];
  if (opts.schedule === 'fixed') {
    between = (f, t) => fixedSchedule(spacecraftKey, f, t, opts);
  } else {
    const predicted = new PredictedSchedule(opts);
    between = (f, t) => predicted.between(f, t);
  }
  return {
    between,
    at: (ms) => between(ms, ms + 1).find((p) => p.aosMs <= ms && ms < p.losMs) ?? null,
    lastBefore: (ms) => between(ms - 86_400_000, ms).filter((p) => p.losMs <= ms).at(-1) ?? null,
  };
}

/** Contact windows of a spacecraft that overlap [fromMs, toMs), in time order; passes never overlap. */
export function passSchedule(spacecraftKey: string, fromMs: number, toMs: number, opts: PassScheduleOptions): Pass[] {
  return createPassSchedule(spacecraftKey, opts).between(fromMs, toMs);
}

/** The pass under way at `ms`, if any. */
export function passAt(spacecraftKey: string, ms: number, opts: PassScheduleOptions): Pass | null {
  return createPassSchedule(spacecraftKey, opts).at(ms);
}

/** The last pass that ended at or before `ms`, searching back up to a day. */
export function lastPassBefore(spacecraftKey: string, ms: number, opts: PassScheduleOptions): Pass | null {
  return createPassSchedule(spacecraftKey, opts).lastBefore(ms);
}
