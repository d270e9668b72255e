import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { StationRow } from '../../lib/server/stations';
import type { CreateStationInput, UpdateStationInput } from './stations.schema';

export type { StationRow };
export type StationList = { stations: StationRow[] };
type Saved = { station: Omit<StationRow, 'batches' | 'uploads' | 'passesNext24h'>; passes: { upcoming: number } };

/** Every ground station with its use. */
export const stationsQuery = queryOptions({
  queryKey: ['stations'],
  queryFn: () => http<StationList>('/api/stations'),
  refetchInterval: 60_000,
});

/** Add a ground station. */
export function createStation(input: CreateStationInput): Promise<Saved> {
  return http('/api/stations', { method: 'POST', json: input });
}

/** Change a ground station's fields. */
export function updateStation(key: string, patch: UpdateStationInput): Promise<Saved> {
  return http(`/api/stations/${encodeURIComponent(key)}`, { method: 'PATCH', json: patch });
}

/** Delete a ground station nothing was received through. */
export function deleteStation(key: string): Promise<{ deleted: string }> {
  return http(`/api/stations/${encodeURIComponent(key)}`, { method: 'DELETE' });
}
