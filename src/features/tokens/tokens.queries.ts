import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';

/** One ingest token as GET /api/spacecraft/{key}/tokens sends it (never its hash). */
export interface TokenRow {
  id: number;
  label: string;
  token_hint: string;
  created_at: string;
  last_used_at: string | null;
  revoked_at: string | null;
  created_by_name: string | null;
}

export type TokensResponse = { tokens: TokenRow[] };

/** The answer to a create: the clear token, shown this once. */
export interface TokenCreated {
  id: number;
  token: string;
  label: string;
  spacecraft: string;
}

/** The ingest tokens of one spacecraft, newest first. */
export const tokensQuery = (key: string) =>
  queryOptions({
    queryKey: ['tokens', key],
    queryFn: () => http<TokensResponse>(`/api/spacecraft/${encodeURIComponent(key)}/tokens`),
  });

/** Create a token for a spacecraft. */
export function createToken(key: string, label: string): Promise<TokenCreated> {
  return http<TokenCreated>(`/api/spacecraft/${encodeURIComponent(key)}/tokens`, { method: 'POST', json: { label } });
}

/** Revoke a token: whatever uses it is refused from then on. */
export function revokeToken(key: string, id: number): Promise<{ revoked: number }> {
  return http<{ revoked: number }>(`/api/spacecraft/${encodeURIComponent(key)}/tokens/${id}`, { method: 'DELETE' });
}
