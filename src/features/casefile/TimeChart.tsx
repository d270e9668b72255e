import { useEffect, useMemo, useRef, useState } from 'react';
import uPlot from 'uplot';
import 'uplot/dist/uPlot.min.css';
import { alpha, chartColours, HUES, useThemeName, useWidth } from './chart-theme';
import { formatUtc, formatValue } from '../../lib/format';

/** One line of a time chart; `e` draws a ±1 standard-error band around it. */
export interface ChartLine {
  key: string;
  label: string;
  unit: string;
  t: number[];
  y: number[];
  e?: number[];
  color: string;
  dash?: number[];
  width?: number;
  scale?: 'y' | 'y2';
}

/** A horizontal level: limit levels dashed in the state colours, the detector's decision level, a baseline. */
export interface ChartLevel {
  value: number;
  kind: 'caution' | 'warning' | 'decision' | 'baseline';
  /** The legend's text. */
  label: string;
  /** A shorter text beside the line on the plot (default: the label). */
  tag?: string;
  scale?: 'y' | 'y2';
}

interface Props {
  title: string;
  lines: ChartLine[];
  levels?: ChartLevel[];
  /** Vertical markers (Unix s), e.g. the estimated onset. */
  marks?: { t: number; label: string }[];
  /** Shaded periods (Unix s), e.g. the baseline. */
  shades?: { from: number; to: number; label: string }[];
  /** The span on the time axis, Unix s. */
  range: [number, number];
  yLabel: string;
  y2Label?: string;
  height?: number;
  /** 'asinh': linear near zero, logarithmic far from it (uPlot distr 4), for sums that grow by orders. */
  yScale?: 'linear' | 'asinh';
  syncKey?: string;
  /** A click at a time (Unix s): open that window's raw samples. */
  onPick?: (t: number) => void;
  /** A drag across a period (Unix s): make it the span. */
  onSelect?: (from: number, to: number) => void;
  empty: string;
}

const LEVEL_COLOUR: Record<ChartLevel['kind'], string> = { caution: HUES.caution, warning: HUES.warning, decision: HUES.gallium, baseline: HUES.stale };
const LEVEL_DASH: Record<ChartLevel['kind'], number[]> = { caution: [5, 4], warning: [5, 4], decision: [2, 3], baseline: [1, 3] };

/** Insert a null between points further apart than a few steps, so missing windows show as gaps. */
function withGaps(t: number[], y: number[]): [number[], (number | null)[]] {
  if (t.length < 3) return [t, y];
  const steps = t.slice(1).map((x, i) => x - t[i]!).sort((a, b) => a - b);
  const gap = Math.max(180, 3 * steps[Math.floor(steps.length / 2)]!);
  const ot: number[] = [], oy: (number | null)[] = [];
  for (let i = 0; i < t.length; i++) {
    if (i > 0 && t[i]! - t[i - 1]! > gap) { ot.push((t[i]! + t[i - 1]!) / 2); oy.push(null); }
    ot.push(t[i]!); oy.push(y[i]!);
  }
  return [ot, oy];
}

function nearest(t: number[], x: number): number {
  let lo = 0, hi = t.length - 1;
  if (hi < 0) return -1;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (t[mid]! < x) lo = mid; else hi = mid;
  }
  return Math.abs(t[lo]! - x) <= Math.abs(t[hi]! - x) ? lo : hi;
}

