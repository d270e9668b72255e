import { useMemo } from 'react';
import { useQuery } from '@tanstack/react-query';
import { rawQuery } from './casefile.queries';
import { TimeChart, type ChartLine } from './TimeChart';
import { chartColours, HUES, useThemeName } from './chart-theme';
import { formatUtc, formatValue } from '../../lib/format';
import type { RawWindowResponse } from './casefile.schema';

const COLUMNS: { key: keyof RawWindowResponse['rows'][number]; label: string; unit: string }[] = [
  { key: 'commanded_current_a', label: 'Commanded', unit: 'A' },
  { key: 'measured_current_a', label: 'Current', unit: 'A' },
  { key: 'electrode_voltage_v', label: 'Voltage', unit: 'V' },
  { key: 'flow_velocity_m_s', label: 'Flow', unit: 'm/s' },
  { key: 'pressure_rise_pa', label: 'Pressure rise', unit: 'Pa' },
  { key: 'fluid_temp_c', label: 'Fluid', unit: '°C' },
  { key: 'electrode_temp_c', label: 'Electrode', unit: '°C' },
  { key: 'magnet_temp_c', label: 'Magnet', unit: '°C' },
];

function csvOf(r: RawWindowResponse): string {
  const head = ['t_utc', 'time_tag', 'seq', 'status', ...COLUMNS.map((c) => c.key)];
  return [head.join(','), ...r.rows.map((x) => [x.t, x.time_tag, x.seq, x.status, ...COLUMNS.map((c) => x[c.key])].join(','))].join('\r\n') + '\r\n';
}

/** The raw 10 Hz housekeeping of one analysis window: current and flow over the window, and every row. */
export function RawWindow({ tripId, window, loop, onClose }: { tripId: number; window: string; loop: number; onClose: () => void }) {
  const q = useQuery(rawQuery(tripId, window, loop));
  const theme = useThemeName();
  const lines = useMemo<ChartLine[]>(() => {
    const rows = q.data?.rows ?? [];
    const t = rows.map((r) => Date.parse(r.t) / 1000);
    return [
      { key: 'i', label: 'Measured current', unit: 'A', t, y: rows.map((r) => r.measured_current_a), color: HUES.gallium },
      { key: 'v', label: 'Flow velocity', unit: 'm/s', t, y: rows.map((r) => r.flow_velocity_m_s), color: chartColours(theme).second, scale: 'y2' },
    ];
  }, [q.data, theme]);
  const download = () => {
    if (!q.data) return;
    const url = URL.createObjectURL(new Blob([csvOf(q.data)], { type: 'text/csv' }));
    const a = document.createElement('a');
    a.href = url;
    a.download = `trip-${tripId}-L${loop}-raw-${q.data.window.from.replace(/[:]/g, '')}.csv`;
    a.click();
    URL.revokeObjectURL(url);
  };
  const from = q.data ? Date.parse(q.data.window.from) / 1000 : Math.floor(Date.parse(window) / 60_000) * 60;
  return (
    <section className="panel p-3" aria-label="Raw samples of one window">
      <div className="flex flex-wrap items-baseline gap-3">
        <h2>
          Raw samples · loop L{loop} · {formatUtc(from * 1000)}–{formatUtc((from + 60) * 1000).slice(11)} UTC
        </h2>
        <span className="text-xs text-muted">{q.data ? `${q.data.rows.length} samples` : q.isFetching ? 'Loading…' : ''}</span>
        <span className="ml-auto flex gap-2">
          <button type="button" className="btn h-7 text-xs" onClick={download} disabled={!q.data?.rows.length}>
            Download rows (CSV)
          </button>
          <button type="button" className="btn h-7 text-xs" onClick={onClose}>
            Close
          </button>
        </span>
      </div>
      {q.isError && (
        <p role="alert" className="mt-2 text-xs text-warning">
          The raw samples could not be loaded: {q.error.message}
        </p>
      )}
      {q.data && (
        <>
          <div className="mt-2">
            <TimeChart title="Raw window" lines={lines} range={[from, from + 60]} yLabel="Current (A)" y2Label="Flow (m/s)" height={160} syncKey="raw" empty="No raw samples are stored for this window (the packets may not have arrived, or the window is outside the data)." />
          </div>
          {q.data.rows.length > 0 && (
            <div className="mt-2 max-h-72 overflow-auto rounded border border-rule">
              <table className="table-compact">
                <thead className="sticky top-0 bg-panel">
                  <tr>
                    <th>Time (UTC)</th>
                    <th className="n">Seq</th>
                    {COLUMNS.map((c) => (
                      <th key={c.key} className="n">
                        {c.label} <span className="unit normal-case">{c.unit}</span>
                      </th>
                    ))}
                  </tr>
                </thead>
                <tbody>
                  {q.data.rows.map((r) => (
                    <tr key={`${r.time_tag}-${r.seq}`}>
                      <td className="num">{r.t.slice(11, 23)}</td>
                      <td className="n">{r.seq}</td>
                      {COLUMNS.map((c) => (
                        <td key={c.key} className="n">
                          {formatValue(r[c.key] as number, 5)}
                        </td>
                      ))}
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          )}
        </>
      )}
    </section>
  );
}
