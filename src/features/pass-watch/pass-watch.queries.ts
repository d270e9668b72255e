import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { PassLogEntry } from '../../lib/server/pass-log';
import type { PassNoteInput } from './pass-watch.schema';

export type PassLogResponse = { passes: PassLogEntry[]; error: string | null };

/** The pass log of one spacecraft; refreshed when a pass ends or a note is written (no polling). */
export const passLogQuery = (key: string) =>
  queryOptions({
    queryKey: ['pass-log', key],
    queryFn: () => http<PassLogResponse>(`/api/pass-log/${encodeURIComponent(key)}`),
    staleTime: Infinity,
  });

/** Write a handover note. */
export const postPassNote = (key: string, input: PassNoteInput) =>
  http<{ pass: PassLogEntry }>(`/api/pass-log/${encodeURIComponent(key)}`, { method: 'POST', json: input });
