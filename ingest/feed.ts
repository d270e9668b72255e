/**
 * The simulated spacecraft feed process.
 *
 *   npx tsx ingest/feed.ts --config feed.json                 real time (default)
 *   npx tsx ingest/feed.ts --config feed.json --playback --hours 24 [--station north-fell]
 *
 * Real time: each spacecraft is simulated in step with the wall clock. Its passes are predicted by
 * SGP4 from the sheet's element set over the configured stations (or follow the fixed schedule with
 * `"schedule": "fixed"`). During a pass its packets go to `${baseUrl}/api/ingest?station=<key>` every second; between passes they are kept on board
 * and dumped (playback) at the next AOS, in requests of at most 8 MiB, before real time resumes.
 * Playback: a whole span is generated and posted as fast as the server takes it, then the process
 * prints its throughput and exits. Network and server errors are retried with backoff; SIGINT and
 * SIGTERM stop cleanly.
 */

import { parseArgs } from 'node:util';
import { generatePackets, PacketStream } from './generator';
import { loadFeedConfig } from './feed-config.schema';
import type { FeedConfig } from './feed-config.schema';
import { DEFAULT_STATIONS, STATION_FILE_CHECK_MS, createPassSchedule, fileStationReader } from './passes';
import type { Pass, PassSchedule } from './passes';
import { Backoff, MAX_REQUEST_BYTES, countPackets, formatOutcome, postPackets, takeBatch } from './uplink';

const USAGE = `usage: npx tsx ingest/feed.ts --config <file.json> [--playback --hours <h>] [--station <key>]

  --config <file>   feed configuration (baseUrl, spacecraft with key, token, sheet, scenario;
                    stations with positions for predicted passes, or "schedule": "fixed")
  --playback        generate --hours of telemetry per spacecraft, post it as fast as the
                    server takes it (8 MiB requests), print packets/s and exit
  --hours <h>       span of a playback, hours (default 24)
  --station <key>   ground station of a playback (default the first configured station)`;

/** Data kept on board between passes, oldest first. */
const ONBOARD_CAPACITY_BYTES = 256 * 1024 * 1024;
/** Real-time data older than this when sent is labelled playback in the log. */
const PLAYBACK_AGE_MS = 5_000;

type Config = FeedConfig['spacecraft'][number];

function log(line: string): void {
  process.stdout.write(`${line}\n`);
}

function sleep(ms: number, signal: AbortSignal): Promise<void> {
  return new Promise((resolve) => {
    if (signal.aborted) return resolve();
    const timer = setTimeout(done, Math.max(0, ms));
    function done(): void {
      clearTimeout(timer);
      signal.removeEventListener('abort', done);
      resolve();
    }
    signal.addEventListener('abort', done, { once: true });
  });
}

function mib(bytes: number): string {
  return `${(bytes / 1024 / 1024).toFixed(2)} MiB`;
}

/** On-board packet store: chunks of whole packets with the simulation time they were made by. */
class OnboardStore {
  private readonly chunks: Uint8Array[] = [];
  private readonly madeBy: number[] = [];
  private total = 0;

  get bytes(): number {
    return this.total;
  }

  push(chunk: Uint8Array, untilMs: number): void {
    if (chunk.length === 0) return;
    this.chunks.push(chunk);
    this.madeBy.push(untilMs);
    this.total += chunk.length;
  }

  /** Drops the oldest chunks beyond the capacity; returns the octets dropped. */
  enforceCapacity(capacity: number): number {
    let dropped = 0;
    while (this.total > capacity && this.chunks.length > 0) {
      const c = this.chunks.shift()!;
      this.madeBy.shift();
      this.total -= c.length;
      dropped += c.length;
    }
    return dropped;
  }

  clear(): void {
    this.chunks.length = 0;
    this.madeBy.length = 0;
    this.total = 0;
  }

  /** Takes at most maxBytes from the head; `oldestMs` is when its first chunk was completed. */
  take(maxBytes: number): { body: Uint8Array; oldestMs: number; newestMs: number } | null {
    if (this.chunks.length === 0) return null;
    const oldestMs = this.madeBy[0]!;
    const before = this.chunks.length;
    const body = takeBatch(this.chunks, maxBytes)!;
    const taken = before - this.chunks.length;
    const newestMs = this.madeBy[taken - 1]!;
    this.madeBy.splice(0, taken);
    this.total -= body.length;
    return { body, oldestMs, newestMs };
  }

