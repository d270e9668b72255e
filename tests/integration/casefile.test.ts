import fs from 'node:fs';
import path from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { mean as ssMean, sampleStandardDeviation } from 'simple-statistics';
import MLR from 'ml-regression-multivariate-linear';
import { db, clientAs, Client, type TestRole } from './support';
import { pool } from '../../src/lib/server/db';
import { config } from '../../src/lib/server/config';
import { generatePackets } from '../../ingest/generator';
import { parseScenario, type Scenario } from '../../ingest/scenario.schema';
import { spacecraftSheetSchema, type SpacecraftSheet } from '../../src/lib/spacecraft-sheet.schema';
import { insertSheet, insertSpacecraftWithSheet } from '../../src/lib/server/spacecraft';
import { insertLimitSet } from '../../src/lib/server/limit-sets';
import { DEFAULT_RULES } from '../../src/lib/limits/defaults';
import { ingestBody } from '../../src/lib/server/ingest';
import { BASELINE_WINDOWS, runAnalysisJob } from '../../src/lib/server/analysis-job';
import { defaultSpan, loadEvidence, magnitudeStdErr, resolveSpan, stepChangePoint, weightedKt } from '../../src/lib/server/casefile';
import { HttpError } from '../../src/lib/server/http';
import { checkAttachmentType, sniffBinaryType, TextCheck } from '../../src/lib/server/attachments';
import { MAX_SPAN_DAYS, RECENT_WINDOWS, type CasefileNote, type EvidenceResponse, type RawWindowResponse } from '../../src/features/casefile/casefile.schema';

/**
 * The Casefile over a trip raised the real way: the torque-constant-loss scenario flown through
 * ingest and the analysis job on a fresh spacecraft with the default limits. The scenario's fault is
 * moved later by the length of the drift baseline (the first BASELINE_WINDOWS windows with an
 * effectiveness) so that the baseline forms on healthy data first, as it does in flight; its ramp
 * and size are the scenario's.
 */
const HEALTHY_LEAD_S = BASELINE_WINDOWS * 60;
const FLIGHT_MIN = BASELINE_WINDOWS + 25;

// Test files, by their published signatures (from memory): a 1×1 PNG, a JFIF JPEG head, a PDF, and
// a Windows executable (DOS "MZ" header with its stub message).
const PNG_1X1 = Buffer.from('iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAYAAAAfFcSJAAAADUlEQVR42mNk+M9QDwADhgGAWjR9awAAAABJRU5ErkJggg==', 'base64');
const JPEG_HEAD = Buffer.concat([Buffer.from([0xff, 0xd8, 0xff, 0xe0, 0x00, 0x10]), Buffer.from('JFIF\0', 'latin1'), Buffer.alloc(64, 0x20), Buffer.from([0xff, 0xd9])]);
const PDF = Buffer.from('%PDF-1.4\n1 0 obj << /Type /Catalog >> endobj\ntrailer << /Root 1 0 R >>\n%%EOF\n', 'latin1');
const EXE = Buffer.concat([Buffer.from([0x4d, 0x5a, 0x90, 0x00, 0x03, 0x00, 0x00, 0x00, 0x04, 0x00, 0x00, 0x00, 0xff, 0xff, 0x00, 0x00]), Buffer.alloc(48), Buffer.from('This program cannot be run in DOS mode.\r\r\n$', 'latin1'), Buffer.alloc(64)]);

interface Flown {
  sc: { id: number; key: string };
  startMs: number;
  scenario: Scenario;
  rampStartMs: number;
  rampEndMs: number;
}

async function fly(): Promise<Flown> {
  const key = `CF${Date.now().toString(36).toUpperCase().slice(-6)}`;
  const raw = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync('ingest/fleet/MR-1.json', 'utf8')));
  const sheet: SpacecraftSheet = { ...raw, spacecraft: { key, name: `Casefile ${key}` } };
  const sc = await db.transaction().execute(async (trx) => {
    const created = await insertSpacecraftWithSheet(trx, { ...sheet, effectiveFrom: '2026-01-01T00:00:00Z' }, null);
    await insertLimitSet(trx, created.id, { name: 'Default limits', notes: '', rules: DEFAULT_RULES }, null, 'active');
    return created;
  });
  const base = parseScenario(JSON.parse(fs.readFileSync('ingest/scenarios/torque-constant-loss.json', 'utf8')));
  const scenario: Scenario = { ...base, faults: base.faults.map((f) => ({ ...f, start_s: f.start_s + HEALTHY_LEAD_S })) };
  const fault = scenario.faults.find((f) => f.kind === 'torque-constant-loss') as Extract<Scenario['faults'][number], { kind: 'torque-constant-loss' }>;
  const endMs = Math.floor(Date.now() / 60_000) * 60_000 - 60_000;
  const startMs = endMs - FLIGHT_MIN * 60_000;
  for (const chunk of generatePackets({ sheet, scenario, startMs, durationMs: FLIGHT_MIN * 60_000, chunkBytes: 4 << 20 })) {
    await ingestBody(pool, db, chunk.slice(), { spacecraftId: sc.id, stationId: null, tokenId: null }, endMs + 5_000);
  }
  const summary = await runAnalysisJob(db, pool, { id: sc.id, key });
  expect(summary.status).toBe('done');
  return { sc: { id: sc.id, key }, startMs, scenario, rampStartMs: startMs + fault.start_s * 1000, rampEndMs: startMs + (fault.start_s + fault.ramp_s) * 1000 };
}

