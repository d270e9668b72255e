import { Fragment, useEffect, useMemo, useState } from 'react';
import { QueryClientProvider, keepPreviousData, useQuery } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { LevelBadge } from '../../components/LevelBadge';
import { countText, sizeParts } from '../../lib/format';
import { passesQuery, type PassFilters, type PassList, type PassRow } from './passes.queries';

const HOUR = 3_600_000;
const TIMELINE_MS = 24 * HOUR;

interface Named {
  key: string;
  name: string;
}

/** "HH:MM:SS" of an ISO instant (UTC). */
const clock = (iso: string) => iso.slice(11, 19);
/** "YYYY-MM-DD HH:MM:SS" of an ISO instant (UTC). */
const stamp = (iso: string) => iso.slice(0, 19).replace('T', ' ');

function duration(ms: number): string {
  const s = Math.round(ms / 1000);
  return `${Math.floor(s / 60)} min ${String(s % 60).padStart(2, '0')} s`;
}

function until(ms: number): string {
  const m = Math.max(0, Math.round(ms / 60_000));
  if (m < 60) return `${m} min`;
  return `${Math.floor(m / 60)} h ${String(m % 60).padStart(2, '0')} min`;
}

function Deg({ v }: { v: number }) {
  return (
    <span className="num">
      {v.toFixed(1)}
      <span className="unit">°</span>
    </span>
  );
}

function Bytes({ n }: { n: number }) {
  const [v, u] = sizeParts(n);
  return (
    <span className="num">
      {v} <span className="unit">{u}</span>
    </span>
  );
}

/** The next 24 h: one lane per spacecraft, a track per station in it, the pass bars on them, now marked. */
function Timeline({ passes, nowMs, craft, stations, selected, onSelect }: { passes: PassRow[]; nowMs: number; craft: Named[]; stations: Named[]; selected: number | null; onSelect: (id: number) => void }) {
  const start = nowMs - HOUR;
  const end = start + TIMELINE_MS;
  const pct = (ms: number) => `${(((ms - start) / TIMELINE_MS) * 100).toFixed(3)}%`;
  const ticks: number[] = [];
  // Every 2 h on the hour; none so near the right end that its label would be cut.
  for (let t = Math.ceil(start / (2 * HOUR)) * 2 * HOUR; t < end - 0.03 * TIMELINE_MS; t += 2 * HOUR) ticks.push(t);
  const visible = passes.filter((p) => Date.parse(p.los) > start && Date.parse(p.aos) < end);
  return (
    <section aria-label="Timeline of the next 24 hours" className="panel overflow-x-auto p-3">
      <div className="mb-2 flex items-baseline justify-between">
        <h2 className="text-sm">Next 24 h</h2>
        <p className="text-xs text-muted">UTC · one lane per spacecraft, a track per ground station · the copper line is now</p>
      </div>
      <div className="relative min-w-[720px]">
        <div className="flex">
          <div className="w-36 shrink-0" />
          <div className="relative h-5 flex-1 border-b border-rule" aria-hidden="true">
            {ticks.map((t) => {
              const iso = new Date(t).toISOString();
              return (
                <span key={t} className="num absolute -translate-x-1/2 whitespace-nowrap text-[11px] text-muted" style={{ left: pct(t) }}>
                  {iso.slice(11, 13) === '00' ? iso.slice(5, 10) : `${iso.slice(11, 13)}:00`}
                </span>
              );
            })}
          </div>
        </div>
        {craft.map((sc) => (
          <div key={sc.key} role="group" aria-label={`Lane of ${sc.key}`} className="border-b border-rule/60 py-1">
            <div className="flex">
              <div className="w-36 shrink-0 pr-2">
                <span className="text-xs font-semibold">{sc.key}</span>
              </div>
              <div className="flex-1" />
            </div>
            {stations.map((st) => (
              <div key={st.key} className="flex h-4 items-center">
                <div className="w-36 shrink-0 truncate pl-3 pr-2 text-[11px] text-muted" title={st.name}>
                  {st.key}
                </div>
                <div className="relative h-full flex-1">
                  {ticks.map((t) => (
                    <span key={t} aria-hidden="true" className="absolute inset-y-0 w-px bg-rule/60" style={{ left: pct(t) }} />
                  ))}
                  {visible
                    .filter((p) => p.spacecraft === sc.key && p.station === st.key)
                    .map((p) => {
                      const a = Math.max(Date.parse(p.aos), start);
                      const b = Math.min(Date.parse(p.los), end);
                      const live = Date.parse(p.aos) <= nowMs && nowMs < Date.parse(p.los);
                      return (
                        <button
                          key={p.id}
                          type="button"
                          onClick={() => onSelect(p.id)}
                          aria-pressed={selected === p.id}
                          aria-label={`${p.spacecraft} over ${p.station}, AOS ${clock(p.aos)}, LOS ${clock(p.los)} UTC, maximum elevation ${p.maxElevation_deg.toFixed(1)}°${live ? ', under way' : ''}`}
                          title={`${p.spacecraft} · ${p.stationName} · AOS ${clock(p.aos)} – LOS ${clock(p.los)} UTC · max ${p.maxElevation_deg.toFixed(1)}°`}
                          className={`absolute top-[3px] h-[10px] min-w-[3px] rounded-sm ${selected === p.id ? 'bg-ink' : live ? 'bg-gallium ring-1 ring-ink' : 'bg-gallium/80 hover:bg-gallium'}`}
                          style={{ left: pct(a), width: `calc(${pct(b)} - ${pct(a)})` }}
                        />
                      );
                    })}
                </div>
              </div>
            ))}
          </div>
        ))}
        {/* Now: a copper line across every lane; the tracks start after the 9 rem label column. */}
        <div
          data-testid="timeline-now"
          className="pointer-events-none absolute bottom-0 top-5 w-0.5 -translate-x-1/2 bg-copper"
          style={{ left: `calc(9rem + (100% - 9rem) * ${((nowMs - start) / TIMELINE_MS).toFixed(5)})` }}
        />
        <span
          className="num pointer-events-none absolute -bottom-4 -translate-x-1/2 whitespace-nowrap text-[11px] font-medium text-copper"
          style={{ left: `calc(9rem + (100% - 9rem) * ${((nowMs - start) / TIMELINE_MS).toFixed(5)})` }}
        >
          now {new Date(nowMs).toISOString().slice(11, 16)} UTC
        </span>
      </div>
      <div className="h-4" />
    </section>
  );
}