  /** Puts a batch back at the head (a failed send). */
  unshift(body: Uint8Array, madeBy: number): void {
    this.chunks.unshift(body);
    this.madeBy.unshift(madeBy);
    this.total += body.length;
  }
}

/** One spacecraft in real time. */
class RealTimeFeed {
  private readonly sc: Config;
  private readonly baseUrl: string;
  private readonly schedule: PassSchedule;
  private readonly stream: PacketStream;
  private readonly store = new OnboardStore();
  private readonly backoff = new Backoff();
  private readonly signal: AbortSignal;
  private pass: Pass | null = null;
  private nextAttemptMs = 0;
  private realtimePosts = 0;

  constructor(sc: Config, baseUrl: string, schedule: PassSchedule, signal: AbortSignal, nowMs: number) {
    this.sc = sc;
    this.baseUrl = baseUrl;
    this.schedule = schedule;
    this.signal = signal;
    const startMs = sc.startedAtMs ?? Math.floor(nowMs / 1000) * 1000;
    this.stream = new PacketStream({ sheet: sc.sheet, scenario: sc.scenario, startMs });
    if (startMs < nowMs - 1000) this.catchUp(nowMs);
  }

  /** Simulates from the scenario start to now; data sent in passes that are already over is not kept. */
  private catchUp(nowMs: number): void {
    const last = this.schedule.lastBefore(nowMs);
    const keepFrom = last?.losMs ?? -Infinity;
    log(`${new Date(nowMs).toISOString()} ${this.sc.key} catching up ${((nowMs - this.stream.timeMs) / 3_600_000).toFixed(2)} h of simulation from ${new Date(this.stream.timeMs).toISOString()}`);
    while (this.stream.timeMs + 60_000 < nowMs && !this.signal.aborted) {
      this.stream.advanceTo(this.stream.timeMs + 60_000);
      const chunks = this.stream.flush();
      if (this.stream.timeMs <= keepFrom) continue;
      for (const c of chunks) this.store.push(c, this.stream.timeMs);
      this.store.enforceCapacity(ONBOARD_CAPACITY_BYTES);
    }
  }

  private advance(nowMs: number): void {
    this.stream.advanceTo(nowMs);
    for (const c of this.stream.flush()) this.store.push(c, this.stream.timeMs);
    const dropped = this.store.enforceCapacity(ONBOARD_CAPACITY_BYTES);
    if (dropped > 0) log(`${new Date(nowMs).toISOString()} ${this.sc.key} on-board store full: oldest ${mib(dropped)} overwritten`);
  }

  private watchPass(nowMs: number): void {
    const pass = this.schedule.at(nowMs);
    const was = this.pass;
    if (was && (!pass || pass.aosMs !== was.aosMs)) {
      log(`${new Date(nowMs).toISOString()} ${this.sc.key} LOS ${was.station}, ${mib(this.store.bytes)} left on board`);
    }
    if (pass && (!was || pass.aosMs !== was.aosMs)) {
      log(`${new Date(nowMs).toISOString()} ${this.sc.key} AOS ${pass.station} until ${new Date(pass.losMs).toISOString()}, ${mib(this.store.bytes)} stored on board to dump`);
      this.backoff.reset();
      this.nextAttemptMs = 0;
    }
    this.pass = pass;
  }

  /** Runs until the signal aborts. */
  async run(): Promise<void> {
    while (!this.signal.aborted) {
      const now = Date.now();
      try {
        this.advance(now);
        this.watchPass(now);
        await this.sendWhileInPass();
      } catch (err) {
        log(`${new Date().toISOString()} ${this.sc.key} error: ${(err as Error).stack ?? String(err)}`);
      }
      const nextSecond = Math.floor(Date.now() / 1000) * 1000 + 1000;
      await sleep(nextSecond - Date.now(), this.signal);
    }
  }

