#!/usr/bin/env node
// Millrace launcher: the one entry point behind `npm start`, `npm test`, `npm run dev` and the
// other scripts. Plain Node (no dependencies), because it runs before `npm install` has.
//
//   node scripts/launch.mjs start    set up, migrate, seed, build, run web + scheduler + mail fake + feed
//   node scripts/launch.mjs dev      the same database, Astro's dev server
//   node scripts/launch.mjs test     set up a throwaway database, build, run vitest then Playwright
//   node scripts/launch.mjs migrate | seed | feed | jobs | bench [args]
import { spawn, spawnSync, execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import fs from 'node:fs';
import path from 'node:path';
import process from 'node:process';
import { fileURLToPath } from 'node:url';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
process.chdir(root);
const mode = process.argv[2] ?? 'start';
const extraArgs = process.argv.slice(3);
const PG_BIN = '/usr/lib/postgresql/15/bin';
const PG_PORT = Number(process.env.MILLRACE_PG_PORT ?? 54329);
const dataDir = path.join(root, '.data');
const children = new Set();
let startedCluster = null;
let lockFile = null;
let stopping = false;

const log = (msg) => console.log(`[millrace] ${msg}`);
const fail = (msg) => {
  console.error(`[millrace] ${msg}`);
  process.exit(1);
};

function run(cmd, args, opts = {}) {
  const r = spawnSync(cmd, args, { stdio: 'inherit', ...opts });
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(' ')} exited with ${r.status ?? r.signal}`);
}

function quiet(cmd, args, opts = {}) {
  return spawnSync(cmd, args, { encoding: 'utf8', ...opts });
}

const isRoot = () => typeof process.getuid === 'function' && process.getuid() === 0;

function aptInstall(pkgs, why) {
  if (!isRoot()) fail(`${why} is missing. Install it with: sudo apt-get install -y ${pkgs.join(' ')}`);
  log(`installing ${pkgs.join(' ')} from Debian (${why} is missing)…`);
  run('apt-get', ['update', '-qq'], { env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' } });
  run('apt-get', ['install', '-y', '-qq', '--no-install-recommends', ...pkgs], {
    env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' },
  });
}

// ── dependencies ────────────────────────────────────────────────────────────────────────────
function ensureDependencies() {
  const lock = path.join(root, 'package-lock.json');
  const stamp = path.join(root, 'node_modules', '.millrace-deps');
  const pkg = JSON.parse(fs.readFileSync(path.join(root, 'package.json'), 'utf8'));
  // Only what decides the installed tree counts, not scripts or descriptions.
  const want = createHash('sha256')
    .update(JSON.stringify([pkg.dependencies, pkg.devDependencies, pkg.overrides, pkg.allowScripts]))
    .update(fs.existsSync(lock) ? fs.readFileSync(lock) : '')
    .digest('hex');
  if (fs.existsSync(stamp) && fs.readFileSync(stamp, 'utf8') === want) return;
  log('installing npm dependencies…');
  run('npm', [fs.existsSync(lock) ? 'ci' : 'install', '--no-audit', '--no-fund', '--loglevel=error']);
  fs.writeFileSync(stamp, want);
}

// ── PostgreSQL ──────────────────────────────────────────────────────────────────────────────
function ensurePostgresInstalled() {
  if (!fs.existsSync(path.join(PG_BIN, 'postgres'))) aptInstall(['postgresql'], 'PostgreSQL 15');
}

/** Can the postgres system user enter every parent of dir? (A clone under /root cannot.) */
function postgresCanReach(dir) {
  return quiet('runuser', ['-u', 'postgres', '--', 'test', '-x', dir], { cwd: '/' }).status === 0;
}

function clusterDir() {
  if (process.env.MILLRACE_PG_DIR) return process.env.MILLRACE_PG_DIR;
  fs.mkdirSync(dataDir, { recursive: true });
  if (postgresCanReach(path.dirname(dataDir)) || !isRoot()) return path.join(dataDir, 'pg');
  // The checkout sits where the postgres user cannot go (e.g. under /root, mode 700). Keep the
  // cluster in a folder it can reach, one per checkout, rather than loosening the user's home.
  const hash = createHash('sha1').update(root).digest('hex').slice(0, 12);
  const dir = `/var/lib/millrace/${hash}/pg`;
  fs.writeFileSync(path.join(dataDir, 'pg-location.txt'), `${dir}\n`);
  return dir;
}

function pgReady() {
  return quiet('pg_isready', ['-q', '-h', '127.0.0.1', '-p', String(PG_PORT)]).status === 0
    || quiet(path.join(PG_BIN, 'pg_isready'), ['-q', '-h', '127.0.0.1', '-p', String(PG_PORT)]).status === 0;
}

function asPostgres(args) {
  const r = spawnSync('runuser', ['-u', 'postgres', '--', ...args], { cwd: '/', encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`${args.join(' ')} failed:\n${r.stdout}${r.stderr}`);
  return r.stdout;
}

function startPrivateCluster() {
  ensurePostgresInstalled();
  const dir = clusterDir();
  const sockDir = path.dirname(dir);
  if (!fs.existsSync(path.join(dir, 'PG_VERSION'))) {
    log(`creating a private PostgreSQL cluster in ${dir}`);
    fs.mkdirSync(sockDir, { recursive: true });
    if (isRoot()) fs.chownSync(sockDir, uid('postgres'), gid('postgres'));
    const initdb = [path.join(PG_BIN, 'initdb'), '-D', dir, '-A', 'trust', '-U', 'millrace', '--no-instructions', '-E', 'UTF8', '--locale=C.UTF-8'];
    if (isRoot()) asPostgres(initdb);
    else run(initdb[0], initdb.slice(1));
    // Loopback only, a non-default port, the socket beside the cluster: trust authentication is
    // acceptable only because nothing outside this machine can reach it.
    fs.appendFileSync(
      path.join(dir, 'postgresql.conf'),
      `\n# Millrace private cluster\nlisten_addresses = '127.0.0.1'\nport = ${PG_PORT}\nunix_socket_directories = '${sockDir}'\nfsync = on\nmax_connections = 100\nshared_buffers = 256MB\nmax_wal_size = 2GB\n`,
    );
  }
  if (pgReady()) {
    log(`PostgreSQL already running on 127.0.0.1:${PG_PORT}; reusing it`);
    return;
  }
  const ctl = [path.join(PG_BIN, 'pg_ctl'), '-D', dir, '-l', path.join(sockDir, 'pg.log'), '-w', '-t', '60', 'start'];
  if (isRoot()) asPostgres(ctl);
  else run(ctl[0], ctl.slice(1));
  startedCluster = dir;
  log(`PostgreSQL started on 127.0.0.1:${PG_PORT}`);
}

