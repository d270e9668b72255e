import { useEffect, useMemo, useRef, useState } from 'react';
import { QueryClientProvider, useQueryClient } from '@tanstack/react-query';
import type uPlot from 'uplot';
import { getQueryClient } from '../../lib/query-client';
import { StateBadge, type HealthState } from '../../components/StateBadge';
import { formatUtc, formatValue } from '../../lib/format';
import type { AttitudeSeries, BatchEvent, LimitLevels, LiveTrip, LoopSeries, PassWatchSnapshot } from '../../lib/server/live';
import type { PassInfo } from '../../lib/server/pass-log';
import { LiveStore, LOOP_COLS, loopCol, type LoopCol, type SeriesBuffer } from './live-store';
import LiveChart, { type Band, type LimitLine } from './LiveChart';
import TripQueue from './TripQueue';
import PassLog from './PassLog';
import { passLogQuery, type PassLogResponse } from './pass-watch.queries';

/** Outside a pass the charts show this much of the recent past. */
const RECENT_MS = 15 * 60_000;
const C1 = '#5B7C99';
const C2 = '#8A6FB0';
const C3 = '#3E9AA8';

type Connection = 'connecting' | 'live' | 'reconnecting' | 'closed';

/** The charts' time window: the whole pass (with a little before AOS and after LOS), else the last 15 minutes. */
export function viewWindow(nowMs: number, passes: readonly PassInfo[]): { fromMs: number; toMs: number; current: PassInfo | null } {
  const current = passes.filter((p) => p.aosMs <= nowMs && nowMs <= p.losMs).sort((a, b) => b.losMs - a.losMs)[0] ?? null;
  if (current) return { fromMs: current.aosMs - 2 * 60_000, toMs: Math.max(current.losMs, nowMs) + 60_000, current };
  return { fromMs: nowMs - RECENT_MS, toMs: nowMs + 60_000, current: null };
}

/** A loop's state as the Fleet decides it: live trips first (warning, then caution), then the age of its data. */
export function loopState(trips: readonly LiveTrip[], newestMs: number | null, nowMs: number, staleAfterS: number): HealthState {
  if (trips.some((t) => t.level === 'warning')) return 'warning';
  if (trips.length) return 'caution';
  if (newestMs === null || nowMs - newestMs > staleAfterS * 1000) return 'stale';
  return 'nominal';
}

/** What a readout shows: the newest value on the charts, else the newest stored sample (however old), with its sample time. */
export interface Readouts {
  tMs: number | null;
  value: (k: number) => number | null;
}

/** A loop's readouts from its chart buffer, falling back to the newest stored sample of the loop. */
export function loopReadouts(buf: SeriesBuffer | undefined, latest: LoopSeries | undefined): Readouts {
  if (buf && buf.newestMs !== null) return { tMs: buf.newestMs, value: (k) => buf.latest(k) };
  if (latest && latest.t.length) {
    const i = latest.t.length - 1;
    return { tMs: latest.t[i]!, value: (k) => (latest[LOOP_COLS[k]!] as readonly (number | null)[])[i] ?? null };
  }
  return { tMs: null, value: () => null };
}

/** The body's readouts (ωx, ωy, ωz) from the chart buffer, falling back to the newest stored sample. */
export function bodyReadouts(buf: SeriesBuffer, latest: AttitudeSeries | undefined): Readouts {
  if (buf.newestMs !== null) return { tMs: buf.newestMs, value: (k) => buf.latest(k) };
  if (latest && latest.t.length) {
    const i = latest.t.length - 1;
    const cols = [latest.x, latest.y, latest.z];
    return { tMs: latest.t[i]!, value: (k) => cols[k]?.[i] ?? null };
  }
  return { tMs: null, value: () => null };
}

const isLive = (t: LiveTrip) => t.state !== 'resolved' && !t.cleared_at;

