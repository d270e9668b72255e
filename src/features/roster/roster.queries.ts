import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { RosterView } from '../../lib/server/mail/roster';
import type { CreateOnCallShiftInput } from './roster.schema';

export type { RosterView };

/** A spacecraft's on-call roster. */
export const rosterQuery = (key: string) =>
  queryOptions({
    queryKey: ['roster', key],
    queryFn: () => http<RosterView>(`/api/roster/${encodeURIComponent(key)}`),
    refetchInterval: 30_000,
  });

/** Put someone on call. */
export function addShift(key: string, input: CreateOnCallShiftInput): Promise<{ id: number }> {
  return http(`/api/roster/${encodeURIComponent(key)}`, { method: 'POST', json: input });
}

/** Take a shift off the roster. */
export function removeShift(key: string, id: number): Promise<{ removed: number }> {
  return http(`/api/roster/${encodeURIComponent(key)}/${id}`, { method: 'DELETE' });
}
