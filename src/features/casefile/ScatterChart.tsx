import { useEffect, useMemo, useRef, useState } from 'react';
import uPlot from 'uplot';
import 'uplot/dist/uPlot.min.css';
import { alpha, chartColours, ramp, TEMP_STOPS, useThemeName, useWidth } from './chart-theme';
import { formatUtc, formatValue } from '../../lib/format';
import type { ScatterPeriod } from './casefile.schema';

const BINS = 5;

/** kT ± its standard error in mN·m/A, both to the decimal of the error's second significant figure. */
function withError(kT: number | null, se: number | null): string {
  if (kT === null) return '—';
  if (se === null || !(se > 0)) return formatValue(kT * 1e3, 4);
  const d = Math.min(8, Math.max(0, 1 - Math.floor(Math.log10(se * 1e3))));
  return `${(kT * 1e3).toFixed(d)} ± ${(se * 1e3).toFixed(d)}`;
}

interface Props {
  baseline: ScatterPeriod | null;
  recent: ScatterPeriod | null;
  height?: number;
}

/** Torque against current per sample, two periods, coloured by magnet temperature, with each period's line τ = kT·I (the slope only, without the fits' v and v|v| terms). */
export function ScatterChart({ baseline, recent, height = 280 }: Props) {
  const theme = useThemeName();
  const [setBox, width] = useWidth<HTMLDivElement>();
  const holder = useRef<HTMLDivElement | null>(null);
  const [hover, setHover] = useState<{ i: number; tau: number } | null>(null);

  const model = useMemo(() => {
    const periods = [baseline, recent];
    const temps = periods.flatMap((p) => p?.magnetTemp_c ?? []).filter(Number.isFinite);
    const tMin = temps.length ? Math.min(...temps) : 0;
    const tMax = temps.length ? Math.max(...temps) : 0;
    const flat = tMax - tMin < 0.05;
    const binOf = (t: number) => (flat ? Math.floor(BINS / 2) : Math.min(BINS - 1, Math.floor(((t - tMin) / (tMax - tMin)) * BINS)));
    const pts: { x: number; y: number; s: number }[] = [];
    periods.forEach((p, pi) => {
      if (!p) return;
      for (let k = 0; k < p.current_a.length; k++) pts.push({ x: p.current_a[k]!, y: p.torque_nm[k]! * 1e3, s: pi * BINS + binOf(p.magnetTemp_c[k]!) });
    });
    pts.sort((a, b) => a.x - b.x);
    const xs = pts.map((p) => p.x);
    const cols: (number | null)[][] = Array.from({ length: 2 * BINS }, () => new Array<number | null>(pts.length).fill(null));
    pts.forEach((p, i) => { cols[p.s]![i] = p.y; });
    // torque shown in mN·m, kT in mN·m/A
    const line = (k: number | null | undefined) => (k === null || k === undefined ? xs.map(() => null) : xs.map((x) => k * 1e3 * x));
    const used = new Set(pts.map((p) => p.s));
    return { xs, cols, lines: [line(baseline?.kT), line(recent?.kT)], tMin, tMax, flat, used, n: pts.length };
  }, [baseline, recent]);

  useEffect(() => {
    const el = holder.current;
    if (!el || width < 50 || model.n === 0) return;
    const c = chartColours(theme);
    const font = '11px "Inter Tight", system-ui, sans-serif';
    const axis = { stroke: c.muted, font, labelFont: font, grid: { stroke: c.rule, width: 1 }, ticks: { stroke: c.rule, width: 1 } };
    const fmt = (_u: uPlot, vals: number[]) => vals.map((v) => formatValue(v, 3));
    const colourOf = (b: number) => ramp(TEMP_STOPS, model.flat ? 0.5 : (b + 0.5) / BINS);
    const series: uPlot.Series[] = [{}];
    for (let s = 0; s < 2 * BINS; s++) {
      const colour = colourOf(s % BINS);
      const isRecent = s >= BINS;
      series.push({
        label: `${isRecent ? 'recent' : 'baseline'} ${s % BINS}`,
        stroke: colour,
        paths: () => null,
        points: isRecent ? { show: true, size: 6, width: 1.2, stroke: colour, fill: 'transparent', space: 0 } : { show: true, size: 4, width: 0, stroke: alpha('#000000', 0), fill: colour.replace('rgb(', 'rgba(').replace(')', ', 0.55)'), space: 0 },
      });
    }
    series.push({ label: 'baseline τ = kT·I', stroke: c.muted, width: 2, dash: [6, 4], spanGaps: true, points: { show: false } });
    series.push({ label: 'recent τ = kT·I', stroke: c.second, width: 2, spanGaps: true, points: { show: false } });
    const data = [model.xs, ...model.cols, ...model.lines] as unknown as uPlot.AlignedData;
    const u = new uPlot(
      {
        width,
        height,
        legend: { show: false },
        cursor: { drag: { x: false, y: false }, points: { show: false } },
        scales: { x: { time: false } },
        axes: [
          { ...axis, label: 'Measured pump current (A)', values: fmt },
          { ...axis, label: 'Fluid torque dh/dt + τ_loss (mN·m)', size: 64, values: fmt },
        ],
        series,
        hooks: {
          setCursor: [
            (uu) => {
              const l = uu.cursor.left ?? -1, t = uu.cursor.top ?? -1;
              setHover(l >= 0 && t >= 0 ? { i: uu.posToVal(l, 'x'), tau: uu.posToVal(t, 'y') } : null);
            },
          ],
        },
      },
      data,
      el,
    );
    return () => u.destroy();
  }, [model, width, height, theme]);

  const colours = Array.from({ length: BINS }, (_, b) => ramp(TEMP_STOPS, model.flat ? 0.5 : (b + 0.5) / BINS));
  const c = chartColours(theme);
  const describe = (p: ScatterPeriod | null, name: string) =>
    p ? `${name}: ${formatUtc(p.from * 1000).slice(5, 16)}–${formatUtc(p.to * 1000).slice(11, 16)} UTC, ${p.windows} windows, kT ${withError(p.kT, p.kTStdErr)} mN·m/A` : `${name}: none`;
  return (
    <div>
      <ul className="mb-1 flex flex-wrap gap-x-4 gap-y-1 text-xs text-muted" aria-label="Torque against current: series">
        <li className="inline-flex items-center gap-1.5">
          <svg width="10" height="10" aria-hidden="true"><circle cx="5" cy="5" r="3" fill={colours[2]} /></svg>
          {describe(baseline, 'Baseline')}
        </li>
        <li className="inline-flex items-center gap-1.5">
          <svg width="10" height="10" aria-hidden="true"><circle cx="5" cy="5" r="3.5" fill="none" stroke={colours[2]} strokeWidth="1.2" /></svg>
          {describe(recent, 'Recent')}
        </li>
        <li className="inline-flex items-center gap-1.5">
          <svg width="18" height="8" aria-hidden="true"><line x1="0" y1="4" x2="18" y2="4" stroke={c.muted} strokeWidth="2" strokeDasharray="6 4" /></svg>
          baseline τ = kT·I
        </li>
        <li className="inline-flex items-center gap-1.5">
          <svg width="18" height="8" aria-hidden="true"><line x1="0" y1="4" x2="18" y2="4" stroke={c.second} strokeWidth="2" /></svg>
          recent τ = kT·I
        </li>
        <li className="basis-full" data-testid="scatter-lines-note">
          Lines: τ = kT·I through the origin, the slope of the period's window fits only; those fits also have v and v|v| loss-correction terms, not drawn here.
        </li>
        <li className="inline-flex items-center gap-1.5">
          Magnet temperature
          <span className="num">{formatValue(model.tMin, 3)}</span>
          <span className="inline-flex" aria-hidden="true">
            {colours.map((col) => (
              <span key={col} className="inline-block h-2.5 w-4" style={{ backgroundColor: col }} />
            ))}
          </span>
          <span className="num">{formatValue(model.tMax, 3)}</span> <span className="unit">°C</span>
        </li>
      </ul>
      <div ref={setBox} className="w-full">
        {model.n > 0 ? <div ref={holder} /> : <p className="flex items-center justify-center rounded border border-dashed border-rule text-xs text-muted" style={{ height }}>No samples in a window with a fitted kT: the scatter needs windows in which the current varied.</p>}
      </div>
      <p className="num mt-1 h-4 text-xs text-muted">
        {hover ? (
          <>
            I {formatValue(hover.i, 3)} <span className="unit">A</span>, τ {formatValue(hover.tau, 3)} <span className="unit">mN·m</span>
          </>
        ) : (
          `Per-sample points (10 Hz; up to ${formatValue((baseline?.current_a.length ?? 0) + (recent?.current_a.length ?? 0), 4)} shown of ${formatValue((baseline?.samples ?? 0) + (recent?.samples ?? 0), 6)}).`
        )}
      </p>
    </div>
  );
}
