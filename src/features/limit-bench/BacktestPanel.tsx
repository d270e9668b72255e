import { useEffect, useMemo, useState } from 'react';
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import { ApiError } from '../../lib/http';
import { formatUtc, formatValue } from '../../lib/format';
import { LevelBadge } from '../../components/LevelBadge';
import type { Rule } from '../../lib/limits/evaluate';
import { quantityInfo } from '../../lib/limits/quantities';
import type { BacktestResult, BacktestTrip } from '../../lib/server/backtest';
import { backtestQuery, cancelBacktest, startBacktest, type BacktestView, type LimitSetView } from './limit-bench.queries';
import { BacktestChart } from './BacktestChart';

const STATUS_TEXT: Record<BacktestView['status'], string> = {
  queued: 'Waiting to start',
  running: 'Replaying',
  done: 'Done',
  cancelled: 'Cancelled',
  failed: 'Failed',
};

/** "3 h 20 min" for a duration. */
function lasted(ms: number): string {
  const min = Math.round(ms / 60_000);
  if (min < 1) return `${Math.max(0, Math.round(ms / 1000))} s`;
  if (min < 120) return `${min} min`;
  const h = Math.floor(min / 60);
  if (h < 48) return `${h} h ${min % 60} min`;
  return `${Math.floor(h / 24)} d ${h % 24} h`;
}

/** A datetime-local value (read as UTC) to ISO, or undefined when empty. */
const utcIso = (v: string) => (v ? new Date(`${v}:00Z`).toISOString() : undefined);

const setLabel = (r: { version: number; status: string }, role: 'draft' | 'baseline') => (role === 'baseline' ? `Active v${r.version}` : `v${r.version}`);

function ruleFor(result: BacktestResult, role: 'draft' | 'baseline', quantity: string, loopId: number | null): Rule | null {
  const r = result.rules.find((x) => x.set === role && x.quantity === quantity && x.replayable && (x.loopId === null || x.loopId === loopId));
  return r ? r.levels : null;
}

const PAGE = 25;

function TripsTable({ result, trips, unitOf, scopeLabel }: { result: BacktestResult; trips: BacktestTrip[]; unitOf: (q: string) => string; scopeLabel: string }) {
  const [page, setPage] = useState(0);
  const labelOf = (q: string) => result.rules.find((r) => r.quantity === q)?.label ?? q;
  const pages = Math.max(1, Math.ceil(trips.length / PAGE));
  const at = Math.min(page, pages - 1);
  if (!trips.length) return <p className="p-3 text-muted">Neither set would have raised a trip{scopeLabel ? ` ${scopeLabel}` : ''} over this span.</p>;
  const shown = trips.slice(at * PAGE, at * PAGE + PAGE);
  return (
    <>
      <table className="table-compact" aria-label="Backtest trips">
        <thead>
          <tr>
            <th>Set</th>
            <th>Quantity</th>
            <th>Loop</th>
            <th>Level</th>
            <th>Onset (UTC)</th>
            <th>Cleared (UTC)</th>
            <th className="n">Lasted</th>
            <th className="n">At raise</th>
            <th className="n">Peak</th>
            <th className="n">Limit</th>
            <th className="n" title="Time from onset to the raise, and the consecutive points the limit asks for">
              Raised after
            </th>
          </tr>
        </thead>
        <tbody>
          {shown.map((t) => {
            const unit = unitOf(t.quantity);
            return (
              <tr key={`${t.set}-${t.ruleIndex}-${t.loopId}-${t.onsetMs}`}>
                <td className={`whitespace-nowrap ${t.set === 'draft' ? 'font-medium' : 'text-muted'}`}>{setLabel(t.set === 'draft' ? result.draft : result.baseline!, t.set)}</td>
                <td className="min-w-[13rem]">{labelOf(t.quantity)}</td>
                <td className="num">{t.loopId === null ? '—' : `L${t.loopId}`}</td>
                <td>
                  <LevelBadge level={t.level} />
                </td>
                <td className="num whitespace-nowrap">{formatUtc(t.onsetMs)}</td>
                <td className="num whitespace-nowrap">{t.clearedMs === null ? <span className="font-medium text-copper">persists at end</span> : formatUtc(t.clearedMs)}</td>
                <td className="n whitespace-nowrap">{lasted((t.clearedMs ?? result.toMs) - t.onsetMs)}</td>
                <td className="n whitespace-nowrap">
                  {formatValue(t.value)} <span className="unit">{unit}</span>
                </td>
                <td className="n whitespace-nowrap">
                  {formatValue(t.peak)} <span className="unit">{unit}</span>
                </td>
                <td className="n whitespace-nowrap">
                  {t.side === 'high' ? '≥' : '≤'} {formatValue(t.limit)} <span className="unit">{unit}</span>
                </td>
                <td className="n whitespace-nowrap">
                  +{lasted(t.raisedMs - t.onsetMs)} <span className="unit">({t.persistence} points)</span>
                </td>
              </tr>
            );
          })}
        </tbody>
      </table>
      <div className="flex items-center gap-2 border-t border-rule px-2 py-1.5 text-xs">
        <button type="button" className="btn h-7 px-2 text-xs" disabled={at === 0} onClick={() => setPage(at - 1)}>
          Previous
        </button>
        <span className="num text-muted">
          trips {at * PAGE + 1}–{at * PAGE + shown.length} of {trips.length}
        </span>
        <button type="button" className="btn h-7 px-2 text-xs" disabled={at >= pages - 1} onClick={() => setPage(at + 1)}>
          Next
        </button>
      </div>
    </>
  );
}