function PassDetail({ pass, nowMs }: { pass: PassRow; nowMs: number }) {
  const aos = Date.parse(pass.aos);
  const los = Date.parse(pass.los);
  const state = nowMs < aos ? `AOS in ${until(aos - nowMs)}` : nowMs < los ? `under way, LOS in ${until(los - nowMs)}` : 'over';
  return (
    <section id="selected-pass" aria-label="Selected pass" className="panel scroll-mt-4 px-4 py-3 text-sm">
      <h2 className="text-sm">
        {pass.spacecraft} over {pass.stationName} <span className="font-normal text-muted">({pass.station}) · {state}</span>
      </h2>
      <dl className="mt-2 grid grid-cols-2 gap-x-6 gap-y-1 sm:grid-cols-4 lg:grid-cols-8">
        {(
          [
            ['AOS (UTC)', <span className="num">{stamp(pass.aos)}</span>],
            ['TCA', <span className="num">{clock(pass.tca)}</span>],
            ['LOS', <span className="num">{clock(pass.los)}</span>],
            ['Duration', <span className="num">{duration(los - aos)}</span>],
            ['Max elevation', <Deg v={pass.maxElevation_deg} />],
            ['AOS azimuth', <Deg v={pass.aosAzimuth_deg} />],
            ['LOS azimuth', <Deg v={pass.losAzimuth_deg} />],
            ['Predicted', <span className="num text-muted">{stamp(pass.computedAt).slice(5, 16)} · sheet {pass.sheetId ?? '—'}</span>],
          ] as const
        ).map(([k, v]) => (
          <div key={k}>
            <dt className="text-xs text-muted">{k}</dt>
            <dd>{v}</dd>
          </div>
        ))}
      </dl>
      {pass.received && <Received r={pass.received} />}
    </section>
  );
}

