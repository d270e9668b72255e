import { useEffect, useRef } from 'react';
import uPlot from 'uplot';
import 'uplot/dist/uPlot.min.css';
import type { Rule } from '../../lib/limits/evaluate';
import type { BacktestSeries, BacktestTrip } from '../../lib/server/backtest';

const COLOR = { caution: '#C98A00', warning: '#C23B22', line: '#5B7C99', baseline: '#8A8F98' } as const;

interface Props {
  series: BacktestSeries;
  draftRule: Rule | null;
  baselineRule: Rule | null;
  draftTrips: BacktestTrip[];
  baselineTrips: BacktestTrip[];
  fromMs: number;
  toMs: number;
  draftLabel: string;
  baselineLabel: string;
}

function levelsOf(rule: Rule | null): { v: number; kind: 'caution' | 'warning' }[] {
  if (!rule) return [];
  const out: { v: number; kind: 'caution' | 'warning' }[] = [];
  if (rule.cautionHigh !== null) out.push({ v: rule.cautionHigh, kind: 'caution' });
  if (rule.cautionLow !== null) out.push({ v: rule.cautionLow, kind: 'caution' });
  if (rule.warningHigh !== null) out.push({ v: rule.warningHigh, kind: 'warning' });
  if (rule.warningLow !== null) out.push({ v: rule.warningLow, kind: 'warning' });
  return out;
}

/**
 * One quantity over the backtest span (uPlot, UTC): the draft's caution and warning levels as
 * dashed lines in the state colours, the active set's as dotted grey lines; each trip as a band
 * from onset to clear, the draft's along the top edge and the active set's along the bottom,
 * with a tick where it was raised.
 */
export function BacktestChart(props: Props) {
  const box = useRef<HTMLDivElement>(null);
  const latest = useRef(props);
  latest.current = props;
  useEffect(() => {
    const el = box.current;
    if (!el) return;
    const { series, fromMs, toMs } = latest.current;
    const draftLevels = levelsOf(latest.current.draftRule);
    const baseLevels = levelsOf(latest.current.baselineRule);
    const ys = [...series.v, ...draftLevels.map((l) => l.v), ...baseLevels.map((l) => l.v)].filter((v) => Number.isFinite(v));
    let lo = ys.length ? Math.min(...ys) : 0;
    let hi = ys.length ? Math.max(...ys) : 1;
    if (lo === hi) {
      lo -= Math.abs(lo) * 0.1 || 1;
      hi += Math.abs(hi) * 0.1 || 1;
    }
    const pad = (hi - lo) * 0.08;
    const dpr = window.devicePixelRatio || 1;

    const drawLevels = (u: uPlot) => {
      const ctx = u.ctx;
      const { left, width } = u.bbox;
      ctx.save();
      ctx.lineWidth = dpr;
      for (const [levels, dash, base] of [
        [baseLevels, [2 * dpr, 3 * dpr], true],
        [draftLevels, [6 * dpr, 4 * dpr], false],
      ] as const) {
        for (const l of levels) {
          const y = Math.round(u.valToPos(l.v, 'y', true)) + 0.5;
          ctx.strokeStyle = base ? COLOR.baseline : COLOR[l.kind];
          ctx.setLineDash([...dash]);
          ctx.beginPath();
          ctx.moveTo(left, y);
          ctx.lineTo(left + width, y);
          ctx.stroke();
        }
      }
      ctx.restore();
    };
    const drawTrips = (u: uPlot) => {
      const ctx = u.ctx;
      const { left, top, width, height } = u.bbox;
      const band = 6 * dpr;
      ctx.save();
      for (const [trips, y0] of [
        [latest.current.draftTrips, top],
        [latest.current.baselineTrips, top + height - band],
      ] as const) {
        for (const t of trips) {
          const x0 = Math.max(left, u.valToPos(t.onsetMs / 1000, 'x', true));
          const x1 = Math.min(left + width, u.valToPos((t.clearedMs ?? toMs) / 1000, 'x', true));
          const xr = u.valToPos(t.raisedMs / 1000, 'x', true);
          ctx.fillStyle = COLOR[t.level];
          ctx.globalAlpha = 0.12;
          ctx.fillRect(x0, top, Math.max(dpr * 2, x1 - x0), height);
          ctx.globalAlpha = 1;
          ctx.fillRect(x0, y0, Math.max(dpr * 3, x1 - x0), band);
          ctx.fillRect(xr - dpr, y0, 2 * dpr, band * 2);
        }
      }
      ctx.restore();
    };

    const opts: uPlot.Options = {
      width: el.clientWidth || 800,
      height: 260,
      tzDate: (ts) => uPlot.tzDate(new Date(ts * 1000), 'Etc/UTC'),
      scales: { x: { time: true, min: fromMs / 1000, max: toMs / 1000 }, y: { range: () => [lo - pad, hi + pad] } },
      axes: [
        { stroke: '#606975', grid: { stroke: 'rgba(128,128,128,0.15)' } },
        { stroke: '#606975', grid: { stroke: 'rgba(128,128,128,0.15)' }, size: 64, label: series.unit || undefined },
      ],
      series: [{}, { label: series.label, stroke: COLOR.line, width: 1.25, points: { show: false }, spanGaps: false }],
      legend: { show: false },
      cursor: { drag: { x: true, y: false } },
      hooks: { draw: [drawLevels, drawTrips] },
    };
    const plot = new uPlot(opts, [series.t.map((t) => t / 1000), series.v], el);
    const ro = new ResizeObserver(() => plot.setSize({ width: el.clientWidth || 800, height: 260 }));
    ro.observe(el);
    return () => {
      ro.disconnect();
      plot.destroy();
    };
  }, [props.series, props.draftRule, props.baselineRule, props.draftTrips, props.baselineTrips, props.fromMs, props.toMs]);

  const loop = props.series.loopId === null ? '' : ` on L${props.series.loopId}`;
  return (
    <figure aria-label={`Chart of ${props.series.label}${loop}`} className="space-y-1">
      <div ref={box} className="w-full" />
      <figcaption className="flex flex-wrap gap-x-4 gap-y-1 text-xs text-muted">
        <span>
          <span aria-hidden="true" style={{ color: COLOR.line }}>
            ━
          </span>{' '}
          {props.series.label}
          {props.series.unit ? ` (${props.series.unit})` : ''}, {props.series.points.toLocaleString('en-US')} points replayed, UTC
        </span>
        <span>
          <span aria-hidden="true" style={{ color: COLOR.caution }}>
            ╌
          </span>{' '}
          {props.draftLabel} levels (caution, <span style={{ color: COLOR.warning }}>warning</span>)
        </span>
        <span>
          <span aria-hidden="true">┈</span> {props.baselineLabel} levels
        </span>
        <span>
          ▀ {props.draftLabel} trips ({props.draftTrips.length}) · ▄ {props.baselineLabel} trips ({props.baselineTrips.length})
        </span>
      </figcaption>
    </figure>
  );
}