  private async sendWhileInPass(): Promise<void> {
    while (this.pass && !this.signal.aborted && Date.now() >= this.nextAttemptMs && Date.now() < this.pass.losMs) {
      const batch = this.store.take(MAX_REQUEST_BYTES);
      if (!batch) return;
      const station = this.pass.station;
      const outcome = await postPackets({ baseUrl: this.baseUrl, token: this.sc.token, station, body: batch.body, signal: this.signal });
      const what = batch.oldestMs < Date.now() - PLAYBACK_AGE_MS ? 'playback' : 'real time';
      // Real time posts once a second: log a line a minute of them, and every playback and failure.
      if (what === 'playback' || outcome.kind !== 'stored' || ++this.realtimePosts % 60 === 1) log(formatOutcome(new Date(), this.sc.key, station, what, batch.body.length, countPackets(batch.body), outcome));
      if (outcome.kind === 'retry') {
        if (!this.signal.aborted) this.store.unshift(batch.body, batch.newestMs);
        this.nextAttemptMs = Date.now() + this.backoff.next();
        return;
      }
      this.backoff.reset();
    }
  }
}

/** Each spacecraft's contact schedule: predicted from its sheet's element set (over the stations the configuration file lists, re-read when it changes), or the fixed one. */
function schedulesOf(cfg: FeedConfig, configFile: string): Map<string, PassSchedule> {
  const out = new Map<string, PassSchedule>();
  const read = fileStationReader(configFile, (f) => loadFeedConfig(f).stationSites);
  for (const sc of cfg.spacecraft) {
    const schedule =
      cfg.schedule === 'fixed'
        ? createPassSchedule(sc.key, { schedule: 'fixed', stations: cfg.stations ?? DEFAULT_STATIONS })
        : createPassSchedule(sc.key, { schedule: 'predicted', tle: sc.sheet.orbit.tle, stations: cfg.stationSites, reloadStations: { read, everyMs: STATION_FILE_CHECK_MS } });
    out.set(sc.key, schedule);
  }
  return out;
}

async function runRealTime(cfg: FeedConfig, schedules: Map<string, PassSchedule>, signal: AbortSignal): Promise<void> {
  const now = Date.now();
  const feeds = cfg.spacecraft.map((sc) => new RealTimeFeed(sc, cfg.baseUrl, schedules.get(sc.key)!, signal, now));
  const how = cfg.schedule === 'fixed' ? 'the fixed pass schedule' : `passes predicted over ${cfg.stationSites.map((s) => s.key).join(', ')}`;
  log(`${new Date().toISOString()} feed running in real time for ${cfg.spacecraft.map((s) => s.key).join(', ')} → ${cfg.baseUrl}, ${how}`);
  await Promise.all(feeds.map((f) => f.run()));
}

interface PlaybackTotals {
  packets: number;
  bytes: number;
  requests: number;
  refused: number;
}

async function sendUntilDone(
  sc: Config,
  baseUrl: string,
  station: string,
  body: Uint8Array,
  signal: AbortSignal,
  totals: PlaybackTotals,
): Promise<void> {
  const backoff = new Backoff();
  const packets = countPackets(body);
  while (!signal.aborted) {
    const outcome = await postPackets({ baseUrl, token: sc.token, station, body, signal });
    log(formatOutcome(new Date(), sc.key, station, 'playback', body.length, packets, outcome));
    totals.requests++;
    if (outcome.kind === 'stored') {
      totals.packets += packets;
      totals.bytes += body.length;
      return;
    }
    if (outcome.kind === 'refused') {
      totals.refused++;
      return;
    }
    await sleep(backoff.next(), signal);
  }
}

async function playbackOne(sc: Config, cfg: FeedConfig, hours: number, station: string, signal: AbortSignal, totals: PlaybackTotals): Promise<void> {
  const durationMs = Math.round(hours * 3_600_000);
  const startMs = sc.startedAtMs ?? Math.floor((Date.now() - durationMs) / 1000) * 1000;
  log(`${new Date().toISOString()} ${sc.key} playback of ${hours} h from ${new Date(startMs).toISOString()} via ${station}`);
  const pending: Uint8Array[] = [];
  let pendingBytes = 0;
  let inFlight: Promise<void> | null = null;
  const gen = generatePackets({ sheet: sc.sheet, scenario: sc.scenario, startMs, durationMs });
  for (let r = gen.next(); !r.done; r = gen.next()) {
    if (signal.aborted) return;
    const chunk = r.value;
    if (pendingBytes + chunk.length > MAX_REQUEST_BYTES) {
      if (inFlight) await inFlight;
      const body = takeBatch(pending, MAX_REQUEST_BYTES)!;
      pendingBytes -= body.length;
      inFlight = sendUntilDone(sc, cfg.baseUrl, station, body, signal, totals);
    }
    pending.push(chunk);
    pendingBytes += chunk.length;
    // Let the request in flight make progress while the next chunk is generated.
    await new Promise<void>((resolve) => setImmediate(resolve));
  }
  if (inFlight) await inFlight;
  while (pending.length > 0 && !signal.aborted) {
    const body = takeBatch(pending, MAX_REQUEST_BYTES)!;
    await sendUntilDone(sc, cfg.baseUrl, station, body, signal, totals);
  }
}