function stopPrivateCluster() {
  if (!startedCluster) return;
  const ctl = [path.join(PG_BIN, 'pg_ctl'), '-D', startedCluster, '-m', 'fast', '-w', 'stop'];
  try {
    if (isRoot()) asPostgres(ctl);
    else run(ctl[0], ctl.slice(1));
    log('PostgreSQL stopped');
  } catch (err) {
    console.error(String(err));
  }
  startedCluster = null;
}

function uid(name) {
  return Number(execFileSync('id', ['-u', name], { encoding: 'utf8' }).trim());
}
function gid(name) {
  return Number(execFileSync('id', ['-g', name], { encoding: 'utf8' }).trim());
}

function psql(url, sql) {
  const r = quiet('psql', [url, '-v', 'ON_ERROR_STOP=1', '-qtAc', sql]);
  if (r.status !== 0) throw new Error(`psql failed: ${r.stderr}`);
  return r.stdout.trim();
}

function withDatabase(url, name) {
  const u = new URL(url);
  u.pathname = `/${name}`;
  return u.toString();
}

function ensureDatabase(url, { fresh = false } = {}) {
  const name = new URL(url).pathname.slice(1);
  const admin = withDatabase(url, 'postgres');
  if (fresh) psql(admin, `DROP DATABASE IF EXISTS "${name}" WITH (FORCE)`);
  if (psql(admin, `SELECT 1 FROM pg_database WHERE datname = '${name}'`) !== '1') {
    psql(admin, `CREATE DATABASE "${name}"`);
  }
}