function Results({ result }: { result: BacktestResult }) {
  const unitOf = (q: string) => result.series.find((s) => s.quantity === q)?.unit ?? result.rules.find((r) => r.quantity === q)?.unit ?? '';
  const draftTrips = result.trips.filter((t) => t.set === 'draft');
  const baseTrips = result.trips.filter((t) => t.set === 'baseline');
  const chartable = result.series.filter((s) => s.points > 0);
  // First on the chart: the series of the draft's first limit that trips, else the first series.
  const first =
    result.rules
      .filter((r) => r.set === 'draft')
      .flatMap((r) => chartable.filter((s) => s.quantity === r.quantity && draftTrips.some((t) => t.quantity === s.quantity && t.loopId === s.loopId)))[0] ?? chartable[0];
  const [chosen, setChosen] = useState<string>(() => (first ? `${first.quantity}|${first.loopId}` : ''));
  const [onlyCharted, setOnlyCharted] = useState(false);
  const series = chartable.find((s) => `${s.quantity}|${s.loopId}` === chosen) ?? chartable[0];
  const onChart = useMemo(() => {
    const mine = (t: BacktestTrip) => series !== undefined && t.quantity === series.quantity && t.loopId === series.loopId;
    return { draft: draftTrips.filter(mine), baseline: baseTrips.filter(mine) };
  }, [series, draftTrips, baseTrips]);
  const draftLabel = `Draft v${result.draft.version}`;
  const baseLabel = result.baseline ? `Active v${result.baseline.version}` : 'No active set';
  const byRule = result.rules.filter((r) => r.set === 'draft');
  const baseByQuantity = (q: string, loopId: number | null) => result.rules.filter((r) => r.set === 'baseline' && r.quantity === q && r.loopId === loopId);
  const skipped = result.rules.filter((r) => !r.replayable);

  return (
    <div className="space-y-4">
      <p className="text-sm" role="status">
        Over <span className="num">{formatUtc(result.fromMs)}</span> – <span className="num">{formatUtc(result.toMs)}</span> UTC,{' '}
        <strong>
          {draftLabel} would have raised {draftTrips.length} trip{draftTrips.length === 1 ? '' : 's'}
        </strong>
        {result.baseline ? (
          <>
            {' '}
            against {baseTrips.length} under {baseLabel}
          </>
        ) : (
          ' (the spacecraft has no active set to compare with)'
        )}
        . <span className="text-muted">Replayed in {(result.elapsedMs / 1000).toFixed(2)} s through the scheduler’s trip logic.</span>
      </p>

      <div className="panel overflow-x-auto">
        <table className="table-compact" aria-label="Trips per limit">
          <thead>
            <tr>
              <th>Limit</th>
              <th>Loop</th>
              <th className="n">{draftLabel} trips</th>
              <th className="n">{baseLabel} trips</th>
              <th className="n">Points</th>
            </tr>
          </thead>
          <tbody>
            {byRule.map((r) => {
              const base = baseByQuantity(r.quantity, r.loopId);
              return (
                <tr key={r.ruleIndex}>
                  <td>{r.label}</td>
                  <td className="num">{r.loopId !== null ? `L${r.loopId}` : quantityInfo(r.quantity)?.scope === 'body' ? '—' : 'all'}</td>
                  <td className="n font-medium">{r.replayable ? r.trips : '—'}</td>
                  <td className="n text-muted">{base.length ? base.reduce((a, b) => a + b.trips, 0) : '—'}</td>
                  <td className="n text-muted">{r.replayable ? r.points.toLocaleString('en-US') : 'not replayable'}</td>
                </tr>
              );
            })}
          </tbody>
        </table>
        {skipped.length > 0 && (
          <ul className="border-t border-rule px-3 py-2 text-xs text-muted">
            {[...new Map(skipped.map((s) => [s.quantity, s])).values()].map((s) => (
              <li key={s.quantity}>
                {s.label}: {s.note}
              </li>
            ))}
          </ul>
        )}
      </div>

      {series ? (
        <section className="panel space-y-2 p-3" aria-label="Backtest chart">
          <label className="text-xs">
            <span className="label">Quantity on the chart</span>
            <select className="field w-auto" value={`${series.quantity}|${series.loopId}`} onChange={(e) => setChosen(e.target.value)}>
              {chartable.map((s) => {
                const n = result.trips.filter((t) => t.quantity === s.quantity && t.loopId === s.loopId).length;
                return (
                  <option key={`${s.quantity}|${s.loopId}`} value={`${s.quantity}|${s.loopId}`}>
                    {s.label}
                    {s.loopId === null ? '' : ` · L${s.loopId}`}
                    {n ? ` · ${n} trip${n === 1 ? '' : 's'}` : ''}
                  </option>
                );
              })}
            </select>
          </label>
          <BacktestChart
            series={series}
            draftRule={ruleFor(result, 'draft', series.quantity, series.loopId)}
            baselineRule={ruleFor(result, 'baseline', series.quantity, series.loopId)}
            draftTrips={onChart.draft}
            baselineTrips={onChart.baseline}
            fromMs={result.fromMs}
            toMs={result.toMs}
            draftLabel={draftLabel}
            baselineLabel={baseLabel}
          />
        </section>
      ) : (
        <p className="panel p-3 text-muted">No stored points fall in this span for any limit of the set: choose a span the database holds data for.</p>
      )}

      <section className="panel overflow-x-auto" aria-label="Trips the sets would have raised">
        <div className="flex flex-wrap items-center gap-3 border-b border-rule px-3 py-2">
          <h3 className="text-sm font-semibold">Trips</h3>
          {series && (
            <label className="flex items-center gap-1.5 text-xs">
              <input type="checkbox" checked={onlyCharted} onChange={(e) => setOnlyCharted(e.target.checked)} />
              only {series.label}
              {series.loopId === null ? '' : ` on L${series.loopId}`}
            </label>
          )}
        </div>
        <TripsTable
          key={onlyCharted ? chosen : 'all'}
          result={result}
          trips={onlyCharted && series ? result.trips.filter((t) => t.quantity === series.quantity && t.loopId === series.loopId) : result.trips}
          unitOf={unitOf}
          scopeLabel={onlyCharted && series ? `on ${series.label}` : ''}
        />
      </section>
    </div>
  );
}

