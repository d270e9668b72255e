/**
 * Contact windows of the simulated feed. By default they are the passes SGP4 predicts from the
 * spacecraft's element set over the configured ground stations (the same src/lib/orbit predictions
 * the app stores), turned into a contact plan of one station at a time. An explicit
 * `schedule: 'fixed'` gives the old fixed schedule (every 15 minutes a 10-minute pass, stations
 * taken in turn), for tests that need a pass at a known time.
 */

import fs from 'node:fs';
import path from 'node:path';
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
  /**
   * Re-read the stations now and then, so that a station added, moved or removed reaches a running
   * feed: `read` is called at most once per `everyMs` (on the schedule's own clock, `now`, default
   * Date.now); when it gives a different list the predictions are made again over it. A read that
   * fails or gives null keeps the stations in use.
   */
  reloadStations?: { read: () => readonly FeedStation[] | null; everyMs: number; now?: () => number };
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
  private sites: { key: string; station: GroundStation }[] = [];
  private readonly chunks = new Map<number, Pass[]>();
  private stationsKey = '';
  private readonly reload: PredictedScheduleOptions['reloadStations'];
  private lastReadMs: number;

  constructor(opts: PredictedScheduleOptions) {
    this.sat = parseTle(opts.tle[0], opts.tle[1]);
    this.useStations(opts.stations);
    this.reload = opts.reloadStations;
    this.lastReadMs = this.reload ? (this.reload.now ?? Date.now)() : 0;
  }

  /** Predict over these stations from now on (predictions already made are dropped when the list changed). */
  private useStations(stations: readonly FeedStation[]): void {
    const key = stationsKey(stations);
    if (key === this.stationsKey) return;
    this.stationsKey = key;
    this.sites = stations.map((s) => ({ key: s.key, station: stationFromDegrees(s.latitude_deg, s.longitude_deg, s.altitude_m, s.elevation_mask_deg) }));
    this.chunks.clear();
  }

  private maybeReload(): void {
    if (!this.reload) return;
    const now = (this.reload.now ?? Date.now)();
    if (now - this.lastReadMs < this.reload.everyMs) return;
    this.lastReadMs = now;
    let stations: readonly FeedStation[] | null;
    try {
      stations = this.reload.read();
    } catch (err) {
      process.stderr.write(`[feed] re-reading the ground stations failed, keeping those in use: ${(err as Error).message}\n`);
      return;
    }
    if (!stations) return;
    const before = this.stationsKey;
    this.useStations(stations);
    if (this.stationsKey !== before) process.stdout.write(`${new Date(now).toISOString()} ground stations re-read: passes now predicted over ${stations.map((s) => s.key).join(', ') || 'no station'}\n`);
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
    this.maybeReload();
    if (!(toMs > fromMs)) return [];
    const raw: Pass[] = [];
    const first = Math.floor((fromMs - PLAN_MARGIN_MS) / CHUNK_MS);
    const last = Math.floor((toMs + PLAN_MARGIN_MS) / CHUNK_MS);
    for (let n = first; n <= last; n++) raw.push(...this.chunk(n));
    return contactPlan(raw).filter((p) => p.losMs > fromMs && p.aosMs < toMs);
  }
}

/** Stations in a canonical form (sorted by key), to tell whether a re-read list differs. */
function stationsKey(stations: readonly FeedStation[]): string {
  return JSON.stringify(
    [...stations].sort((a, b) => (a.key < b.key ? -1 : a.key > b.key ? 1 : 0)).map((s) => [s.key, s.latitude_deg, s.longitude_deg, s.altitude_m, s.elevation_mask_deg]),
  );
}

/** How often a running feed looks at its configuration file for changed stations. */
export const STATION_FILE_CHECK_MS = 60_000;

/**
 * A reader of a configuration file's stations for `reloadStations`: the file is parsed again (by
 * `parse`) only when its modification time or size changed; otherwise the last list is given.
 */
export function fileStationReader(file: string, parse: (file: string) => readonly FeedStation[]): () => readonly FeedStation[] | null {
  let seen = '';
  let last: readonly FeedStation[] | null = null;
  return () => {
    const st = fs.statSync(file);
    const mark = `${st.mtimeMs}:${st.size}`;
    if (mark !== seen) {
      last = parse(file);
      seen = mark;
    }
    return last;
  };
}

/**
 * Put a new station list into a feed configuration file (written whole to a temporary file and
 * renamed over it, so a reader never sees half a file); returns false, writing nothing, when the
 * file already lists the same stations. No stations: the key is left out, as on a first write.
 */
export function writeConfigStations(file: string, stations: readonly FeedStation[]): boolean {
  const json = JSON.parse(fs.readFileSync(file, 'utf8')) as { stations?: (FeedStation | string)[] };
  const listed = json.stations ?? [];
  const current = listed.filter((s): s is FeedStation => typeof s === 'object');
  if (current.length === listed.length && stationsKey(current) === stationsKey(stations)) return false;
  const next = {
    ...json,
    stations: stations.length
      ? stations.map((s) => ({ key: s.key, latitude_deg: s.latitude_deg, longitude_deg: s.longitude_deg, altitude_m: s.altitude_m, elevation_mask_deg: s.elevation_mask_deg }))
      : undefined,
  };
  const tmp = path.join(path.dirname(file), `.${path.basename(file)}.${process.pid}.tmp`);
  fs.writeFileSync(tmp, JSON.stringify(next, null, 2), { mode: 0o600 });
  fs.renameSync(tmp, file);
  return true;
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