function dropDatabase(url) {
  const name = new URL(url).pathname.slice(1);
  try {
    psql(withDatabase(url, 'postgres'), `DROP DATABASE IF EXISTS "${name}" WITH (FORCE)`);
  } catch (err) {
    console.error(String(err));
  }
}

function databaseUrl() {
  if (process.env.DATABASE_URL) return process.env.DATABASE_URL;
  startPrivateCluster();
  return `postgres://millrace@127.0.0.1:${PG_PORT}/millrace`;
}

// ── single instance ─────────────────────────────────────────────────────────────────────────
function takeLock(name) {
  fs.mkdirSync(dataDir, { recursive: true });
  const file = path.join(dataDir, `${name}.lock`);
  for (let attempt = 0; attempt < 2; attempt++) {
    try {
      fs.writeFileSync(file, String(process.pid), { flag: 'wx' });
      lockFile = file;
      return;
    } catch {
      const pid = Number(fs.readFileSync(file, 'utf8'));
      let alive = false;
      try {
        process.kill(pid, 0);
        alive = pid !== process.pid;
      } catch {
        alive = false;
      }
      if (alive) fail(`Millrace is already running here (\`npm ${name}\`, process ${pid}). Stop it with Ctrl-C first, or remove ${file} if that process is not Millrace.`);
      fs.rmSync(file, { force: true });
    }
  }
  fail(`could not take ${file}`);
}

// ── processes ───────────────────────────────────────────────────────────────────────────────
const tsx = path.join(root, 'node_modules', '.bin', 'tsx');

function spawnChild(name, cmd, args, env) {
  const child = spawn(cmd, args, { env: { ...process.env, ...env }, stdio: ['ignore', 'pipe', 'pipe'] });
  const prefix = (stream, out) => {
    let buf = '';
    stream.on('data', (d) => {
      buf += d;
      const lines = buf.split('\n');
      buf = lines.pop() ?? '';
      for (const line of lines) out.write(`[${name}] ${line}\n`);
    });
  };
  prefix(child.stdout, process.stdout);
  prefix(child.stderr, process.stderr);
  children.add(child);
  child.on('exit', (code, signal) => {
    children.delete(child);
    if (!stopping) {
      console.error(`[millrace] ${name} exited (${code ?? signal}); stopping everything`);
      shutdown(1);
    }
  });
  return child;
}

function runTs(script, args, env) {
  run(tsx, [script, ...args], { env: { ...process.env, ...env } });
}

async function waitForHttp(url, timeoutMs = 60_000) {
  const until = Date.now() + timeoutMs;
  while (Date.now() < until) {
    try {
      const r = await fetch(url);
      if (r.status < 500) return;
    } catch {
      // not up yet
    }
    await new Promise((r) => setTimeout(r, 250));
  }
  throw new Error(`${url} did not answer within ${timeoutMs / 1000} s`);
}

async function killChildren() {
  stopping = true;
  const waits = [...children].map(
    (c) =>
      new Promise((resolve) => {
        c.once('exit', resolve);
        c.kill('SIGTERM');
        setTimeout(() => {
          c.kill('SIGKILL');
          resolve();
        }, 5000).unref();
      }),
  );
  await Promise.all(waits);
}

let shuttingDown = false;
async function shutdown(code) {
  if (shuttingDown) return;
  shuttingDown = true;
  await killChildren();
  stopPrivateCluster();
  if (lockFile) fs.rmSync(lockFile, { force: true });
  process.exit(code);
}

process.on('SIGINT', () => {
  log('stopping…');
  shutdown(0);
});
process.on('SIGTERM', () => shutdown(0));

function build(env) {
  log('building the web app…');
  run(path.join(root, 'node_modules', '.bin', 'astro'), ['build', '--silent'], {
    env: { ...process.env, ...env, ASTRO_TELEMETRY_DISABLED: '1' },
  });
}

const DEMO_PASSWORD = 'millrace-demo';

function appEnv(dbUrl, port, extra = {}) {
  return {
    DATABASE_URL: dbUrl,
    HOST: '127.0.0.1',
    PORT: String(port),
    PUBLIC_URL: `http://127.0.0.1:${port}`,
    ASTRO_TELEMETRY_DISABLED: '1',
    UPLOAD_DIR: process.env.UPLOAD_DIR ?? path.join(dataDir, 'uploads'),
    ...extra,
  };
}

