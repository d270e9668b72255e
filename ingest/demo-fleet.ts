// What the demo feed flies: a scenario per demo spacecraft, and the first start's playback.

/** Real time: MR-1 loses torque constant minutes after the feed starts; the others stay healthy. */
export const SCENARIOS: Record<string, string> = { 'MR-1': 'ingest/scenarios/demo.json', 'MR-2': 'ingest/scenarios/healthy.json', 'MR-3': 'ingest/scenarios/healthy.json' };

/** Hours played back when the database holds no telemetry yet. */
export const BACKFILL_HOURS = 2;

/** The first start's playback flies MR-1's faults after a healthy hour, so its drift baseline is a healthy one. */
export const BACKFILL_SCENARIOS: Record<string, string> = { ...SCENARIOS, 'MR-1': 'ingest/scenarios/demo-recorded.json' };