function clock(ms: number): string {
  const s = Math.max(0, Math.round(ms / 1000));
  const h = Math.floor(s / 3600);
  const m = Math.floor((s % 3600) / 60);
  const sec = s % 60;
  return `${h ? `${h}:` : ''}${String(m).padStart(h ? 2 : 1, '0')}:${String(sec).padStart(2, '0')}`;
}

function ago(ms: number): string {
  const s = Math.round(ms / 1000);
  if (s < 90) return `${Math.max(0, s)} s ago`;
  if (s < 5400) return `${Math.round(s / 60)} min ago`;
  return `${(s / 3600).toFixed(1)} h ago`;
}

function limitLines(limits: readonly LimitLevels[], quantities: readonly string[], loopId: number | null): LimitLine[] {
  const out: LimitLine[] = [];
  for (const r of limits) {
    if (!quantities.includes(r.quantity) || (r.loopId !== null && r.loopId !== loopId)) continue;
    for (const [v, level] of [
      [r.cautionHigh, 'caution'],
      [r.warningHigh, 'warning'],
      [r.cautionLow, 'caution'],
      [r.warningLow, 'warning'],
    ] as const)
      if (v !== null) out.push({ value: v, level });
  }
  return out;
}

/** Where a value stands against the levels of its quantity. */
function levelOf(v: number | null, lines: readonly LimitLine[], limits: readonly LimitLevels[], quantity: string, loopId: number | null): 'warning' | 'caution' | null {
  if (v === null || !lines.length) return null;
  for (const r of limits) {
    if (r.quantity !== quantity || (r.loopId !== null && r.loopId !== loopId)) continue;
    if ((r.warningHigh !== null && v >= r.warningHigh) || (r.warningLow !== null && v <= r.warningLow)) return 'warning';
    if ((r.cautionHigh !== null && v >= r.cautionHigh) || (r.cautionLow !== null && v <= r.cautionLow)) return 'caution';
  }
  return null;
}

interface LoopChart {
  key: string;
  title: string;
  unit: string;
  display?: number;
  cols: { col: LoopCol; label: string; color: string }[];
  quantities: string[];
}

const LOOP_CHARTS: LoopChart[] = [
  { key: 'current', title: 'Measured pump current', unit: 'A', cols: [{ col: 'current', label: 'I', color: C1 }], quantities: ['measured_current_a'] },
  { key: 'flow', title: 'Flow velocity', unit: 'm/s', cols: [{ col: 'flow', label: 'v', color: C1 }], quantities: ['flow_velocity_m_s'] },
  { key: 'pressure', title: 'Pump pressure rise', unit: 'Pa', cols: [{ col: 'pressure', label: 'Δp', color: C1 }], quantities: ['pressure_rise_pa'] },
  {
    key: 'temps',
    title: 'Temperatures',
    unit: '°C',
    cols: [
      { col: 'fluidTemp', label: 'fluid', color: C3 },
      { col: 'electrodeTemp', label: 'electrode', color: C2 },
      { col: 'magnetTemp', label: 'magnet', color: C1 },
    ],
    quantities: ['fluid_temp_c', 'electrode_temp_c', 'magnet_temp_c', 'electrode_temp_mean_c'],
  },
  { key: 'momentum', title: 'Fluid momentum h = 2ρAvS', unit: 'mN·m·s', display: 1e3, cols: [{ col: 'momentum', label: 'h', color: C1 }], quantities: [] },
  { key: 'margin', title: 'Momentum margin in use', unit: '%', cols: [{ col: 'margin', label: '|h| / capacity', color: C1 }], quantities: ['margin_in_use_pct'] },
];