/** Loop 0's stored windows of the flown spacecraft inside an evidence answer's span, oldest first. */
function loopWindowsOf(ev: EvidenceResponse) {
  return db
    .selectFrom('loop_window')
    .select(['window_start', 'effectiveness', 'effectiveness_stderr', 'drift_cusum_lo', 'pressure_effectiveness', 'resistance_ohm'])
    .where('spacecraft_id', '=', flown.sc.id)
    .where('loop_id', '=', 0)
    .where('window_start', '>=', new Date(ev.span.from))
    .where('window_start', '<', new Date(ev.span.to))
    .orderBy('window_start')
    .execute();
}

function multipart(body: string, files: { name: string; bytes: Buffer; type?: string }[]): FormData {
  const form = new FormData();
  form.append('body', body);
  for (const f of files) form.append('files', new Blob([new Uint8Array(f.bytes)], { type: f.type ?? 'application/octet-stream' }), f.name);
  return form;
}

const incoming = () => {
  const dir = path.resolve(config().UPLOAD_DIR, 'attachments');
  return fs.existsSync(dir) ? fs.readdirSync(dir).filter((f) => f.startsWith('.incoming-')) : [];
};

let flown: Flown;
let tripId: number;
let trips: { id: number; quantity: string; onset_at: Date }[];
const as: Partial<Record<TestRole, Client>> = {};

beforeAll(async () => {
  flown = await fly();
  trips = await db
    .selectFrom('trip')
    .select(['id', 'quantity', 'onset_at'])
    .where('spacecraft_id', '=', flown.sc.id)
    .where('kind', '=', 'torque-constant-drift')
    .where('loop_id', '=', 0)
    .orderBy('onset_at')
    .execute();
  expect(trips.length).toBeGreaterThan(0);
  tripId = trips[0]!.id;
  for (const r of ['operator', 'analyst', 'engineer', 'admin'] as const) as[r] = await clientAs(r);
}, 300_000);

describe('evidence of a torque-constant-loss trip', () => {
  it('returns the stored derived series of the trip over the default span', async () => {
    const res = await as.analyst!.get(`/api/trips/${tripId}/evidence`);
    expect(res.status).toBe(200);
    const ev = (await res.json()) as EvidenceResponse;
    expect(ev.loopId).toBe(0);
    const rows = await loopWindowsOf(ev);
    expect(rows.length).toBeGreaterThan(20);
    expect(ev.windows).toBe(rows.length);
    const stored = (col: 'effectiveness' | 'drift_cusum_lo' | 'pressure_effectiveness' | 'resistance_ohm') => rows.filter((r) => r[col] !== null);
    // fewer windows than the point budget: nothing is dropped, every stored value comes back as it is
    for (const col of ['effectiveness', 'drift_cusum_lo', 'pressure_effectiveness', 'resistance_ohm'] as const) {
      expect(ev.series[col]!.t, col).toEqual(stored(col).map((r) => r.window_start.getTime() / 1000));
      expect(ev.series[col]!.y, col).toEqual(stored(col).map((r) => r[col]));
    }
    expect(ev.series.effectiveness!.e).toEqual(stored('effectiveness').map((r) => r.effectiveness_stderr ?? 0));
    expect(ev.baseline.source).toBe('drift-baseline');
    expect(ev.baseline.n).toBe(BASELINE_WINDOWS);
  });

  it('reports an onset inside the scenario ramp, within one window', async () => {
    for (const t of trips) {
      const ev = (await (await as.engineer!.get(`/api/trips/${t.id}/evidence`)).json()) as EvidenceResponse;
      const onset = Date.parse(ev.onset.at);
      expect(ev.onset.method, `trip ${t.id} (${t.quantity})`).toBe('cusum');
      expect(onset, `trip ${t.id} onset ${ev.onset.at}`).toBeGreaterThanOrEqual(flown.rampStartMs - 60_000);
      expect(onset, `trip ${t.id} onset ${ev.onset.at}`).toBeLessThanOrEqual(flown.rampEndMs + 60_000);
    }
    // the limit engine's onset of the effectiveness limit lies in the ramp too
    const eff = trips.find((t) => t.quantity === 'effectiveness');
    if (eff) {
      expect(eff.onset_at.getTime()).toBeGreaterThanOrEqual(flown.rampStartMs - 60_000);
      expect(eff.onset_at.getTime()).toBeLessThanOrEqual(flown.rampEndMs + 60_000);
    }
  });

  it('downsamples with LTTB to the point budget, keeping the first and last window (Steinarsson 2013)', async () => {
    const full = (await (await as.analyst!.get(`/api/trips/${tripId}/evidence`)).json()) as EvidenceResponse;
    const small = (await (await as.analyst!.get(`/api/trips/${tripId}/evidence?from=${encodeURIComponent(full.span.from)}&to=${encodeURIComponent(full.span.to)}&points=20`)).json()) as EvidenceResponse;
    const a = full.series.effectiveness!, b = small.series.effectiveness!;
    expect(b.t.length).toBe(20);
    expect(b.t[0]).toBe(a.t[0]);
    expect(b.t[19]).toBe(a.t[a.t.length - 1]);
    // every kept point is a stored point, with its own standard error
    for (let i = 0; i < b.t.length; i++) {
      const j = a.t.indexOf(b.t[i]!);
      expect(j).toBeGreaterThanOrEqual(0);
      expect(b.y[i]).toBe(a.y[j]);
      expect(b.e![i]).toBe(a.e![j]);
    }
  });

  it('shows the loss in the torque-against-current scatter: the recent kT is about half the baseline kT', async () => {
    const ev = (await (await as.analyst!.get(`/api/trips/${tripId}/evidence`)).json()) as EvidenceResponse;
    const { baseline, recent } = ev.scatter;
    expect(ev.scatter.kind).toBe('per-sample');
    expect(baseline && recent).toBeTruthy();
    // the scenario halves the effectiveness (magnitude 0.5)
    const magnitude = (flown.scenario.faults[0] as { magnitude: number }).magnitude;
    expect(recent!.kT! / baseline!.kT!).toBeGreaterThan(1 - magnitude - 0.1);
    expect(recent!.kT! / baseline!.kT!).toBeLessThan(1 - magnitude + 0.1);
    // the per-sample torque follows the period's kT: least squares through the origin by an independent library
    for (const p of [baseline!, recent!]) {
      const fit = new MLR(p.current_a.map((i) => [i]), p.torque_nm.map((t) => [t]), { intercept: false });
      const slope = fit.weights[0]![0]!;
      expect(Math.abs(slope / p.kT! - 1)).toBeLessThan(0.15);
    }
    expect(ev.readings.scatter).toMatch(/kT/);
  });

  it('rejects a bad span, and answers 404 for a trip that does not exist', async () => {
    const reversed = await as.analyst!.get(`/api/trips/${tripId}/evidence?from=2026-12-02T00:00:00Z&to=2026-12-01T00:00:00Z`);
    expect(reversed.status).toBe(400);
    expect(((await reversed.json()) as { error: { fields: Record<string, string[]> } }).error.fields.to?.[0]).toMatch(/must be after "from"/);
    expect((await as.analyst!.get(`/api/trips/${tripId}/evidence?loop=3`)).status).toBe(400);
    expect((await as.analyst!.get(`/api/trips/${tripId}/evidence?points=3`)).status).toBe(400);
    expect((await as.analyst!.get('/api/trips/99999999/evidence')).status).toBe(404);
  });
});

