import { keepPreviousData, queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { TripRow } from '../../lib/server/trips';
import type { TripLoopFilter, TripQuery } from '../../lib/trips.schema';

export type TripList = { total: number; page: number; pageSize: number; nextPage: number | null; trips: TripRow[] };

/** The Trips page's filters, as they appear in the address and GET /api/trips (from/to ISO, UTC). */
export type TripFilters = {
  spacecraft?: string;
  state?: string;
  kind?: string;
  loop?: TripLoopFilter;
  from?: string;
  to?: string;
  sort: string;
  order: 'asc' | 'desc';
  page: number;
};

export const DEFAULT_SORT = { sort: 'onset_at', order: 'desc' } as const;

/** The filters of a parsed query. */
export function toTripFilters(q: TripQuery): TripFilters {
  return { spacecraft: q.spacecraft, state: q.state, kind: q.kind, loop: q.loop, from: q.from, to: q.to, sort: q.sort, order: q.order, page: q.page };
}

/**
 * The filters as a query string. With `forAddress`, the defaults (newest onset first, page 1) are
 * left out so a plain view keeps a plain address.
 */
export function tripSearch(f: TripFilters, forAddress = false): string {
  const p = new URLSearchParams();
  for (const key of ['spacecraft', 'state', 'kind', 'loop', 'from', 'to'] as const) {
    const v = f[key];
    if (v !== undefined && v !== '') p.set(key, String(v));
  }
  if (!forAddress || f.sort !== DEFAULT_SORT.sort || f.order !== DEFAULT_SORT.order) {
    p.set('sort', f.sort);
    p.set('order', f.order);
  }
  if (!forAddress || f.page !== 1) p.set('page', String(f.page));
  const s = p.toString();
  return s ? `?${s}` : '';
}

/** The trip list for a set of filters, refreshed every 15 s. */
export const tripsQuery = (f: TripFilters) =>
  queryOptions({
    queryKey: ['trips', f],
    queryFn: () => http<TripList>(`/api/trips${tripSearch(f)}`),
    placeholderData: keepPreviousData,
    refetchInterval: 15_000,
  });
