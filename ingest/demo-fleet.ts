// What the demo feed flies: a scenario per demo spacecraft, and the first start's playback.

/** Real time: MR-1 loses torque constant minutes after the feed starts; the others stay healthy. */
export const SCENARIOS: Record<string, string> = { 'MR-1': 'ingest/scenarios/demo.json', 'MR-2': 'ingest/scenarios/healthy.json', 'MR-3': 'ingest/scenarios/healthy.json' };

/** Hours played back when the database holds no telemetry yet. */
export const BACKFILL_HOURS = 2;

/** The first start's playback flies MR-1's faults after a healthy hour, so its drift baseline is a healthy one. */
export const BACKFILL_SCENARIOS: Record<string, string> = { ...SCENARIOS, 'MR-1': 'ingest/scenarios/demo-recorded.json' };

/**
 * A playback asked for on the command line ends this long before the first telemetry stored of a
 * spacecraft: longer than any APID's sequence-gap link window, so that the jump in sequence counts
 * between the two simulated timelines is not read as lost packets.
 */
export const PLAYBACK_CLEARANCE_MS = 2 * 3_600_000;

/**
 * Where the simulated timeline starts when the feed is asked for a playback (`--playback
 * [--hours h]`, 24 h by default, as the feed itself reads them): `hours` before `endMs`, so that
 * the hours played back have passed; null for a real-time run.
 */
export function playbackTimelineStart(args: readonly string[], endMs: number): number | null {
  if (!args.includes('--playback')) return null;
  const i = args.indexOf('--hours');
  const hours = i >= 0 ? Number(args[i + 1]) : 24;
  if (!(Number.isFinite(hours) && hours > 0)) return null; // the feed refuses it with its usage
  return Math.floor(endMs / 1000) * 1000 - Math.round(hours * 3_600_000);
}
