import fs from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { BASE_URL, Client, clientAs, db } from './support';
import { concatBytes, loopRecord, attitudeRecord } from './packets';
import { encodePacket } from '../../src/lib/telemetry';
import { createIngestToken } from '../../src/lib/server/ingest-tokens';
import { insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { HISTORY_MS, formatSse, loadPassWatch, parseLivePayload, thinPerSecond } from '../../src/lib/server/live';
import { formatUtc } from '../../src/lib/format';
import { SeriesBuffer } from '../../src/features/pass-watch/live-store';

/** One dispatched server-sent event. */
interface Sse {
  event: string;
  data: string;
  id: string;
}

/**
 * A reader of text/event-stream written from the parsing rules of the WHATWG HTML Living Standard,
 * "Server-sent events" (from memory): lines end in CRLF, LF or CR; a line starting with ":" is a
 * comment; "field: value" drops one leading space; data lines join with LF; a blank line dispatches
 * (nothing when the data buffer is empty); the last event id persists across events.
 */
class SseReader {
  readonly events: Sse[] = [];
  readonly comments: string[] = [];
  private buf = '';
  private data: string[] = [];
  private type = '';
  private lastId = '';
  private waiters: (() => void)[] = [];
  done = false;
  private readonly decoder = new TextDecoder();

  constructor(
    private readonly res: Response,
    private readonly abort: AbortController,
  ) {
    void this.run();
  }

  private async run() {
    const reader = this.res.body!.getReader();
    try {
      for (;;) {
        const { done, value } = await reader.read();
        if (done) break;
        this.feed(this.decoder.decode(value, { stream: true }));
      }
    } catch {
      // aborted by close()
    }
    this.done = true;
    this.wake();
  }

  private feed(text: string) {
    this.buf += text;
    for (;;) {
      const m = /\r\n|\n|\r/.exec(this.buf);
      if (!m) break;
      // A CR at the very end may be the first half of a CRLF: wait for more.
      if (m[0] === '\r' && m.index === this.buf.length - 1) break;
      const line = this.buf.slice(0, m.index);
      this.buf = this.buf.slice(m.index + m[0].length);
      this.line(line);
    }
  }

  private line(line: string) {
    if (line === '') {
      if (this.data.length)
        this.events.push({
          event: this.type || 'message',
          data: this.data.join('\n'),
          id: this.lastId,
        });
      this.data = [];
      this.type = '';
      this.wake();
      return;
    }
    if (line.startsWith(':')) {
      this.comments.push(line.slice(1).trim());
      return;
    }
    const i = line.indexOf(':');
    const field = i < 0 ? line : line.slice(0, i);
    let value = i < 0 ? '' : line.slice(i + 1);
    if (value.startsWith(' ')) value = value.slice(1);
    if (field === 'data') this.data.push(value);
    else if (field === 'event') this.type = value;
    else if (field === 'id' && !value.includes('\0')) this.lastId = value;
  }

  private wake() {
    for (const w of this.waiters.splice(0)) w();
  }

  /** The next event (after those already taken) matching a name, within a time. */
  private taken = 0;
  async next(name: string, timeoutMs = 8000): Promise<Sse> {
    const until = Date.now() + timeoutMs;
    for (;;) {
      while (this.taken < this.events.length) {
        const e = this.events[this.taken++]!;
        if (e.event === name) return e;
      }
      if (this.done) throw new Error(`the stream ended before a "${name}" event`);
      const left = until - Date.now();
      if (left <= 0) throw new Error(`no "${name}" event within ${timeoutMs} ms (had: ${this.events.map((e) => e.event).join(', ')})`);
      await new Promise<void>((r) => {
        const t = setTimeout(r, left);
        this.waiters.push(() => {
          clearTimeout(t);
          r();
        });
      });
    }
  }

  /** Wait for the stream to end. */
  async ended(timeoutMs = 8000): Promise<void> {
    const until = Date.now() + timeoutMs;
    while (!this.done && Date.now() < until) await new Promise((r) => setTimeout(r, 20));
    if (!this.done) throw new Error('the stream did not end');
  }

  close() {
    this.abort.abort();
  }
}

async function openStream(client: Client, path: string, headers: Record<string, string> = {}) {
  const abort = new AbortController();
  const res = await fetch(BASE_URL + path, {
    headers: { cookie: client.cookie, accept: 'text/event-stream', ...headers },
    signal: abort.signal,
  });
  return { res, reader: res.ok ? new SseReader(res, abort) : null };
}

let key = '';
let spacecraftId = 0;
let token = '';
let operator: Client;
let sheet: SpacecraftSheet;
// Sequence counts and sample times only ever increase, as on a real link.
let seq = 0;
let clockMs = 0;
const open: SseReader[] = [];

/** Post `seconds` of attitude packets at `attHz` and loop-0 packets at 10 Hz; returns the contract report. */
async function post(opts: { seconds?: number; attHz?: number; flow?: number; skip?: number } = {}) {
  // Lost packets: their sequence counts and their time.
  seq += opts.skip ?? 0;
  clockMs += (opts.skip ?? 0) * 100;
  const seconds = opts.seconds ?? 1;
  const attHz = opts.attHz ?? 10;
  const parts: Uint8Array[] = [];
  const t0 = clockMs;
  const s0 = seq;
  for (let i = 0; i < seconds * attHz; i++) parts.push(encodePacket(attitudeRecord((s0 + i) % 16384, t0 + (i * 1000) / attHz)));
  for (let i = 0; i < seconds * 10; i++) {
    const r = loopRecord((s0 + i) % 16384, t0 + i * 100, 0, 5);
    parts.push(encodePacket(opts.flow === undefined ? r : { ...r, flowVelocity_m_s: Math.fround(opts.flow) }));
  }
  seq += Math.max(seconds * attHz, seconds * 10);
  clockMs += seconds * 1000;
  const res = await fetch(`${BASE_URL}/api/ingest?station=ribeira`, {
    method: 'POST',
    headers: {
      authorization: `Bearer ${token}`,
      'content-type': 'application/octet-stream',
    },
    body: Buffer.from(concatBytes(parts)),
  });
  expect(res.status).toBe(200);
  return (await res.json()) as { accepted: number };
}

async function batchIds(): Promise<number[]> {
  return (await db.selectFrom('ingest_batch').select('id').where('spacecraft_id', '=', spacecraftId).orderBy('id').execute()).map((r) => r.id);
}

describe('against the running app', () => {
  beforeAll(async () => {
    key = `LV-${Date.now().toString(36).toUpperCase().slice(-6)}`;
    const base = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync('ingest/fleet/MR-1.json', 'utf8')));
    sheet = {
      ...base,
      spacecraft: { key, name: 'Live test craft' },
      effectiveFrom: '2026-01-01T00:00:00Z',
    };
    const sc = await insertSpacecraftWithSheet(db, sheet, null);
    spacecraftId = sc.id;
    token = (await createIngestToken(db, spacecraftId, 'live tests', null)).token;
    operator = await clientAs('operator');
    clockMs = Math.floor(Date.now() / 1000) * 1000 - 120_000;
  });

  afterAll(() => {
    for (const r of open) r.close();
  });

  describe('GET /api/live/[key]', () => {
    it('answers anonymous callers 401 and every signed-in role with an event stream; unknown keys 404, bad ids 400', async () => {
      const anon = await fetch(`${BASE_URL}/api/live/${key}?once=1`);
      expect(anon.status).toBe(401);
      expect(((await anon.json()) as { error: { code: string } }).error.code).toBe('UNAUTHORIZED');
      for (const role of ['operator', 'analyst', 'engineer', 'admin'] as const) {
        const c = await clientAs(role);
        const { res, reader } = await openStream(c, `/api/live/${key}?once=1`);
        expect(res.status, role).toBe(200);
        expect(res.headers.get('content-type')).toMatch(/^text\/event-stream/);
        expect(res.headers.get('cache-control')).toContain('no-store');
        const ready = await reader!.next('ready');
        expect(JSON.parse(ready.data)).toMatchObject({
          seq: expect.any(Number),
        });
        await reader!.next('trips');
        await reader!.ended();
      }
      expect((await operator.get('/api/live/NO-SUCH-CRAFT?once=1')).status).toBe(404);
      const bad = await openStream(operator, `/api/live/${key}?once=1`, {
        'last-event-id': 'not-a-number',
      });
      expect(bad.res.status).toBe(400);
    });

    it('pushes each committed ingest batch as a samples event, thinned to at most 10 points per second, with h = m·R·v', async () => {
      const { reader } = await openStream(operator, `/api/live/${key}`);
      open.push(reader!);
      await reader!.next('ready');
      const before = new Set(await batchIds());
      const startMs = clockMs;
      const flow = 0.125;
      const sent = Date.now();
      const report = await post({ seconds: 2, attHz: 20, flow });
      expect(report.accepted).toBe(60);
      const e = await reader!.next('samples', 3000);
      expect(Date.now() - sent).toBeLessThan(3000);
      const ev = JSON.parse(e.data);
      const newBatch = (await batchIds()).filter((id) => !before.has(id));
      expect(newBatch).toEqual([ev.batchId]);
      expect(e.id).toBe(String(ev.seq));
      expect(ev).toMatchObject({
        accepted: 60,
        duplicates: 0,
        rejected: 0,
        station: 'ribeira',
        source: 'post',
      });
      // 40 attitude samples at 20 Hz over two seconds: at most 10 in each whole second, evenly kept.
      const perSecond = new Map<number, number>();
      for (const t of ev.attitude.t as number[]) perSecond.set(Math.floor(t / 1000), (perSecond.get(Math.floor(t / 1000)) ?? 0) + 1);
      expect([...perSecond.values()].every((n) => n <= 10)).toBe(true);
      expect(ev.attitude.t.length).toBe(20);
      // Loop samples at 10 Hz are within the budget and all kept, in time order.
      const loop = ev.loops.find((l: { loopId: number }) => l.loopId === 0);
      expect(loop.t.length).toBe(20);
      expect(loop.t[0]).toBeCloseTo(startMs, 0);
      for (let i = 1; i < loop.t.length; i++) expect(loop.t[i]).toBeGreaterThan(loop.t[i - 1]);
      // Packets per second of sample time, before thinning: 20 attitude + 10 loop each second.
      expect(ev.packets.map((p: [number, number]) => p[1])).toEqual([30, 30]);
      // A circular loop's fluid momentum is h = m·R·v with m = ρ·A·2πR (closed planar loop, ∮ r × dl = 2S n̂;
      // published vector calculus, as the reference values give it).
      const l0 = sheet.loops[0]!;
      if (l0.shape.kind !== 'circle') throw new Error('MR-1 loop 0 is a circle');
      const R = l0.shape.radius_m;
      const m = l0.fluid.density_kg_m3 * l0.channel.alongField_m * l0.channel.alongCurrent_m * 2 * Math.PI * R;
      for (const h of loop.momentum) expect(h / (m * R * Math.fround(flow))).toBeCloseTo(1, 4);
      expect(loop.margin.every((x: number) => x > 0 && x < 100)).toBe(true);
    });

    it('numbers concurrent batches in commit order, and a reconnect with Last-Event-ID resumes without loss or duplicates', async () => {
      const first = (await openStream(operator, `/api/live/${key}`)).reader!;
      await first.next('ready');
      const seen: { seq: number; batchId: number }[] = [];
      // Three batches at once: their ids come from a sequence taken before decoding, their event numbers from the commit.
      await Promise.all([post(), post(), post()]);
      for (let i = 0; i < 3; i++) {
        const e = await first.next('samples');
        seen.push({ seq: Number(e.id), batchId: JSON.parse(e.data).batchId });
      }
      first.close();
      const lastId = String(seen[seen.length - 1]!.seq);
      // While disconnected, four more batches commit.
      await Promise.all([post(), post(), post(), post()]);
      const again = (
        await openStream(operator, `/api/live/${key}`, {
          'last-event-id': lastId,
        })
      ).reader!;
      open.push(again);
      for (let i = 0; i < 4; i++) {
        const e = await again.next('samples');
        seen.push({ seq: Number(e.id), batchId: JSON.parse(e.data).batchId });
      }
      const seqs = seen.map((s) => s.seq);
      for (let i = 1; i < seqs.length; i++) expect(seqs[i]).toBe(seqs[i - 1]! + 1);
      // Every batch stored since the first of these arrived exactly once.
      const all = await batchIds();
      const expected = all.slice(all.indexOf(Math.min(...seen.map((s) => s.batchId))));
      expect(seen.map((s) => s.batchId).sort((a, b) => a - b)).toEqual(expected);
      expect(new Set(seen.map((s) => s.batchId)).size).toBe(seen.length);
      // Nothing more is pending after the catch-up.
      await new Promise((r) => setTimeout(r, 300));
      expect(again.events.filter((e) => e.event === 'samples')).toHaveLength(4);
      // The event numbers are those the database holds for the batches.
      const rows = await db.selectFrom('live_batch').select(['seq', 'batch_id']).where('spacecraft_id', '=', spacecraftId).where('seq', '>=', seqs[0]!).orderBy('seq').execute();
      expect(rows.map((r) => ({ seq: Number(r.seq), batchId: r.batch_id }))).toEqual(seen);
    });

    it('carries the sequence gaps a batch revealed', async () => {
      const { reader } = await openStream(operator, `/api/live/${key}`);
      open.push(reader!);
      await reader!.next('ready');
      const before = seq;
      await post({ skip: 5 });
      const ev = JSON.parse((await reader!.next('samples')).data);
      expect(ev.gaps.map((g: { apid: number; from: number; to: number; missing: number }) => [g.apid, g.from, g.to, g.missing])).toEqual([
        [16, before, before + 4, 5],
        [32, before, before + 4, 5],
      ]);
      for (const g of ev.gaps) expect(g.beforeMs - g.afterMs).toBeCloseTo(600, 0);
    });

    it('catches up from ?after= to the end with once=1, and answers an id beyond the log with a reset event', async () => {
      const rows = await db.selectFrom('live_batch').select(['seq', 'batch_id']).where('spacecraft_id', '=', spacecraftId).orderBy('seq').execute();
      const { reader } = await openStream(operator, `/api/live/${key}?after=0&once=1`);
      await reader!.ended();
      const got = reader!.events
        .filter((e) => e.event === 'samples')
        .map((e) => ({
          seq: Number(e.id),
          batchId: JSON.parse(e.data).batchId,
        }));
      expect(got).toEqual(rows.map((r) => ({ seq: Number(r.seq), batchId: r.batch_id })));
      const beyond = (
        await openStream(operator, `/api/live/${key}`, {
          'last-event-id': String(Number(rows.at(-1)!.seq) + 1000),
        })
      ).reader!;
      const reset = await beyond.next('reset');
      expect(JSON.parse(reset.data).seq).toBe(Number(rows.at(-1)!.seq));
      await beyond.ended();
    });

    it('pushes trip changes as trip events: a new trip, then its acknowledgement; a reconnect gets them in the trips snapshot', async () => {
      const { reader } = await openStream(operator, `/api/live/${key}`);
      open.push(reader!);
      await reader!.next('ready');
      const snap = JSON.parse((await reader!.next('trips')).data);
      expect(snap.trips).toEqual([]);
      const now = new Date();
      const trip = await db
        .insertInto('trip')
        .values({
          spacecraft_id: spacecraftId,
          loop_id: 0,
          kind: 'channel-limit',
          quantity: 'measured_current_a',
          level: 'warning',
          side: 'high',
          limit_set_version: 1,
          onset_at: now,
          raised_at: now,
          value: 33,
          peak_value: 34,
          limit_value: 32,
          last_value: 33.5,
          last_at: now,
          evidence: '{}',
        })
        .returning('id')
        .executeTakeFirstOrThrow();
      const opened = JSON.parse((await reader!.next('trip')).data).trip;
      expect(opened).toMatchObject({
        id: trip.id,
        spacecraft: key,
        state: 'open',
        level: 'warning',
        loop_id: 0,
        quantityLabel: 'Measured pump current',
        unit: 'A',
      });
      // A warning needs a note.
      expect((await operator.post(`/api/trips/${trip.id}/acknowledge`, { note: '' })).status).toBe(400);
      expect(
        (
          await operator.post(`/api/trips/${trip.id}/acknowledge`, {
            note: 'Current high after the slew; watching the next minute.',
          })
        ).status,
      ).toBe(200);
      const acked = JSON.parse((await reader!.next('trip')).data).trip;
      expect(acked).toMatchObject({
        id: trip.id,
        state: 'acknowledged',
        acknowledge_note: 'Current high after the slew; watching the next minute.',
      });
      const later = (await openStream(operator, `/api/live/${key}?once=1`)).reader!;
      const trips = JSON.parse((await later.next('trips')).data).trips;
      expect(trips.map((t: { id: number; state: string }) => [t.id, t.state])).toEqual([[trip.id, 'acknowledged']]);
    });
  });

  describe('Pass watch outside a pass', () => {
    it('shows the latest known state of each loop and of the body, with its time, when the newest data is older than the history it loads', async () => {
      const oldKey = `LQ-${Date.now().toString(36).toUpperCase().slice(-6)}`;
      const sc = await insertSpacecraftWithSheet(db, { ...sheet, spacecraft: { key: oldKey, name: 'Quiet craft' } }, null);
      const oldToken = (await createIngestToken(db, sc.id, 'latest state test', null)).token;
      // Two seconds of attitude and loop-0 housekeeping, sampled two hours ago (a dump after the last pass).
      const endMs = Math.floor(Date.now() / 1000) * 1000 - 2 * 3600_000;
      const parts: Uint8Array[] = [];
      for (let i = 0; i < 20; i++) {
        const ms = endMs - (19 - i) * 100;
        parts.push(encodePacket(attitudeRecord(i, ms)), encodePacket(loopRecord(i, ms, 0, i === 19 ? 6 : 5)));
      }
      const res = await fetch(`${BASE_URL}/api/ingest?station=ribeira`, {
        method: 'POST',
        headers: { authorization: `Bearer ${oldToken}`, 'content-type': 'application/octet-stream' },
        body: Buffer.from(concatBytes(parts)),
      });
      expect(res.status, await res.clone().text()).toBe(200);
      expect(((await res.json()) as { accepted: number }).accepted).toBe(40);

      const nowMs = Date.now();
      const snap = await loadPassWatch(db, { id: sc.id, key: oldKey, name: 'Quiet craft' }, nowMs);
      // The history (15 min, or the pass under way) holds nothing of two hours ago …
      expect(nowMs - HISTORY_MS).toBeGreaterThan(endMs);
      expect(snap.historyFromMs).toBeGreaterThan(endMs);
      expect(snap.history.loops.every((l) => l.t.length === 0)).toBe(true);
      expect(snap.history.attitude.t).toEqual([]);
      // … the latest known state does: the newest sample of loop 0 and of the body, with its sample time.
      expect(snap.latest.loops.map((l) => l.loopId)).toEqual([0]);
      const l0 = snap.latest.loops[0]!;
      expect(l0.t).toHaveLength(1);
      expect(l0.t[0]).toBeCloseTo(endMs, 0);
      const want = loopRecord(19, endMs, 0, 6);
      expect(l0.current[0]).toBeCloseTo(want.measuredCurrent_a, 4);
      expect(l0.flow[0]).toBeCloseTo(want.flowVelocity_m_s, 5);
      expect(l0.pressure[0]).toBeCloseTo(want.pressureRise_pa, 2);
      expect(l0.electrodeTemp[0]).toBe(23.25);
      expect(l0.momentum[0]).not.toBeNull();
      expect(snap.latest.attitude.t).toHaveLength(1);
      expect(snap.latest.attitude.t[0]).toBeCloseTo(endMs, 0);
      expect(snap.latest.attitude.x[0]).toBeCloseTo(0.001, 6);
      expect(snap.latest.attitude.y[0]).toBeCloseTo(-0.002, 6);
      // The page paints those readouts with their time, marked as the latest known values.
      const page = await operator.get(`/pass-watch/${oldKey}`);
      expect(page.status).toBe(200);
      const html = await page.text();
      const l0Text = /data-testid="readouts-time-L0"[^>]*>(.*?)<\/p>/s.exec(html)?.[1] ?? '';
      expect(l0Text).toContain(formatUtc(endMs));
      expect(l0Text).toContain('latest known');
      const bodyText = /data-testid="readouts-time-body"[^>]*>(.*?)<\/p>/s.exec(html)?.[1] ?? '';
      expect(bodyText).toContain(formatUtc(endMs));
      expect(html).toContain(want.measuredCurrent_a.toFixed(2));
    });
  });

  describe('/api/pass-log/[key]', () => {
    it('lists the passes of the last day; a handover note needs text and a real ended pass; a stored note is listed with its author', async () => {
      const res = await operator.get(`/api/pass-log/${key}`);
      expect(res.status).toBe(200);
      const log = (await res.json()) as {
        passes: {
          station: string;
          aos: string;
          los: string;
          status: string;
          notes: { note: string; author: string }[];
          data: { batches: number };
        }[];
        error: string | null;
      };
      expect(log.error).toBeNull();
      const ended = log.passes.filter((p) => p.status === 'ended');
      expect(ended.length).toBeGreaterThan(0);
      for (let i = 1; i < log.passes.length; i++) expect(log.passes[i]!.aos <= log.passes[i - 1]!.aos).toBe(true);
      const p = ended[0]!;
      expect(new Date(p.los).getTime()).toBeLessThanOrEqual(Date.now());
      const empty = await operator.post(`/api/pass-log/${key}`, {
        station: p.station,
        aos: p.aos,
        note: '',
      });
      expect(empty.status).toBe(400);
      expect(
        (
          (await empty.json()) as {
            error: { fields: Record<string, string[]> };
          }
        ).error.fields.note,
      ).toBeDefined();
      const nowhere = await operator.post(`/api/pass-log/${key}`, {
        station: p.station,
        aos: new Date(new Date(p.aos).getTime() + 20 * 60_000).toISOString(),
        note: 'No such pass.',
      });
      expect(nowhere.status).toBe(400);
      expect(
        (
          (await nowhere.json()) as {
            error: { fields: Record<string, string[]> };
          }
        ).error.fields.aos,
      ).toBeDefined();
      const note = 'Quiet pass. L0 current steady near 5 A; nothing open for the next shift.';
      const ok = await operator.post(`/api/pass-log/${key}`, {
        station: p.station,
        aos: p.aos,
        note,
      });
      expect(ok.status).toBe(201);
      const after = (await (await operator.get(`/api/pass-log/${key}`)).json()) as typeof log;
      const near = (a: string | Date, b: string) => Math.abs(new Date(a).getTime() - new Date(b).getTime()) < 1000;
      const entry = after.passes.find((x) => x.station === p.station && near(x.aos, p.aos))!;
      expect(entry.notes).toEqual([expect.objectContaining({ note, author: 'Tomas Reyes-Lind' })]);
      const row = await db.selectFrom('pass_note').select(['aos_at', 'los_at']).where('spacecraft_id', '=', spacecraftId).executeTakeFirstOrThrow();
      expect(near(row.aos_at, p.aos) && near(row.los_at, p.los)).toBe(true);
    });
  });
});