/** The long-running parts beside the web server, as far as they exist. */
function longRunningParts() {
  return [
    { name: 'mail', script: 'fakes/smtp-relay.ts' },
    { name: 'scheduler', script: 'src/jobs/scheduler.ts' },
    { name: 'feed', script: 'ingest/demo-feed.ts' },
  ].filter((p) => fs.existsSync(path.join(root, p.script)));
}

async function start() {
  takeLock('start');
  ensureDependencies();
  const dbUrl = databaseUrl();
  ensureDatabase(dbUrl);
  const port = Number(process.env.PORT ?? 4321);
  const env = appEnv(dbUrl, port, { DEMO_MODE: process.env.DEMO_MODE ?? '1', DEMO_PASSWORD });
  runTs('scripts/migrate.ts', [], env);
  runTs('scripts/seed.ts', ['--if-empty'], env);
  build(env);
  spawnChild('web', process.execPath, ['dist/server/entry.mjs'], env);
  await waitForHttp(`http://127.0.0.1:${port}/sign-in`);
  for (const part of longRunningParts()) spawnChild(part.name, tsx, [part.script], env);
  printWelcome(port);
}

function printWelcome(port) {
  console.log(`
  Millrace is running at http://127.0.0.1:${port}/

  Local demo accounts (demo-only password "${DEMO_PASSWORD}", never use outside this machine):
    operator@millrace.test   operator
    analyst@millrace.test    analyst
    engineer@millrace.test   engineer
    engineer2@millrace.test  engineer (second reviewer)
    admin@millrace.test      admin

  Ctrl-C stops everything, PostgreSQL included.
`);
}

async function dev() {
  takeLock('start');
  ensureDependencies();
  const dbUrl = databaseUrl();
  ensureDatabase(dbUrl);
  const env = appEnv(dbUrl, 4321, { DEMO_MODE: '1', DEMO_PASSWORD });
  runTs('scripts/migrate.ts', [], env);
  runTs('scripts/seed.ts', ['--if-empty'], env);
  spawnChild('dev', path.join(root, 'node_modules', '.bin', 'astro'), ['dev', '--host', '127.0.0.1', '--port', '4321'], env);
  printWelcome(4321);
}

function summaryFromJson(file, kind) {
  try {
    const j = JSON.parse(fs.readFileSync(file, 'utf8'));
    if (kind === 'vitest') return { passed: j.numPassedTests, failed: j.numFailedTests + (j.numRuntimeErrorTestSuites ?? 0), skipped: j.numPendingTests + j.numTodoTests };
    const s = j.stats;
    return { passed: s.expected, failed: s.unexpected + (s.flaky ?? 0), skipped: s.skipped };
  } catch {
    return null;
  }
}