function Received({ r }: { r: NonNullable<PassRow['received']> }) {
  return (
    <div className="mt-3 border-t border-rule pt-2">
      <h3 className="text-xs font-medium uppercase tracking-wide text-muted">Received through this station between AOS and LOS</h3>
      {r.batches === 0 ? (
        <p className="mt-1 text-muted">Nothing arrived through this station during the pass. If the spacecraft should have been heard, check the station and the Link page.</p>
      ) : (
        <dl className="mt-1 grid grid-cols-2 gap-x-6 gap-y-1 sm:grid-cols-4 lg:grid-cols-7">
          <div>
            <dt className="text-xs text-muted">Real time</dt>
            <dd>
              <span className="num">{countText(r.realtimePackets)}</span> <span className="unit">packets</span> · <Bytes n={r.realtimeBytes} />
            </dd>
          </div>
          <div>
            <dt className="text-xs text-muted">Playback</dt>
            <dd>
              <span className="num">{countText(r.playbackPackets)}</span> <span className="unit">packets</span> · <Bytes n={r.playbackBytes} />
            </dd>
          </div>
          <div>
            <dt className="text-xs text-muted">Requests</dt>
            <dd className="num">{countText(r.batches)}</dd>
          </div>
          <div>
            <dt className="text-xs text-muted">Duplicates</dt>
            <dd className="num">{countText(r.duplicates)}</dd>
          </div>
          <div>
            <dt className="text-xs text-muted">Rejected</dt>
            <dd className={`num ${r.rejected ? 'text-warning' : ''}`}>{countText(r.rejected)}</dd>
          </div>
        </dl>
      )}
      <p className="mt-2">
        <span className="text-xs text-muted">Sequence gaps that ended in the pass: </span>
        {r.gaps === 0 ? (
          'none'
        ) : (
          <span className="text-caution">
            {countText(r.gaps)} gap{r.gaps === 1 ? '' : 's'}, {countText(r.missingPackets)} packets missing
          </span>
        )}
        <span className="ml-4 text-xs text-muted">Trips raised in the pass: </span>
        {r.trips.length === 0
          ? 'none'
          : r.trips.map((t) => (
              <a key={t.id} href={`/trips/${t.id}`} className="mr-2 inline-flex items-center gap-1">
                #{t.id} <LevelBadge level={t.level} /> <span className="text-xs text-muted">{t.kind}</span>
              </a>
            ))}
      </p>
      <p className="mt-1 text-[11px] text-muted">Octets of each request are shared between real time and playback by packet count.</p>
    </div>
  );
}

