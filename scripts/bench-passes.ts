// Time pass prediction: 3 days × the demo fleet's element sets × the three demo stations.
// Usage: npx tsx scripts/bench-passes.ts
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { findPasses, parseTle, stationFromDegrees, type Pass } from '../src/lib/orbit';

const fleetDir = join(import.meta.dirname, '..', 'ingest', 'fleet');
const sats = readdirSync(fleetDir)
  .filter((f) => f.endsWith('.json'))
  .sort()
  .map((f) => {
    const sheet = JSON.parse(readFileSync(join(fleetDir, f), 'utf8')) as { spacecraft: { key: string }; orbit: { tle: [string, string] } };
    return { key: sheet.spacecraft.key, sat: parseTle(sheet.orbit.tle[0], sheet.orbit.tle[1]) };
  });
// The demo ground stations as seeded (latitude, longitude, altitude m, mask).
const stations = [
  { key: 'north-fell', station: stationFromDegrees(67.88, 21.07, 380, 5) },
  { key: 'ribeira', station: stationFromDegrees(41.15, -8.61, 90, 10) },
  { key: 'karoo-ridge', station: stationFromDegrees(-31.52, 21.93, 1210, 10) },
];
if (sats.length === 0) throw new Error(`no spacecraft sheets in ${fleetDir}`);

const fromMs = Math.max(...sats.map((s) => s.sat.epochMs));
const toMs = fromMs + 3 * 86_400_000;

function runAll(): Map<string, Pass[]> {
  const out = new Map<string, Pass[]>();
  for (const s of sats) for (const g of stations) out.set(`${s.key} × ${g.key}`, findPasses(s.sat, g.station, fromMs, toMs));
  return out;
}

const c0 = performance.now();
runAll(); // first run, cold: includes the JIT compiling SGP4
const cold = performance.now() - c0;
const rounds = 5;
const times: number[] = [];
let result = new Map<string, Pass[]>();
for (let r = 0; r < rounds; r++) {
  const t0 = performance.now();
  result = runAll();
  times.push(performance.now() - t0);
}
times.sort((a, b) => a - b);
const total = [...result.values()].reduce((n, p) => n + p.length, 0);
console.log(`window ${new Date(fromMs).toISOString()} → ${new Date(toMs).toISOString()} (3 days)`);
for (const [k, p] of result) console.log(`  ${k.padEnd(26)} ${String(p.length).padStart(3)} passes`);
console.log(
  `${sats.length} spacecraft × ${stations.length} stations, ${total} passes: median ${times[Math.floor(rounds / 2)]!.toFixed(1)} ms, ` +
    `best ${times[0]!.toFixed(1)} ms, worst ${times[rounds - 1]!.toFixed(1)} ms; first (cold) run ${cold.toFixed(1)} ms`,
);
