import { ApiError } from '../../lib/http';
import type { UploadReport } from './uploads.queries';

interface Envelope {
  error?: { code?: string; message?: string; fields?: Record<string, string[]> };
}

/** What the caller hears while a pass file goes up. */
export interface UploadCallbacks {
  /** Octets sent so far of the whole request. */
  onProgress: (loaded: number, total: number) => void;
  /** The last octet has been sent; the server is ingesting. */
  onSent: () => void;
}

/**
 * POST a recorded pass file as multipart (field `file`) with XMLHttpRequest, whose upload events
 * give real progress (fetch has none for request bodies). Resolves with the ingest report; rejects
 * with an ApiError built from the error envelope.
 */
export function uploadPassFile(file: File, spacecraft: string, station: string | null, cb: UploadCallbacks): Promise<UploadReport> {
  const params = new URLSearchParams({ spacecraft });
  if (station) params.set('station', station);
  const form = new FormData();
  form.append('file', file, file.name);
  return new Promise<UploadReport>((resolve, reject) => {
    const xhr = new XMLHttpRequest();
    xhr.open('POST', `/api/uploads/packets?${params}`);
    xhr.setRequestHeader('accept', 'application/json');
    xhr.upload.onprogress = (e) => {
      if (e.lengthComputable) cb.onProgress(e.loaded, e.total);
    };
    xhr.upload.onload = () => cb.onSent();
    xhr.onerror = () => reject(new ApiError(0, 'NETWORK', 'Millrace cannot be reached. Check the connection and upload again.'));
    xhr.onabort = () => reject(new ApiError(0, 'ABORTED', 'The upload was stopped before it finished.'));
    xhr.onload = () => {
      let body: unknown = null;
      try {
        body = xhr.responseText ? JSON.parse(xhr.responseText) : null;
      } catch {
        body = null;
      }
      if (xhr.status >= 200 && xhr.status < 300 && body) {
        resolve(body as UploadReport);
        return;
      }
      const e = (body as Envelope | null)?.error;
      reject(new ApiError(xhr.status, e?.code ?? `HTTP_${xhr.status}`, e?.message ?? `The server answered ${xhr.status}.`, e?.fields ?? {}));
    };
    xhr.send(form);
  });
}
