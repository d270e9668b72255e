// What the demo feed flies: a scenario per demo spacecraft, and the first start's playback.

/** Real time: MR-1 loses torque constant minutes after the feed starts; the others stay healthy. */
export const SCENARIOS: Record<string, string> = { 'MR-1': 'ingest/scenarios/demo.json', 'MR-2': 'ingest/scenarios/healthy.json', 'MR-3': 'ingest/scenarios/healthy.json' };

/** Hours played back when the database holds no telemetry yet. */
export const BACKFILL_HOURS = 2;

/** The first start's playback flies MR-1's faults after a healthy hour, so its drift baseline is a healthy one. */
export const BACKFILL_SCENARIOS: Record<string, string> = { ...SCENARIOS, 'MR-1': 'ingest/scenarios/demo-recorded.json' };

/**
 * Where the simulated timeline starts when the feed is asked for a playback (`--playback
 * [--hours h]`, 24 h by default, as the feed itself reads them): `hours` before now, so that the
 * day played back is the day just past; null for a real-time run.
 */
export function playbackTimelineStart(args: readonly string[], nowMs: number): number | null {
  if (!args.includes('--playback')) return null;
  const i = args.indexOf('--hours');
  const hours = i >= 0 ? Number(args[i + 1]) : 24;
  if (!(Number.isFinite(hours) && hours > 0)) return null; // the feed refuses it with its usage
  return Math.floor(nowMs / 1000) * 1000 - Math.round(hours * 3_600_000);
}