/** A uPlot time chart in UTC with error bands, dashed levels, markers, a synchronised cursor and its readout. */
export function TimeChart({ title, lines, levels = [], marks = [], shades = [], range, yLabel, y2Label, height = 220, yScale = 'linear', syncKey = 'casefile', onPick, onSelect, empty }: Props) {
  const theme = useThemeName();
  const [setBox, width] = useWidth<HTMLDivElement>();
  const holder = useRef<HTMLDivElement | null>(null);
  const [cursorT, setCursorT] = useState<number | null>(null);
  const handlers = useRef({ onPick, onSelect });
  handlers.current = { onPick, onSelect };
  const hasData = lines.some((l) => l.t.length > 0);
  // the chart is rebuilt when what it draws changes, not on every render of the parent
  const deco = JSON.stringify({ levels, marks, shades, range, yLabel, y2Label, yScale });
  const decoRef = useRef({ levels, marks, shades, range });
  decoRef.current = { levels, marks, shades, range };

  const built = useMemo(() => {
    const tables: uPlot.AlignedData[] = [];
    const series: uPlot.Series[] = [{}];
    const bands: uPlot.Band[] = [];
    for (const l of lines) {
      const [t, y] = withGaps(l.t, l.y);
      tables.push([t, y] as uPlot.AlignedData);
      series.push({ label: l.label, stroke: l.color, width: l.width ?? 1.5, dash: l.dash, scale: l.scale ?? 'y', spanGaps: false, points: { show: false } });
      if (l.e) {
        const lo = l.y.map((v, i) => v - (l.e![i] ?? 0));
        const hi = l.y.map((v, i) => v + (l.e![i] ?? 0));
        const [tb, hiG] = withGaps(l.t, hi);
        const [, loG] = withGaps(l.t, lo);
        tables.push([tb, hiG, loG] as uPlot.AlignedData);
        const hiIdx = series.length;
        series.push({ label: `${l.label} + SE`, stroke: 'transparent', width: 0, scale: l.scale ?? 'y', points: { show: false } });
        series.push({ label: `${l.label} − SE`, stroke: 'transparent', width: 0, scale: l.scale ?? 'y', points: { show: false } });
        bands.push({ series: [hiIdx, hiIdx + 1], fill: alpha(l.color, 0.2) });
      }
    }
    const data = tables.length ? uPlot.join(tables) : ([[]] as unknown as uPlot.AlignedData);
    return { data, series, bands };
  }, [lines]);

  useEffect(() => {
    const el = holder.current;
    if (!el || !hasData || width < 50) return;
    const { levels, marks, shades, range } = decoRef.current;
    const c = chartColours(theme);
    const font = '11px "Inter Tight", system-ui, sans-serif';
    const axis = { stroke: c.muted, font, labelFont: font, grid: { stroke: c.rule, width: 1 }, ticks: { stroke: c.rule, width: 1 } };
    const fmt = (_u: uPlot, vals: number[]) => vals.map((v) => formatValue(v, 3));
    const rangeFor = (scale: 'y' | 'y2') => (_u: uPlot, min: number, max: number): uPlot.Range.MinMax => {
      let lo = min, hi = max;
      if (!Number.isFinite(lo) || !Number.isFinite(hi)) return [0, 1];
      const span = hi - lo || Math.abs(hi) * 0.1 || 1;
      // take in the levels that lie near the data, so the data are not squashed by a far limit
      for (const l of levels) if ((l.scale ?? 'y') === scale && l.value >= lo - span && l.value <= hi + span) { lo = Math.min(lo, l.value); hi = Math.max(hi, l.value); }
      const pad = (hi - lo || span) * 0.08;
      return [lo - pad, hi + pad];
    };
    const spanS = range[1] - range[0];
    // UTC, 24 h; the date under the first tick and under each tick that starts a new day
    const timeValues = (_u: uPlot, splits: number[]) =>
      splits.map((v, i) => {
        const iso = new Date(v * 1000).toISOString();
        const hm = spanS < 600 ? iso.slice(11, 19) : iso.slice(11, 16);
        const day = iso.slice(5, 10);
        const prev = i > 0 ? new Date(splits[i - 1]! * 1000).toISOString().slice(5, 10) : null;
        return i === 0 || day !== prev ? `${hm}\n${day}` : hm;
      });
    // decades only on an asinh scale (the default puts a line at every 1…9 × 10ⁿ)
    const decades = (_u: uPlot, _i: number, min: number, max: number) => [0, ...[1, 10, 100, 1e3, 1e4, 1e5, 1e6].flatMap((d) => [d, -d])].filter((d) => d >= min && d <= max).sort((a, b) => a - b);
    let downX = 0;
    const opts: uPlot.Options = {
      width,
      height,
      tzDate: (ts) => uPlot.tzDate(new Date(ts * 1000), 'Etc/UTC'),
      legend: { show: false },
      cursor: { sync: { key: syncKey }, drag: { x: true, y: false, setScale: false }, points: { size: 6 } },
      scales: {
        x: { time: true, range: () => range },
        y: yScale === 'asinh' ? { distr: 4, asinh: 1, range: (_u, _min, max) => [0, Math.max(max, ...levels.map((l) => l.value)) * 1.5] } : { range: rangeFor('y') },
        y2: { range: rangeFor('y2') },
      },
      axes: [
        { ...axis, size: 44, values: timeValues },
        { ...axis, scale: 'y', label: yLabel, size: 64, values: fmt, ...(yScale === 'asinh' ? { splits: decades } : {}) },
        ...(y2Label ? [{ ...axis, scale: 'y2', label: y2Label, side: 1, size: 64, values: fmt, grid: { show: false } }] : []),
      ],
      series: built.series,
      bands: built.bands,
      hooks: {
        drawClear: [
          (u) => {
            const ctx = u.ctx;
            for (const s of shades) {
              const x0 = Math.max(u.bbox.left, u.valToPos(s.from, 'x', true));
              const x1 = Math.min(u.bbox.left + u.bbox.width, u.valToPos(s.to, 'x', true));
              if (x1 <= x0) continue;
              ctx.fillStyle = alpha(HUES.gallium, theme === 'dark' ? 0.16 : 0.09);
              ctx.fillRect(x0, u.bbox.top, x1 - x0, u.bbox.height);
              ctx.fillStyle = c.muted;
              ctx.font = `${10 * devicePixelRatio}px "Inter Tight", system-ui, sans-serif`;
              ctx.fillText(s.label, x0 + 4 * devicePixelRatio, u.bbox.top + 12 * devicePixelRatio);
            }
          },
        ],
        draw: [
          (u) => {
            const ctx = u.ctx;
            const dpr = devicePixelRatio;
            ctx.save();
            ctx.font = `${10 * dpr}px "Inter Tight", system-ui, sans-serif`;
            // labels sit above their line at the right; one that would overlap a label drawn already moves left of it
            const boxes: { x0: number; x1: number; y: number }[] = [];
            for (const l of levels) {
              const y = u.valToPos(l.value, l.scale ?? 'y', true);
              if (!(y >= u.bbox.top && y <= u.bbox.top + u.bbox.height)) continue;
              ctx.strokeStyle = LEVEL_COLOUR[l.kind];
              ctx.lineWidth = dpr;
              ctx.setLineDash(LEVEL_DASH[l.kind].map((d) => d * dpr));
              ctx.beginPath();
              ctx.moveTo(u.bbox.left, y);
              ctx.lineTo(u.bbox.left + u.bbox.width, y);
              ctx.stroke();
              const text = l.tag ?? l.label;
              const w = ctx.measureText(text).width;
              const ty = Math.max(u.bbox.top + 10 * dpr, y - 3 * dpr);
              let right = u.bbox.left + u.bbox.width - 4 * dpr;
              const overlapping = () => boxes.find((b) => Math.abs(b.y - ty) < 11 * dpr && right > b.x0 - 8 * dpr && right - w < b.x1 + 8 * dpr);
              for (let hit = overlapping(); hit; hit = overlapping()) right = hit.x0 - 12 * dpr;
              boxes.push({ x0: right - w, x1: right, y: ty });
              ctx.fillStyle = LEVEL_COLOUR[l.kind];
              ctx.textAlign = 'right';
              ctx.fillText(text, right, ty);
            }
            ctx.setLineDash([]);
            for (const m of marks) {
              const x = u.valToPos(m.t, 'x', true);
              if (!(x >= u.bbox.left && x <= u.bbox.left + u.bbox.width)) continue;
              ctx.strokeStyle = HUES.copper;
              ctx.lineWidth = 1.5 * dpr;
              ctx.beginPath();
              ctx.moveTo(x, u.bbox.top);
              ctx.lineTo(x, u.bbox.top + u.bbox.height);
              ctx.stroke();
              ctx.fillStyle = HUES.copper;
              ctx.textAlign = 'left';
              ctx.fillText(m.label, x + 4 * dpr, u.bbox.top + u.bbox.height - 6 * dpr);
            }
            ctx.restore();
          },
        ],
        setCursor: [
          (u) => {
            const left = u.cursor.left ?? -1;
            setCursorT(left >= 0 ? u.posToVal(left, 'x') : null);
          },
        ],
        setSelect: [
          (u) => {
            if (u.select.width > 8 && handlers.current.onSelect) {
              const a = u.posToVal(u.select.left, 'x'), b = u.posToVal(u.select.left + u.select.width, 'x');
              u.setSelect({ left: 0, top: 0, width: 0, height: 0 }, false);
              handlers.current.onSelect(a, b);
            }
          },
        ],
      },
    };
    const u = new uPlot(opts, built.data, el);
    const down = (e: MouseEvent) => { downX = e.clientX; };
    const click = (e: MouseEvent) => {
      const left = u.cursor.left ?? -1;
      if (Math.abs(e.clientX - downX) < 4 && left >= 0 && handlers.current.onPick) handlers.current.onPick(u.posToVal(left, 'x'));
    };
    u.over.addEventListener('mousedown', down);
    u.over.addEventListener('click', click);
    u.over.style.cursor = handlers.current.onPick ? 'crosshair' : 'default';
    return () => {
      u.over.removeEventListener('mousedown', down);
      u.over.removeEventListener('click', click);
      u.destroy();
    };
  }, [built, width, height, theme, hasData, deco, syncKey]);

  // levels beyond the data's neighbourhood are left off the plot (see rangeFor); the legend says so
  const offScale = (l: ChartLevel) => {
    if (yScale === 'asinh') return false;
    const ys = lines.filter((x) => (x.scale ?? 'y') === (l.scale ?? 'y')).flatMap((x) => x.y);
    if (!ys.length) return false;
    let lo = Infinity, hi = -Infinity;
    for (const v of ys) { if (v < lo) lo = v; if (v > hi) hi = v; }
    const span = hi - lo || Math.abs(hi) * 0.1 || 1;
    return l.value < lo - span || l.value > hi + span;
  };
  const readout = cursorT === null
    ? null
    : lines.map((l) => {
        const i = nearest(l.t, cursorT);
        return { key: l.key, label: l.label, color: l.color, unit: l.unit, v: i >= 0 && Math.abs(l.t[i]! - cursorT) < 120 ? l.y[i]! : null, e: i >= 0 && l.e ? l.e[i]! : null };
      });

  return (
    <div>
      <ul className="mb-1 flex flex-wrap gap-x-4 gap-y-1 text-xs text-muted" aria-label={`${title}: series`}>
        {lines.map((l) => (
          <li key={l.key} className="inline-flex items-center gap-1.5">
            <svg width="18" height="8" aria-hidden="true">
              <line x1="0" y1="4" x2="18" y2="4" stroke={l.color} strokeWidth="2" strokeDasharray={l.dash?.join(' ')} />
            </svg>
            {l.label}
            {l.e ? ' ± SE' : ''}
          </li>
        ))}
        {levels.map((l) => (
          <li key={`${l.kind}-${l.label}`} className="inline-flex items-center gap-1.5">
            <svg width="18" height="8" aria-hidden="true">
              <line x1="0" y1="4" x2="18" y2="4" stroke={LEVEL_COLOUR[l.kind]} strokeWidth="1.5" strokeDasharray={LEVEL_DASH[l.kind].join(' ')} />
            </svg>
            {l.label}
            {offScale(l) ? ' (off scale)' : ''}
          </li>
        ))}
        {marks.map((m) => (
          <li key={`m-${m.label}`} className="inline-flex items-center gap-1.5">
            <svg width="10" height="10" aria-hidden="true">
              <line x1="5" y1="0" x2="5" y2="10" stroke={HUES.copper} strokeWidth="2" />
            </svg>
            {m.label}
          </li>
        ))}
      </ul>
      <div ref={setBox} className="w-full">
        {hasData ? <div ref={holder} /> : <p className="flex items-center justify-center rounded border border-dashed border-rule text-xs text-muted" style={{ height }}>{empty}</p>}
      </div>
      <p className="num mt-1 h-4 truncate text-xs text-muted" aria-live="off">
        {readout ? (
          <>
            <span className="text-ink">{formatUtc(cursorT! * 1000)} UTC</span>
            {readout.map((r) => (
              <span key={r.key} className="ml-3">
                <span style={{ color: r.color }} aria-hidden="true">■</span> {r.label} {formatValue(r.v, 4)}
                {r.e !== null && r.v !== null ? ` ± ${formatValue(r.e, 2)}` : ''} <span className="unit">{r.unit}</span>
              </span>
            ))}
          </>
        ) : (
          onPick ? 'Point at the chart to read values; click a window for its raw samples; drag across a period to make it the span.' : ''
        )}
      </p>
    </div>
  );
}
