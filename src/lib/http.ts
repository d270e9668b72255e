/** An API error built from the server's error envelope. */
export class ApiError extends Error {
  constructor(
    readonly status: number,
    readonly code: string,
    message: string,
    readonly fields: Record<string, string[]> = {},
  ) {
    super(message);
  }
}

interface Envelope {
  error?: { code?: string; message?: string; fields?: Record<string, string[]> };
}

/** fetch JSON from the app's API; throws ApiError on any non-2xx answer. */
export async function http<T>(url: string, init: RequestInit & { json?: unknown } = {}): Promise<T> {
  const { json, ...rest } = init;
  const headers = new Headers(rest.headers);
  if (json !== undefined) headers.set('content-type', 'application/json');
  headers.set('accept', 'application/json');
  let res: Response;
  try {
    res = await fetch(url, { ...rest, headers, body: json !== undefined ? JSON.stringify(json) : rest.body, credentials: 'same-origin' });
  } catch {
    throw new ApiError(0, 'NETWORK', 'Millrace cannot be reached. Check the connection and try again.');
  }
  const text = await res.text();
  let body: unknown = null;
  try {
    body = text ? JSON.parse(text) : null;
  } catch {
    body = null;
  }
  if (!res.ok) {
    const e = (body as Envelope | null)?.error;
    throw new ApiError(res.status, e?.code ?? 'HTTP_' + res.status, e?.message ?? `The server answered ${res.status}.`, e?.fields ?? {});
  }
  return body as T;
}
