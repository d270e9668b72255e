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
  const r = spawnSync('node_modules/.bin/tsx', [BENCHES[name]!], { stdio: 'inherit', env: process.env });
  if (r.status !== 0) failed = true;
}
process.exit(failed ? 1 : 0);