function PassTable({ passes, nowMs, past, selected, onSelect, label }: { passes: PassRow[]; nowMs: number; past: boolean; selected: number | null; onSelect: (id: number) => void; label: string }) {
  const [expanded, setExpanded] = useState<number | null>(null);
  return (
    <table className="table-compact" aria-label={label}>
      <thead>
        <tr>
          <th>Spacecraft</th>
          <th>Station</th>
          <th>AOS (UTC)</th>
          <th>TCA</th>
          <th>LOS</th>
          <th className="n">Duration</th>
          <th className="n">Max el.</th>
          <th className="n">AOS az.</th>
          <th className="n">LOS az.</th>
          {past ? (
            <>
              <th className="n">Real time</th>
              <th className="n">Playback</th>
              <th className="n">Gaps</th>
              <th className="n">Trips</th>
              <th>
                <span className="sr-only">Details</span>
              </th>
            </>
          ) : (
            <th className="n">AOS in</th>
          )}
        </tr>
      </thead>
      <tbody>
        {passes.map((p) => {
          const aos = Date.parse(p.aos);
          const los = Date.parse(p.los);
          const live = aos <= nowMs && nowMs < los;
          const r = p.received;
          return (
            <Fragment key={p.id}>
              <tr className={selected === p.id ? 'bg-gallium/10' : ''} aria-selected={selected === p.id}>
                <td className="font-medium">{p.spacecraft}</td>
                <td title={p.stationName}>{p.station}</td>
                <td className="num whitespace-nowrap">
                  <button type="button" className="text-gallium hover:underline" onClick={() => onSelect(p.id)} aria-label={`Select ${p.spacecraft} over ${p.station} at ${stamp(p.aos)}`}>
                    {stamp(p.aos)}
                  </button>
                </td>
                <td className="num">{clock(p.tca)}</td>
                <td className="num">{clock(p.los)}</td>
                <td className="n">{duration(los - aos)}</td>
                <td className="n">
                  <Deg v={p.maxElevation_deg} />
                </td>
                <td className="n">
                  <Deg v={p.aosAzimuth_deg} />
                </td>
                <td className="n">
                  <Deg v={p.losAzimuth_deg} />
                </td>
                {past ? (
                  <>
                    <td className="n">{r ? countText(r.realtimePackets) : '—'}</td>
                    <td className="n">{r ? countText(r.playbackPackets) : '—'}</td>
                    <td className={`n ${r?.gaps ? 'text-caution' : ''}`}>{r ? countText(r.gaps) : '—'}</td>
                    <td className={`n ${r?.trips.length ? 'font-medium text-copper' : ''}`}>{r ? r.trips.length : '—'}</td>
                    <td className="text-right">
                      <button
                        type="button"
                        className="btn h-6 px-2 text-xs"
                        aria-expanded={expanded === p.id}
                        aria-label={`What arrived in ${p.spacecraft} over ${p.station} at ${stamp(p.aos)}`}
                        onClick={() => setExpanded(expanded === p.id ? null : p.id)}
                      >
                        {expanded === p.id ? 'Hide' : 'Received'}
                      </button>
                    </td>
                  </>
                ) : (
                  <td className="n">{live ? <span className="font-medium text-nominal">● under way</span> : until(aos - nowMs)}</td>
                )}
              </tr>
              {past && expanded === p.id && r && (
                <tr>
                  <td colSpan={14} className="h-auto bg-paper/60 px-4 pb-3">
                    <Received r={r} />
                  </td>
                </tr>
              )}
            </Fragment>
          );
        })}
      </tbody>
    </table>
  );
}

/** Rows shown of each list before "Show all". */
const ROWS_SHOWN = 40;

