import { useEffect, useRef } from 'react';
import uPlot from 'uplot';
import 'uplot/dist/uPlot.min.css';
import { formatValue } from '../../lib/format';

export interface ChartSeries {
  label: string;
  color: string;
}

/** A limit level drawn as a thin dashed line in its state colour. */
export interface LimitLine {
  value: number;
  level: 'caution' | 'warning';
}

/** A time span (seconds since the Unix epoch). */
export interface Band {
  fromS: number;
  toS: number;
}

const LEVEL_COLOR = { caution: '#C98A00', warning: '#C23B22' } as const;
const GALLIUM = '91, 124, 153';
const WARNING = '194, 59, 34';

function cssColor(name: string, alpha = 1): string {
  const v = getComputedStyle(document.documentElement).getPropertyValue(name).trim() || '96 105 117';
  return `rgb(${v} / ${alpha})`;
}

const utc = (ts: number) => uPlot.tzDate(new Date(ts * 1e3), 'Etc/UTC');
const stamp = uPlot.fmtDate('{YYYY}-{MM}-{DD} {HH}:{mm}:{ss}');
const hms = uPlot.fmtDate('{HH}:{mm}:{ss}');
const hm = uPlot.fmtDate('{HH}:{mm}');

interface Props {
  title: string;
  unit: string;
  /** Values are shown multiplied by this (e.g. 1000 to show rad/s as mrad/s). */
  display?: number;
  series: ChartSeries[];
  data: uPlot.AlignedData;
  /** Changes whenever data, range or bands changed. */
  version: number;
  xRange: [number, number];
  limits: LimitLine[];
  passes: Band[];
  gaps?: Band[];
  syncKey: string;
  theme: string;
  bars?: boolean;
  height?: number;
}

