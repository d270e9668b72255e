import { useEffect, useMemo, useState } from 'react';
import { QueryClientProvider, keepPreviousData, useQuery } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { evidenceQuery, evidenceSearch, type EvidenceParams } from './casefile.queries';
import { EVIDENCE_KEYS, spanProblem, type EvidenceKey, type EvidenceResponse, type LimitLevels } from './casefile.schema';
import { TimeChart, type ChartLevel, type ChartLine } from './TimeChart';
import { ScatterChart } from './ScatterChart';
import { SpectrumChart, Waterfall } from './SpectrumChart';
import { RawWindow } from './RawWindow';
import { chartColours, HUES, useThemeName } from './chart-theme';
import { formatUtc, formatValue } from '../../lib/format';

const TITLES: Record<EvidenceKey, string> = {
  effectiveness: 'Effectiveness per window, with baseline and EWMA',
  drift: 'Drift: tabular CUSUM against the baseline',
  scatter: 'Torque against current: baseline and recent',
  compensation: 'Magnet-temperature compensation',
  pressure: 'Pump-pressure constant: an independent check',
  heating: 'Electrode resistance and thermal-model residual',
  spectrum: 'Pulsation: latest spectrum over the baseline',
  waterfall: 'Pulsation: waterfall of bursts',
  ledger: 'Momentum ledger residual',
};
const SHORT: Record<EvidenceKey, string> = {
  effectiveness: 'Effectiveness',
  drift: 'CUSUM',
  scatter: 'Torque vs current',
  compensation: 'Compensation',
  pressure: 'Pressure check',
  heating: 'Resistance & heat',
  spectrum: 'Spectrum',
  waterfall: 'Waterfall',
  ledger: 'Ledger',
};

interface Props {
  tripId: number;
  /** The first span's evidence as JSON text (a string prop keeps the page small). */
  initialJson: string;
  initialParams: { from?: string; to?: string; loop?: number };
  initialShow: EvidenceKey[];
  initialRaw: string | null;
  variant?: 'casefile' | 'report';
}

const POINTS = 800;

function limitLines(l: LimitLevels | undefined, unit: string, scale?: 'y' | 'y2', suffix = ''): ChartLevel[] {
  if (!l) return [];
  const u = unit ? ` ${unit}` : '';
  const out: ChartLevel[] = [];
  const add = (value: number | null, kind: 'caution' | 'warning', sign: '≤' | '≥') => {
    if (value === null) return;
    const tag = `${kind} ${sign} ${formatValue(value, 3)}${u}`;
    out.push({ value, kind, label: `${tag}${suffix}`, tag, scale });
  };
  add(l.cautionLow, 'caution', '≤');
  add(l.warningLow, 'warning', '≤');
  add(l.cautionHigh, 'caution', '≥');
  add(l.warningHigh, 'warning', '≥');
  return out;
}

function scaled(l: LimitLevels | undefined, k: number): LimitLevels | undefined {
  if (!l) return l;
  const m = (v: number | null) => (v === null ? null : v * k);
  return { cautionHigh: m(l.cautionHigh), warningHigh: m(l.warningHigh), cautionLow: m(l.cautionLow), warningLow: m(l.warningLow) };
}

/** An ISO time as the span fields show it: "YYYY-MM-DD HH:MM", UTC, 24 h. */
const toInput = (iso: string) => iso.slice(0, 16).replace('T', ' ');
/** A span field back to ISO, or null when it is not "YYYY-MM-DD HH:MM[:SS]". */
function fromInput(v: string): string | null {
  const m = /^\s*(\d{4}-\d{2}-\d{2})[ T](\d{2}:\d{2})(:\d{2})?\s*Z?\s*$/.exec(v);
  if (!m) return null;
  const d = new Date(`${m[1]}T${m[2]}${m[3] ?? ':00'}Z`);
  return Number.isNaN(d.getTime()) ? null : d.toISOString();
}