type ErrorBody = { error: { code: string; message: string; fields?: Record<string, string[]> } };

describe('the span: one set of defaults and checks for the evidence, the CSV, the raw samples and the report', () => {
  const trip = { onset_at: new Date('2026-06-01T12:00:30Z'), last_at: new Date('2026-06-01T12:20:10Z'), cleared_at: null };
  const def = defaultSpan(trip);
  const problem = (q: { from?: string; to?: string }) => {
    try {
      resolveSpan(trip, q);
      return null;
    } catch (e) {
      expect(e).toBeInstanceOf(HttpError);
      return (e as HttpError).fields;
    }
  };
  const at = (ms: number) => new Date(ms).toISOString();

  it('fills a missing end from the span around the trip, and keeps the span running forward [derived]', () => {
    expect(def).toEqual({ fromMs: Date.parse('2026-06-01T11:15:00Z'), toMs: Date.parse('2026-06-01T12:36:00Z') });
    const len = def.toMs - def.fromMs;
    expect(resolveSpan(trip, {})).toEqual(def);
    // one end given inside the default span: the other end is the default's
    expect(resolveSpan(trip, { from: '2026-06-01T11:45:00Z' })).toEqual({ fromMs: Date.parse('2026-06-01T11:45:00Z'), toMs: def.toMs });
    expect(resolveSpan(trip, { to: '2026-06-01T12:10:00Z' })).toEqual({ fromMs: def.fromMs, toMs: Date.parse('2026-06-01T12:10:00Z') });
    // one end given past the other default end: the span keeps the default's length
    expect(resolveSpan(trip, { from: '2026-06-02T00:00:00Z' })).toEqual({ fromMs: Date.parse('2026-06-02T00:00:00Z'), toMs: Date.parse('2026-06-02T00:00:00Z') + len });
    expect(resolveSpan(trip, { to: '2026-05-30T00:00:00Z' })).toEqual({ fromMs: Date.parse('2026-05-30T00:00:00Z') - len, toMs: Date.parse('2026-05-30T00:00:00Z') });
    // exactly the longest span passes
    expect(resolveSpan(trip, { from: at(def.toMs - MAX_SPAN_DAYS * 86_400_000) }).fromMs).toBe(def.toMs - MAX_SPAN_DAYS * 86_400_000);
  });

  it('names the end that is wrong: an early "from" alone, a late "to" alone, a reversed or too long pair', () => {
    expect(Object.keys(problem({ from: '2023-01-01T00:00:00Z' })!)).toEqual(['from']);
    expect(problem({ from: '2023-01-01T00:00:00Z' })!.from![0]).toMatch(new RegExp(`at most ${MAX_SPAN_DAYS} days`));
    expect(Object.keys(problem({ from: at(def.toMs - MAX_SPAN_DAYS * 86_400_000 - 60_000) })!)).toEqual(['from']);
    expect(Object.keys(problem({ to: '2027-06-01T00:00:00Z' })!)).toEqual(['to']);
    expect(problem({ from: '2026-06-01T12:00:00Z', to: '2026-06-01T11:00:00Z' })!.to![0]).toMatch(/must be after "from"/);
    expect(problem({ from: '2026-06-01T12:00:00Z', to: '2026-06-01T12:00:00Z' })!.to![0]).toMatch(/must be after "from"/);
    expect(Object.keys(problem({ from: '2026-01-01T00:00:00Z', to: '2026-06-01T00:00:00Z' })!)).toEqual(['to']);
  });

  it('the evidence, the CSV and the report answer 400 for the same bad spans, naming the field', async () => {
    const cases: [string, 'from' | 'to'][] = [
      ['from=2020-01-01T00:00:00Z', 'from'],
      ['to=2030-01-01T00:00:00Z', 'to'],
      ['from=2026-12-02T00:00:00Z&to=2026-12-01T00:00:00Z', 'to'],
    ];
    for (const [q, field] of cases) {
      for (const route of ['evidence', 'evidence.csv']) {
        const res = await as.analyst!.get(`/api/trips/${tripId}/${route}?${q}`);
        expect(res.status, `${route}?${q}`).toBe(400);
        const body = (await res.json()) as ErrorBody;
        expect(Object.keys(body.error.fields ?? {}), `${route}?${q}`).toEqual([field]);
      }
      const report = await as.analyst!.get(`/trips/${tripId}/report?${q}`);
      expect(report.status, `report?${q}`).toBe(400);
      const html = await report.text();
      expect(html).toContain(`<code>${field}</code>`);
      expect(html).toContain(`href="/trips/${tripId}/report"`);
      // the Casefile page itself stays usable: it says what was wrong and shows the span around the trip
      const page = await as.analyst!.get(`/trips/${tripId}?${q}`);
      expect(page.status).toBe(200);
      expect(await page.text()).toContain('The Casefile shows the span around the trip.');
    }
    const raw = await as.analyst!.get(`/api/trips/${tripId}/raw?window=yesterday`);
    expect(raw.status).toBe(400);
    expect(((await raw.json()) as ErrorBody).error.fields?.window).toBeDefined();
  });

  it('a span with one end gives the CSV the same windows as the evidence', async () => {
    const full = (await (await as.analyst!.get(`/api/trips/${tripId}/evidence`)).json()) as EvidenceResponse;
    for (const q of [`from=${encodeURIComponent(at(Date.parse(full.span.from) + 20 * 60_000))}`, `to=${encodeURIComponent(at(Date.parse(full.span.to) - 20 * 60_000))}`]) {
      const ev = (await (await as.analyst!.get(`/api/trips/${tripId}/evidence?${q}`)).json()) as EvidenceResponse;
      expect(ev.windows, q).toBeGreaterThan(5);
      const csv = await as.analyst!.get(`/api/trips/${tripId}/evidence.csv?${q}`);
      expect(csv.status).toBe(200);
      const lines = (await csv.text()).trim().split(/\r\n/).slice(1);
      const times = lines.map((l) => Date.parse(l.split(',')[0]!));
      expect(Math.min(...times), q).toBeGreaterThanOrEqual(Date.parse(ev.span.from));
      expect(Math.max(...times), q).toBeLessThan(Date.parse(ev.span.to));
      const stored = await db
        .selectFrom('loop_window')
        .select('window_start')
        .where('spacecraft_id', '=', flown.sc.id)
        .where('loop_id', '=', 0)
        .where('window_start', '>=', new Date(ev.span.from))
        .where('window_start', '<', new Date(ev.span.to))
        .execute();
      expect(stored.length).toBe(ev.windows);
      for (const s of stored) expect(times).toContain(s.window_start.getTime());
    }
  });
});