const READOUTS: { col: LoopCol; label: string; unit: string; quantity: string; display?: number }[] = [
  { col: 'current', label: 'Current', unit: 'A', quantity: 'measured_current_a' },
  { col: 'flow', label: 'Flow', unit: 'm/s', quantity: 'flow_velocity_m_s' },
  { col: 'pressure', label: 'Δp', unit: 'Pa', quantity: 'pressure_rise_pa' },
  { col: 'fluidTemp', label: 'Fluid', unit: '°C', quantity: 'fluid_temp_c' },
  { col: 'electrodeTemp', label: 'Electrode', unit: '°C', quantity: 'electrode_temp_c' },
  { col: 'magnetTemp', label: 'Magnet', unit: '°C', quantity: 'magnet_temp_c' },
  { col: 'momentum', label: 'h', unit: 'mN·m·s', quantity: '', display: 1e3 },
  { col: 'margin', label: 'Margin in use', unit: '%', quantity: 'margin_in_use_pct' },
];

function useTheme(): string {
  const [theme, setTheme] = useState('light');
  useEffect(() => {
    const read = () => setTheme(document.documentElement.dataset.theme === 'dark' ? 'dark' : 'light');
    read();
    const mo = new MutationObserver(read);
    mo.observe(document.documentElement, { attributes: true, attributeFilter: ['data-theme'] });
    return () => mo.disconnect();
  }, []);
  return theme;
}

interface Props {
  snapshot: PassWatchSnapshot;
  passLog: PassLogResponse;
  roles: string[];
}

