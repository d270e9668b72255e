import { z } from 'zod';

export type ErrorCode =
  | 'BAD_REQUEST'
  | 'UNAUTHORIZED'
  | 'FORBIDDEN'
  | 'NOT_FOUND'
  | 'CONFLICT'
  | 'PAYLOAD_TOO_LARGE'
  | 'TOO_MANY_REQUESTS'
  | 'INTERNAL_SERVER_ERROR';

const STATUS: Record<ErrorCode, number> = {
  BAD_REQUEST: 400,
  UNAUTHORIZED: 401,
  FORBIDDEN: 403,
  NOT_FOUND: 404,
  CONFLICT: 409,
  PAYLOAD_TOO_LARGE: 413,
  TOO_MANY_REQUESTS: 429,
  INTERNAL_SERVER_ERROR: 500,
};

/** An error that becomes the one JSON error envelope. */
export class HttpError extends Error {
  constructor(
    readonly code: ErrorCode,
    message: string,
    readonly fields?: Record<string, string[]>,
    readonly headers?: Record<string, string>,
  ) {
    super(message);
  }
  get status(): number {
    return STATUS[this.code];
  }
}

/** A JSON response. */
export function json(body: unknown, status = 200, headers: Record<string, string> = {}): Response {
  return new Response(JSON.stringify(body), {
    status,
    headers: { 'content-type': 'application/json; charset=utf-8', 'cache-control': 'no-store', ...headers },
  });
}

function isUniqueViolation(err: unknown): boolean {
  return typeof err === 'object' && err !== null && (err as { code?: string }).code === '23505';
}

/** Map any thrown value to the error envelope; unknown errors are logged and answered 500. */
export function errorResponse(err: unknown): Response {
  if (err instanceof HttpError) {
    return json({ error: { code: err.code, message: err.message, ...(err.fields ? { fields: err.fields } : {}) } }, err.status, err.headers);
  }
  if (isUniqueViolation(err)) {
    const detail = (err as { detail?: string }).detail ?? 'already exists';
    return json({ error: { code: 'CONFLICT', message: `That already exists (${detail})` } }, 409);
  }
  console.error('[http] unhandled error:', err);
  return json({ error: { code: 'INTERNAL_SERVER_ERROR', message: 'Something went wrong on the server; it has been logged.' } }, 500);
}

/** Zod issues keyed by dotted path. */
export function fieldsOf(error: z.ZodError): Record<string, string[]> {
  const out: Record<string, string[]> = {};
  for (const issue of error.issues) {
    const key = issue.path.reduce<string>((acc, p) => (typeof p === 'number' ? `${acc}[${p}]` : acc ? `${acc}.${p}` : p), '') || '(root)';
    (out[key] ??= []).push(issue.message);
  }
  return out;
}

/** Parse a value with a schema or throw 400 with field errors. */
export function parseWith<T extends z.ZodTypeAny>(schema: T, value: unknown, what = 'request'): z.infer<T> {
  const r = schema.safeParse(value);
  if (!r.success) throw new HttpError('BAD_REQUEST', `The ${what} has errors; see fields.`, fieldsOf(r.error));
  return r.data;
}

/** Parse a JSON body (or a form body) with a schema. */
export async function parseBody<T extends z.ZodTypeAny>(schema: T, request: Request): Promise<z.infer<T>> {
  const type = request.headers.get('content-type') ?? '';
  let value: unknown;
  if (type.includes('application/json')) {
    try {
      value = await request.json();
    } catch {
      throw new HttpError('BAD_REQUEST', 'The body is not valid JSON.');
    }
  } else if (type.includes('form')) {
    value = Object.fromEntries((await request.formData()).entries());
  } else {
    throw new HttpError('BAD_REQUEST', 'Send the body as application/json.');
  }
  return parseWith(schema, value, 'request body');
}

/** Wrap an endpoint so every thrown error becomes the envelope. */
export function handle<C>(fn: (ctx: C) => Promise<Response> | Response): (ctx: C) => Promise<Response> {
  return async (ctx) => {
    try {
      return await fn(ctx);
    } catch (err) {
      return errorResponse(err);
    }
  };
}
