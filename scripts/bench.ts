// All benchmarks, or the ones named: `npm run bench [-- ingest analysis passes]`.
import { spawnSync } from 'node:child_process';

const BENCHES: Record<string, string> = {
  ingest: 'scripts/bench-ingest.ts',
  analysis: 'scripts/bench-analysis.ts',
  passes: 'scripts/bench-passes.ts',
  live: 'scripts/bench-live.ts',
  backtest: 'scripts/bench-backtest.ts',
};
const wanted = process.argv.slice(2).filter((a) => a in BENCHES);
let failed = false;
for (const name of wanted.length ? wanted : Object.keys(BENCHES)) {
  console.log(`\n== bench:${name} ==`);
  // the analysis target is for one core: pinned to CPU 0 where taskset exists, so the collector's helper
  // threads share that core and wall time is the single-core time
  const pin = name === 'analysis' && spawnSync('taskset', ['-c', '0', 'true']).status === 0;
  const r = pin
    ? spawnSync('taskset', ['-c', '0', 'node_modules/.bin/tsx', BENCHES[name]!], { stdio: 'inherit', env: process.env })
    : spawnSync('node_modules/.bin/tsx', [BENCHES[name]!], { stdio: 'inherit', env: process.env });
  if (r.status !== 0) failed = true;
}
process.exit(failed ? 1 : 0);
