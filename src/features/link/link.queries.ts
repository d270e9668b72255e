import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { LinkView } from '../../lib/server/link';

export type { LinkBatch, LinkGap, LinkQuarantined, LinkView } from '../../lib/server/link';

/** The ground link of one spacecraft, refreshed every 10 s. */
export const linkQuery = (key: string) =>
  queryOptions({
    queryKey: ['link', key],
    queryFn: () => http<LinkView>(`/api/spacecraft/${encodeURIComponent(key)}/link`),
    refetchInterval: 10_000,
  });
