import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { spawn } from 'node:child_process';
import { afterEach, describe, expect, it } from 'vitest';
import { ClusterUsers, commandFor, describeUsers, exitCodeForSignal, isAlive, processStartTime } from '../../scripts/launch-lib.mjs';

const dirs: string[] = [];
function tmpDir(): string {
  const d = fs.mkdtempSync(path.join(os.tmpdir(), 'millrace-users-'));
  dirs.push(d);
  return d;
}
afterEach(() => {
  for (const d of dirs.splice(0)) fs.rmSync(d, { recursive: true, force: true });
});

/** A fake process table: the pids in `running` are alive (with the start time given). */
function fakeTable(running: Record<number, string>) {
  return {
    alive: (pid: number, start: string | null) => pid in running && (start == null || running[pid] === start),
    startTime: (pid: number) => running[pid] ?? null,
    sleepMs: () => {},
  };
}

describe('exit status on a signal', () => {
  it('is 128 + the signal number, as shells report it (bash manual, "Exit Status")', () => {
    // Linux signal numbers: SIGHUP 1, SIGINT 2, SIGTERM 15 (signal(7) man page).
    expect(exitCodeForSignal('SIGINT')).toBe(130);
    expect(exitCodeForSignal('SIGTERM')).toBe(143);
    expect(exitCodeForSignal('SIGHUP')).toBe(129);
    expect(exitCodeForSignal('NOT-A-SIGNAL')).toBe(1);
  });
  it('names the command of each mode', () => {
    expect(commandFor('start')).toBe('npm start');
    expect(commandFor('test')).toBe('npm test');
    expect(commandFor('jobs')).toBe('npm run jobs');
    expect(describeUsers([{ pid: 7, mode: 'start' }, { pid: 9, mode: 'jobs' }])).toBe('npm start (process 7), npm run jobs (process 9)');
  });
});

describe('users of the private cluster', () => {
  it('the first to join sees nobody, the next sees the first; only the last to leave sees nobody left', () => {
    const table = fakeTable({ 101: 'a', 202: 'b' });
    const users = new ClusterUsers(tmpDir(), table);
    expect(users.join(101, 'test')).toEqual([]);
    expect(users.join(202, 'start')).toEqual([{ pid: 101, mode: 'test', start: 'a' }]);
    // npm test (101) ends first: npm start (202) still uses the cluster, so it must stay up.
    expect(users.leave(101)).toEqual([{ pid: 202, mode: 'start', start: 'b' }]);
    expect(users.leave(202)).toEqual([]);
  });

  it('a user that died without leaving does not keep the cluster up, and its file is cleared', () => {
    const dir = tmpDir();
    const table = fakeTable({ 101: 'a' });
    const users = new ClusterUsers(dir, table);
    users.join(101, 'start');
    users.register(303, 'test'); // recorded, but not in the process table: killed with SIGKILL
    expect(fs.existsSync(path.join(dir, '303.json'))).toBe(true);
    expect(users.leave(101)).toEqual([]);
    expect(fs.readdirSync(dir)).toEqual([]);
  });

  it('a pid reused by an unrelated process is not taken for the user that had it', () => {
    const table = fakeTable({ 101: 'a', 404: 'new' });
    const users = new ClusterUsers(tmpDir(), table);
    fs.writeFileSync(users.file(404), JSON.stringify({ pid: 404, mode: 'start', start: 'old' }));
    // A cluster left running by that earlier process is adopted: nobody else is using it.
    expect(users.join(101, 'test')).toEqual([]);
  });

  it('reads a damaged holder file as a pid only', () => {
    const table = fakeTable({ 101: 'a', 505: 'x' });
    const users = new ClusterUsers(tmpDir(), table);
    fs.writeFileSync(users.file(505), '{not json');
    expect(users.join(101, 'test')).toEqual([{ pid: 505, mode: '', start: null }]);
  });

  it('tells live processes from finished ones by the real process table', async () => {
    expect(isAlive(process.pid)).toBe(true);
    expect(isAlive(process.pid, processStartTime(process.pid))).toBe(true);
    expect(isAlive(process.pid, 'not-my-start-time')).toBe(false);
    expect(isAlive(0)).toBe(false);
    expect(isAlive(-1)).toBe(false);

    const child = spawn(process.execPath, ['-e', 'setTimeout(() => {}, 30000)'], { stdio: 'ignore' });
    await new Promise((r) => child.once('spawn', r));
    const users = new ClusterUsers(tmpDir());
    users.join(child.pid!, 'start');
    expect(users.join(process.pid, 'test').map((u: { pid: number }) => u.pid)).toEqual([child.pid]);
    child.kill('SIGKILL');
    await new Promise((r) => child.once('exit', r));
    expect(users.leave(process.pid)).toEqual([]);
  });
});

describe('the cluster mutex', () => {
  it('runs the critical section and frees the mutex after, also when it throws', () => {
    const dir = tmpDir();
    const users = new ClusterUsers(dir, fakeTable({ 101: 'a' }));
    expect(users.exclusive(() => 42, { pid: 101 })).toBe(42);
    expect(fs.existsSync(path.join(dir, 'mutex'))).toBe(false);
    expect(() => users.exclusive(() => { throw new Error('boom'); }, { pid: 101 })).toThrow('boom');
    expect(fs.existsSync(path.join(dir, 'mutex'))).toBe(false);
  });

  it('takes over a mutex left by a dead process', () => {
    const dir = tmpDir();
    const users = new ClusterUsers(dir, fakeTable({ 101: 'a' }));
    fs.writeFileSync(path.join(dir, 'mutex'), JSON.stringify({ pid: 999, start: 'z' }));
    expect(users.exclusive(() => 'ran', { pid: 101 })).toBe('ran');
  });

  it('waits for a live holder and gives up with a clear message', () => {
    const dir = tmpDir();
    let waits = 0;
    const users = new ClusterUsers(dir, { ...fakeTable({ 101: 'a', 202: 'b' }), sleepMs: () => void waits++ });
    fs.writeFileSync(path.join(dir, 'mutex'), JSON.stringify({ pid: 202, start: 'b' }));
    expect(() => users.exclusive(() => 'never', { pid: 101, timeoutMs: 50 })).toThrow(/held by process 202/);
    expect(waits).toBeGreaterThan(0);
  });

  it('is re-entrant for its own holder (an exit handler inside the critical section)', () => {
    const users = new ClusterUsers(tmpDir(), fakeTable({ 101: 'a' }));
    expect(users.exclusive(() => users.exclusive(() => 'inner', { pid: 101, timeoutMs: 50 }), { pid: 101 })).toBe('inner');
  });
});