async function test() {
  takeLock('test');
  ensureDependencies();
  if (!fs.existsSync('/usr/bin/chromium')) aptInstall(['chromium'], 'Chromium for the end-to-end tests');
  const baseUrl = databaseUrl();
  const dbUrl = process.env.TEST_DATABASE_URL ?? withDatabase(baseUrl, `${new URL(baseUrl).pathname.slice(1) || 'millrace'}_test`);
  if (dbUrl === baseUrl) fail('the test database must not be the demo database: set TEST_DATABASE_URL to a throwaway database');
  ensureDatabase(dbUrl, { fresh: true });
  const port = Number(process.env.TEST_PORT ?? 4399);
  const outDir = path.join(root, 'test-results');
  fs.rmSync(outDir, { recursive: true, force: true });
  fs.mkdirSync(outDir, { recursive: true });
  const env = appEnv(dbUrl, port, {
    DEMO_MODE: '1',
    DEMO_PASSWORD,
    UPLOAD_DIR: path.join(outDir, 'uploads'),
    SMTP_PORT: process.env.TEST_SMTP_PORT ?? '2599',
    MAILBOX_DIR: path.join(outDir, 'mailbox'),
    TEST_BASE_URL: `http://127.0.0.1:${port}`,
    MILLRACE_TEST: '1',
  });
  runTs('scripts/migrate.ts', [], env);
  runTs('scripts/seed.ts', [], env);
  const results = [];
  log('type checking…');
  const check = spawnSync(path.join(root, 'node_modules', '.bin', 'astro'), ['check', '--minimumSeverity', 'error'], { stdio: 'inherit', env: { ...process.env, ASTRO_TELEMETRY_DISABLED: '1' } });
  results.push({ name: 'astro check', code: check.status, summary: { passed: check.status === 0 ? 1 : 0, failed: check.status === 0 ? 0 : 1, skipped: 0 } });
  build(env);
  spawnChild('web', process.execPath, ['dist/server/entry.mjs'], env);
  await waitForHttp(`http://127.0.0.1:${port}/sign-in`);

  // `npm test -- --no-e2e [vitest filters]` stops after vitest (a developer's quick loop; CI runs everything)
  const noE2e = extraArgs.includes('--no-e2e');
  const vitestArgs = extraArgs.filter((a) => a !== '--no-e2e');
  const vitestJson = path.join(outDir, 'vitest.json');
  const v = spawnSync(path.join(root, 'node_modules', '.bin', 'vitest'), ['run', '--reporter=default', '--reporter=json', `--outputFile.json=${vitestJson}`, ...vitestArgs], {
    stdio: 'inherit',
    env: { ...process.env, ...env },
  });
  results.push({ name: 'vitest', code: v.status, summary: summaryFromJson(vitestJson, 'vitest') });

  if (!noE2e) {
    // The end-to-end run starts from the demo seed again, whatever the integration tests left.
    runTs('scripts/seed.ts', ['--reset'], env);
    const pwJson = path.join(outDir, 'playwright.json');
    const p = spawnSync(path.join(root, 'node_modules', '.bin', 'playwright'), ['test', '--reporter=list,json'], {
      stdio: 'inherit',
      env: { ...process.env, ...env, PLAYWRIGHT_JSON_OUTPUT_NAME: pwJson },
    });
    results.push({ name: 'playwright', code: p.status, summary: summaryFromJson(pwJson, 'playwright') });
  }

  await killChildren();
  dropDatabase(dbUrl);
  stopPrivateCluster();
  fs.rmSync(lockFile, { force: true });
  let passed = 0;
  let failed = 0;
  let skipped = 0;
  for (const r of results) {
    const s = r.summary ?? { passed: 0, failed: 1, skipped: 0 };
    if (r.code !== 0 && s.failed === 0) s.failed = 1;
    console.log(`${r.name}: ${s.passed} passed, ${s.failed} failed, ${s.skipped} skipped`);
    passed += s.passed;
    failed += s.failed;
    skipped += s.skipped;
  }
  console.log(`\n${passed} passed, ${failed} failed${skipped ? `, ${skipped} skipped` : ''}`);
  process.exit(failed > 0 || results.some((r) => r.code !== 0) ? 1 : 0);
}

async function tool(script, env = {}) {
  ensureDependencies();
  const dbUrl = databaseUrl();
  ensureDatabase(dbUrl);
  const e = appEnv(dbUrl, Number(process.env.PORT ?? 4321), env);
  try {
    runTs(script, extraArgs, e);
  } finally {
    stopPrivateCluster();
  }
}

try {
  switch (mode) {
    case 'start':
      await start();
      break;
    case 'dev':
      await dev();
      break;
    case 'test':
      await test();
      break;
    case 'migrate':
      await tool('scripts/migrate.ts');
      break;
    case 'seed':
      await tool('scripts/seed.ts');
      break;
    case 'feed':
      await tool('ingest/demo-feed.ts');
      break;
    case 'jobs':
      await tool('src/jobs/run-jobs.ts');
      break;
    case 'bench':
      if (!fs.existsSync(path.join(root, 'dist/server/entry.mjs'))) {
        ensureDependencies();
        build({});
      }
      await tool('scripts/bench.ts');
      break;
    default:
      fail(`unknown mode ${mode}`);
  }
} catch (err) {
  console.error(`[millrace] ${err instanceof Error ? err.message : String(err)}`);
  await shutdown(1);
}
