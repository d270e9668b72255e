// Ingest benchmark: 24 h of one three-loop spacecraft posted through HTTP in 8 MiB requests,
// against COPY of the same decoded rows straight into the same tables.
// Run with `npm run bench:ingest` (the launcher provides PostgreSQL and DATABASE_URL).
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { spawn } from 'node:child_process';
import { pipeline } from 'node:stream/promises';
import { Readable } from 'node:stream';
import { sql } from 'kysely';
import copyStreams from 'pg-copy-streams';
import { createDb, createPool } from '../src/lib/server/db';
import { migrateToLatest } from '../src/lib/server/db/migrate';
import { seedDemo, truncateAll } from '../src/lib/server/seed';
import { createIngestToken } from '../src/lib/server/ingest-tokens';
import { PacketBatch, PACKET_TABLES, copyColumns, ensureDayPartitions } from '../src/lib/server/telemetry-store';
import { decodeBuffer } from '../src/lib/telemetry';
import { generatePackets } from '../ingest/generator';
import { parseScenario } from '../ingest/scenario.schema';
import { countPackets } from '../ingest/uplink';
import { spacecraftSheetSchema } from '../src/lib/spacecraft-sheet.schema';

const HOURS = Number(process.env.BENCH_HOURS ?? 24);
const CONCURRENCY = Number(process.env.BENCH_CONCURRENCY ?? 2);
const PORT = 4477;
const REQUEST_BYTES = 8 * 1024 * 1024;

const baseUrl = process.env.DATABASE_URL!;
const benchUrl = new URL(baseUrl);
benchUrl.pathname = '/millrace_bench';
{
  const admin = createPool(baseUrl, 1);
  await admin.query('DROP DATABASE IF EXISTS millrace_bench WITH (FORCE)');
  await admin.query('CREATE DATABASE millrace_bench');
  await admin.end();
}
const pool = createPool(benchUrl.toString(), Math.max(4, CONCURRENCY));
const db = createDb(pool);
await migrateToLatest(db);
await truncateAll(db);
await seedDemo(db, 'bench-only-password');
const sc = await db.selectFrom('spacecraft').select(['id', 'key']).where('key', '=', 'MR-3').executeTakeFirstOrThrow();
const { token } = await createIngestToken(db, sc.id, 'bench', null);

const sheet = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync('ingest/fleet/MR-3.json', 'utf8')));
const scenario = parseScenario(JSON.parse(fs.readFileSync('ingest/scenarios/healthy.json', 'utf8')));
const startMs = Date.UTC(2026, 10, 2, 0);
let t = performance.now();
const chunks: Uint8Array[] = [];
let totalBytes = 0;
for (const c of generatePackets({ sheet, scenario, startMs, durationMs: HOURS * 3600_000, chunkBytes: REQUEST_BYTES })) {
  chunks.push(c.slice());
  totalBytes += c.byteLength;
}
const genS = (performance.now() - t) / 1000;
console.log(`[bench:ingest] generated ${HOURS} h of ${sc.key}: ${(totalBytes / 1e6).toFixed(1)} MB in ${chunks.length} requests (${genS.toFixed(1)} s, not counted)`);

if (!fs.existsSync('dist/server/entry.mjs')) throw new Error('build the app first (npm run build)');
const server = spawn(process.execPath, ['dist/server/entry.mjs'], {
  env: { ...process.env, DATABASE_URL: benchUrl.toString(), HOST: '127.0.0.1', PORT: String(PORT) },
  stdio: ['ignore', 'ignore', 'inherit'],
});
for (let i = 0; i < 200; i++) {
  try {
    await fetch(`http://127.0.0.1:${PORT}/sign-in`);
    break;
  } catch {
    await new Promise((r) => setTimeout(r, 100));
  }
}
let peakRss = 0;
const statusField = (field: 'VmRSS' | 'VmHWM') => {
  try {
    const status = fs.readFileSync(`/proc/${server.pid}/status`, 'utf8');
    return Number(new RegExp(`${field}:\\s+(\\d+)`).exec(status)?.[1] ?? 0) * 1024;
  } catch {
    return 0;
  }
};
const rssOf = () => statusField('VmRSS');
/** The kernel's own peak of the server's RSS since start or since resetPeak (sampling can miss a spike). */
const kernelPeak = () => statusField('VmHWM');
const resetPeak = () => {
  try {
    fs.writeFileSync(`/proc/${server.pid}/clear_refs`, '5'); // resets VmHWM to the current RSS
    return true;
  } catch {
    return false;
  }
};
const sampler = setInterval(() => (peakRss = Math.max(peakRss, rssOf())), 50);