/** Backtest of a set: run one over a span, watch its progress, read the kept results. */
export function BacktestPanel({ set, canRun, unsaved }: { set: LimitSetView; canRun: boolean; unsaved: boolean }) {
  const qc = useQueryClient();
  const [activeId, setActiveId] = useState<number | null>(set.backtests[0]?.id ?? null);
  const [from, setFrom] = useState('');
  const [to, setTo] = useState('');
  const newest = set.backtests[0]?.id ?? null;
  const [shownFor, setShownFor] = useState(set.id);
  if (shownFor !== set.id) {
    setShownFor(set.id);
    setActiveId(newest);
  }
  const q = useQuery({ ...backtestQuery(activeId ?? 0), enabled: activeId !== null });
  const b = activeId !== null ? q.data?.backtest : undefined;
  const start = useMutation({
    mutationFn: () => startBacktest(set.id, { from: utcIso(from), to: utcIso(to) }),
    onSuccess: (r) => {
      qc.setQueryData(backtestQuery(r.backtest.id).queryKey, r);
      setActiveId(r.backtest.id);
    },
  });
  const cancel = useMutation({
    mutationFn: (id: number) => cancelBacktest(id),
    onSuccess: (r) => qc.setQueryData(backtestQuery(r.backtest.id).queryKey, r),
  });
  const status = b?.status;
  useEffect(() => {
    if (status && status !== 'queued' && status !== 'running') void qc.invalidateQueries({ queryKey: ['limit-set', set.id], exact: true });
  }, [status, set.id, qc]);
  const pending = status === 'queued' || status === 'running';
  const startErr = start.error instanceof ApiError ? start.error : null;
  const stale = b && b.rulesDigest !== set.rulesDigest;

  return (
    <section className="panel space-y-3 p-4" aria-labelledby="backtest-h">
      <div className="flex flex-wrap items-baseline justify-between gap-2">
        <h2 id="backtest-h">Backtest</h2>
        <p className="text-xs text-muted">Replays v{set.version} over stored history through the same trip logic as the scheduler, beside the active set.</p>
      </div>
      {canRun && (
        <div className="flex flex-wrap items-end gap-3">
          <label className="text-xs">
            <span className="label">From (UTC)</span>
            <input type="datetime-local" className="field w-52" value={from} onChange={(e) => setFrom(e.target.value)} aria-invalid={startErr?.fields.from ? true : undefined} />
          </label>
          <label className="text-xs">
            <span className="label">To (UTC)</span>
            <input type="datetime-local" className="field w-52" value={to} onChange={(e) => setTo(e.target.value)} aria-invalid={startErr?.fields.to ? true : undefined} />
          </label>
          <button type="button" className="btn btn-primary" disabled={start.isPending || pending || unsaved} onClick={() => start.mutate()}>
            Run backtest
          </button>
          <span className="pb-1.5 text-xs text-muted">{unsaved ? 'Save the draft first: a backtest replays the saved limits.' : from || to ? 'Both ends, in UTC.' : 'Empty = the last 30 days the database holds.'}</span>
        </div>
      )}
      {startErr && (
        <div role="alert" className="rounded border border-warning/40 bg-warning/10 px-3 py-2 text-sm">
          <p className="font-medium text-warning">The backtest did not start: {startErr.message}</p>
          {Object.entries(startErr.fields).map(([k, m]) => (
            <p key={k} className="error-text">
              {k === 'from' ? 'From' : k === 'to' ? 'To' : k}: {m.join(' ')}
            </p>
          ))}
        </div>
      )}
      {b && (
        <div className="space-y-1" aria-live="polite">
          <div className="flex items-center gap-3">
            <div role="progressbar" aria-label="Backtest progress" aria-valuemin={0} aria-valuemax={100} aria-valuenow={b.progress} className="h-2 flex-1 overflow-hidden rounded bg-rule/60">
              <div className={`h-2 rounded transition-[width] ${b.status === 'failed' ? 'bg-warning' : b.status === 'cancelled' ? 'bg-stale' : 'bg-gallium'}`} style={{ width: `${b.progress}%` }} />
            </div>
            <span className="num w-48 text-right text-xs">
              {STATUS_TEXT[b.status]} {b.progress} %
            </span>
            {pending && (
              <button type="button" className="btn h-7 px-2 text-xs" disabled={cancel.isPending} onClick={() => cancel.mutate(b.id)}>
                Cancel backtest
              </button>
            )}
          </div>
          <p className="text-xs text-muted">
            Backtest #{b.id} of <span className="num">{formatUtc(b.from)}</span> – <span className="num">{formatUtc(b.to)}</span> UTC, asked by {b.requestedBy ?? 'someone'} at <span className="num">{formatUtc(b.createdAt)}</span>
            {stale && <strong className="ml-1 text-copper">· made before the draft’s last edit</strong>}
          </p>
          {b.status === 'failed' && <p className="error-text">It failed: {b.error}. Run it again; if it fails again, tell an admin (the server has logged it).</p>}
        </div>
      )}
      {q.isError && <p className="error-text">The backtest could not be read: {q.error.message}</p>}
      {b?.status === 'done' && b.result && <Results key={b.id} result={b.result} />}
      {!b && !canRun && <p className="text-muted">No backtest is kept with this set.</p>}
      {!b && canRun && <p className="text-muted">No backtest yet. Run one to see the trips this set would have raised, beside the active set’s.</p>}
      {set.backtests.length > 1 && (
        <details className="text-xs">
          <summary className="cursor-pointer text-muted">Kept backtests ({set.backtests.length})</summary>
          <ul className="mt-1 space-y-0.5">
            {set.backtests.map((k) => (
              <li key={k.id}>
                <button type="button" className="text-gallium hover:underline" onClick={() => setActiveId(k.id)}>
                  #{k.id}
                </button>{' '}
                <span className="num">
                  {formatUtc(k.from)} – {formatUtc(k.to)}
                </span>{' '}
                · {k.status} · {k.requestedBy ?? '—'}
                {k.rulesDigest !== set.rulesDigest && ' · before the last edit'}
              </li>
            ))}
          </ul>
        </details>
      )}
    </section>
  );
}