function EvidenceView({ tripId, initialJson, initialParams, initialShow, initialRaw, variant = 'casefile' }: Props) {
  const initial = useMemo(() => JSON.parse(initialJson) as EvidenceResponse, [initialJson]);
  const [params, setParams] = useState<EvidenceParams>({ ...initialParams, points: POINTS });
  const [show, setShow] = useState<EvidenceKey[]>(initialShow.length ? initialShow : [...EVIDENCE_KEYS]);
  const [raw, setRaw] = useState<string | null>(initialRaw);
  const [copied, setCopied] = useState(false);
  const [spanError, setSpanError] = useState<string | null>(null);
  const isInitial = params.from === initialParams.from && params.to === initialParams.to && params.loop === initialParams.loop;
  const q = useQuery({ ...evidenceQuery(tripId, params), initialData: isInitial ? initial : undefined, placeholderData: keepPreviousData });
  const ev = q.data ?? initial;
  const theme = useThemeName();
  const c = chartColours(theme);
  const [fromField, setFromField] = useState(toInput(ev.span.from));
  const [toField, setToField] = useState(toInput(ev.span.to));
  useEffect(() => {
    setFromField(toInput(ev.span.from));
    setToField(toInput(ev.span.to));
  }, [ev.span.from, ev.span.to]);

  // the permalink: span, loop, selected evidence and raw window in the query string
  useEffect(() => {
    if (variant !== 'casefile') return;
    const p = new URLSearchParams();
    if (params.from) p.set('from', params.from);
    if (params.to) p.set('to', params.to);
    if (params.loop !== undefined) p.set('loop', String(params.loop));
    if (show.length !== EVIDENCE_KEYS.length) p.set('show', show.join(','));
    if (raw) p.set('raw', raw);
    history.replaceState(null, '', `${location.pathname}${p.size ? `?${p}` : ''}`);
  }, [params, show, raw, variant]);

  const setSpan = (from: number, to: number) => setParams((p) => ({ ...p, from: new Date(Math.floor(from) * 1000).toISOString(), to: new Date(Math.ceil(to) * 1000).toISOString() }));
  const range: [number, number] = useMemo(() => [Date.parse(ev.span.from) / 1000, Date.parse(ev.span.to) / 1000], [ev.span.from, ev.span.to]);
  const onsetS = Date.parse(ev.onset.at) / 1000;
  const marks = useMemo(() => [{ t: onsetS, label: `onset ${formatUtc(ev.onset.at).slice(11, 16)} UTC` }], [onsetS, ev.onset.at]);
  const shades = useMemo(() => (ev.baseline.from !== null && ev.baseline.to !== null ? [{ from: ev.baseline.from, to: ev.baseline.to, label: 'baseline' }] : []), [ev.baseline.from, ev.baseline.to]);
  const s = ev.series;
  const pick = variant === 'casefile' ? (t: number) => setRaw(new Date(Math.floor(t / ev.windowS) * ev.windowS * 1000).toISOString()) : undefined;
  const select = variant === 'casefile' ? setSpan : undefined;

  const charts = useMemo(() => {
    const L = (key: string, label: string, unit: string, color: string, extra: Partial<ChartLine> = {}): ChartLine => ({ key, label, unit, t: s[key]?.t ?? [], y: s[key]?.y ?? [], e: extra.e, color, ...extra });
    const base = ev.baseline.mean !== null ? [{ value: ev.baseline.mean, kind: 'baseline' as const, label: `baseline mean ${formatValue(ev.baseline.mean, 3)}` }] : [];
    return {
      effectiveness: {
        lines: [
          L('effectiveness', 'Effectiveness', '', HUES.gallium, { e: s.effectiveness?.e }),
          // the drift statistics run on the magnet-compensated series, drawn with them
          L('compensated_effectiveness', 'Compensated (drift input)', '', c.muted, { width: 1, dash: [2, 2] }),
          L('drift_ewma', 'EWMA', '', c.second, { width: 1.5 }),
          L('drift_ewma_ucl', 'EWMA upper limit', '', c.muted, { dash: [3, 3], width: 1 }),
          L('drift_ewma_lcl', 'EWMA lower limit', '', c.muted, { dash: [3, 3], width: 1 }),
        ].filter((l, i) => i === 0 || l.t.length),
        levels: [...base, ...limitLines(ev.limits.effectiveness, '')],
      },
      drift: {
        lines: [L('drift_cusum_lo', 'CUSUM down', 'σ', HUES.gallium, { width: 2 }), L('drift_cusum_hi', 'CUSUM up', 'σ', c.muted)],
        // the limit set's levels raise trips; the detector's h only dates the onset
        levels: [
          ...limitLines(ev.limits.drift_cusum_lo, 'σ', undefined, ` · limit set v${ev.cusum.limitSetVersion}`),
          { value: ev.cusum.detectorH_sigma, kind: 'decision' as const, label: `onset detector h = ${ev.cusum.detectorH_sigma}σ (dates the onset, not a limit)`, tag: `onset detector h = ${ev.cusum.detectorH_sigma}σ` },
        ],
      },
      compensation: {
        lines: [
          L('effectiveness', 'Raw effectiveness', '', c.muted, { dash: [4, 3] }),
          L('compensated_effectiveness', 'Compensated to 20 °C', '', HUES.gallium, { width: 2 }),
          L('magnet_temp_mean_c', 'Magnet temperature', '°C', HUES.copper, { scale: 'y2', width: 1, dash: [1, 2] }),
        ],
        levels: limitLines(ev.limits.compensated_effectiveness, ''),
      },
      pressure: {
        lines: [L('effectiveness', 'Torque effectiveness', '', c.muted, { dash: [4, 3] }), L('pressure_effectiveness', 'Pressure constant / ideal', '', HUES.gallium, { width: 2 })],
        levels: limitLines(ev.limits.pressure_effectiveness, ''),
      },
      heating: {
        lines: [L('resistance_ohm', 'Resistance', 'Ω', HUES.gallium, { width: 2 }), L('thermal_residual_k', 'Thermal residual', 'K', c.second, { scale: 'y2' })],
        levels: [...limitLines(ev.limits.resistance_ohm, 'Ω'), ...limitLines(ev.limits.thermal_residual_k, 'K', 'y2')],
      },
      // the ledger in µN·m: residuals of 10⁻⁷ N·m read better that way
      ledger: {
        lines: [
          L('ledger_residual_nm', 'Ledger residual |τ_ext|', 'µN·m', HUES.gallium, {
            y: (s.ledger_residual_nm?.y ?? []).map((v) => v * 1e6),
            e: s.ledger_residual_nm?.e?.map((v) => v * 1e6),
            width: 1.5,
          }),
        ],
        levels: limitLines(scaled(ev.limits.ledger_residual_nm, 1e6), 'µN·m'),
      },
    };
  }, [s, ev.baseline.mean, ev.limits, ev.cusum.limitSetVersion, ev.cusum.detectorH_sigma, c.second, c.muted]);

  const figure = (key: EvidenceKey, body: React.ReactNode) =>
    show.includes(key) ? (
      <figure key={key} className="panel break-inside-avoid p-3" aria-labelledby={`ev-${key}`} data-evidence={key}>
        <h3 id={`ev-${key}`} className="mb-1 text-sm font-semibold">
          {TITLES[key]}
        </h3>
        {body}
        <figcaption className="mt-1 text-sm leading-snug">{ev.readings[key]}</figcaption>
      </figure>
    ) : null;

  const aroundTrip = !params.from && !params.to;
  const onsetMs = Date.parse(ev.onset.at);
  const presets: { label: string; from?: string; to?: string }[] = [
    { label: 'Around the trip' },
    { label: '±6 h', from: new Date(onsetMs - 6 * 3600_000).toISOString(), to: new Date(onsetMs + 6 * 3600_000).toISOString() },
    { label: '±24 h', from: new Date(onsetMs - 86_400_000).toISOString(), to: new Date(onsetMs + 86_400_000).toISOString() },
    { label: '7 days before', from: new Date(onsetMs - 7 * 86_400_000).toISOString(), to: new Date(onsetMs + 3600_000).toISOString() },
  ];
  const search = evidenceSearch({ from: ev.span.from, to: ev.span.to, loop: ev.loopId });
  const report = () => {
    const p = new URLSearchParams(search);
    if (show.length !== EVIDENCE_KEYS.length) p.set('show', show.join(','));
    return `/trips/${tripId}/report?${p}`;
  };

  return (
    <div className="space-y-3">
      {variant === 'casefile' && (
        <section className="panel space-y-2 p-3 print:hidden" aria-label="Span and evidence">
          <div className="flex flex-wrap items-end gap-2">
            <div className="flex flex-wrap gap-1" role="group" aria-label="Span presets">
              {presets.map((p) => (
                <button
                  key={p.label}
                  type="button"
                  className="btn h-7 px-2 text-xs"
                  aria-pressed={p.from === undefined ? aroundTrip : params.from === p.from && params.to === p.to}
                  onClick={() => setParams((x) => ({ ...x, from: p.from, to: p.to }))}
                >
                  {p.label}
                </button>
              ))}
              <button
                type="button"
                className="btn h-7 px-2 text-xs"
                onClick={() => {
                  const [a, b] = range;
                  const w = b - a;
                  setSpan(a - w / 2, b + w / 2);
                }}
              >
                Zoom out ×2
              </button>
            </div>
            <form
              className="flex flex-wrap items-end gap-2"
              onSubmit={(e) => {
                e.preventDefault();
                const from = fromInput(fromField), to = fromInput(toField);
                if (!from || !to) return setSpanError('Write each time as YYYY-MM-DD HH:MM, in UTC.');
                // the same check as the server's
                const problem = spanProblem(Date.parse(from), Date.parse(to), { from: true, to: true });
                if (problem) return setSpanError(problem.message);
                setSpanError(null);
                setParams((x) => ({ ...x, from, to }));
              }}
            >
              <label className="text-xs">
                <span className="label">From (UTC)</span>
                <input className="field num h-7 w-36" type="text" inputMode="numeric" placeholder="YYYY-MM-DD HH:MM" value={fromField} onChange={(e) => setFromField(e.target.value)} aria-invalid={spanError ? 'true' : undefined} />
              </label>
              <label className="text-xs">
                <span className="label">To (UTC)</span>
                <input className="field num h-7 w-36" type="text" inputMode="numeric" placeholder="YYYY-MM-DD HH:MM" value={toField} onChange={(e) => setToField(e.target.value)} aria-invalid={spanError ? 'true' : undefined} />
              </label>
              <button className="btn h-7 px-2 text-xs" type="submit">
                Show span
              </button>
              {spanError && (
                <p role="alert" className="error-text w-full">
                  {spanError}
                </p>
              )}
            </form>
            {ev.loops.length > 1 && (
              <label className="text-xs">
                <span className="label">Loop</span>
                <select className="field h-7 w-24" value={ev.loopId} onChange={(e) => setParams((x) => ({ ...x, loop: Number(e.target.value) }))}>
                  {ev.loops.map((l) => (
                    <option key={l} value={l}>
                      L{l}
                    </option>
                  ))}
                </select>
              </label>
            )}
            <div className="ml-auto flex flex-wrap gap-2">
              <a className="btn h-7 px-2 text-xs no-underline hover:no-underline" href={`/api/trips/${tripId}/evidence.csv?${search}`} download>
                Export CSV
              </a>
              <a className="btn h-7 px-2 text-xs no-underline hover:no-underline" href={report()}>
                Printable report
              </a>
              <button
                type="button"
                className="btn h-7 px-2 text-xs"
                onClick={() => {
                  void navigator.clipboard?.writeText(location.href).then(() => {
                    setCopied(true);
                    setTimeout(() => setCopied(false), 2000);
                  });
                }}
              >
                {copied ? 'Link copied' : 'Copy link'}
              </button>
            </div>
          </div>
          <div className="flex flex-wrap items-center gap-1 text-xs" role="group" aria-label="Evidence shown">
            <span className="mr-1 text-muted">Show:</span>
            {EVIDENCE_KEYS.map((k) => (
              <label key={k} className="inline-flex cursor-pointer items-center gap-1 rounded border border-rule px-2 py-0.5 has-[:checked]:border-gallium has-[:checked]:text-ink">
                <input type="checkbox" className="accent-[#5B7C99]" checked={show.includes(k)} onChange={(e) => setShow((x) => (e.target.checked ? EVIDENCE_KEYS.filter((y) => x.includes(y) || y === k) : x.filter((y) => y !== k)))} />
                {SHORT[k]}
              </label>
            ))}
          </div>
          <div className="h-1 overflow-hidden rounded bg-rule/60" aria-hidden={!q.isFetching}>
            {q.isFetching && <div className="h-1 w-1/3 animate-pulse rounded bg-gallium" />}
          </div>
          <p className="num text-xs text-muted" aria-live="polite">
            {q.isFetching ? 'Loading evidence… ' : ''}
            {formatUtc(ev.span.from)} – {formatUtc(ev.span.to)} UTC · loop L{ev.loopId} · {ev.windows} windows of {ev.windowS} s · series downsampled to at most {ev.points} points (LTTB)
          </p>
          {q.isError && (
            <p role="alert" className="text-xs text-warning">
              The evidence could not be loaded: {q.error.message} The charts show the last span that loaded.
            </p>
          )}
        </section>
      )}
      <p className="text-sm">
        <span className="font-semibold" style={{ color: HUES.copper }}>
          Estimated onset {formatUtc(ev.onset.at)} UTC
        </span>{' '}
        <span className="text-muted">
          {ev.onset.method === 'cusum'
            ? `— change point: the most likely step in the mean between the last zero of the CUSUM and the ${ev.onset.signalMethod === 'ewma' ? 'EWMA' : 'CUSUM'} signal at ${formatUtc(ev.onset.signalAt).slice(11)} UTC. The limit engine's onset is ${formatUtc(ev.onset.limitAt).slice(11)} UTC.`
            : '— the first window of the run of points beyond the limit that raised the trip.'}
        </span>
      </p>
      {raw && variant === 'casefile' && <RawWindow tripId={tripId} window={raw} loop={ev.loopId} onClose={() => setRaw(null)} />}
      <div className={variant === 'report' ? 'space-y-3' : 'grid gap-3 xl:grid-cols-2'}>
        {figure(
          'effectiveness',
          <TimeChart title={TITLES.effectiveness} lines={charts.effectiveness.lines} levels={charts.effectiveness.levels} marks={marks} shades={shades} range={range} yLabel="kT / ideal" onPick={pick} onSelect={select} empty="No window in this span has an effectiveness." />,
        )}
        {figure(
          'drift',
          <TimeChart title={TITLES.drift} lines={charts.drift.lines} levels={charts.drift.levels} marks={marks} range={range} yLabel="σ of the baseline (asinh scale)" yScale="asinh" onPick={pick} onSelect={select} empty={`No drift statistics in this span: they start once the baseline of ${ev.baseline.required} windows is formed.`} />,
        )}
        {figure('scatter', <ScatterChart baseline={ev.scatter.baseline} recent={ev.scatter.recent} />)}
        {figure(
          'compensation',
          <TimeChart title={TITLES.compensation} lines={charts.compensation.lines} levels={charts.compensation.levels} marks={marks} range={range} yLabel="kT / ideal" y2Label="Magnet (°C)" onPick={pick} onSelect={select} empty="No compensated effectiveness in this span." />,
        )}
        {figure(
          'pressure',
          <TimeChart title={TITLES.pressure} lines={charts.pressure.lines} levels={charts.pressure.levels} marks={marks} range={range} yLabel="ratio to ideal" onPick={pick} onSelect={select} empty="No pump-pressure constant in this span." />,
        )}
        {figure(
          'heating',
          <TimeChart title={TITLES.heating} lines={charts.heating.lines} levels={charts.heating.levels} marks={marks} range={range} yLabel="Resistance (Ω)" y2Label="Residual (K)" onPick={pick} onSelect={select} empty="No resistance or thermal residual in this span." />,
        )}
        {figure('spectrum', <SpectrumChart pulsation={ev.pulsation} />)}
        {figure('waterfall', <Waterfall pulsation={ev.pulsation} />)}
        {figure(
          'ledger',
          <TimeChart title={TITLES.ledger} lines={charts.ledger.lines} levels={charts.ledger.levels} marks={marks} range={range} yLabel="|τ_ext| (µN·m)" onPick={pick} onSelect={select} empty="No momentum ledger in this span." />,
        )}
      </div>
      {variant === 'casefile' && !show.length && <p className="panel p-4 text-sm text-muted">No evidence selected. Tick the charts to show under “Show”.</p>}
    </div>
  );
}

/** The Casefile's evidence island: span control, charts with readings, raw samples, export and permalink. */
export default function Evidence(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <EvidenceView {...props} />
    </QueryClientProvider>
  );
}