function PassesView({ initial, initialFilters, spacecraft, stations }: Props) {
  const [filters, setFilters] = useState<PassFilters>(initialFilters);
  const sameAsFirst = filters.spacecraft === initialFilters.spacecraft && filters.station === initialFilters.station;
  const q = useQuery({ ...passesQuery(filters), initialData: sameAsFirst ? initial : undefined, placeholderData: keepPreviousData });
  const [nowMs, setNowMs] = useState(() => Date.parse(initial.now));
  const [selected, setSelected] = useState<number | null>(null);
  const [showAll, setShowAll] = useState(false);
  const [showAllPast, setShowAllPast] = useState(false);
  // Chosen in a list: bring the pass's card (under the timeline) into view.
  const selectFromList = (id: number) => {
    setSelected(id);
    requestAnimationFrame(() => document.getElementById('selected-pass')?.scrollIntoView({ behavior: 'smooth', block: 'start' }));
  };
  useEffect(() => {
    setNowMs(Date.now());
    const t = setInterval(() => setNowMs(Date.now()), 20_000);
    return () => clearInterval(t);
  }, []);

  const set = (k: keyof PassFilters) => (e: React.ChangeEvent<HTMLSelectElement>) => {
    const next = { ...filters, [k]: e.target.value || undefined };
    setFilters(next);
    setSelected(null);
    const p = new URLSearchParams();
    if (next.spacecraft) p.set('spacecraft', next.spacecraft);
    if (next.station) p.set('station', next.station);
    history.replaceState(null, '', `${location.pathname}${p.size ? `?${p}` : ''}`);
  };

  const passes = q.data?.passes ?? [];
  const upcoming = useMemo(() => passes.filter((p) => Date.parse(p.los) > nowMs), [passes, nowMs]);
  const past = useMemo(() => passes.filter((p) => Date.parse(p.los) <= nowMs).reverse(), [passes, nowMs]);
  const lanes = spacecraft.filter((s) => !filters.spacecraft || s.key === filters.spacecraft);
  const tracks = stations.filter((s) => !filters.station || s.key === filters.station);
  const chosen = passes.find((p) => p.id === selected) ?? null;

  return (
    <div className="space-y-4">
      <div className="flex flex-wrap items-end gap-3">
        <div className="text-xs">
          <label className="label" htmlFor="passes-spacecraft">
            Spacecraft
          </label>
          <select id="passes-spacecraft" className="field w-40" value={filters.spacecraft ?? ''} onChange={set('spacecraft')}>
            <option value="">All</option>
            {spacecraft.map((s) => (
              <option key={s.key} value={s.key}>
                {s.key}
              </option>
            ))}
          </select>
        </div>
        <div className="text-xs">
          <label className="label" htmlFor="passes-station">
            Ground station
          </label>
          <select id="passes-station" className="field w-48" value={filters.station ?? ''} onChange={set('station')}>
            <option value="">All</option>
            {stations.map((s) => (
              <option key={s.key} value={s.key}>
                {s.key} — {s.name}
              </option>
            ))}
          </select>
        </div>
        <p className="ml-auto text-xs text-muted">
          {q.isFetching ? 'Refreshing…' : q.data?.computedAt ? `Predicted by SGP4 from the sheets in force, ${stamp(q.data.computedAt).slice(5, 16)} UTC` : ''}
        </p>
      </div>
      {q.isError && (
        <p role="alert" className="panel p-3 text-warning">
          Passes could not be loaded: {q.error.message} Reload the page to try again.
        </p>
      )}
      {q.data && passes.length === 0 ? (
        <div className="panel p-6">
          <h2>No passes in this window</h2>
          <p className="mt-1 text-muted">
            Passes are predicted for every spacecraft with a sheet over every ground station. Widen the filters, or add a ground station on the{' '}
            <a href="/stations">Stations</a> page.
          </p>
        </div>
      ) : (
        <>
          <Timeline passes={upcoming} nowMs={nowMs} craft={lanes} stations={tracks} selected={selected} onSelect={setSelected} />
          {chosen && <PassDetail pass={chosen} nowMs={nowMs} />}
          <section aria-labelledby="upcoming-heading" className="panel overflow-x-auto">
            <header className="flex items-baseline justify-between border-b border-rule px-4 py-2">
              <h2 id="upcoming-heading" className="text-sm">
                Upcoming
              </h2>
              <span className="text-xs text-muted" data-testid="upcoming-count">
                {upcoming.length} upcoming pass{upcoming.length === 1 ? '' : 'es'} in the next 3 days
              </span>
            </header>
            <PassTable passes={showAll ? upcoming : upcoming.slice(0, ROWS_SHOWN)} nowMs={nowMs} past={false} selected={selected} onSelect={selectFromList} label="Upcoming passes" />
            {upcoming.length > ROWS_SHOWN && (
              <div className="px-4 py-2">
                <button type="button" className="btn h-7 text-xs" onClick={() => setShowAll(!showAll)}>
                  {showAll ? `Show the first ${ROWS_SHOWN}` : `Show all ${upcoming.length}`}
                </button>
              </div>
            )}
          </section>
          <section aria-labelledby="past-heading" className="panel overflow-x-auto">
            <header className="flex items-baseline justify-between border-b border-rule px-4 py-2">
              <h2 id="past-heading" className="text-sm">
                Past 24 h
              </h2>
              <span className="text-xs text-muted">what arrived through the station from AOS to LOS · newest first</span>
            </header>
            {past.length === 0 ? (
              <p className="p-4 text-muted">No pass has ended in the last 24 h yet; once one has, what arrived during it shows here.</p>
            ) : (
              <PassTable passes={showAllPast ? past : past.slice(0, ROWS_SHOWN)} nowMs={nowMs} past selected={selected} onSelect={selectFromList} label="Past passes" />
            )}
            {past.length > ROWS_SHOWN && (
              <div className="px-4 py-2">
                <button type="button" className="btn h-7 text-xs" onClick={() => setShowAllPast(!showAllPast)}>
                  {showAllPast ? `Show the newest ${ROWS_SHOWN}` : `Show all ${past.length}`}
                </button>
              </div>
            )}
          </section>
        </>
      )}
    </div>
  );
}

interface Props {
  initial: PassList;
  initialFilters: PassFilters;
  spacecraft: Named[];
  stations: Named[];
}

/** The Passes island: a 24 h timeline, upcoming passes, and past passes with what arrived in them. */
export default function Passes(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <PassesView {...props} />
    </QueryClientProvider>
  );
}
