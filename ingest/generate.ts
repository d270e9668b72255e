/**
 * Generates the packets of one simulated spacecraft into a recorded pass file (the plain packet
 * stream the ingest endpoint and the upload page take), or only times the generation.
 *
 *   npx tsx ingest/generate.ts --sheet ingest/fleet/MR-3.json --scenario ingest/scenarios/healthy.json \
 *     --hours 24 [--start 2026-11-02T00:00:00Z] [--out pass.bin]
 */

import { closeSync, openSync, readFileSync, writeSync } from 'node:fs';
import { parseArgs } from 'node:util';
import { spacecraftSheetSchema, sheetIssuesByPath } from '../src/lib/spacecraft-sheet.schema';
import { generatePackets } from './generator';
import { checkScenarioAgainstSheet, loadScenarioFile } from './scenario.schema';

const USAGE = 'usage: npx tsx ingest/generate.ts --sheet <sheet.json> --scenario <scenario.json> --hours <h> [--start <ISO time>] [--out <file>]';

const OPTIONS = {
  sheet: { type: 'string' },
  scenario: { type: 'string' },
  hours: { type: 'string' },
  start: { type: 'string' },
  out: { type: 'string' },
  help: { type: 'boolean' },
} as const;

function main(): number {
  let values: ReturnType<typeof parseArgs<{ options: typeof OPTIONS; strict: true }>>['values'];
  try {
    values = parseArgs({ options: OPTIONS, strict: true }).values;
  } catch (err) {
    process.stderr.write(`${(err as Error).message}\n${USAGE}\n`);
    return 2;
  }
  if (values.help) {
    process.stdout.write(`${USAGE}\n`);
    return 0;
  }
  const hours = Number(values.hours ?? '24');
  const startMs = values.start ? Date.parse(values.start) : Date.UTC(2026, 10, 2);
  if (!values.sheet || !values.scenario || !(hours > 0) || !Number.isFinite(startMs)) {
    process.stderr.write(`${USAGE}\n`);
    return 2;
  }
  const sheetResult = spacecraftSheetSchema.safeParse(JSON.parse(readFileSync(values.sheet, 'utf8')));
  if (!sheetResult.success) {
    process.stderr.write(`sheet ${values.sheet} is not valid: ${JSON.stringify(sheetIssuesByPath(sheetResult.error))}\n`);
    return 2;
  }
  const sheet = sheetResult.data;
  let scenario;
  try {
    scenario = loadScenarioFile(values.scenario);
    checkScenarioAgainstSheet(scenario, sheet, values.scenario);
  } catch (err) {
    process.stderr.write(`${(err as Error).message}\n`);
    return 2;
  }

  const fd = values.out ? openSync(values.out, 'w') : null;
  const started = performance.now();
  const gen = generatePackets({ sheet, scenario, startMs, durationMs: hours * 3_600_000 });
  let r = gen.next();
  while (!r.done) {
    if (fd !== null) writeSync(fd, r.value);
    r = gen.next();
  }
  if (fd !== null) closeSync(fd);
  const s = (performance.now() - started) / 1000;
  const { packets, bytes, counts } = r.value;
  process.stdout.write(
    `${sheet.spacecraft.key} ${hours} h from ${new Date(startMs).toISOString()}: ${packets} packets, ${(bytes / 1024 / 1024).toFixed(1)} MiB in ${s.toFixed(1)} s ` +
      `(${Math.round(packets / s)} packets/s)${values.out ? ` → ${values.out}` : ''}\n` +
      `  per APID: ${Object.entries(counts).map(([apid, c]) => `${apid}: ${c.written} written, ${c.dropped} dropped, ${c.duplicated} duplicated, ${c.corrupted} corrupted`).join('; ')}\n`,
  );
  return 0;
}

process.exit(main());
