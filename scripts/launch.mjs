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
import { ClusterUsers, commandFor, describeUsers, exitCodeForSignal } from './launch-lib.mjs';

const root = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
process.chdir(root);
const mode = process.argv[2] ?? 'start';
const extraArgs = process.argv.slice(3);
const PG_BIN = '/usr/lib/postgresql/15/bin';
const PG_PORT = Number(process.env.MILLRACE_PG_PORT ?? 54329);
const dataDir = path.join(root, '.data');
const children = new Set();
/** Set while this process is a recorded user of the private cluster: { dir, users }. */
let clusterUse = null;
let lockFile = null;
let stopping = false;
/** The signal that is stopping the launcher, if one is. */
let signalled = null;

const log = (msg) => console.log(`[millrace] ${msg}`);
const fail = (msg) => {
  console.error(`[millrace] ${msg}`);
  process.exit(1);
};

/** Run a short command to its end, blocking (package installs, initdb, pg_ctl). */
function runSync(cmd, args, opts = {}) {
  const r = spawnSync(cmd, args, { stdio: 'inherit', ...opts });
  if (r.error) throw new Error(`${cmd} could not be run: ${r.error.message}`);
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(' ')} exited with ${r.status ?? r.signal}`);
}

/**
 * Run a step as a child without blocking, so that a signal reaches the launcher while it runs
 * (and is passed on to the child by shutdown()). Resolves to { status, signal }.
 */
function runStep(cmd, args, opts = {}) {
  // Nothing new is started once shutdown() has begun (it would outlive the launcher).
  if (shuttingDown) return Promise.resolve({ status: null, signal: signalled });
  return new Promise((resolve) => {
    const child = spawn(cmd, args, { stdio: 'inherit', ...opts });
    children.add(child);
    child.once('error', (err) => {
      children.delete(child);
      resolve({ status: null, signal: null, error: err });
    });
    child.once('exit', (status, signal) => {
      children.delete(child);
      resolve({ status, signal });
    });
  });
}

/**
 * After each step: when the launcher is being stopped (a signal, or a part that died) or the step
 * itself was ended by a signal, go no further; shutdown() ends the process with a non-zero status.
 */
async function checkpoint(label, r) {
  // Let a pending SIGINT/SIGTERM handler run first.
  await new Promise((resolve) => setImmediate(resolve));
  const sig = signalled ?? r?.signal ?? null;
  if (!stopping && !shuttingDown && !sig) return;
  log(`${label} ${sig ? `ended by ${sig}` : 'stopped'}; not going on`);
  shutdown(sig ? exitCodeForSignal(sig) : 1);
  await new Promise(() => {}); // shutdown() exits the process
}

/** Run a step that must succeed: throws when it fails, stops everything when interrupted. */
async function run(cmd, args, opts = {}) {
  const r = await runStep(cmd, args, opts);
  await checkpoint(path.basename(cmd), r);
  if (r.error) throw new Error(`${cmd} could not be run: ${r.error.message}`);
  if (r.status !== 0) throw new Error(`${cmd} ${args.join(' ')} exited with ${r.status}`);
}

function quiet(cmd, args, opts = {}) {
  return spawnSync(cmd, args, { encoding: 'utf8', ...opts });
}

const isRoot = () => typeof process.getuid === 'function' && process.getuid() === 0;

function aptInstall(pkgs, why) {
  if (!isRoot()) fail(`${why} is missing. Install it with: sudo apt-get install -y ${pkgs.join(' ')}`);
  log(`installing ${pkgs.join(' ')} from Debian (${why} is missing)…`);
  runSync('apt-get', ['update', '-qq'], { env: { ...process.env, DEBIAN_FRONTEND: 'noninteractive' } });
  runSync('apt-get', ['install', '-y', '-qq', '--no-install-recommends', ...pkgs], {
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
  runSync('npm', [fs.existsSync(lock) ? 'ci' : 'install', '--no-audit', '--no-fund', '--loglevel=error']);
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

/**
 * Start the private cluster, or share it when it already runs. Every launcher that uses it is
 * recorded beside it (one file per process); the last one to leave stops it (releaseCluster).
 * A cluster left running by a launcher that was killed, with no live user, is adopted: this run
 * stops it on exit.
 */
function startPrivateCluster() {
  ensurePostgresInstalled();
  const dir = clusterDir();
  const sockDir = path.dirname(dir);
  fs.mkdirSync(sockDir, { recursive: true });
  const users = new ClusterUsers(path.join(sockDir, 'pg-users'));
  users.exclusive(() => {
    if (!fs.existsSync(path.join(dir, 'PG_VERSION'))) {
      log(`creating a private PostgreSQL cluster in ${dir}`);
      if (isRoot()) fs.chownSync(sockDir, uid('postgres'), gid('postgres'));
      const initdb = [path.join(PG_BIN, 'initdb'), '-D', dir, '-A', 'trust', '-U', 'millrace', '--no-instructions', '-E', 'UTF8', '--locale=C.UTF-8'];
      if (isRoot()) asPostgres(initdb);
      else runSync(initdb[0], initdb.slice(1));
      // Loopback only, a non-default port, the socket beside the cluster: trust authentication is
      // acceptable only because nothing outside this machine can reach it.
      fs.appendFileSync(
        path.join(dir, 'postgresql.conf'),
        `\n# Millrace private cluster\nlisten_addresses = '127.0.0.1'\nport = ${PG_PORT}\nunix_socket_directories = '${sockDir}'\nfsync = on\nmax_connections = 100\nshared_buffers = 256MB\nmax_wal_size = 2GB\n`,
      );
    }
    const others = users.join(process.pid, mode);
    clusterUse = { dir, users };
    if (pgReady()) {
      if (others.length) log(`PostgreSQL already running on 127.0.0.1:${PG_PORT}; sharing it with ${describeUsers(others)}`);
      else log(`PostgreSQL already running on 127.0.0.1:${PG_PORT} with no other Millrace process using it (left by a run that was killed?); adopting it, it stops when this run ends`);
      return;
    }
    const ctl = [path.join(PG_BIN, 'pg_ctl'), '-D', dir, '-l', path.join(sockDir, 'pg.log'), '-w', '-t', '60', 'start'];
    if (isRoot()) asPostgres(ctl);
    else runSync(ctl[0], ctl.slice(1));
    log(`PostgreSQL started on 127.0.0.1:${PG_PORT}`);
  });
}