describe('the numbers the report and readings quote come from the full rows', () => {
  it('the last windows are the last real windows, not the last downsampled points', async () => {
    const ev = (await (await as.analyst!.get(`/api/trips/${tripId}/evidence?points=20`)).json()) as EvidenceResponse;
    const rows = await loopWindowsOf(ev);
    for (const col of ['effectiveness', 'pressure_effectiveness', 'resistance_ohm'] as const) {
      const last = rows.filter((r) => r[col] !== null).slice(-RECENT_WINDOWS);
      expect(last.length, col).toBe(RECENT_WINDOWS);
      const r = ev.recent[col];
      expect(r.windows, col).toBe(RECENT_WINDOWS);
      expect(r.from, col).toBe(last[0]!.window_start.getTime() / 1000);
      expect(r.to, col).toBe(last[last.length - 1]!.window_start.getTime() / 1000);
      expect(r.mean!, col).toBeCloseTo(ssMean(last.map((x) => x[col]!)), 12);
    }
    // with 20 points over the span, the last ten downsampled points reach back well before the last ten windows
    expect(ev.series.effectiveness!.t.slice(-RECENT_WINDOWS)[0]!).toBeLessThan(ev.recent.effectiveness.from!);
    const report = await (await as.analyst!.get(`/trips/${tripId}/report`)).text();
    expect(report).toMatch(/Effectiveness, last 10 windows \(\d\d:\d\d–\d\d:\d\d UTC\)/);
  });

  it('the drift chart and reading use the limit set\'s CUSUM levels; the detector\'s h is named as the onset detector\'s', async () => {
    const ev = (await (await as.analyst!.get(`/api/trips/${tripId}/evidence`)).json()) as EvidenceResponse;
    const rule = DEFAULT_RULES.find((r) => r.quantity === 'drift_cusum_lo')!;
    expect(ev.cusum.caution_sigma).toBe(rule.cautionHigh);
    expect(ev.cusum.warning_sigma).toBe(rule.warningHigh);
    expect(ev.cusum.detectorH_sigma).toBe(7);
    expect(ev.limits.drift_cusum_lo?.cautionHigh).toBe(rule.cautionHigh);
    const rows = await db
      .selectFrom('loop_window')
      .select(['window_start', 'drift_cusum_lo'])
      .where('spacecraft_id', '=', flown.sc.id)
      .where('loop_id', '=', 0)
      .where('window_start', '>=', new Date(ev.span.from))
      .where('window_start', '<', new Date(ev.span.to))
      .where('drift_cusum_lo', 'is not', null)
      .orderBy('window_start')
      .execute();
    const first = (h: number) => rows.find((r) => r.drift_cusum_lo! >= h)?.window_start.getTime() ?? null;
    expect(ev.cusum.firstAtCaution).toBe(first(rule.cautionHigh!)! / 1000);
    expect(ev.cusum.firstAtDetector).toBe(first(7)! / 1000);
    expect(ev.cusum.peakLo!.value).toBe(Math.max(...rows.map((r) => r.drift_cusum_lo!)));
    expect(ev.readings.drift).toContain(`caution limit of ${rule.cautionHigh}σ`);
    expect(ev.readings.drift).toContain(`limit set v${ev.limitSetVersion}`);
    expect(ev.readings.drift).toMatch(/onset detector's own decision level, h = 7σ, was crossed at .*raises no trip/);
    expect(ev.readings.drift).not.toMatch(/its decision level of 7σ/);
    const report = await (await as.analyst!.get(`/trips/${tripId}/report`)).text();
    expect(report).toContain(`caution ≥ ${rule.cautionHigh}σ, warning ≥ ${rule.warningHigh}σ`);
    expect(report).toContain('onset detector h = 7σ (dates the onset, not a limit)');
  });

  it('says the scatter lines are the slope only, and has data for the compensation and heating charts', async () => {
    const ev = (await (await as.analyst!.get(`/api/trips/${tripId}/evidence`)).json()) as EvidenceResponse;
    expect(ev.readings.scatter).toContain('τ = kT·I through the origin');
    expect(ev.readings.scatter).toContain('v|v|');
    // The heating chart's resistance and electrode temperature always have data; the thermal-model
    // residual only where the span's fit succeeds, which a short fixture does not promise.
    for (const k of ['compensated_effectiveness', 'magnet_temp_mean_c', 'resistance_ohm', 'electrode_temp_mean_c']) expect(ev.series[k]!.t.length, k).toBeGreaterThan(10);
  });

  it('shows the handling caution where hardware handling comes up: the report, the Casefile and the sheets', async () => {
    const caution = "The eutectic gallium alloy in the loops attacks aluminium and many other metals; ground handling of hardware follows the laboratory's own safety rules and local regulations.";
    const unescape = (h: string) => h.replace(/&#39;|&#x27;/g, "'");
    for (const path of [`/trips/${tripId}/report`, `/trips/${tripId}`, `/spacecraft/${flown.sc.key}/sheets`]) {
      const res = await as.operator!.get(path);
      expect(res.status, path).toBe(200);
      expect(unescape(await res.text()), path).toContain(caution);
    }
    // not on pages that have nothing to do with hardware
    expect(unescape(await (await as.operator!.get('/trips')).text())).not.toContain(caution);
  });
});

describe('the baseline of a trip under an older sheet', () => {
  it('comes from the sheet in force at the onset, before the trip, not from windows under a newer sheet', async () => {
    const key = `CB${Date.now().toString(36).toUpperCase().slice(-6)}`;
    const raw = spacecraftSheetSchema.parse(JSON.parse(fs.readFileSync('ingest/fleet/MR-1.json', 'utf8')));
    const sheet: SpacecraftSheet = { ...raw, spacecraft: { key, name: `Baseline ${key}` } };
    const t0 = Math.floor(Date.now() / 60_000) * 60_000 - 6 * 3600_000;
    const min = (n: number) => t0 + n * 60_000;
    // healthy 0.90 for 70 windows, the trip's drop to 0.60 for 10, then (after a newer sheet took over) 0.50 for 80
    let seed = 7;
    const noise = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648 - 0.5) * 0.01;
    const windows: { n: number; v: number }[] = [];
    for (let n = 0; n < 70; n++) windows.push({ n, v: 0.9 + noise() });
    for (let n = 70; n < 80; n++) windows.push({ n, v: 0.6 + noise() });
    for (let n = 90; n < 170; n++) windows.push({ n, v: 0.5 + noise() });
    const id = await db.transaction().execute(async (trx) => {
      const sc = await insertSpacecraftWithSheet(trx, { ...sheet, effectiveFrom: new Date(min(0)).toISOString() }, null);
      await insertSheet(trx, sc.id, { ...sheet, effectiveFrom: new Date(min(90)).toISOString() }, null);
      await trx
        .insertInto('loop_window')
        .values(windows.map((w) => ({ spacecraft_id: sc.id, loop_id: 0, window_start: new Date(min(w.n)), window_s: 60, samples: 600, effectiveness: w.v, compensated_effectiveness: w.v })))
        .execute();
      const trip = await trx
        .insertInto('trip')
        .values({
          spacecraft_id: sc.id, loop_id: 0, kind: 'torque-constant-drift', quantity: 'effectiveness', level: 'caution', side: 'low',
          limit_set_id: null, limit_set_version: 1, rule_id: null, onset_at: new Date(min(70)), raised_at: new Date(min(72)), last_at: new Date(min(79)),
          cleared_at: new Date(min(80)), value: 0.6, peak_value: 0.59, limit_value: 0.75, last_value: 0.6, evidence: '{}',
        })
        .returning('id')
        .executeTakeFirstOrThrow();
      return trip.id;
    });
    const ev = await loadEvidence(db, id, { points: 800 });
    expect(ev.baseline.source).toBe('drift-baseline');
    expect(ev.baseline.from).toBe(min(0) / 1000);
    expect(ev.baseline.to! * 1000).toBeLessThanOrEqual(min(70));
    const healthy = windows.filter((w) => w.n < BASELINE_WINDOWS).map((w) => w.v);
    expect(ev.baseline.n).toBe(BASELINE_WINDOWS);
    expect(ev.baseline.mean!).toBeCloseTo(ssMean(healthy), 12);
    // the onset is the step at window 70, dated against that baseline
    expect(ev.onset.method).toBe('cusum');
    expect(ev.onset.at).toBe(new Date(min(70)).toISOString());
    expect(ev.readings.effectiveness).toContain('drift baseline');
  });
});

describe('exports and raw samples', () => {
  it('exports the evidence as CSV that parses back to the stored windows', async () => {
    const ev = (await (await as.analyst!.get(`/api/trips/${tripId}/evidence`)).json()) as EvidenceResponse;
    const res = await as.operator!.get(`/api/trips/${tripId}/evidence.csv?from=${encodeURIComponent(ev.span.from)}&to=${encodeURIComponent(ev.span.to)}`);
    expect(res.status).toBe(200);
    expect(res.headers.get('content-type')).toMatch(/^text\/csv/);
    expect(res.headers.get('content-disposition')).toMatch(/attachment; filename="trip-\d+-.+\.csv"/);
    const lines = (await res.text()).trim().split(/\r\n/);
    const header = lines[0]!.split(',');
    const rows = lines.slice(1).map((l) => l.split(','));
    expect(rows.every((r) => r.length === header.length)).toBe(true);
    const col = (name: string) => header.indexOf(name);
    expect(col('effectiveness')).toBeGreaterThan(0);
    expect(col('ledger_residual_nm')).toBeGreaterThan(0);
    const stored = await loopWindowsOf(ev);
    const byTime = new Map(rows.map((r) => [r[0]!, r]));
    for (const s of stored) {
      const r = byTime.get(s.window_start.toISOString());
      expect(r, s.window_start.toISOString()).toBeDefined();
      expect(r![col('effectiveness')] === '' ? null : Number(r![col('effectiveness')])).toBe(s.effectiveness);
      expect(r![col('drift_cusum_lo')] === '' ? null : Number(r![col('drift_cusum_lo')])).toBe(s.drift_cusum_lo);
    }
  });

  it('gives the raw loop samples of one window', async () => {
    const t = trips[0]!.onset_at;
    const res = await as.analyst!.get(`/api/trips/${tripId}/raw?window=${encodeURIComponent(t.toISOString())}`);
    expect(res.status).toBe(200);
    const raw = (await res.json()) as RawWindowResponse;
    const from = Math.floor(t.getTime() / 60_000) * 60_000;
    expect(raw.window.from).toBe(new Date(from).toISOString());
    // 10 Hz housekeeping: about 600 samples in 60 s, all inside the window
    expect(raw.rows.length).toBeGreaterThan(550);
    expect(raw.rows.length).toBeLessThanOrEqual(600);
    expect(raw.rows.every((r) => Date.parse(r.t) >= from && Date.parse(r.t) < from + 60_000)).toBe(true);
    const direct = await db
      .selectFrom('loop_sample')
      .select(['measured_current_a'])
      .where('spacecraft_id', '=', flown.sc.id)
      .where('loop_id', '=', 0)
      .where('t', '>=', new Date(from))
      .where('t', '<', new Date(from + 60_000))
      .orderBy('time_tag')
      .orderBy('seq')
      .execute();
    expect(raw.rows.map((r) => r.measured_current_a)).toEqual(direct.map((d) => d.measured_current_a));
    expect((await as.analyst!.get(`/api/trips/${tripId}/raw`)).status).toBe(400);
  });

  it('renders the Casefile and its printable report, with the related trip of the same loop', async () => {
    const page = await as.operator!.get(`/trips/${tripId}`);
    expect(page.status).toBe(200);
    const html = await page.text();
    expect(html).toContain('Casefile');
    expect(html).toContain('Related trips');
    expect(html).toContain('analysts and engineers add notes');
    for (const other of trips.slice(1)) expect(html).toContain(`href="/trips/${other.id}"`);
    const report = await as.operator!.get(`/trips/${tripId}/report`);
    expect(report.status).toBe(200);
    expect(await report.text()).toContain('Casefile report');
  });
});

describe('attachments: type checked by content', () => {
  it('recognises the signatures and plain text', () => {
    expect(sniffBinaryType(PNG_1X1)).toBe('image/png');
    expect(sniffBinaryType(JPEG_HEAD)).toBe('image/jpeg');
    expect(sniffBinaryType(PDF)).toBe('application/pdf');
    expect(sniffBinaryType(EXE)).toBeNull();
    const text = new TextCheck();
    text.push(Buffer.from('t,effectiveness\r\n2026-12-01T00:00:00Z,0.7\n', 'utf8'));
    expect(text.end()).toBe(true);
    const bin = new TextCheck();
    bin.push(EXE);
    expect(bin.end()).toBe(false);
    expect(checkAttachmentType('plot.PNG', PNG_1X1, false)).toBe('image/png');
    expect(() => checkAttachmentType('plot.png', EXE.subarray(0, 16), false)).toThrow(/contents/);
    expect(() => checkAttachmentType('data.csv', EXE.subarray(0, 16), false)).toThrow(/contents/);
    expect(() => checkAttachmentType('tool.exe', EXE.subarray(0, 16), false)).toThrow(/not accepted/);
  });

  it('stores a note with a PNG, a JPEG, a CSV and a PDF, and serves them back unchanged', async () => {
    const csv = Buffer.from('window_start,effectiveness\n2026-12-01T00:00:00Z,0.7\n');
    const res = await as.analyst!.request('POST', `/api/trips/${tripId}/notes`, {
      body: multipart('Effectiveness halves over two minutes; the pressure constant follows.', [
        { name: 'kt-drop.png', bytes: PNG_1X1, type: 'image/png' },
        { name: 'photo.jpeg', bytes: JPEG_HEAD },
        { name: 'windows.csv', bytes: csv },
        { name: 'memo.pdf', bytes: PDF },
      ]),
    });
    expect(res.status, await res.clone().text()).toBe(201);
    const { notes } = (await res.json()) as { notes: CasefileNote[] };
    const note = notes[notes.length - 1]!;
    expect(note.attachments.map((a) => a.mediaType)).toEqual(['image/png', 'image/jpeg', 'text/csv', 'application/pdf']);
    const png = await as.operator!.get(note.attachments[0]!.url);
    expect(png.status).toBe(200);
    expect(png.headers.get('content-type')).toBe('image/png');
    expect(png.headers.get('x-content-type-options')).toBe('nosniff');
    expect(Buffer.from(await png.arrayBuffer()).equals(PNG_1X1)).toBe(true);
    const pdf = await as.operator!.get(note.attachments[3]!.url);
    expect(pdf.headers.get('content-disposition')).toMatch(/^attachment/);
    expect(Buffer.from(await pdf.arrayBuffer()).equals(PDF)).toBe(true);
    const row = await db.selectFrom('trip_attachment').select(['stored_path', 'sha256', 'bytes']).where('id', '=', note.attachments[2]!.id).executeTakeFirstOrThrow();
    expect(row.stored_path.startsWith(path.resolve(config().UPLOAD_DIR, 'attachments'))).toBe(true);
    expect(row.bytes).toBe(csv.length);
    expect(fs.readFileSync(row.stored_path).equals(csv)).toBe(true);
    // another trip's id does not reach the file
    expect((await as.operator!.get(`/api/trips/${tripId + 100000}/attachments/${note.attachments[0]!.id}`)).status).toBe(404);
  });

  it('rejects a renamed .exe (as .png and as .csv), a text file named .png, an .exe, and a file over 20 MB; nothing is kept', async () => {
    const count = async () => Number((await db.selectFrom('trip_note').select((eb) => eb.fn.countAll<number>().as('n')).where('trip_id', '=', tripId).executeTakeFirstOrThrow()).n);
    const before = await count();
    for (const f of [
      { name: 'plot.png', bytes: EXE, type: 'image/png' },
      { name: 'data.csv', bytes: EXE, type: 'text/csv' },
      { name: 'fake.png', bytes: Buffer.from('a,b\n1,2\n') },
      { name: 'tool.exe', bytes: EXE },
    ]) {
      const res = await as.engineer!.request('POST', `/api/trips/${tripId}/notes`, { body: multipart('With a file.', [f]) });
      expect(res.status, f.name).toBe(400);
      const body = (await res.json()) as { error: { fields?: Record<string, string[]> } };
      expect(body.error.fields?.files?.[0], f.name).toContain(f.name);
    }
    const big = Buffer.alloc(20 * 1024 * 1024 + 10, 0x31);
    const res = await as.engineer!.request('POST', `/api/trips/${tripId}/notes`, { body: multipart('Too big.', [{ name: 'big.csv', bytes: big }]) });
    expect(res.status).toBe(413);
    expect(await count()).toBe(before);
    expect(incoming()).toEqual([]);
  });
});

describe('notes by role', () => {
  it('analysts and engineers add notes; operators and admins read them', async () => {
    for (const role of ['analyst', 'engineer'] as const) {
      const res = await as[role]!.request('POST', `/api/trips/${tripId}/notes`, { body: multipart(`A note by the ${role}.`, []) });
      expect(res.status, role).toBe(201);
    }
    for (const role of ['operator', 'admin'] as const) {
      const res = await as[role]!.request('POST', `/api/trips/${tripId}/notes`, { body: multipart(`A note by the ${role}.`, []) });
      expect(res.status, role).toBe(403);
    }
    expect((await new Client().request('POST', `/api/trips/${tripId}/notes`, { body: multipart('anonymous', []) })).status).toBe(401);
    for (const role of ['operator', 'analyst', 'engineer', 'admin'] as const) {
      const res = await as[role]!.get(`/api/trips/${tripId}/notes`);
      expect(res.status).toBe(200);
      const { notes } = (await res.json()) as { notes: CasefileNote[] };
      expect(notes.map((n) => n.body)).toEqual(expect.arrayContaining(['A note by the analyst.', 'A note by the engineer.']));
      expect(notes.some((n) => n.body.includes('operator') || n.body.includes('admin.'))).toBe(false);
    }
    const empty = await as.analyst!.request('POST', `/api/trips/${tripId}/notes`, { body: multipart('   ', []) });
    expect(empty.status).toBe(400);
  });

  it('every role reads the evidence, the raw samples and the CSV of a real trip; nobody signed out does', async () => {
    const paths = [`/api/trips/${tripId}/evidence`, `/api/trips/${tripId}/evidence.csv`, `/api/trips/${tripId}/raw?window=${encodeURIComponent(trips[0]!.onset_at.toISOString())}`, `/api/trips/${tripId}/notes`];
    for (const p of paths) {
      for (const role of ['operator', 'analyst', 'engineer', 'admin'] as const) expect((await as[role]!.get(p)).status, `${role} ${p}`).toBe(200);
      expect((await new Client().get(p)).status, p).toBe(401);
    }
  });
});

describe('conclusion and resolve', () => {
  it('an operator cannot write the conclusion of, or resolve, a drift trip', async () => {
    expect((await as.operator!.request('PUT', `/api/trips/${tripId}/conclusion`, { json: { conclusion: 'Operator thinks it is fine.' } })).status).toBe(403);
    expect((await as.operator!.post(`/api/trips/${tripId}/resolve`, { conclusion: 'Operator thinks it is fine.' })).status).toBe(403);
  });

  it('resolving needs the trip acknowledged and a conclusion; the saved conclusion is the resolution', async () => {
    const t = trips[trips.length - 1]!.id;
    expect((await as.analyst!.post(`/api/trips/${t}/resolve`, { conclusion: 'Too early.' })).status).toBe(409);
    const ack = await as.analyst!.post(`/api/trips/${t}/acknowledge`, { note: 'Looking at the Casefile.' });
    expect(ack.status).toBe(200);
    const none = await as.analyst!.post(`/api/trips/${t}/resolve`, {});
    expect(none.status).toBe(400);
    expect(((await none.json()) as { error: { fields: Record<string, string[]> } }).error.fields.conclusion).toBeDefined();
    expect((await as.analyst!.request('PUT', `/api/trips/${t}/conclusion`, { json: { conclusion: 'x' } })).status).toBe(400);
    const text = 'Pump effectiveness halved in two minutes; the pressure constant agrees, magnet temperature does not explain it. Electrode wetting loss suspected; loop 0 de-rated.';
    const saved = await as.engineer!.request('PUT', `/api/trips/${t}/conclusion`, { json: { conclusion: text } });
    expect(saved.status).toBe(200);
    const resolved = await as.analyst!.post(`/api/trips/${t}/resolve`, {});
    expect(resolved.status).toBe(200);
    const trip = await db.selectFrom('trip').select(['state', 'resolution']).where('id', '=', t).executeTakeFirstOrThrow();
    expect(trip).toEqual({ state: 'resolved', resolution: text });
    expect((await as.analyst!.request('PUT', `/api/trips/${t}/conclusion`, { json: { conclusion: 'Changed my mind.' } })).status).toBe(409);
    expect((await as.analyst!.post(`/api/trips/${t}/resolve`, { conclusion: 'Again.' })).status).toBe(409);
  });
});

describe('uncertainty helpers against independent computations', () => {
  it('the standard error of |r| agrees with a Monte-Carlo spread (simple-statistics sample standard deviation)', () => {
    // first-order propagation (common practice) against 40 000 normal draws, deterministic generator
    let seed = 12345;
    const uniform = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) + 0.5) / 2147483648;
    const normal = () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
    const r: [number, number, number] = [3e-6, -4e-6, 1.2e-5];
    const se: [number, number, number] = [2e-7, 3e-7, 1e-7];
    const draws: number[] = [];
    for (let i = 0; i < 40_000; i++) draws.push(Math.hypot(r[0] + se[0] * normal(), r[1] + se[1] * normal(), r[2] + se[2] * normal()));
    expect(Math.abs(magnitudeStdErr(r, se) / sampleStandardDeviation(draws) - 1)).toBeLessThan(0.03);
  });

  it('the inverse-variance mean of kT equals weighted least squares of a constant (ml-regression-multivariate-linear)', () => {
    const rows = [
      { kt: 1.2e-4, se: 2e-6 },
      { kt: 1.15e-4, se: 4e-6 },
      { kt: 1.3e-4, se: 1e-5 },
      { kt: null, se: 1e-6 },
      { kt: 1.22e-4, se: 3e-6 },
    ];
    const used = rows.filter((r) => r.kt !== null);
    // weighted least squares of y = b·1: rows scaled by √w = 1/se
    const fit = new MLR(used.map((r) => [1 / r.se]), used.map((r) => [r.kt! / r.se]), { intercept: false });
    const w = weightedKt(rows);
    expect(w.kT! / fit.weights[0]![0]! - 1).toBeCloseTo(0, 10);
    expect(w.kTStdErr).toBeCloseTo(1 / Math.sqrt(used.reduce((s, r) => s + 1 / r.se ** 2, 0)), 15);
  });

  it('the step change point finds a synthetic step and the start of a synthetic ramp [derived]', () => {
    let seed = 99;
    const uniform = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) + 0.5) / 2147483648;
    const noise = () => (uniform() + uniform() + uniform() - 1.5) * 0.004;
    const step = Array.from({ length: 40 }, (_, i) => (i < 25 ? 0.7 : 0.6) + noise());
    expect(stepChangePoint(step, 0.7, 0, 39, 'down')).toBe(25);
    // a ramp over two windows from index 25, the detector signalling at 26: the step lies in the ramp
    const ramp = Array.from({ length: 30 }, (_, i) => (i < 25 ? 0.7 : i === 25 ? 0.62 : 0.45) + noise());
    const at = stepChangePoint(ramp, 0.7, 20, 26, 'down');
    expect(at).toBeGreaterThanOrEqual(25);
    expect(at).toBeLessThanOrEqual(26);
    // nothing on the wrong side: an upward excursion is not a downward step
    expect(stepChangePoint([0.7, 0.8, 0.8], 0.7, 0, 2, 'down')).toBe(0);
  });
});
