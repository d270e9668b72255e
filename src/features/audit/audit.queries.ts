import { keepPreviousData, queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { AuditEntryRow, AuditPage } from '../../lib/server/people';

export type { AuditEntryRow, AuditPage };

/** The filters as they appear in the address and GET /api/audit. */
export interface AuditFilters {
  actor?: string;
  action?: string;
  targetType?: string;
  from?: string;
  to?: string;
  page?: number;
}

/** The filters as a query string (empty ones left out). */
export function auditSearch(f: AuditFilters): string {
  const p = new URLSearchParams();
  for (const [k, v] of Object.entries(f)) if (v !== undefined && v !== '' && !(k === 'page' && v === 1)) p.set(k, String(v));
  const s = p.toString();
  return s ? `?${s}` : '';
}

/** One page of the audit log under the filters. */
export const auditQuery = (f: AuditFilters) =>
  queryOptions({
    queryKey: ['audit', f],
    queryFn: () => http<AuditPage>(`/api/audit${auditSearch(f)}`),
    placeholderData: keepPreviousData,
  });
