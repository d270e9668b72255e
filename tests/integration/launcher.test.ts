import fs from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { spawn, spawnSync } from 'node:child_process';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ClusterUsers } from '../../scripts/launch-lib.mjs';

/**
 * The launcher itself, run as a developer runs it (`node scripts/launch.mjs migrate`), against a
 * private cluster of its own in a temporary folder on a free port, so that nothing here touches the
 * cluster the test run is using.
 */
const PG_BIN = '/usr/lib/postgresql/15/bin';
let base = '';
let port = 0;
let env: NodeJS.ProcessEnv = {};
let users: InstanceType<typeof ClusterUsers>;

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = net.createServer();
    srv.once('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const p = (srv.address() as net.AddressInfo).port;
      srv.close(() => resolve(p));
    });
  });
}

const ready = () => spawnSync(path.join(PG_BIN, 'pg_isready'), ['-q', '-h', '127.0.0.1', '-p', String(port)]).status === 0;

interface Run {
  code: number | null;
  signal: NodeJS.Signals | null;
  output: string;
}

/** Run the launcher; `onLine` sees each line of its output as it comes (and may signal it). */
function launch(args: string[], onLine?: (line: string, pid: number) => void): Promise<Run> {
  return new Promise((resolve) => {
    // Its own process group, so a signal to the group reaches it and its children as Ctrl-C would.
    const child = spawn(process.execPath, ['scripts/launch.mjs', ...args], { env, detached: true, stdio: ['ignore', 'pipe', 'pipe'] });
    let output = '';
    let partial = '';
    const take = (d: Buffer) => {
      output += d;
      partial += d;
      const lines = partial.split('\n');
      partial = lines.pop() ?? '';
      for (const l of lines) onLine?.(l, child.pid!);
    };
    child.stdout.on('data', take);
    child.stderr.on('data', take);
    child.once('exit', (code, signal) => resolve({ code, signal, output }));
  });
}

beforeAll(async () => {
  base = fs.mkdtempSync(path.join(os.tmpdir(), 'millrace-launcher-'));
  fs.chmodSync(base, 0o755); // the postgres user must reach the cluster folder
  port = await freePort();
  env = { ...process.env, MILLRACE_PG_DIR: path.join(base, 'pg'), MILLRACE_PG_PORT: String(port) };
  delete env.DATABASE_URL;
  delete env.TEST_DATABASE_URL;
  users = new ClusterUsers(path.join(base, 'pg-users'));
});

afterAll(() => {
  if (base && fs.existsSync(path.join(base, 'pg', 'postmaster.pid'))) {
    spawnSync('runuser', ['-u', 'postgres', '--', path.join(PG_BIN, 'pg_ctl'), '-D', path.join(base, 'pg'), '-m', 'immediate', '-w', 'stop'], { cwd: '/' });
  }
  if (base) fs.rmSync(base, { recursive: true, force: true });
});

describe('launcher and the shared private cluster', () => {
  it('the run that started PostgreSQL leaves it up while another launcher still uses it', async () => {
    // Stand in for an `npm start` that joined the cluster after this run started it.
    users.register(process.pid, 'start');
    try {
      const r = await launch(['migrate']);
      expect(r.code, r.output).toBe(0);
      expect(r.output).toMatch(/PostgreSQL started/);
      expect(r.output).toContain(`PostgreSQL left running for npm start (process ${process.pid})`);
      expect(ready()).toBe(true);
    } finally {
      users.release(process.pid);
    }
  }, 180_000);

  it('a cluster left running with no live user is adopted, and stopped when that run ends', async () => {
    expect(ready()).toBe(true);
    const r = await launch(['migrate']);
    expect(r.code, r.output).toBe(0);
    expect(r.output).toMatch(/adopting it/);
    expect(r.output).toMatch(/PostgreSQL stopped/);
    expect(ready()).toBe(false);
    expect(fs.readdirSync(path.join(base, 'pg-users'))).toEqual([]);
  }, 180_000);
});

describe('launcher on a signal', () => {
  it('SIGTERM during a step: exit 143, the step ended, PostgreSQL stopped', async () => {
    let sent = false;
    const r = await launch(['migrate'], (line, pid) => {
      if (!sent && /PostgreSQL started/.test(line)) {
        sent = true;
        process.kill(pid, 'SIGTERM');
      }
    });
    expect(sent, r.output).toBe(true);
    expect(r.code, r.output).toBe(143);
    expect(r.output).toMatch(/stopping \(SIGTERM\)/);
    // The migration was stopped, not run to its end.
    expect(r.output).not.toMatch(/\[migrate\] (applied|database is up to date)/);
    expect(ready()).toBe(false);
  }, 180_000);

  it('Ctrl-C (SIGINT to the whole process group): exit 130 and PostgreSQL stopped', async () => {
    let sent = false;
    const r = await launch(['migrate'], (line, pid) => {
      if (!sent && /PostgreSQL started/.test(line)) {
        sent = true;
        process.kill(-pid, 'SIGINT');
      }
    });
    expect(sent, r.output).toBe(true);
    expect(r.code, r.output).toBe(130);
    expect(ready()).toBe(false);
  }, 180_000);
});
