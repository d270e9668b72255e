// Pure helpers of the launcher (scripts/launch.mjs), kept apart so tests can load them without
// starting anything. Plain Node, no dependencies: the launcher runs before `npm install` has.
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';

/** The exit status of a process ended by a signal, as shells report it: 128 + the signal number. */
export function exitCodeForSignal(signal) {
  const n = os.constants.signals[signal];
  return typeof n === 'number' ? 128 + n : 1;
}

/**
 * When the kernel started a process (clock ticks since boot, field 22 of /proc/PID/stat), or null
 * where that cannot be read. Together with the pid it tells a process from a later one that was
 * given the same pid.
 */
export function processStartTime(pid) {
  try {
    const stat = fs.readFileSync(`/proc/${pid}/stat`, 'utf8');
    // The command name (field 2) is in parentheses and may itself hold spaces or parentheses.
    const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    return fields[19] ?? null;
  } catch {
    return null;
  }
}

/**
 * Is a process with this pid running, and (when `start` is known) the same one that was recorded?
 * @param {number} pid
 * @param {string | null} [start]
 */
export function isAlive(pid, start = null) {
  if (!Number.isInteger(pid) || pid <= 0) return false;
  try {
    process.kill(pid, 0);
  } catch (err) {
    // EPERM: it exists but belongs to another user.
    if (err?.code !== 'EPERM') return false;
  }
  if (start == null) return true;
  const now = processStartTime(pid);
  return now == null || now === String(start);
}

const HOLDER = /^(\d+)\.json$/;

/**
 * The users of one private PostgreSQL cluster: a folder with one file per launcher process that
 * uses it (`<pid>.json`). The cluster is stopped only by the last of them to leave.
 */
export class ClusterUsers {
  /**
   * @param {string} dir folder for the holder files (made when missing)
   * @param {{ alive?: (pid: number, start: string | null) => boolean, startTime?: (pid: number) => string | null, sleepMs?: (ms: number) => void }} [opts]
   */
  constructor(dir, opts = {}) {
    this.dir = dir;
    this.alive = opts.alive ?? isAlive;
    this.startTime = opts.startTime ?? processStartTime;
    this.sleepMs = opts.sleepMs ?? ((ms) => Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, ms));
  }

  file(pid) {
    return path.join(this.dir, `${pid}.json`);
  }

  /** Record `pid` (this process by default) as a user of the cluster. */
  register(pid = process.pid, mode = '') {
    fs.mkdirSync(this.dir, { recursive: true });
    const record = { pid, mode, start: this.startTime(pid) };
    fs.writeFileSync(this.file(pid), `${JSON.stringify(record)}\n`);
    return record;
  }

  /** Forget `pid` as a user. */
  release(pid = process.pid) {
    fs.rmSync(this.file(pid), { force: true });
  }

  /** The recorded users whose process still runs, except `except`; the files of dead ones are removed. */
  live({ except = null } = {}) {
    let names = [];
    try {
      names = fs.readdirSync(this.dir);
    } catch {
      return [];
    }
    const out = [];
    for (const name of names) {
      const m = HOLDER.exec(name);
      if (!m) continue;
      const pid = Number(m[1]);
      let record;
      try {
        record = JSON.parse(fs.readFileSync(path.join(this.dir, name), 'utf8'));
      } catch {
        record = { pid, mode: '', start: null };
      }
      if (pid === except) continue;
      if (this.alive(pid, record.start ?? null)) out.push({ pid, mode: record.mode ?? '', start: record.start ?? null });
      else fs.rmSync(path.join(this.dir, name), { force: true });
    }
    return out.sort((a, b) => a.pid - b.pid);
  }

  /** Join as `pid`: record it and return the other live users (none: this one decides alone). */
  join(pid = process.pid, mode = '') {
    this.register(pid, mode);
    return this.live({ except: pid });
  }

  /** Leave as `pid`: forget it and return the live users left (none: this one was the last). */
  leave(pid = process.pid) {
    this.release(pid);
    return this.live({ except: pid });
  }

  /**
   * Run `fn` while holding the folder's mutex, so that deciding to start or stop the cluster and
   * doing it is one step for all launchers. A mutex left by a dead process is taken over.
   */
  exclusive(fn, { timeoutMs = 120_000, pid = process.pid } = {}) {
    fs.mkdirSync(this.dir, { recursive: true });
    const mutex = path.join(this.dir, 'mutex');
    const until = Date.now() + timeoutMs;
    for (;;) {
      try {
        fs.writeFileSync(mutex, `${JSON.stringify({ pid, start: this.startTime(pid) })}\n`, { flag: 'wx' });
        break;
      } catch (err) {
        if (err?.code !== 'EEXIST') throw err;
        let owner = null;
        try {
          owner = JSON.parse(fs.readFileSync(mutex, 'utf8'));
        } catch {
          // written but not yet filled in, or removed meanwhile: look again shortly
        }
        // Already ours: re-entered (e.g. from an exit handler while fn was running).
        if (owner?.pid === pid && String(owner.start) === String(this.startTime(pid))) return fn();
        if (owner && !this.alive(owner.pid, owner.start ?? null)) {
          fs.rmSync(mutex, { force: true });
          continue;
        }
        if (Date.now() > until) throw new Error(`${mutex} is held by process ${owner?.pid ?? '?'} for more than ${timeoutMs / 1000} s; remove it if that process is not a Millrace launcher`);
        this.sleepMs(100);
      }
    }
    try {
      return fn();
    } finally {
      fs.rmSync(mutex, { force: true });
    }
  }
}

/** The command a user of the launcher typed for a mode: `npm start`, `npm test`, `npm run jobs`. */
export function commandFor(mode) {
  return mode === 'start' || mode === 'test' ? `npm ${mode}` : `npm run ${mode}`;
}

/** "npm start (process 123), npm run jobs (process 456)" */
export function describeUsers(users) {
  return users.map((u) => `${u.mode ? commandFor(u.mode) : 'a launcher'} (process ${u.pid})`).join(', ');
}
