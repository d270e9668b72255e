import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { CasefileNote, EvidenceResponse, RawWindowResponse } from './casefile.schema';

/** What the evidence of a trip is asked for: a span (ISO, or the default around the trip), a loop and a point budget. */
export interface EvidenceParams {
  from?: string;
  to?: string;
  loop?: number;
  points: number;
}

/** Query string of an evidence request (shared by the JSON and CSV endpoints). */
export function evidenceSearch(p: Partial<EvidenceParams>): string {
  const q = new URLSearchParams();
  if (p.from) q.set('from', p.from);
  if (p.to) q.set('to', p.to);
  if (p.loop !== undefined) q.set('loop', String(p.loop));
  if (p.points !== undefined) q.set('points', String(p.points));
  return q.toString();
}

/** The evidence series of a trip over a span. */
export const evidenceQuery = (tripId: number, p: EvidenceParams) =>
  queryOptions({
    queryKey: ['casefile', tripId, 'evidence', p],
    queryFn: () => http<EvidenceResponse>(`/api/trips/${tripId}/evidence?${evidenceSearch(p)}`),
    staleTime: 60_000,
  });

/** The raw samples of one window. */
export const rawQuery = (tripId: number, window: string, loop: number) =>
  queryOptions({
    queryKey: ['casefile', tripId, 'raw', window, loop],
    queryFn: () => http<RawWindowResponse>(`/api/trips/${tripId}/raw?${new URLSearchParams({ window, loop: String(loop) })}`),
    staleTime: 5 * 60_000,
  });

/** The notes thread of a trip, refreshed every 30 s. */
export const notesQuery = (tripId: number) =>
  queryOptions({
    queryKey: ['casefile', tripId, 'notes'],
    queryFn: () => http<{ notes: CasefileNote[] }>(`/api/trips/${tripId}/notes`),
    refetchInterval: 30_000,
  });