function PassWatchView({ snapshot, passLog, roles }: Props) {
  const key = snapshot.spacecraft.key;
  const qc = useQueryClient();
  const theme = useTheme();
  const [store] = useState(() => {
    const s = new LiveStore(snapshot.loops.map((l) => l.id));
    s.add(snapshot.history);
    return s;
  });
  const [version, setVersion] = useState(0);
  const [trips, setTrips] = useState<LiveTrip[]>(snapshot.trips);
  const [conn, setConn] = useState<Connection>('connecting');
  const [lastBatch, setLastBatch] = useState<BatchEvent | null>(null);
  const [nowMs, setNowMs] = useState(snapshot.generatedAtMs);
  const offset = useRef(0);
  const flushPending = useRef(false);
  const root = useRef<HTMLDivElement>(null);

  const win = viewWindow(nowMs, snapshot.passes);
  const winRef = useRef(win);
  winRef.current = win;

  // The clock: countdowns, the moving window and staleness (server time, corrected once per connection).
  useEffect(() => {
    const tick = () => {
      const now = Date.now() + offset.current;
      setNowMs(now);
      store.trimBefore(viewWindow(now, snapshot.passes).fromMs - 10_000);
      setVersion((v) => v + 1);
    };
    tick();
    const id = setInterval(tick, 1000);
    return () => clearInterval(id);
  }, [store, snapshot.passes]);

  // The live stream. The browser reconnects by itself and sends Last-Event-ID; the server resumes from there.
  useEffect(() => {
    const es = new EventSource(`/api/live/${encodeURIComponent(key)}?after=${snapshot.seq}`);
    const flush = () => {
      if (flushPending.current) return;
      flushPending.current = true;
      requestAnimationFrame(() => {
        flushPending.current = false;
        setVersion((v) => v + 1);
      });
    };
    es.addEventListener('ready', (e) => {
      const d = JSON.parse((e as MessageEvent<string>).data) as { serverTimeMs: number };
      offset.current = d.serverTimeMs - Date.now();
      setConn('live');
    });
    es.addEventListener('samples', (e) => {
      const ev = JSON.parse((e as MessageEvent<string>).data) as BatchEvent;
      store.add(ev);
      setLastBatch(ev);
      flush();
    });
    es.addEventListener('trips', (e) => setTrips((JSON.parse((e as MessageEvent<string>).data) as { trips: LiveTrip[] }).trips));
    es.addEventListener('trip', (e) => {
      const { trip } = JSON.parse((e as MessageEvent<string>).data) as { trip: LiveTrip };
      setTrips((list) => (trip.state === 'resolved' ? list.filter((t) => t.id !== trip.id) : [trip, ...list.filter((t) => t.id !== trip.id)]));
    });
    es.addEventListener('reset', () => {
      es.close();
      location.reload();
    });
    es.onopen = () => setConn('live');
    es.onerror = () => setConn(es.readyState === EventSource.CLOSED ? 'closed' : 'reconnecting');
    return () => es.close();
  }, [key, snapshot.seq, store]);

  // The newest sample time on the charts, set once the frame with it is drawn (the latency benchmark reads it).
  useEffect(() => {
    const newest = store.newestMs;
    const id = requestAnimationFrame(() => {
      if (root.current && newest !== null) root.current.dataset.newestSampleMs = String(Math.round(newest));
    });
    return () => cancelAnimationFrame(id);
  }, [version, store]);

  // When a pass ends, the pass log gets its new entry.
  const currentLos = win.current?.losMs ?? null;
  const prevLos = useRef(currentLos);
  useEffect(() => {
    if (prevLos.current !== null && currentLos === null) void qc.invalidateQueries({ queryKey: passLogQuery(key).queryKey });
    prevLos.current = currentLos;
  }, [currentLos, key, qc]);

  const xRange: [number, number] = [win.fromMs / 1000, win.toMs / 1000];
  const bands: Band[] = snapshot.passes.filter((p) => p.losMs >= win.fromMs && p.aosMs <= win.toMs).map((p) => ({ fromS: p.aosMs / 1000, toS: p.losMs / 1000 }));
  const gapBands: Band[] = store.gaps.map((g) => ({ fromS: g.afterMs / 1000, toS: g.beforeMs / 1000 }));
  const syncKey = `pass-watch-${key}`;
  const liveTrips = trips.filter(isLive);
  const canAck = roles.some((r) => ['operator', 'analyst', 'engineer', 'admin'].includes(r));
  const newest = store.newestMs ?? snapshot.lastDataMs;

  const att = store.attitude;
  const bodyData: uPlot.AlignedData = [att.t, att.cols[0]!, att.cols[1]!, att.cols[2]!];
  const bodyLimits = useMemo(() => limitLines(snapshot.limits, ['rate_x_rad_s', 'rate_y_rad_s', 'rate_z_rad_s'], null), [snapshot.limits]);
  const [pt, pn] = store.packetColumns(win.fromMs, Math.min(win.toMs, nowMs));
  // The link rate over the ten whole seconds before the newest sample (data may lag the clock).
  let recent = 0;
  if (newest !== null) {
    const end = Math.floor(newest / 1000) * 1000;
    for (let s = end - 10_000; s < end; s += 1000) recent += (store.packets.get(s) ?? 0) / 10;
  }
  const inWindow = pn.reduce<number>((a, b) => a + (b ?? 0), 0);
  const missing = store.gaps.filter((g) => g.beforeMs >= win.fromMs).reduce((a, g) => a + g.missing, 0);

  const lastPass = [...snapshot.passes].filter((p) => p.losMs < nowMs).sort((a, b) => b.losMs - a.losMs)[0] ?? null;
  const nextPass = snapshot.passes.filter((p) => p.aosMs > nowMs).sort((a, b) => a.aosMs - b.aosMs)[0] ?? null;

  return (
    <div ref={root} className="space-y-4" data-connection={conn} data-spacecraft={key}>
      <div className="flex flex-wrap items-end justify-between gap-3">
        <div>
          <p className="text-xs text-muted">
            <a href="/pass-watch">Pass watch</a> / {key}
          </p>
          <h1>
            Pass watch {key} <span className="font-normal text-muted">· {snapshot.spacecraft.name}</span>
          </h1>
        </div>
        <div className="flex items-center gap-3 text-xs text-muted">
          <span aria-live="polite" data-testid="connection">
            {conn === 'live' ? (
              <span className="font-medium text-nominal">● live</span>
            ) : conn === 'closed' ? (
              <span className="font-medium text-warning">
                ◆ stream closed —{' '}
                <button className="underline" onClick={() => location.reload()}>
                  reload
                </button>
              </span>
            ) : (
              <span className="text-stale">○ {conn === 'connecting' ? 'connecting…' : 'reconnecting…'}</span>
            )}
          </span>
          <span>
            newest sample <span className="num text-ink">{newest !== null ? `${formatUtc(newest)} UTC` : '—'}</span>
          </span>
          <span>
            limit set <span className="text-ink">{snapshot.limitSet ? `v${snapshot.limitSet.version} ${snapshot.limitSet.name}` : 'none active'}</span>
          </span>
        </div>
      </div>

      <section className="panel flex flex-wrap items-center gap-x-8 gap-y-2 px-4 py-3" aria-label="Pass status">
        {win.current ? (
          <>
            <div>
              <p className="text-xs uppercase tracking-wide text-muted">In pass · {win.current.stationName}</p>
              <p className="num text-2xl font-semibold text-copper" aria-label="Time to LOS">
                LOS in {clock(win.current.losMs - nowMs)}
              </p>
            </div>
            <p className="text-xs text-muted">
              AOS <span className="num text-ink">{formatUtc(win.current.aosMs).slice(11)}</span> · LOS{' '}
              <span className="num text-ink">{formatUtc(win.current.losMs).slice(11)}</span> UTC · max elevation{' '}
              <span className="num text-ink">{win.current.maxElevation_deg.toFixed(0)}°</span>
            </p>
          </>
        ) : (
          <>
            <div>
              <p className="text-xs uppercase tracking-wide text-muted">Between passes</p>
              <p className="num text-xl font-semibold text-ink" aria-label="Time to next AOS">
                {nextPass ? `Next AOS in ${clock(nextPass.aosMs - nowMs)}` : 'No pass predicted in the next day'}
              </p>
            </div>
            <dl className="grid grid-cols-[auto_1fr] gap-x-3 text-xs">
              <dt className="text-muted">Next AOS</dt>
              <dd className="num">{nextPass ? `${formatUtc(nextPass.aosMs)} UTC · ${nextPass.stationName} · max el ${nextPass.maxElevation_deg.toFixed(0)}°` : '—'}</dd>
              <dt className="text-muted">Last pass</dt>
              <dd className="num">{lastPass ? `${lastPass.stationName}, LOS ${formatUtc(lastPass.losMs)} UTC (${ago(nowMs - lastPass.losMs)})` : '—'}</dd>
              <dt className="text-muted">Latest data</dt>
              <dd className="num">{newest !== null ? `${formatUtc(newest)} UTC (${ago(nowMs - newest)})` : 'none received yet'}</dd>
            </dl>
          </>
        )}
        {snapshot.passError && <p className="text-xs text-warning">{snapshot.passError}</p>}
      </section>

      <div className="grid gap-4 xl:grid-cols-[minmax(0,1fr)_22rem]">
        <div className="min-w-0 space-y-4">
          <section aria-label="Loop health" className="grid gap-3 md:grid-cols-2 2xl:grid-cols-4">
            {snapshot.loops.map((l) => {
              const buf = store.loops.get(l.id);
              const lt = liveTrips.filter((t) => t.loop_id === l.id);
              const ro = loopReadouts(buf, snapshot.latest.loops.find((x) => x.loopId === l.id));
              const state = loopState(lt, ro.tMs ?? snapshot.lastDataMs, nowMs, snapshot.staleAfterS);
              const w = snapshot.analysed.find((a) => a.loopId === l.id);
              const loopNewest = ro.tMs;
              return (
                <article key={l.id} className="panel" aria-label={`Loop L${l.id} health`}>
                  <header className="flex items-center justify-between border-b border-rule px-3 py-2">
                    <h2 className="text-sm">Loop L{l.id}</h2>
                    <StateBadge state={state} />
                  </header>
                  <p className="px-3 pt-1 text-xs text-muted">
                    {lt.length
                      ? `${lt.length} live trip${lt.length === 1 ? '' : 's'}: ${lt.map((t) => `${t.level} ${t.quantityLabel.toLowerCase()}`).join('; ')}`
                      : state === 'stale'
                        ? `no data for ${loopNewest !== null || snapshot.lastDataMs !== null ? ago(nowMs - (loopNewest ?? snapshot.lastDataMs ?? nowMs)).replace(' ago', '') : 'this spacecraft yet'} (stale after ${snapshot.staleAfterS} s)`
                        : `no live trip · data ${loopNewest !== null ? ago(nowMs - loopNewest) : '—'}`}
                  </p>
                  <table className="table-compact mt-1">
                    <tbody>
                      {READOUTS.map((r) => {
                        const v = ro.value(loopCol(r.col));
                        const lvl = levelOf(v, limitLines(snapshot.limits, [r.quantity], l.id), snapshot.limits, r.quantity, l.id);
                        return (
                          <tr key={r.col}>
                            <td className="text-xs text-muted">{r.label}</td>
                            <td className="n">
                              {formatValue(v === null ? null : v * (r.display ?? 1))} <span className="unit">{r.unit}</span>
                            </td>
                            <td className="w-20 whitespace-nowrap text-xs">{lvl && <span className={lvl === 'warning' ? 'text-warning' : 'text-caution'}>{lvl === 'warning' ? '◆ warning' : '▲ caution'}</span>}</td>
                          </tr>
                        );
                      })}
                    </tbody>
                  </table>
                  <p className="px-3 pt-1 text-xs text-muted" data-testid={`readouts-time-L${l.id}`}>
                    {ro.tMs !== null ? (
                      <>
                        values at <span className="num text-ink">{formatUtc(ro.tMs)} UTC</span> ({ago(nowMs - ro.tMs)}
                        {buf?.newestMs === null || buf?.newestMs === undefined ? ', latest known' : ''})
                      </>
                    ) : (
                      'no sample of this loop stored yet'
                    )}
                  </p>
                  <p className="px-3 py-2 text-xs text-muted">
                    rated <span className="num">{l.ratedCurrent_A}</span> A · capacity <span className="num">{formatValue(l.capacity_Nms * 1e3)}</span> mN·m·s
                    {w ? (
                      <>
                        {' '}
                        · window {formatUtc(w.windowStart).slice(11, 16)}: effectiveness <span className="num">{formatValue(w.effectiveness, 3)}</span>, margin{' '}
                        <span className="num">{formatValue(w.marginInUse_pct, 3)}</span> %
                      </>
                    ) : (
                      ' · no analysed window yet'
                    )}
                  </p>
                </article>
              );
            })}
            {(() => {
              const ro = bodyReadouts(att, snapshot.latest.attitude);
              return (
                <article className="panel" aria-label="Body health">
                  <header className="flex items-center justify-between border-b border-rule px-3 py-2">
                    <h2 className="text-sm">Body</h2>
                    <StateBadge state={loopState(liveTrips.filter((t) => t.loop_id === null), ro.tMs ?? snapshot.lastDataMs, nowMs, snapshot.staleAfterS)} />
                  </header>
                  <table className="table-compact">
                    <tbody>
                      {(['ωx', 'ωy', 'ωz'] as const).map((label, k) => {
                        const v = ro.value(k);
                        return (
                          <tr key={label}>
                            <td className="text-xs text-muted">{label}</td>
                            <td className="n">
                              {formatValue(v === null ? null : v * 1e3)} <span className="unit">mrad/s</span>
                            </td>
                          </tr>
                        );
                      })}
                    </tbody>
                  </table>
                  <p className="px-3 pt-1 text-xs text-muted" data-testid="readouts-time-body">
                    {ro.tMs !== null ? (
                      <>
                        values at <span className="num text-ink">{formatUtc(ro.tMs)} UTC</span> ({ago(nowMs - ro.tMs)}
                        {att.newestMs === null ? ', latest known' : ''})
                      </>
                    ) : (
                      'no body rate stored yet'
                    )}
                  </p>
                  <p className="px-3 py-2 text-xs text-muted">{liveTrips.filter((t) => t.loop_id === null).length} live body trip(s)</p>
                </article>
              );
            })()}
          </section>

          <section aria-label="Link quality" className="space-y-1">
            <div className="flex flex-wrap gap-x-6 gap-y-1 px-1 text-xs text-muted">
              <span>
                housekeeping <span className="num font-medium text-ink">{recent.toFixed(1)}</span> packets/s (10 s before the newest sample)
              </span>
              <span>
                in view <span className="num text-ink">{inWindow.toLocaleString('en')}</span> packets ·{' '}
                <span className={missing ? 'num font-medium text-warning' : 'num text-ink'}>{missing.toLocaleString('en')}</span> missing in{' '}
                {store.gaps.filter((g) => g.beforeMs >= win.fromMs).length} gap(s)
              </span>
              <span>
                last batch{' '}
                {lastBatch ? (
                  <span className="num text-ink">
                    #{lastBatch.batchId}: {lastBatch.accepted} accepted{lastBatch.duplicates ? `, ${lastBatch.duplicates} duplicates` : ''}
                    {lastBatch.rejected ? `, ${lastBatch.rejected} rejected` : ''}
                    {lastBatch.station ? ` via ${lastBatch.station}` : ''} at {formatUtc(lastBatch.receivedAt).slice(11)}
                  </span>
                ) : (
                  'none since the page opened'
                )}
              </span>
            </div>
            <LiveChart
              title="Link: housekeeping packets per second"
              unit="packets/s"
              series={[{ label: 'packets/s', color: C1 }]}
              data={[pt, pn]}
              version={version}
              xRange={xRange}
              limits={[]}
              passes={bands}
              gaps={gapBands}
              syncKey={syncKey}
              theme={theme}
              bars
              height={90}
            />
          </section>

          <LiveChart
            title="Body rates ω (gyro, body frame)"
            unit="mrad/s"
            display={1e3}
            series={[
              { label: 'ωx', color: C1 },
              { label: 'ωy', color: C2 },
              { label: 'ωz', color: C3 },
            ]}
            data={bodyData}
            version={version}
            xRange={xRange}
            limits={bodyLimits}
            passes={bands}
            syncKey={syncKey}
            theme={theme}
          />

          {snapshot.loops.map((l) => {
            const buf = store.loops.get(l.id);
            return (
              <section key={l.id} aria-label={`Loop L${l.id} charts`} className="space-y-2">
                <h2 className="px-1 text-sm">Loop L{l.id}</h2>
                <div className="grid gap-3 md:grid-cols-2 2xl:grid-cols-3">
                  {LOOP_CHARTS.map((c) => (
                    <LiveChart
                      key={c.key}
                      title={`L${l.id} ${c.title}`}
                      unit={c.unit}
                      display={c.display}
                      series={c.cols.map((s) => ({ label: s.label, color: s.color }))}
                      data={[buf?.t ?? [], ...c.cols.map((s) => buf?.cols[loopCol(s.col)] ?? [])] as uPlot.AlignedData}
                      version={version}
                      xRange={xRange}
                      limits={limitLines(snapshot.limits, c.quantities, l.id)}
                      passes={bands}
                      syncKey={syncKey}
                      theme={theme}
                    />
                  ))}
                </div>
              </section>
            );
          })}
        </div>

        <aside className="space-y-4">
          <TripQueue trips={trips} canAcknowledge={canAck} onChange={(t) => setTrips((list) => list.map((x) => (x.id === t.id ? t : x)))} />
          <PassLog spacecraft={key} initial={passLog} canWrite={canAck} />
          <p className="px-1 text-xs text-muted">
            Shaded: pass windows. Dashed: limit levels of the active limit set (amber caution, red warning). Red bars on the link strip: sequence gaps. Momentum and margin are
            derived from the measured flow with the sheet in force; limits on window means are drawn for reference.
          </p>
        </aside>
      </div>
    </div>
  );
}

/** The Pass watch island: live charts, loop health, pass countdown, link quality, trips and the pass log. */
export default function PassWatch(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <PassWatchView {...props} />
    </QueryClientProvider>
  );
}
