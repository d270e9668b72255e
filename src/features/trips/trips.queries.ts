import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { TripRow } from '../../lib/server/trips';

export type TripList = { total: number; page: number; pageSize: number; trips: TripRow[] };
export type TripFilters = { spacecraft?: string; state?: string; kind?: string; sort: string; order: 'asc' | 'desc'; page: number };

/** The trip list for a set of filters, refreshed every 15 s. */
export const tripsQuery = (f: TripFilters) =>
  queryOptions({
    queryKey: ['trips', f],
    queryFn: () => {
      const p = new URLSearchParams();
      for (const [k, v] of Object.entries(f)) if (v !== undefined && v !== '') p.set(k, String(v));
      return http<TripList>(`/api/trips?${p}`);
    },
    refetchInterval: 15_000,
  });
