import { useEffect, useRef, useState } from 'react';
import uPlot from 'uplot';
import 'uplot/dist/uPlot.min.css';
import { chartColours, HEAT_STOPS, HUES, ramp, useThemeName, useWidth } from './chart-theme';
import { formatUtc, formatValue } from '../../lib/format';
import type { EvidenceResponse } from './casefile.schema';

type Pulsation = EvidenceResponse['pulsation'];

/** The latest burst's pressure spectrum over the baseline spectrum, log power against frequency. */
export function SpectrumChart({ pulsation, height = 240 }: { pulsation: Pulsation; height?: number }) {
  const theme = useThemeName();
  const [setBox, width] = useWidth<HTMLDivElement>();
  const holder = useRef<HTMLDivElement | null>(null);
  const [hover, setHover] = useState<{ f: number; latest: number | null; base: number | null } | null>(null);
  const latest = pulsation.latest;
  const base = pulsation.baseline;

  useEffect(() => {
    const el = holder.current;
    if (!el || width < 50 || !latest) return;
    const c = chartColours(theme);
    const font = '11px "Inter Tight", system-ui, sans-serif';
    const axis = { stroke: c.muted, font, labelFont: font, grid: { stroke: c.rule, width: 1 }, ticks: { stroke: c.rule, width: 1 } };
    const pos = (v: number) => (v > 0 ? v : null);
    const tables: uPlot.AlignedData[] = [[latest.freq_hz.slice(1), latest.psd.slice(1).map(pos)] as uPlot.AlignedData];
    if (base) tables.push([base.freq_hz.slice(1), base.psd.slice(1).map(pos)] as uPlot.AlignedData);
    const data = uPlot.join(tables);
    const u = new uPlot(
      {
        width,
        height,
        legend: { show: false },
        cursor: { drag: { x: false, y: false }, points: { size: 5 } },
        scales: { x: { time: false }, y: { distr: 3 } },
        axes: [
          { ...axis, label: 'Frequency (Hz)' },
          {
            ...axis,
            label: 'Pressure PSD (Pa²/Hz)',
            size: 72,
            // decades only
            splits: (_u, _i, min, max) => {
              const out: number[] = [];
              for (let e = Math.ceil(Math.log10(min)); e <= Math.floor(Math.log10(max)); e++) out.push(10 ** e);
              return out;
            },
            values: (_u, vals) => vals.map((v) => formatValue(v, 2)),
          },
        ],
        series: [
          {},
          { label: 'latest', stroke: HUES.gallium, width: 1.5, spanGaps: true, points: { show: false } },
          ...(base ? [{ label: 'baseline', stroke: c.muted, width: 1.5, dash: [5, 4], spanGaps: true, points: { show: false } }] : []),
        ],
        hooks: {
          setCursor: [
            (uu) => {
              const i = uu.cursor.idx;
              if (i === null || i === undefined) return setHover(null);
              const d = uu.data;
              setHover({ f: d[0][i]!, latest: (d[1]?.[i] as number | null | undefined) ?? null, base: (d[2]?.[i] as number | null | undefined) ?? null });
            },
          ],
        },
      },
      data,
      el,
    );
    return () => u.destroy();
  }, [latest, base, width, height, theme]);

  const c = chartColours(theme);
  return (
    <div>
      <ul className="mb-1 flex flex-wrap gap-x-4 text-xs text-muted" aria-label="Pulsation spectrum: series">
        <li className="inline-flex items-center gap-1.5">
          <svg width="18" height="8" aria-hidden="true"><line x1="0" y1="4" x2="18" y2="4" stroke={HUES.gallium} strokeWidth="2" /></svg>
          latest burst{latest ? ` ${formatUtc(latest.t * 1000).slice(11)} UTC` : ''}
        </li>
        {base && (
          <li className="inline-flex items-center gap-1.5">
            <svg width="18" height="8" aria-hidden="true"><line x1="0" y1="4" x2="18" y2="4" stroke={c.muted} strokeWidth="2" strokeDasharray="5 4" /></svg>
            baseline ({base.source === 'baseline-period' ? `mean of ${base.bursts} bursts in the baseline period` : 'earliest burst stored'})
          </li>
        )}
      </ul>
      <div ref={setBox} className="w-full">
        {latest ? <div ref={holder} /> : <p className="flex items-center justify-center rounded border border-dashed border-rule text-xs text-muted" style={{ height }}>No pressure burst captured for this loop up to the end of the span.</p>}
      </div>
      <p className="num mt-1 h-4 text-xs text-muted">
        {hover ? (
          <>
            {formatValue(hover.f, 4)} <span className="unit">Hz</span> · latest {formatValue(hover.latest, 3)} · baseline {formatValue(hover.base, 3)} <span className="unit">Pa²/Hz</span>
          </>
        ) : (
          ''
        )}
      </p>
    </div>
  );
}

