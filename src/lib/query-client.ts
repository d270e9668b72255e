import { QueryClient } from '@tanstack/react-query';

let browserClient: QueryClient | undefined;

function makeClient(): QueryClient {
  return new QueryClient({ defaultOptions: { queries: { staleTime: 10_000, retry: 1, refetchOnWindowFocus: false } } });
}

/** A fresh client per server render; one shared client in the browser. */
export function getQueryClient(): QueryClient {
  if (typeof window === 'undefined') return makeClient();
  browserClient ??= makeClient();
  return browserClient;
}