describe('the pieces of the live path', () => {
  it('thins to at most n points in every whole second, keeping seconds within the budget whole', () => {
    const t10 = Array.from({ length: 50 }, (_, i) => 1_000_000 + i * 100);
    expect(thinPerSecond(t10, 10)).toEqual(t10.map((_, i) => i));
    const t100 = Array.from({ length: 300 }, (_, i) => 1_000_000 + i * 10);
    const kept = thinPerSecond(t100, 10);
    expect(kept).toHaveLength(30);
    const perSecond = new Map<number, number>();
    for (const i of kept) perSecond.set(Math.floor(t100[i]! / 1000), (perSecond.get(Math.floor(t100[i]! / 1000)) ?? 0) + 1);
    expect([...perSecond.values()]).toEqual([10, 10, 10]);
    // Evenly spread: every tenth sample.
    expect(kept.slice(0, 10)).toEqual([0, 10, 20, 30, 40, 50, 60, 70, 80, 90]);
  });

  it('reads notification payloads and writes events a conforming reader takes back', () => {
    expect(parseLivePayload('b:3:41')).toEqual({
      spacecraftId: 3,
      signal: { kind: 'batch', seq: 41 },
    });
    expect(parseLivePayload('t:3:7')).toEqual({
      spacecraftId: 3,
      signal: { kind: 'trip', tripId: 7 },
    });
    expect(parseLivePayload('x:1:2')).toBeNull();
    const text = formatSse('samples', { note: 'two\nlines', n: 1 }, 12) + formatSse('trip', { id: 5 });
    const body = new Response(text);
    const reader = new SseReader(body, new AbortController());
    return reader.ended().then(() => {
      expect(reader.events).toEqual([
        {
          event: 'samples',
          data: JSON.stringify({ note: 'two\nlines', n: 1 }),
          id: '12',
        },
        // An event without an id keeps the last one (the reconnect point).
        { event: 'trip', data: JSON.stringify({ id: 5 }), id: '12' },
      ]);
    });
  });

  it('keeps chart columns in time order, merges late rows, and breaks the line over a silence', () => {
    const b = new SeriesBuffer(1);
    b.append([1000, 1100, 1200], [[1, 2, 3]]);
    b.append([10_000], [[4]]);
    expect(b.t).toEqual([1, 1.1, 1.2, 5.6, 10]);
    expect(b.cols[0]).toEqual([1, 2, 3, null, 4]);
    // A late row lands in its place; the same time again replaces the value.
    b.append([1150, 1200], [[9, 8]]);
    expect(b.t).toEqual([1, 1.1, 1.15, 1.2, 5.6, 10]);
    expect(b.cols[0]).toEqual([1, 2, 9, 8, null, 4]);
    expect(b.newestMs).toBe(10_000);
    b.trimBefore(1_150);
    expect(b.t[0]).toBe(1.15);
  });
});
