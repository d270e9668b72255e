import { queryOptions } from '@tanstack/react-query';
import { http } from '../../lib/http';
import type { UploadReport } from '../../lib/server/uploads';
import type { Gap } from '../../lib/server/telemetry-store';
import type { RejectReason } from '../../lib/telemetry/types';

export type { UploadReport };

/** The report kept with an upload: counts and the first rejects and gaps. */
export interface StoredUploadReport {
  bytes: number;
  accepted: number;
  duplicates: number;
  idle: number;
  rejectedCount: number;
  rejected: { offset: number; reason: RejectReason }[];
  gapCount: number;
  gaps: Gap[];
}

/** One row of the upload history as the API sends it. */
export interface UploadRow {
  id: number;
  spacecraft: string;
  file_name: string;
  bytes: number;
  sha256: string | null;
  status: 'receiving' | 'done' | 'failed';
  report: StoredUploadReport | { error: string } | null;
  uploaded_at: string;
  uploaded_by: string | null;
  station: string | null;
}

export type UploadsResponse = { uploads: UploadRow[] };

/** The 50 latest uploads, of one spacecraft or of all. */
export const uploadsQuery = (spacecraft: string | null) =>
  queryOptions({
    queryKey: ['uploads', spacecraft ?? 'all'],
    queryFn: () => http<UploadsResponse>(spacecraft ? `/api/uploads?spacecraft=${encodeURIComponent(spacecraft)}` : '/api/uploads'),
  });

/** Re-ingest a kept pass file; repeats count as duplicates. */
export function reingestUpload(id: number): Promise<UploadReport> {
  return http<UploadReport>(`/api/uploads/${id}/reingest`, { method: 'POST' });
}

/** A stored report, or null when the upload failed or is still arriving. */
export function storedReport(row: UploadRow): StoredUploadReport | null {
  return row.report && 'accepted' in row.report ? row.report : null;
}
