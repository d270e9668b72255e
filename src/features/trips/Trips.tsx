import { useMemo, useState } from 'react';
import { QueryClientProvider, keepPreviousData, useQuery } from '@tanstack/react-query';
import { createColumnHelper, flexRender, getCoreRowModel, useReactTable, type SortingState } from '@tanstack/react-table';
import { getQueryClient } from '../../lib/query-client';
import { tripsQuery, type TripFilters, type TripList } from './trips.queries';
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

function TripsTable({ initial, initialFilters, spacecraftKeys, kinds }: Props) {
  const [filters, setFilters] = useState<TripFilters>(initialFilters);
  const q = useQuery({ ...tripsQuery(filters), initialData: JSON.stringify(filters) === JSON.stringify(initialFilters) ? initial : undefined, placeholderData: keepPreviousData });
  const sorting: SortingState = useMemo(() => [{ id: filters.sort, desc: filters.order === 'desc' }], [filters.sort, filters.order]);
  const table = useReactTable({
    data: q.data?.trips ?? [],
    columns,
    getCoreRowModel: getCoreRowModel(),
    manualSorting: true,
    state: { sorting },
    onSortingChange: (updater) => {
      const next = typeof updater === 'function' ? updater(sorting) : updater;
      const s = next[0];
      const map: Record<string, string> = { onset_at: 'onset_at', level: 'level', state: 'state', kind: 'kind', spacecraft: 'spacecraft' };
      if (s && map[s.id]) setFilters((f) => ({ ...f, sort: map[s.id]!, order: s.desc ? 'desc' : 'asc', page: 1 }));
    },
  });
  const set = (k: keyof TripFilters) => (e: React.ChangeEvent<HTMLSelectElement>) => {
    const next = { ...filters, [k]: e.target.value || undefined, page: 1 };
    setFilters(next);
    const p = new URLSearchParams();
    for (const key of ['spacecraft', 'state', 'kind'] as const) if (next[key]) p.set(key, next[key]!);
    history.replaceState(null, '', `${location.pathname}${p.size ? `?${p}` : ''}`);
  };
  const pages = q.data ? Math.max(1, Math.ceil(q.data.total / q.data.pageSize)) : 1;
  return (
    <div className="space-y-3">
      <div className="flex flex-wrap items-end gap-3">
        <label className="text-xs">
          <span className="label">Spacecraft</span>
          <select className="field w-36" value={filters.spacecraft ?? ''} onChange={set('spacecraft')}>
            <option value="">All</option>
            {spacecraftKeys.map((k) => (
              <option key={k}>{k}</option>
            ))}
          </select>
        </label>
        <label className="text-xs">
          <span className="label">State</span>
          <select className="field w-36" value={filters.state ?? ''} onChange={set('state')}>
            <option value="">All</option>
            <option>open</option>
            <option>acknowledged</option>
            <option>resolved</option>
          </select>
        </label>
        <label className="text-xs">
          <span className="label">Kind</span>
          <select className="field w-52" value={filters.kind ?? ''} onChange={set('kind')}>
            <option value="">All</option>
            {kinds.map((k) => (
              <option key={k}>{k}</option>
            ))}
          </select>
        </label>
        <span className="ml-auto text-xs text-muted">{q.isFetching ? 'Refreshing…' : q.data ? `${q.data.total} trip${q.data.total === 1 ? '' : 's'}` : ''}</span>
      </div>
      {q.isError && (
        <p role="alert" className="panel p-3 text-warning">
          Trips could not be loaded: {q.error.message}
        </p>
      )}
      <div className="panel overflow-x-auto">
        <table className="table-compact">
          <thead>
            {table.getHeaderGroups().map((hg) => (
              <tr key={hg.id}>
                {hg.headers.map((h) => (
                  <th key={h.id} aria-sort={h.column.getIsSorted() ? (h.column.getIsSorted() === 'desc' ? 'descending' : 'ascending') : undefined}>
                    {h.column.getCanSort() ? (
                      <button type="button" className="uppercase tracking-wide hover:text-ink" onClick={h.column.getToggleSortingHandler()}>
                        {flexRender(h.column.columnDef.header, h.getContext())}
                        {h.column.getIsSorted() === 'asc' ? ' ↑' : h.column.getIsSorted() === 'desc' ? ' ↓' : ''}
                      </button>
                    ) : (
                      flexRender(h.column.columnDef.header, h.getContext())
                    )}
                  </th>
                ))}
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
          <p className="p-4 text-muted">No trips match. Trips appear here when a limit of the active limit set is crossed; widen the filters or check the Limit bench.</p>
        )}
      </div>
      <div className="flex items-center gap-2 text-xs">
        <button className="btn" disabled={filters.page <= 1} onClick={() => setFilters((f) => ({ ...f, page: f.page - 1 }))}>
          Previous
        </button>
        <span className="num text-muted">
          page {filters.page} of {pages}
        </span>
        <button className="btn" disabled={filters.page >= pages} onClick={() => setFilters((f) => ({ ...f, page: f.page + 1 }))}>
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
