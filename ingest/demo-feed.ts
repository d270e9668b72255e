// The demo fleet's feed, as `npm start` runs it: fresh ingest tokens for the demo spacecraft (the
// previous demo-feed tokens are revoked), a feed configuration under .data/, then the feed itself
// in real time (after a short playback when the database holds no telemetry yet).
//
// `npm run feed -- --playback --hours 24` passes its arguments on to the feed, for a playback of
// its own: its own tokens (revoked when it ends) and configuration file, so a running demo feed
// keeps its tokens and its timeline; and a timeline that ends two hours before the first telemetry
// already stored of each spacecraft (or now, when there is none), so that two simulated timelines
// never mix in one span.
import fs from 'node:fs';
import path from 'node:path';
import { spawn } from 'node:child_process';
import { db } from '../src/lib/server/db';
import { createIngestToken } from '../src/lib/server/ingest-tokens';
import { findSheetInForce } from '../src/lib/server/spacecraft';
import { config } from '../src/lib/server/config';
import { BACKFILL_HOURS, BACKFILL_SCENARIOS, PLAYBACK_CLEARANCE_MS, SCENARIOS, playbackTimelineStart } from './demo-fleet';
import { writeConfigStations } from './passes';

const argv = process.argv.slice(2);
const playbackRun = argv.includes('--playback');
const LABEL = playbackRun ? 'demo playback' : 'demo feed';
/** How often the ground stations are read again from the database (the feed follows the configuration file within a minute). */
const STATION_REREAD_MS = 10 * 60_000;

const file = path.resolve(playbackRun ? '.data/demo-playback.json' : '.data/demo-feed.json');
// A restart within a few hours resumes the same simulated timeline (the sim regenerates it
// exactly, sequence counts included), so a restart does not look like a spacecraft reboot.
const RESUME_WITHIN_MS = 6 * 3600_000;
// On a database without any telemetry, the feed first plays back the last BACKFILL_HOURS of the
// same timeline (as if the recorder were dumped), so that the Fleet, Trips and a casefile have
// something to show at once instead of waiting for the first pass; real time then carries on.
let startedAtMs = Math.floor(Date.now() / 1000) * 1000;
// a resumed timeline keeps the scenario each spacecraft flew
let previousScenario = new Map<string, string>();
if (!playbackRun) try {
  const previous = JSON.parse(fs.readFileSync(file, 'utf8')) as { spacecraft?: { key?: string; scenario?: string; startedAtMs?: number }[] };
  const was = previous.spacecraft?.[0]?.startedAtMs;
  if (was && Date.now() - was < RESUME_WITHIN_MS) {
    startedAtMs = was;
    previousScenario = new Map((previous.spacecraft ?? []).flatMap((s) => (s.key && s.scenario && fs.existsSync(s.scenario) ? [[s.key, s.scenario] as [string, string]] : [])));
  }
} catch {
  // first start
}
const empty = !(await db.selectFrom('loop_sample').select('spacecraft_id').limit(1).executeTakeFirst());
// with nothing stored there is no earlier timeline to stay consistent with
const backfill = empty && argv.length === 0;
if (backfill) {
  startedAtMs = Math.floor(Date.now() / 1000) * 1000 - BACKFILL_HOURS * 3600_000;
  previousScenario = new Map();
}
/** Time of the first telemetry stored of a spacecraft, ms (Infinity when there is none). */
async function firstStoredMs(spacecraftId: number): Promise<number> {
  const [a, l] = await Promise.all([
    db.selectFrom('attitude_sample').select((eb) => eb.fn.min('t').as('t')).where('spacecraft_id', '=', spacecraftId).executeTakeFirst(),
    db.selectFrom('loop_sample').select((eb) => eb.fn.min('t').as('t')).where('spacecraft_id', '=', spacecraftId).executeTakeFirst(),
  ]);
  const times = [a?.t, l?.t].filter((t): t is Date => t instanceof Date).map((t) => t.getTime());
  return times.length ? Math.min(...times) : Infinity;
}
const scenarioOf = (key: string) => previousScenario.get(key) ?? path.resolve((backfill ? BACKFILL_SCENARIOS : SCENARIOS)[key] ?? 'ingest/scenarios/healthy.json');
const fleet = await db.selectFrom('spacecraft').select(['id', 'key']).orderBy('key').execute();
const spacecraft = [];
for (const sc of fleet) {
  const sheet = await findSheetInForce(db, sc.id, new Date());
  if (!sheet) continue;
  await db.updateTable('ingest_token').set({ revoked_at: new Date() }).where('spacecraft_id', '=', sc.id).where('label', '=', LABEL).where('revoked_at', 'is', null).execute();
  const { token } = await createIngestToken(db, sc.id, LABEL, null);
  // A playback asked for on the command line covers hours that have passed, before what is stored.
  const start = playbackRun ? playbackTimelineStart(argv, Math.min(Date.now(), (await firstStoredMs(sc.id)) - PLAYBACK_CLEARANCE_MS)) : null;
  spacecraft.push({ key: sc.key, token, sheet: sheet.sheet, scenario: scenarioOf(sc.key), startedAtMs: start ?? startedAtMs });
}
// The feed predicts its passes with the same element sets and stations the app stores passes from.
const readStations = () => db.selectFrom('ground_station').select(['key', 'latitude_deg', 'longitude_deg', 'altitude_m', 'elevation_mask_deg']).orderBy('key').execute();
const stations = await readStations();
if (!spacecraft.length) {
  console.error('[feed] no spacecraft with a sheet to simulate');
  await db.destroy();
  process.exit(1);
}
fs.mkdirSync(path.dirname(file), { recursive: true });
fs.writeFileSync(file, JSON.stringify({ baseUrl: config().PUBLIC_URL, spacecraft, ...(stations.length ? { stations } : {}) }, null, 2), { mode: 0o600 });
// Station edits reach the running feed: the stations are read again now and then and, when they
// changed, written into the configuration file, which the feed re-reads (its passes follow).
const reread = setInterval(() => {
  readStations()
    .then((now) => {
      if (writeConfigStations(file, now)) console.log(`[feed] ground stations changed: ${now.map((s) => s.key).join(', ') || 'none'}; the feed's passes follow`);
    })
    .catch((err: Error) => console.error(`[feed] could not re-read the ground stations: ${err.message}`));
}, STATION_REREAD_MS);
let child: ReturnType<typeof spawn> | null = null;
let stopping = false;
for (const sig of ['SIGINT', 'SIGTERM'] as const) process.on(sig, () => { stopping = true; child?.kill(sig); });
const exit = async (code: number) => {
  clearInterval(reread);
  // a playback's tokens served that playback only
  if (playbackRun) await db.updateTable('ingest_token').set({ revoked_at: new Date() }).where('label', '=', LABEL).where('revoked_at', 'is', null).execute().catch(() => undefined);
  await db.destroy().catch(() => undefined);
  process.exit(code);
};
const feed = (args: string[]) =>
  new Promise<number>((resolve) => {
    child = spawn(process.execPath, ['--import', 'tsx', 'ingest/feed.ts', '--config', file, ...args], { stdio: 'inherit' });
    child.on('exit', (code) => resolve(code ?? 0));
  });
if (backfill) {
  console.log(`[feed] no telemetry stored yet: playing back the last ${BACKFILL_HOURS} h first`);
  const code = await feed(['--playback', '--hours', String(BACKFILL_HOURS)]);
  if (code !== 0 || stopping) await exit(code);
}
await exit(await feed(argv));