let accepted = 0;
let duplicates = 0;
let rejected = 0;
let next = 0;
t = performance.now();
async function worker() {
  while (next < chunks.length) {
    const body = chunks[next++]!;
    const res = await fetch(`http://127.0.0.1:${PORT}/api/ingest`, {
      method: 'POST',
      headers: { authorization: `Bearer ${token}`, 'content-type': 'application/octet-stream' },
      body: Buffer.from(body),
    });
    const r = (await res.json()) as { accepted: number; duplicates: number; rejected: unknown[] };
    if (res.status !== 200) throw new Error(`ingest answered ${res.status}: ${JSON.stringify(r)}`);
    accepted += r.accepted;
    duplicates += r.duplicates;
    rejected += r.rejected.length;
  }
}
await Promise.all(Array.from({ length: CONCURRENCY }, worker));
const httpS = (performance.now() - t) / 1000;
clearInterval(sampler);
peakRss = Math.max(peakRss, rssOf(), kernelPeak());
const generated = chunks.reduce((n, c) => n + countPackets(c), 0);
if (accepted !== generated || duplicates !== 0 || rejected !== 0) {
  throw new Error(`ingest lost or refused packets: generated ${generated}, accepted ${accepted}, duplicates ${duplicates}, rejected ${rejected}`);
}

// A recorded pass file of UPLOAD_MB through the streaming upload: the server's memory stays flat.
const UPLOAD_MB = Number(process.env.BENCH_UPLOAD_MB ?? 500);
const passFile = path.join(os.tmpdir(), `millrace-bench-pass-${process.pid}.bin`);
let uploadGenerated = 0;
{
  const out = fs.createWriteStream(passFile);
  let written = 0;
  let hourStart = startMs + HOURS * 3600_000;
  while (written < UPLOAD_MB * 1e6) {
    for (const c of generatePackets({ sheet, scenario, startMs: hourStart, durationMs: 3600_000 })) {
      if (!out.write(c.slice())) await new Promise<void>((r) => out.once('drain', () => r()));
      written += c.byteLength;
      uploadGenerated += countPackets(c);
    }
    hourStart += 3600_000;
  }
  await new Promise<void>((r) => out.end(() => r()));
}
const admin1 = await fetch(`http://127.0.0.1:${PORT}/api/auth/sign-in`, {
  method: 'POST',
  headers: { 'content-type': 'application/json' },
  body: JSON.stringify({ email: 'operator@millrace.test', password: 'bench-only-password' }),
});
const cookie = admin1.headers.getSetCookie().map((c) => c.split(';')[0]).join('; ');
const boundary = `millrace-bench-${Date.now()}`;
async function* multipart() {
  yield Buffer.from(`--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="pass.bin"\r\nContent-Type: application/octet-stream\r\n\r\n`);
  for await (const c of fs.createReadStream(passFile, { highWaterMark: 1 << 20 })) yield c as Buffer;
  yield Buffer.from(`\r\n--${boundary}--\r\n`);
}
const rssBefore = rssOf();
const peakReset = resetPeak();
let uploadPeak = rssBefore;
const uploadSampler = setInterval(() => (uploadPeak = Math.max(uploadPeak, rssOf())), 50);
const uploadBytes = fs.statSync(passFile).size;
t = performance.now();
const up = await fetch(`http://127.0.0.1:${PORT}/api/uploads/packets?spacecraft=${sc.key}`, {
  method: 'POST',
  headers: { cookie, origin: `http://127.0.0.1:${PORT}`, 'content-type': `multipart/form-data; boundary=${boundary}` },
  body: Readable.toWeb(Readable.from(multipart())) as unknown as BodyInit,
  duplex: 'half',
} as RequestInit & { duplex: 'half' });
const upReport = (await up.json()) as { accepted?: number; bytes?: number };
const uploadS = (performance.now() - t) / 1000;
clearInterval(uploadSampler);
if (peakReset) uploadPeak = Math.max(uploadPeak, kernelPeak());
fs.rmSync(passFile, { force: true });
if (up.status !== 201) throw new Error(`upload answered ${up.status}: ${JSON.stringify(upReport)}`);
if (upReport.accepted !== uploadGenerated) throw new Error(`the upload stored ${upReport.accepted} of ${uploadGenerated} packets`);
server.kill('SIGTERM');

