import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { FleetSpacecraft } from '../../lib/server/spacecraft';

export type FleetResponse = { spacecraft: FleetSpacecraft[] };

/** The Fleet list, refreshed every 15 s. */
export const fleetQuery = queryOptions({
  queryKey: ['fleet'],
  queryFn: () => http<FleetResponse>('/api/spacecraft'),
  refetchInterval: 15_000,
});
