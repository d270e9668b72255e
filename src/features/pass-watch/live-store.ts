import type { LiveGap, LiveSeries } from '../../lib/server/live';

/** A break in a series longer than this (s) is drawn as a gap, not bridged by a line. */
export const BREAK_S = 2.5;

/**
 * Columns that share one time axis (seconds since the Unix epoch, ascending), as uPlot takes them.
 * A row of nulls is kept in every silence longer than BREAK_S so that the line breaks there.
 */
export class SeriesBuffer {
  t: number[] = [];
  cols: (number | null)[][];

  constructor(readonly width: number) {
    this.cols = Array.from({ length: width }, () => []);
  }

  /** Add rows (times in Unix ms); late rows are merged in time order, a repeated time replaces the older row. */
  append(tMs: readonly number[], cols: readonly (readonly (number | null)[])[]): void {
    if (!tMs.length) return;
    const first = tMs[0]! / 1000;
    const last = this.t.length ? this.t[this.t.length - 1]! : -Infinity;
    if (first > last) {
      for (let i = 0; i < tMs.length; i++) this.push(tMs[i]! / 1000, cols.map((c) => c[i] ?? null));
      return;
    }
    const rows = new Map<number, (number | null)[]>();
    for (let i = 0; i < this.t.length; i++) if (this.cols.some((c) => c[i] !== null)) rows.set(this.t[i]!, this.cols.map((c) => c[i]!));
    for (let i = 0; i < tMs.length; i++) rows.set(tMs[i]! / 1000, cols.map((c) => c[i] ?? null));
    this.t = [];
    this.cols = Array.from({ length: this.width }, () => []);
    for (const ts of [...rows.keys()].sort((a, b) => a - b)) this.push(ts, rows.get(ts)!);
  }

  private push(ts: number, row: readonly (number | null)[]): void {
    const prev = this.t.length ? this.t[this.t.length - 1]! : null;
    if (prev !== null && ts - prev > BREAK_S) {
      this.t.push((prev + ts) / 2);
      for (const c of this.cols) c.push(null);
    }
    this.t.push(ts);
    for (let k = 0; k < this.width; k++) this.cols[k]!.push(row[k] ?? null);
  }

  /** Drop rows before a time (Unix ms). */
  trimBefore(ms: number): void {
    const s = ms / 1000;
    let n = 0;
    while (n < this.t.length && this.t[n]! < s) n++;
    if (!n) return;
    this.t.splice(0, n);
    for (const c of this.cols) c.splice(0, n);
  }

  /** The newest time (Unix ms) that carries a value, or null. */
  get newestMs(): number | null {
    for (let i = this.t.length - 1; i >= 0; i--) if (this.cols.some((c) => c[i] !== null)) return this.t[i]! * 1000;
    return null;
  }

  /** The newest value of a column, or null. */
  latest(k: number): number | null {
    const c = this.cols[k]!;
    for (let i = c.length - 1; i >= 0; i--) if (c[i] !== null) return c[i]!;
    return null;
  }
}

/** Column order of a loop buffer. */
export const LOOP_COLS = ['current', 'flow', 'pressure', 'fluidTemp', 'electrodeTemp', 'magnetTemp', 'momentum', 'margin'] as const;
export type LoopCol = (typeof LOOP_COLS)[number];
export const loopCol = (c: LoopCol) => LOOP_COLS.indexOf(c);

/** What Pass watch holds of the live data: body rates, each loop's channels, per-second packet counts and gaps. */
export class LiveStore {
  readonly attitude = new SeriesBuffer(3);
  readonly loops = new Map<number, SeriesBuffer>();
  /** Housekeeping packets per second of sample time (second start, Unix ms → count). */
  readonly packets = new Map<number, number>();
  gaps: LiveGap[] = [];

  constructor(loopIds: readonly number[]) {
    for (const id of loopIds) this.loops.set(id, new SeriesBuffer(LOOP_COLS.length));
  }

  /** Add a stretch of samples (the page's history or one `samples` event). */
  add(s: LiveSeries): void {
    this.attitude.append(s.attitude.t, [s.attitude.x, s.attitude.y, s.attitude.z]);
    for (const l of s.loops) {
      let buf = this.loops.get(l.loopId);
      if (!buf) this.loops.set(l.loopId, (buf = new SeriesBuffer(LOOP_COLS.length)));
      buf.append(l.t, [l.current, l.flow, l.pressure, l.fluidTemp, l.electrodeTemp, l.magnetTemp, l.momentum, l.margin]);
    }
    for (const [sec, n] of s.packets) this.packets.set(sec, (this.packets.get(sec) ?? 0) + n);
    for (const g of s.gaps) if (!this.gaps.some((x) => x.apid === g.apid && x.afterMs === g.afterMs && x.beforeMs === g.beforeMs)) this.gaps.push(g);
  }

  /** Forget everything before a time (Unix ms). */
  trimBefore(ms: number): void {
    this.attitude.trimBefore(ms);
    for (const b of this.loops.values()) b.trimBefore(ms);
    for (const sec of this.packets.keys()) if (sec + 1000 < ms) this.packets.delete(sec);
    this.gaps = this.gaps.filter((g) => g.beforeMs >= ms);
  }

  /** The newest sample time of any series (Unix ms), or null. */
  get newestMs(): number | null {
    let best: number | null = this.attitude.newestMs;
    for (const b of this.loops.values()) {
      const n = b.newestMs;
      if (n !== null && (best === null || n > best)) best = n;
    }
    return best;
  }

  /** Packets per second as two aligned columns (seconds, counts), with zero seconds filled between the first and now. */
  packetColumns(fromMs: number, toMs: number): [number[], (number | null)[]] {
    const t: number[] = [];
    const n: (number | null)[] = [];
    const start = Math.floor(fromMs / 1000) * 1000;
    for (let s = start; s <= toMs; s += 1000) {
      t.push(s / 1000);
      n.push(this.packets.get(s) ?? 0);
    }
    return [t, n];
  }
}