/** One uPlot chart of Pass watch: UTC time axis, the pass window shaded, limit levels dashed, cursor synchronised. */
export default function LiveChart({ title, unit, display = 1, series, data, version, xRange, limits, passes, gaps = [], syncKey, theme, bars = false, height = 150 }: Props) {
  const box = useRef<HTMLDivElement>(null);
  const chart = useRef<uPlot | null>(null);
  // Read by the chart's hooks at every draw, so they always see the latest props.
  const live = useRef({ data, xRange, limits, passes, gaps });
  live.current = { data, xRange, limits, passes, gaps };
  const seriesKey = series.map((s) => s.label + s.color).join('|');

  useEffect(() => {
    const el = box.current;
    if (!el) return;
    const ink = cssColor('--ink');
    const muted = cssColor('--muted');
    const grid = cssColor('--rule', 0.7);
    const fmt = (v: number | null | undefined) => (v === null || v === undefined ? '—' : formatValue(v * display, 4));
    const opts: uPlot.Options = {
      width: Math.max(200, el.clientWidth),
      height,
      tzDate: utc,
      cursor: { sync: { key: syncKey, setSeries: false }, drag: { x: false, y: false } },
      legend: { live: true },
      scales: {
        x: { time: true, range: () => live.current.xRange },
        y: {
          range: (_u, min, max) => {
            const hasData = Number.isFinite(min) && Number.isFinite(max);
            let lo = hasData ? min : Infinity;
            let hi = hasData ? max : -Infinity;
            // Limit levels near the data widen the scale to show them; far ones stay in the caption only.
            const span = hasData ? Math.max(hi - lo, Math.abs(hi + lo) * 0.05, 1e-12) : Infinity;
            const levels = [...live.current.limits].sort((a, b) => Math.abs(a.value - (lo + hi) / 2) - Math.abs(b.value - (lo + hi) / 2));
            for (const l of levels) {
              const nlo = Math.min(lo, l.value);
              const nhi = Math.max(hi, l.value);
              if (!hasData || nhi - nlo <= 4 * span) {
                lo = nlo;
                hi = nhi;
              }
            }
            if (bars) lo = Math.min(lo, 0);
            if (!Number.isFinite(lo) || !Number.isFinite(hi)) return [0, 1];
            const pad = (hi - lo || Math.abs(hi) || 1) * 0.08;
            return [lo - pad, hi + pad];
          },
        },
      },
      axes: [
        {
          stroke: muted,
          grid: { stroke: grid, width: 1 },
          ticks: { stroke: grid, width: 1 },
          font: '11px "Inter Tight", system-ui, sans-serif',
          size: 28,
          // 24-hour UTC clock times.
          values: (_u, splits, _i, _space, incr) => splits.map((v) => (incr < 60 ? hms : hm)(utc(v))),
        },
        {
          stroke: muted,
          grid: { stroke: grid, width: 1 },
          ticks: { stroke: grid, width: 1 },
          size: 52,
          font: '11px "Inter Tight", system-ui, sans-serif',
          values: (_u, splits) => splits.map((v) => formatValue(v * display, 3)),
        },
      ],
      series: [
        { label: 'UTC', value: (_u, v) => (v === null || v === undefined ? '—' : stamp(utc(v))) },
        ...series.map((s) => ({
          label: s.label,
          stroke: s.color,
          width: bars ? 0 : 1.25,
          fill: bars ? `${s.color}99` : undefined,
          points: { show: false },
          spanGaps: false,
          value: (_u: uPlot, v: number | null) => fmt(v),
          ...(bars ? { paths: uPlot.paths.bars?.({ size: [0.9, 40] }) } : {}),
        })),
      ],
      hooks: {
        drawClear: [
          (u) => {
            const { ctx, bbox } = u;
            ctx.save();
            for (const p of live.current.passes) {
              const x0 = Math.max(bbox.left, u.valToPos(p.fromS, 'x', true));
              const x1 = Math.min(bbox.left + bbox.width, u.valToPos(p.toS, 'x', true));
              if (x1 <= x0) continue;
              ctx.fillStyle = `rgba(${GALLIUM}, 0.09)`;
              ctx.fillRect(x0, bbox.top, x1 - x0, bbox.height);
            }
            ctx.restore();
          },
        ],
        draw: [
          (u) => {
            const { ctx, bbox } = u;
            ctx.save();
            for (const g of live.current.gaps) {
              const x0 = Math.max(bbox.left, u.valToPos(g.fromS, 'x', true));
              const x1 = Math.min(bbox.left + bbox.width, u.valToPos(g.toS, 'x', true));
              if (x1 < x0) continue;
              ctx.fillStyle = `rgba(${WARNING}, 0.35)`;
              ctx.fillRect(x0, bbox.top, Math.max(2 * devicePixelRatio, x1 - x0), bbox.height);
            }
            ctx.lineWidth = devicePixelRatio;
            ctx.setLineDash([5 * devicePixelRatio, 4 * devicePixelRatio]);
            for (const l of live.current.limits) {
              const y = u.valToPos(l.value, 'y', true);
              if (y < bbox.top - 1 || y > bbox.top + bbox.height + 1) continue;
              ctx.strokeStyle = LEVEL_COLOR[l.level];
              ctx.beginPath();
              ctx.moveTo(bbox.left, y);
              ctx.lineTo(bbox.left + bbox.width, y);
              ctx.stroke();
            }
            ctx.restore();
          },
        ],
      },
    };
    const u = new uPlot(opts, live.current.data, el);
    u.root.style.color = ink;
    chart.current = u;
    const ro = new ResizeObserver(() => {
      const w = Math.max(200, el.clientWidth);
      if (Math.abs(w - u.width) > 1) u.setSize({ width: w, height });
    });
    ro.observe(el);
    return () => {
      ro.disconnect();
      u.destroy();
      chart.current = null;
    };
  }, [theme, seriesKey, syncKey, display, bars, height]);

  useEffect(() => {
    chart.current?.setData(live.current.data, true);
  }, [version]);

  return (
    <figure className="panel min-w-0 p-2 [&_.u-legend]:text-[11px] [&_.u-legend_th]:font-medium" aria-label={title}>
      <figcaption className="mb-1 flex items-baseline justify-between gap-2 px-1 text-xs">
        <span className="font-medium text-ink">{title}</span>
        <span className="flex items-baseline gap-2">
          {[...limits]
            .sort((a, b) => b.value - a.value)
            .map((l, i) => (
              <span key={i} className={`num ${l.level === 'warning' ? 'text-warning' : 'text-caution'}`} title={`${l.level} level`}>
                <span aria-hidden="true">{l.level === 'warning' ? '◆' : '▲'}</span>
                <span className="sr-only">{l.level}</span> {formatValue(l.value * display, 4)}
              </span>
            ))}
          <span className="unit">{unit}</span>
        </span>
      </figcaption>
      <div ref={box} className="pass-watch-chart" />
    </figure>
  );
}