// The same rows, decoded beforehand, COPY'd straight into the same (emptied) tables.
const loopIds = new Set(sheet.loops.map((l) => l.id));
const batches = chunks.map((c, i) => {
  const b = new PacketBatch(sc.id, 1_000_000 + i);
  decodeBuffer(c, { loopIds }, b);
  return b;
});
await sql`TRUNCATE attitude_sample, loop_sample, burst_capture, event_report`.execute(db);
await ensureDayPartitions(pool, new Set(batches.flatMap((b) => [...b.days])));
// Like with like: as many connections as HTTP had requests in flight, one transaction per request's
// batch, so the ratio measures what the ingest path costs beyond the COPY itself.
let copied = 0;
let nextBatch = 0;
t = performance.now();
async function copyWorker() {
  const client = await pool.connect();
  try {
    while (nextBatch < batches.length) {
      const b = batches[nextBatch++]!;
      await client.query('BEGIN');
      for (const [apid, w] of b.copy) {
        if (!w.rows) continue;
        const data = w.finish();
        const stream = client.query(copyStreams.from(`COPY ${PACKET_TABLES[apid].table} (${copyColumns(apid).join(', ')}) FROM STDIN (FORMAT binary)`));
        await pipeline(Readable.from([Buffer.from(data.buffer, data.byteOffset, data.byteLength)]), stream);
        copied += w.rows;
      }
      await client.query('COMMIT');
    }
  } finally {
    client.release();
  }
}
await Promise.all(Array.from({ length: CONCURRENCY }, copyWorker));
const copyS = (performance.now() - t) / 1000;
if (copied !== generated) throw new Error(`the plain COPY wrote ${copied} of ${generated} rows`);

const result = {
  hours: HOURS,
  packets: accepted,
  megabytes: totalBytes / 1e6,
  http_s: httpS,
  packets_per_s: accepted / httpS,
  mb_per_s: totalBytes / 1e6 / httpS,
  server_peak_rss_mb: peakRss / 1048576,
  copy_s: copyS,
  copy_rows: copied,
  ratio_http_to_copy: copyS / httpS,
  concurrency: CONCURRENCY,
  copy_connections: CONCURRENCY,
  lost_or_refused: 0,
  upload_mb: uploadBytes / 1e6,
  upload_s: uploadS,
  upload_accepted: upReport.accepted,
  upload_server_rss_before_mb: rssBefore / 1048576,
  upload_server_peak_rss_mb: uploadPeak / 1048576,
};
fs.mkdirSync('bench-results', { recursive: true });
fs.writeFileSync('bench-results/ingest.json', JSON.stringify(result, null, 2));
console.log(
  `[bench:ingest] ${accepted} of ${generated} packets stored (none refused), ${result.megabytes.toFixed(1)} MB through HTTP in ${httpS.toFixed(1)} s ` +
    `(${Math.round(result.packets_per_s)} packets/s, ${result.mb_per_s.toFixed(1)} MB/s; targets ≤ 30 s); server peak RSS ${result.server_peak_rss_mb.toFixed(0)} MB (target ≤ 300); ` +
    `plain COPY of the same rows over ${CONCURRENCY} connections ${copyS.toFixed(1)} s → ratio ${result.ratio_http_to_copy.toFixed(2)} (target ≥ 0.6)`,
);
console.log(
  `[bench:ingest] streamed upload of a ${result.upload_mb.toFixed(0)} MB pass file: ${upReport.accepted} packets in ${uploadS.toFixed(1)} s; ` +
    `server RSS ${result.upload_server_rss_before_mb.toFixed(0)} MB before, ${result.upload_server_peak_rss_mb.toFixed(0)} MB peak`,
);
await db.destroy();
const admin = createPool(baseUrl, 1);
await admin.query('DROP DATABASE IF EXISTS millrace_bench WITH (FORCE)');
await admin.end();