/** Leave the private cluster; stop it when no other live launcher uses it. Safe to call twice. */
function releaseCluster() {
  if (!clusterUse) return;
  const { dir, users } = clusterUse;
  clusterUse = null;
  try {
    users.exclusive(() => {
      const others = users.leave(process.pid);
      if (others.length) {
        log(`PostgreSQL left running for ${describeUsers(others)}`);
        return;
      }
      if (!fs.existsSync(path.join(dir, 'postmaster.pid'))) return;
      const ctl = [path.join(PG_BIN, 'pg_ctl'), '-D', dir, '-m', 'fast', '-w', 'stop'];
      if (isRoot()) asPostgres(ctl);
      else runSync(ctl[0], ctl.slice(1));
      log('PostgreSQL stopped');
    });
  } catch (err) {
    console.error(String(err));
  }
}

function uid(name) {
  return Number(execFileSync('id', ['-u', name], { encoding: 'utf8' }).trim());
}
function gid(name) {
  return Number(execFileSync('id', ['-g', name], { encoding: 'utf8' }).trim());
}

let psqlBin = null;
/** The psql to use: PostgreSQL 15's own, else the one on PATH; installed from Debian when neither runs. */
function findPsql() {
  if (psqlBin) return psqlBin;
  const works = (cmd) => {
    const r = quiet(cmd, ['--version']);
    return !r.error && r.status === 0;
  };
  const candidates = [path.join(PG_BIN, 'psql'), 'psql'];
  psqlBin = candidates.find(works) ?? null;
  if (!psqlBin) {
    // With DATABASE_URL set the server package is never installed, and psql with it.
    aptInstall(['postgresql-client'], 'psql (the PostgreSQL client, which the launcher uses to create and drop its databases)');
    psqlBin = candidates.find(works) ?? null;
    if (!psqlBin) fail('psql still does not run after installing postgresql-client; install a PostgreSQL client so that `psql --version` works');
  }
  return psqlBin;
}

