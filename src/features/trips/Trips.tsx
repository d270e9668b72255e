import { useEffect, useMemo, useState } from 'react';
import { QueryClientProvider, useQuery } from '@tanstack/react-query';
import { createColumnHelper, flexRender, getCoreRowModel, useReactTable, type SortingState } from '@tanstack/react-table';
import { getQueryClient } from '../../lib/query-client';
import { tripSearch, tripsQuery, type TripFilters, type TripList } from './trips.queries';
import { parseUtcDateTime } from '../roster/roster.schema';
import { LevelBadge, TripStateBadge } from '../../components/LevelBadge';
import { formatUtc, formatValue } from '../../lib/format';
import type { TripRow } from '../../lib/server/trips';

const col = createColumnHelper<TripRow>();

const columns = [
  col.accessor('id', { header: 'Trip', enableSorting: false, cell: (c) => <a href={`/trips/${c.getValue()}`}>#{c.getValue()}</a> }),
  col.accessor('state', { header: 'State', cell: (c) => <TripStateBadge state={c.getValue()} /> }),
  col.accessor('level', { header: 'Level', cell: (c) => <LevelBadge level={c.getValue()} /> }),
  col.accessor('kind', { header: 'Kind' }),
  col.accessor('spacecraft', { header: 'Spacecraft' }),
  col.accessor('loop_id', { header: 'Loop', enableSorting: false, cell: (c) => (c.getValue() === null ? '—' : `L${c.getValue()}`) }),
  col.accessor('quantityLabel', { header: 'Quantity', enableSorting: false }),
  col.accessor('value', {
    header: 'Value',
    enableSorting: false,
    cell: (c) => (
      <span className="num">
        {formatValue(c.getValue())} <span className="unit">{c.row.original.unit}</span>
      </span>
    ),
  }),
  col.accessor('limit_value', {
    header: 'Limit',
    enableSorting: false,
    cell: (c) => (
      <span className="num">
        {c.row.original.side === 'high' ? '≥' : '≤'} {formatValue(c.getValue())} <span className="unit">{c.row.original.unit}</span>
      </span>
    ),
  }),
  col.accessor('onset_at', { header: 'Onset (UTC)', cell: (c) => <span className="num">{formatUtc(c.getValue())}</span> }),
  col.accessor('cleared_at', {
    header: 'Condition',
    enableSorting: false,
    cell: (c) => {
      const at = c.getValue();
      if (!at) return <span className="font-medium text-copper">persists</span>;
      const note = c.row.original.cleared_note;
      return note ? <span className="text-muted" title={note}>closed at handover {formatUtc(at).slice(11)}</span> : <span className="text-muted">cleared {formatUtc(at).slice(11)}</span>;
    },
  }),
];

/** An ISO instant as the time fields show it: "YYYY-MM-DD HH:MM" (seconds only when not zero). */
function timeText(iso: string | undefined): string {
  if (!iso) return '';
  const t = formatUtc(iso);
  return t.endsWith(':00') ? t.slice(0, 16) : t;
}

const SORTABLE: Record<string, string> = { onset_at: 'onset_at', level: 'level', state: 'state', kind: 'kind', spacecraft: 'spacecraft' };

/** The from/to (UTC) fields: checked here, applied together. */
function TimeFilter({ from, to, onApply }: { from?: string; to?: string; onApply: (from: string | undefined, to: string | undefined) => void }) {
  const [text, setText] = useState({ from: timeText(from), to: timeText(to) });
  const [errors, setErrors] = useState<{ from?: string; to?: string }>({});
  useEffect(() => setText({ from: timeText(from), to: timeText(to) }), [from, to]);
  const submit = (e: React.FormEvent) => {
    e.preventDefault();
    const f = text.from.trim() ? parseUtcDateTime(text.from) : null;
    const t = text.to.trim() ? parseUtcDateTime(text.to) : null;
    const next: { from?: string; to?: string } = {};
    if (text.from.trim() && !f) next.from = 'Give a UTC date and time, e.g. 2026-12-01 08:00.';
    if (text.to.trim() && !t) next.to = 'Give a UTC date and time, e.g. 2026-12-02 08:00.';
    if (f && t && t.getTime() <= f.getTime()) next.to = 'To must be later than from.';
    setErrors(next);
    if (next.from || next.to) return;
    onApply(f?.toISOString(), t?.toISOString());
  };
  return (
    <form className="flex items-end gap-2" aria-label="Onset between" noValidate onSubmit={submit}>
      <div className="text-xs">
        <label className="label" htmlFor="trips-from">
          Onset from (UTC)
        </label>
        <input
          id="trips-from"
          className="field num w-40"
          placeholder="2026-12-01 08:00"
          value={text.from}
          aria-invalid={errors.from ? 'true' : undefined}
          aria-describedby={errors.from ? 'trips-from-error' : undefined}
          onChange={(e) => setText((x) => ({ ...x, from: e.target.value }))}
        />
        {errors.from && (
          <p id="trips-from-error" className="error-text mt-1 w-40">
            {errors.from}
          </p>
        )}
      </div>
      <div className="text-xs">
        <label className="label" htmlFor="trips-to">
          to (UTC)
        </label>
        <input
          id="trips-to"
          className="field num w-40"
          placeholder="2026-12-02 08:00"
          value={text.to}
          aria-invalid={errors.to ? 'true' : undefined}
          aria-describedby={errors.to ? 'trips-to-error' : undefined}
          onChange={(e) => setText((x) => ({ ...x, to: e.target.value }))}
        />
        {errors.to && (
          <p id="trips-to-error" className="error-text mt-1 w-40">
            {errors.to}
          </p>
        )}
      </div>
      <button type="submit" className="btn">
        Apply times
      </button>
    </form>
  );
}

function TripsTable({ initial, initialFilters, spacecraftKeys, kinds }: Props) {
  const [filters, setFilters] = useState<TripFilters>(initialFilters);
  const q = useQuery({ ...tripsQuery(filters), initialData: JSON.stringify(filters) === JSON.stringify(initialFilters) ? initial : undefined });
  const apply = (next: TripFilters) => {
    setFilters(next);
    history.replaceState(null, '', `${location.pathname}${tripSearch(next, true)}`);
  };
  const sorting: SortingState = useMemo(() => [{ id: filters.sort, desc: filters.order === 'desc' }], [filters.sort, filters.order]);
  const table = useReactTable({
    data: q.data?.trips ?? [],
    columns,
    getCoreRowModel: getCoreRowModel(),
    manualSorting: true,
    // The server always sorts by some column, so a third click reverses instead of clearing.
    enableSortingRemoval: false,
    enableMultiSort: false,
    state: { sorting },
    onSortingChange: (updater) => {
      const next = typeof updater === 'function' ? updater(sorting) : updater;
      const s = next[0];
      if (s && SORTABLE[s.id]) apply({ ...filters, sort: SORTABLE[s.id]!, order: s.desc ? 'desc' : 'asc', page: 1 });
    },
  });
  const set = (k: 'spacecraft' | 'state' | 'kind') => (e: React.ChangeEvent<HTMLSelectElement>) => apply({ ...filters, [k]: e.target.value || undefined, page: 1 });
  const setLoop = (e: React.ChangeEvent<HTMLSelectElement>) => {
    const v = e.target.value;
    apply({ ...filters, loop: v === '' ? undefined : v === 'none' ? 'none' : Number(v), page: 1 });
  };
  const anyFilter = Boolean(filters.spacecraft || filters.state || filters.kind || filters.loop !== undefined || filters.from || filters.to);
  const pages = q.data ? Math.max(1, Math.ceil(q.data.total / q.data.pageSize)) : 1;
  return (
    <div className="space-y-3">
      <div className="flex flex-wrap items-end gap-3">
        <div className="text-xs">
          <label className="label" htmlFor="trips-spacecraft">
            Spacecraft
          </label>
          <select id="trips-spacecraft" className="field w-36" value={filters.spacecraft ?? ''} onChange={set('spacecraft')}>
            <option value="">All</option>
            {spacecraftKeys.map((k) => (
              <option key={k}>{k}</option>
            ))}
          </select>
        </div>
        <div className="text-xs">
          <label className="label" htmlFor="trips-loop">
            Loop
          </label>
          <select id="trips-loop" className="field w-40" value={filters.loop === undefined ? '' : String(filters.loop)} onChange={setLoop}>
            <option value="">All</option>
            {[0, 1, 2, 3].map((l) => (
              <option key={l} value={l}>
                L{l}
              </option>
            ))}
            <option value="none">Whole spacecraft</option>
          </select>
        </div>
        <div className="text-xs">
          <label className="label" htmlFor="trips-state">
            State
          </label>
          <select id="trips-state" className="field w-36" value={filters.state ?? ''} onChange={set('state')}>
            <option value="">All</option>
            <option>open</option>
            <option>acknowledged</option>
            <option>resolved</option>
          </select>
        </div>
        <div className="text-xs">
          <label className="label" htmlFor="trips-kind">
            Kind
          </label>
          <select id="trips-kind" className="field w-52" value={filters.kind ?? ''} onChange={set('kind')}>
            <option value="">All</option>
            {kinds.map((k) => (
              <option key={k}>{k}</option>
            ))}
          </select>
        </div>
        <TimeFilter from={filters.from} to={filters.to} onApply={(from, to) => apply({ ...filters, from, to, page: 1 })} />
        {anyFilter && (
          <button type="button" className="btn" onClick={() => apply({ sort: filters.sort, order: filters.order, page: 1 })}>
            Clear filters
          </button>
        )}
        <span className="ml-auto text-xs text-muted" aria-live="polite">
          {q.isFetching ? 'Refreshing…' : q.data ? `${q.data.total} trip${q.data.total === 1 ? '' : 's'}` : ''}
        </span>
      </div>
      {q.isError && (
        <p role="alert" className="panel p-3 text-warning">
          Trips could not be loaded: {q.error.message}
        </p>
      )}
      <div className="panel overflow-x-auto">
        <table className="table-compact" aria-label="Trips">
          <thead>
            {table.getHeaderGroups().map((hg) => (
              <tr key={hg.id}>
                {hg.headers.map((h) => {
                  const dir = h.column.getIsSorted();
                  return (
                    <th key={h.id} aria-sort={h.column.getCanSort() ? (dir === 'desc' ? 'descending' : dir === 'asc' ? 'ascending' : 'none') : undefined}>
                      {h.column.getCanSort() ? (
                        <button
                          type="button"
                          className={`uppercase tracking-wide hover:text-ink ${dir ? 'text-ink' : ''}`}
                          title={dir ? `Sorted ${dir === 'desc' ? 'descending' : 'ascending'}; click to reverse` : 'Click to sort'}
                          onClick={h.column.getToggleSortingHandler()}
                        >
                          {flexRender(h.column.columnDef.header, h.getContext())}
                          <span aria-hidden="true">{dir === 'asc' ? ' ↑' : dir === 'desc' ? ' ↓' : ' ↕'}</span>
                        </button>
                      ) : (
                        flexRender(h.column.columnDef.header, h.getContext())
                      )}
                    </th>
                  );
                })}
              </tr>
            ))}
          </thead>
          <tbody>
            {table.getRowModel().rows.map((r) => (
              <tr key={r.id}>
                {r.getVisibleCells().map((c) => (
                  <td key={c.id}>{flexRender(c.column.columnDef.cell, c.getContext())}</td>
                ))}
              </tr>
            ))}
          </tbody>
        </table>
        {q.data && q.data.trips.length === 0 && (
          <p className="p-4 text-muted">
            {anyFilter
              ? 'No trips match these filters. Widen the time span or clear a filter.'
              : 'No trips yet. Trips appear here when a limit of the active limit set is crossed; the Limit bench shows the limits in force.'}
          </p>
        )}
      </div>
      <div className="flex items-center gap-2 text-xs">
        <button className="btn" disabled={filters.page <= 1} onClick={() => apply({ ...filters, page: filters.page - 1 })}>
          Previous
        </button>
        <span className="num text-muted">
          page {filters.page} of {pages}
        </span>
        <button className="btn" disabled={!q.data?.nextPage} onClick={() => apply({ ...filters, page: filters.page + 1 })}>
          Next
        </button>
      </div>
    </div>
  );
}

interface Props {
  initial: TripList;
  initialFilters: TripFilters;
  spacecraftKeys: string[];
  kinds: string[];
}

/** The Trips island: a filterable, sortable table of trips. */
export default function Trips(props: Props) {
  return (
    <QueryClientProvider client={getQueryClient()}>
      <TripsTable {...props} />
    </QueryClientProvider>
  );
}