/** A waterfall of the bursts in the span as a heat map: time left to right (UTC), frequency up, brighter is more power. */
export function Waterfall({ pulsation, height = 220 }: { pulsation: Pulsation; height?: number }) {
  const theme = useThemeName();
  const [setBox, width] = useWidth<HTMLDivElement>();
  const canvas = useRef<HTMLCanvasElement | null>(null);
  const [hover, setHover] = useState<string | null>(null);
  const wf = pulsation.waterfall;
  const left = 64, bottom = 26, top = 6, right = 8;

  useEffect(() => {
    const cv = canvas.current;
    if (!cv || !wf || !wf.t.length || width < 80) return;
    const dpr = devicePixelRatio || 1;
    cv.width = width * dpr;
    cv.height = height * dpr;
    cv.style.width = `${width}px`;
    cv.style.height = `${height}px`;
    const ctx = cv.getContext('2d')!;
    ctx.scale(dpr, dpr);
    const c = chartColours(theme);
    ctx.clearRect(0, 0, width, height);
    const pw = width - left - right, ph = height - top - bottom;
    const all = wf.log10psd.flat().filter((v) => v > -12);
    const sorted = [...all].sort((a, b) => a - b);
    const lo = sorted[Math.floor(sorted.length * 0.02)] ?? -6;
    const hi = sorted[Math.floor(sorted.length * 0.998)] ?? 0;
    const t0 = wf.t[0]!, t1 = wf.t[wf.t.length - 1]!;
    const tSpan = Math.max(1, t1 - t0);
    const nf = wf.freq_hz.length;
    const colW = Math.max(1, pw / wf.t.length);
    for (let j = 0; j < wf.t.length; j++) {
      const x = left + (wf.t.length === 1 ? 0 : ((wf.t[j]! - t0) / tSpan) * (pw - colW));
      const row = wf.log10psd[j]!;
      for (let k = 0; k < nf; k++) {
        const y = top + ph - ((k + 1) / nf) * ph;
        ctx.fillStyle = ramp(HEAT_STOPS, (row[k]! - lo) / (hi - lo || 1));
        ctx.fillRect(x, y, Math.ceil(colW) + 0.5, ph / nf + 0.5);
      }
    }
    ctx.strokeStyle = c.rule;
    ctx.strokeRect(left + 0.5, top + 0.5, pw, ph);
    ctx.fillStyle = c.muted;
    ctx.font = '11px "Inter Tight", system-ui, sans-serif';
    ctx.textAlign = 'right';
    const fMax = wf.freq_hz[nf - 1]!;
    for (let q = 0; q <= 4; q++) {
      const f = (fMax * q) / 4;
      ctx.fillText(formatValue(f, 3), left - 6, top + ph - (q / 4) * ph + 4);
    }
    ctx.save();
    ctx.translate(14, top + ph / 2);
    ctx.rotate(-Math.PI / 2);
    ctx.textAlign = 'center';
    ctx.fillText('Frequency (Hz)', 0, 0);
    ctx.restore();
    ctx.textAlign = 'center';
    const ticks = Math.min(6, wf.t.length);
    for (let q = 0; q < ticks; q++) {
      const t = t0 + (tSpan * q) / Math.max(1, ticks - 1);
      const x = left + ((t - t0) / tSpan) * (pw - colW) + colW / 2;
      ctx.fillText(formatUtc(t * 1000).slice(11, 16), Math.min(width - right - 16, Math.max(left + 16, x)), height - 8);
    }
    const move = (e: MouseEvent) => {
      const r = cv.getBoundingClientRect();
      const mx = e.clientX - r.left, my = e.clientY - r.top;
      if (mx < left || mx > left + pw || my < top || my > top + ph) return setHover(null);
      const tq = t0 + ((mx - left) / pw) * tSpan;
      let j = 0;
      for (let i = 1; i < wf.t.length; i++) if (Math.abs(wf.t[i]! - tq) < Math.abs(wf.t[j]! - tq)) j = i;
      const k = Math.min(nf - 1, Math.max(0, Math.floor(((top + ph - my) / ph) * nf)));
      setHover(`${formatUtc(wf.t[j]! * 1000)} UTC · ${formatValue(wf.freq_hz[k], 3)} Hz · ${formatValue(10 ** wf.log10psd[j]![k]!, 3)} Pa²/Hz`);
    };
    const leave = () => setHover(null);
    cv.addEventListener('mousemove', move);
    cv.addEventListener('mouseleave', leave);
    return () => {
      cv.removeEventListener('mousemove', move);
      cv.removeEventListener('mouseleave', leave);
    };
  }, [wf, width, height, theme]);

  return (
    <div>
      <div className="mb-1 flex items-center gap-2 text-xs text-muted" aria-hidden="true">
        less power
        <span className="inline-flex">
          {HEAT_STOPS.map((s) => (
            <span key={s} className="inline-block h-2.5 w-5" style={{ backgroundColor: s }} />
          ))}
        </span>
        more power (log scale, Pa²/Hz)
      </div>
      <div ref={setBox} className="w-full">
        {wf && wf.t.length ? <canvas ref={canvas} role="img" aria-label={`Waterfall of ${wf.t.length} pressure bursts`} /> : <p className="flex items-center justify-center rounded border border-dashed border-rule text-xs text-muted" style={{ height }}>No pressure bursts in this span. Widen the span to see how the spectrum evolved.</p>}
      </div>
      <p className="num mt-1 h-4 text-xs text-muted">{hover ?? ''}</p>
    </div>
  );
}