function psql(url, sql) {
  const cmd = findPsql();
  const r = quiet(cmd, [url, '-v', 'ON_ERROR_STOP=1', '-qtAc', sql]);
  if (r.error) throw new Error(`psql could not be run (${cmd}): ${r.error.message}`);
  if (r.status !== 0) {
    const u = new URL(url);
    throw new Error(`psql on ${u.hostname}:${u.port || 5432}${u.pathname} failed for \`${sql}\`: ${(r.stderr || r.stdout || `exit ${r.status}`).trim()}`);
  }
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
  if (shuttingDown) return null;
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

async function runTs(script, args, env) {
  await run(tsx, [script, ...args], { env: { ...process.env, ...env } });
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

function removeLock() {
  if (lockFile) fs.rmSync(lockFile, { force: true });
  lockFile = null;
}

let shuttingDown = false;
/** Stop the children, leave the cluster, drop the lock, exit (128 + n when a signal stopped us). */
async function shutdown(code) {
  if (shuttingDown) return;
  shuttingDown = true;
  await killChildren();
  // A step that failed because Ctrl-C reached it too: let the launcher's own signal handler run
  // first, so the exit status says it was a signal.
  await new Promise((resolve) => setTimeout(resolve, 20));
  releaseCluster();
  removeLock();
  process.exit(signalled ? exitCodeForSignal(signalled) : code);
}

function onSignal(sig) {
  if (!signalled) signalled = sig;
  log(`stopping (${sig})…`);
  shutdown(exitCodeForSignal(sig));
}
process.on('SIGINT', () => onSignal('SIGINT'));
process.on('SIGTERM', () => onSignal('SIGTERM'));
process.on('SIGHUP', () => onSignal('SIGHUP'));
// Whatever way the launcher ends (fail(), an uncaught error), it leaves the cluster and the lock.
process.on('exit', () => {
  releaseCluster();
  removeLock();
});

async function build(env) {
  log('building the web app…');
  await run(path.join(root, 'node_modules', '.bin', 'astro'), ['build', '--silent'], {
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
  await runTs('scripts/migrate.ts', [], env);
  await runTs('scripts/seed.ts', ['--if-empty'], env);
  await build(env);
  spawnChild('web', process.execPath, ['dist/server/entry.mjs'], env);
  await waitForHttp(`http://127.0.0.1:${port}/sign-in`);
  await checkpoint('starting the web server', null);
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
  await runTs('scripts/migrate.ts', [], env);
  await runTs('scripts/seed.ts', ['--if-empty'], env);
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
  });
  await runTs('scripts/migrate.ts', [], env);
  await runTs('scripts/seed.ts', [], env);
  const results = [];
  log('type checking…');
  const check = await runStep(path.join(root, 'node_modules', '.bin', 'astro'), ['check', '--minimumSeverity', 'error'], { env: { ...process.env, ASTRO_TELEMETRY_DISABLED: '1' } });
  await checkpoint('astro check', check);
  results.push({ name: 'astro check', code: check.status, summary: { passed: check.status === 0 ? 1 : 0, failed: check.status === 0 ? 0 : 1, skipped: 0 } });
  await build(env);
  spawnChild('web', process.execPath, ['dist/server/entry.mjs'], env);
  await waitForHttp(`http://127.0.0.1:${port}/sign-in`);
  await checkpoint('starting the web server', null);

  // `npm test -- --no-e2e [vitest filters]` stops after vitest (a developer's quick loop; CI runs everything)
  const noE2e = extraArgs.includes('--no-e2e');
  const vitestArgs = extraArgs.filter((a) => a !== '--no-e2e');
  const vitestJson = path.join(outDir, 'vitest.json');
  const v = await runStep(path.join(root, 'node_modules', '.bin', 'vitest'), ['run', '--reporter=default', '--reporter=json', `--outputFile.json=${vitestJson}`, ...vitestArgs], {
    env: { ...process.env, ...env },
  });
  await checkpoint('vitest', v);
  results.push({ name: 'vitest', code: v.status, summary: summaryFromJson(vitestJson, 'vitest') });

  if (!noE2e) {
    // The end-to-end run starts from the demo seed again, whatever the integration tests left.
    await runTs('scripts/seed.ts', ['--reset'], env);
    const pwJson = path.join(outDir, 'playwright.json');
    const p = await runStep(path.join(root, 'node_modules', '.bin', 'playwright'), ['test', '--reporter=list,json'], {
      env: { ...process.env, ...env, PLAYWRIGHT_JSON_OUTPUT_NAME: pwJson },
    });
    await checkpoint('playwright', p);
    results.push({ name: 'playwright', code: p.status, summary: summaryFromJson(pwJson, 'playwright') });
  }

  await killChildren();
  dropDatabase(dbUrl);
  releaseCluster();
  removeLock();
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
    await runTs(script, extraArgs, e);
  } finally {
    releaseCluster();
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
        await build({});
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