async function runPlayback(cfg: FeedConfig, hours: number, stationArg: string | undefined, signal: AbortSignal): Promise<void> {
  const station = stationArg ?? cfg.stations?.[0] ?? DEFAULT_STATIONS[0]!;
  const totals: PlaybackTotals = { packets: 0, bytes: 0, requests: 0, refused: 0 };
  const started = performance.now();
  await Promise.all(cfg.spacecraft.map((sc) => playbackOne(sc, cfg, hours, station, signal, totals)));
  const s = (performance.now() - started) / 1000;
  log(
    `playback ${signal.aborted ? 'stopped' : 'done'}: ${totals.packets} packets stored (${mib(totals.bytes)}) in ${totals.requests} requests` +
      `${totals.refused > 0 ? `, ${totals.refused} refused` : ''}, ${s.toFixed(1)} s, ${Math.round(totals.packets / s)} packets/s, ${(totals.bytes / 1024 / 1024 / s).toFixed(2)} MiB/s`,
  );
}

const OPTIONS = {
  config: { type: 'string' },
  playback: { type: 'boolean' },
  hours: { type: 'string' },
  station: { type: 'string' },
  help: { type: 'boolean' },
} as const;

async function main(): Promise<number> {
  let args: ReturnType<typeof parseArgs<{ options: typeof OPTIONS; strict: true }>>;
  try {
    args = parseArgs({ options: OPTIONS, strict: true });
  } catch (err) {
    process.stderr.write(`${(err as Error).message}\n${USAGE}\n`);
    return 2;
  }
  if (args.values.help) {
    log(USAGE);
    return 0;
  }
  if (!args.values.config) {
    process.stderr.write(`--config is required\n${USAGE}\n`);
    return 2;
  }
  const hours = args.values.hours === undefined ? 24 : Number(args.values.hours);
  if (!(hours > 0) || !Number.isFinite(hours)) {
    process.stderr.write(`--hours must be a positive number (got ${args.values.hours})\n`);
    return 2;
  }
  let cfg: FeedConfig;
  try {
    cfg = loadFeedConfig(args.values.config);
  } catch (err) {
    process.stderr.write(`${(err as Error).message}\n`);
    return 2;
  }

  let schedules = new Map<string, PassSchedule>();
  if (!args.values.playback) {
    if (cfg.schedule === 'predicted' && cfg.stationSites.length === 0) {
      process.stderr.write('real time with predicted passes needs ground stations with positions in the configuration ("stations"), or "schedule": "fixed"\n');
      return 2;
    }
    try {
      schedules = schedulesOf(cfg, args.values.config);
    } catch (err) {
      process.stderr.write(`cannot predict passes: ${(err as Error).message}\n`);
      return 2;
    }
  }

  const stop = new AbortController();
  const onSignal = (name: string) => {
    if (stop.signal.aborted) process.exit(130);
    log(`${new Date().toISOString()} ${name}: stopping`);
    stop.abort();
  };
  process.on('SIGINT', () => onSignal('SIGINT'));
  process.on('SIGTERM', () => onSignal('SIGTERM'));
  process.on('unhandledRejection', (err) => log(`${new Date().toISOString()} unhandled rejection: ${String(err)}`));

  if (args.values.playback) await runPlayback(cfg, hours, args.values.station, stop.signal);
  else await runRealTime(cfg, schedules, stop.signal);
  return 0;
}

main().then(
  (code) => process.exit(code),
  (err: unknown) => {
    process.stderr.write(`${(err as Error).stack ?? String(err)}\n`);
    process.exit(1);
  },
);
