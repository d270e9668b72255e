import { QueryClientProvider, useQuery } from '@tanstack/react-query';
import { getQueryClient } from '../../lib/query-client';
import { fleetQuery, type FleetResponse } from './fleet.queries';
import { StateBadge } from '../../components/StateBadge';
import type { FleetLoop } from '../../lib/server/spacecraft';
import { EFFECTIVENESS_LOOKBACK_H } from './lookback';

function shapeText(shape: FleetLoop['shape']): string {
  if (shape.kind === 'circle') return `circle, R ${(shape.radius_m * 1000).toFixed(0)} mm`;
  return `rounded rectangle ${(shape.width_m * 1000).toFixed(0)} × ${(shape.height_m * 1000).toFixed(0)} mm`;
}

function axisText(axis: [number, number, number]): string {
  return `[${axis.map((a) => (Math.abs(a) < 5e-4 ? '0' : a.toFixed(3).replace(/\.?0+$/, ''))).join(', ')}]`;
}

function ageText(iso: string): string {
  const s = Math.max(0, (Date.now() - new Date(iso).getTime()) / 1000);
  const when = `${iso.slice(11, 19)} UTC`;
  if (s < 90) return `${Math.round(s)} s ago (${when})`;
  if (s < 5400) return `${Math.round(s / 60)} min ago (${when})`;
  return `at ${iso.slice(0, 16).replace('T', ' ')} UTC`;
}

/**
 * The loop's newest effectiveness estimate. A window without enough current excitation carries
 * none, so the estimate shown may be older than the latest window; its window time is then shown
 * beneath it.
 */
function EffectCell({ loop }: { loop: FleetLoop }) {
  const e = loop.effectiveness;
  if (!e) return <span title={`No effectiveness estimate within ${EFFECTIVENESS_LOOKBACK_H} h of the latest window (too little current excitation, or no analysed data)`}>—</span>;
  const fromLatest = loop.latest?.windowStart === e.windowStart;
  const at = `${e.windowStart.slice(0, 16).replace('T', ' ')} UTC`;
  return (
    <span title={`Estimate of the window starting ${at}${fromLatest ? ' (the latest window)' : '; later windows had too little excitation for an estimate'}`}>
      <span className="num">{e.value.toFixed(2)}</span>
      {!fromLatest && <span className="block text-xs text-muted">{`at ${e.windowStart.slice(11, 16)}`}</span>}
    </span>
  );
}

function FleetTable({ initial }: { initial: FleetResponse }) {
  const q = useQuery({ ...fleetQuery, initialData: initial });
  if (q.isPending) return <p className="text-muted">Loading the fleet…</p>;
  if (q.isError)
    return (
      <div role="alert" className="panel border-warning/40 p-4 text-warning">
        The fleet could not be loaded: {q.error.message}{' '}
        <button className="btn ml-2" onClick={() => q.refetch()}>
          Try again
        </button>
      </div>
    );
  const fleet = q.data.spacecraft;
  if (fleet.length === 0)
    return (
      <div className="panel p-6">
        <h2>No spacecraft yet</h2>
        <p className="mt-1 text-muted">
          An engineer adds a spacecraft by posting its sheet (mass properties and loop geometry) to <code>POST /api/spacecraft</code>.
        </p>
      </div>
    );
  return (
    <div className="grid gap-4 md:grid-cols-2 xl:grid-cols-3">
      {fleet.map((sc) => (
        <article key={sc.key} className="panel" aria-label={`Spacecraft ${sc.key}`}>
          <header className="flex items-baseline justify-between border-b border-rule px-4 py-3">
            <div>
              <h2 className="text-base">
                <a href={`/spacecraft/${sc.key}`} title={`Link page of ${sc.key}: ingest batches, gaps, quarantine`}>
                  {sc.key}
                </a>
              </h2>
              <p className="text-xs text-muted">{sc.name}</p>
            </div>
            <span className="text-xs text-muted">
              {sc.loops.length} loop{sc.loops.length === 1 ? '' : 's'}
            </span>
          </header>
          <table className="table-compact">
            <thead>
              <tr>
                <th>Loop</th>
                <th className="n" title={`Effectiveness: kT over the ideal one, newest estimate within ${EFFECTIVENESS_LOOKBACK_H} h of the latest window`}>
                  Effect.
                </th>
                <th className="n" title="Electrode temperature, latest window">Electrode</th>
                <th className="n" title="Momentum margin in use, latest window">Margin</th>
                <th>State</th>
              </tr>
            </thead>
            <tbody>
              {sc.loops.map((l) => (
                <tr key={l.id}>
                  <td className="py-1 leading-tight">
                    <span className="num font-medium">L{l.id}</span>
                    <span className="block text-xs text-muted" title={`axis ${axisText(l.axis)}, rated ${l.ratedCurrent_A} A`}>
                      {shapeText(l.shape)}
                      {l.pumpStations > 1 ? `, ${l.pumpStations} pumps` : ''}
                    </span>
                  </td>
                  <td className="n py-1 leading-tight">
                    <EffectCell loop={l} />
                  </td>
                  <td className="n">
                    {l.latest?.electrodeTemp_c != null ? l.latest.electrodeTemp_c.toFixed(1) : '—'} <span className="unit">°C</span>
                  </td>
                  <td className="n">
                    {l.latest?.marginInUse_pct != null ? l.latest.marginInUse_pct.toFixed(0) : '—'} <span className="unit">%</span>
                  </td>
                  <td>
                    {l.liveTrips > 0 ? (
                      <a href={`/trips?spacecraft=${sc.key}&loop=${l.id}&state=open`} className="no-underline" title={`${l.liveTrips} live trip${l.liveTrips === 1 ? '' : 's'}`}>
                        <StateBadge state={l.state} />
                      </a>
                    ) : (
                      <StateBadge state={l.state} />
                    )}
                  </td>
                </tr>
              ))}
            </tbody>
          </table>
          <p className="px-4 pt-2 text-xs text-muted">
            {sc.lastDataAt ? <>Last data {ageText(sc.lastDataAt)}</> : 'No telemetry received yet'}
            {sc.bodyTrips.length > 0 && (
              <>
                {' · '}
                <a href={`/trips?spacecraft=${sc.key}&loop=none`} className="font-medium text-copper">
                  {sc.bodyTrips.reduce((n, t) => n + t.n, 0)} spacecraft-level trip(s)
                </a>
              </>
            )}
          </p>
          <footer className="flex items-baseline justify-between px-4 py-2 text-xs text-muted">
            <span>Sheet in force from {sc.sheetEffectiveFrom ? sc.sheetEffectiveFrom.slice(0, 16).replace('T', ' ') + ' UTC' : '—'}</span>
            <a href={`/spacecraft/${sc.key}/sheets`} aria-label={`Sheets of ${sc.key}`}>
              Sheets
            </a>
          </footer>
        </article>
      ))}
    </div>
  );
}

/** The Fleet island: every spacecraft with its loops. */
export default function Fleet({ initial }: { initial: FleetResponse }) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <FleetTable initial={initial} />
    </QueryClientProvider>
  );
}
