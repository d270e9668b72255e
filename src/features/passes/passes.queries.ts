import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { PassRow } from '../../lib/server/passes';

export type { PassRow };

/** GET /api/passes. */
export interface PassList {
  now: string;
  from: string;
  to: string;
  /** When the stored passes were last computed, and the nearest end of their horizon. */
  computedAt: string | null;
  horizonTo: string | null;
  passes: PassRow[];
}

export type PassFilters = { spacecraft?: string; station?: string };

/** Passes of the last day and the next three for a set of filters, refreshed every minute. */
export const passesQuery = (f: PassFilters) =>
  queryOptions({
    queryKey: ['passes', f],
    queryFn: () => {
      const p = new URLSearchParams();
      if (f.spacecraft) p.set('spacecraft', f.spacecraft);
      if (f.station) p.set('station', f.station);
      return http<PassList>(`/api/passes${p.size ? `?${p}` : ''}`);
    },
    refetchInterval: 60_000,
  });
