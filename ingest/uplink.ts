/**
 * Delivery of packet bytes to the ground's ingest endpoint: batching into requests of at most
 * 8 MiB, one POST with a clear outcome (stored, refused for good, or worth retrying), backoff and
 * a one-line summary per request.
 */

import { z } from 'zod';
import { PRIMARY_HEADER_LENGTH } from '../src/lib/telemetry/layout';

/** Largest request body the ingest endpoint takes. */
export const MAX_REQUEST_BYTES = 8 * 1024 * 1024;

export const ingestResponseSchema = z
  .object({
    accepted: z.number(),
    duplicates: z.number(),
    rejected: z.array(z.object({ offset: z.number(), reason: z.string() }).passthrough()),
    gaps: z.array(z.object({ apid: z.number(), from: z.number(), to: z.number() }).passthrough()),
  })
  .passthrough();

export type IngestResponse = z.infer<typeof ingestResponseSchema>;

export type PostOutcome =
  | { kind: 'stored'; status: number; response: IngestResponse; ms: number }
  /** The server refused the body for good (400, 413, 415 …): sending it again cannot help. */
  | { kind: 'refused'; status: number; message: string; response: IngestResponse | null; ms: number }
  /** Network error, time-out, 5xx, 429, or an authorisation problem that an operator may fix: try again later. */
  | { kind: 'retry'; status: number | null; message: string; ms: number };

export interface PostOptions {
  baseUrl: string;
  token: string;
  station: string | null;
  body: Uint8Array;
  signal?: AbortSignal;
  timeoutMs?: number;
  fetchImpl?: typeof fetch;
}

/** Number of whole packets in a body of concatenated packets (walks the length fields). */
export function countPackets(bytes: Uint8Array): number {
  let n = 0;
  let p = 0;
  while (p + PRIMARY_HEADER_LENGTH <= bytes.length) {
    p += (((bytes[p + 4] as number) << 8) | (bytes[p + 5] as number)) + 7;
    if (p <= bytes.length) n++;
  }
  return n;
}

/**
 * Takes chunks from the head of the queue while their total stays within maxBytes and returns them
 * as one body (null when the queue is empty). Chunks are whole packets, so the body is too.
 */
export function takeBatch(queue: Uint8Array[], maxBytes = MAX_REQUEST_BYTES): Uint8Array | null {
  if (queue.length === 0) return null;
  let total = 0;
  let count = 0;
  while (count < queue.length && total + queue[count]!.length <= maxBytes) total += queue[count++]!.length;
  if (count === 0) throw new RangeError(`a chunk of ${queue[0]!.length} octets exceeds the request limit of ${maxBytes}`);
  const parts = queue.splice(0, count);
  if (parts.length === 1) return parts[0]!;
  const out = new Uint8Array(total);
  let at = 0;
  for (const p of parts) {
    out.set(p, at);
    at += p.length;
  }
  return out;
}

/** The same octets as a view on a plain ArrayBuffer (what a fetch body takes); copies only a shared buffer. */
function arrayBufferView(b: Uint8Array): Uint8Array<ArrayBuffer> {
  return b.buffer instanceof ArrayBuffer ? new Uint8Array(b.buffer, b.byteOffset, b.byteLength) : Uint8Array.from(b);
}

function errorMessage(json: unknown, text: string): string {
  const parsed = z.object({ error: z.object({ message: z.string() }).passthrough() }).passthrough().safeParse(json);
  if (parsed.success) return parsed.data.error.message;
  return text.slice(0, 200) || '(empty body)';
}

/** POSTs one body to `${baseUrl}/api/ingest`; never throws for network or HTTP errors. */
export async function postPackets(opts: PostOptions): Promise<PostOutcome> {
  const started = performance.now();
  const url = new URL(`${opts.baseUrl}/api/ingest`);
  if (opts.station) url.searchParams.set('station', opts.station);
  const signals = [AbortSignal.timeout(opts.timeoutMs ?? 120_000)];
  if (opts.signal) signals.push(opts.signal);
  const doFetch = opts.fetchImpl ?? fetch;
  let res: Response;
  let text: string;
  try {
    res = await doFetch(url, {
      method: 'POST',
      headers: { Authorization: `Bearer ${opts.token}`, 'Content-Type': 'application/octet-stream' },
      body: arrayBufferView(opts.body),
      signal: AbortSignal.any(signals),
    });
    text = await res.text();
  } catch (err) {
    const e = err as Error & { cause?: { code?: string; message?: string } };
    const detail = e.cause?.code ?? e.cause?.message ?? e.message;
    return { kind: 'retry', status: null, message: `${e.name === 'TimeoutError' ? 'timed out' : 'network error'}: ${detail}`, ms: performance.now() - started };
  }
  const ms = performance.now() - started;
  let json: unknown = null;
  try {
    json = JSON.parse(text);
  } catch {
    json = null;
  }
  const report = ingestResponseSchema.safeParse(json);
  if (res.ok) {
    if (report.success) return { kind: 'stored', status: res.status, response: report.data, ms };
    return { kind: 'retry', status: res.status, message: `unexpected answer: ${text.slice(0, 200)}`, ms };
  }
  const message = errorMessage(json, text);
  if (res.status === 429 || res.status === 408 || res.status >= 500 || res.status === 401 || res.status === 403 || res.status === 404) {
    return { kind: 'retry', status: res.status, message, ms };
  }
  return { kind: 'refused', status: res.status, message, response: report.success ? report.data : null, ms };
}

/** Exponential backoff: 1 s, 2 s, 4 s … up to a ceiling (60 s by default). */
export class Backoff {
  private attempt = 0;
  private readonly baseMs: number;
  private readonly maxMs: number;

  constructor(baseMs = 1000, maxMs = 60_000) {
    this.baseMs = baseMs;
    this.maxMs = maxMs;
  }

  /** Delay before the next attempt; each call doubles it. */
  next(): number {
    const d = Math.min(this.maxMs, this.baseMs * 2 ** this.attempt);
    this.attempt = Math.min(this.attempt + 1, 30);
    return d;
  }

  reset(): void {
    this.attempt = 0;
  }
}

function kib(n: number): string {
  return n >= 1024 * 1024 ? `${(n / 1024 / 1024).toFixed(2)} MiB` : `${(n / 1024).toFixed(1)} KiB`;
}

/** One log line summarising a request and its answer. */
export function formatOutcome(
  at: Date,
  spacecraft: string,
  station: string | null,
  what: string,
  bytes: number,
  packets: number,
  outcome: PostOutcome,
): string {
  const head = `${at.toISOString()} ${spacecraft} ${station ?? '-'} ${what} ${kib(bytes)} ${packets} packets`;
  const took = `${Math.round(outcome.ms)} ms`;
  if (outcome.kind === 'stored') {
    const r = outcome.response;
    const rejected = r.rejected.length > 0
      ? ` [${r.rejected.slice(0, 3).map((x) => `${x.offset}: ${x.reason}`).join('; ')}${r.rejected.length > 3 ? '; …' : ''}]`
      : '';
    const gaps = r.gaps.length > 0
      ? ` [${r.gaps.slice(0, 3).map((g) => `apid ${g.apid} ${g.from}–${g.to}`).join('; ')}${r.gaps.length > 3 ? '; …' : ''}]`
      : '';
    return `${head} → ${outcome.status} in ${took}: accepted ${r.accepted}, duplicates ${r.duplicates}, rejected ${r.rejected.length}${rejected}, gaps ${r.gaps.length}${gaps}`;
  }
  if (outcome.kind === 'refused') return `${head} → ${outcome.status} in ${took}, refused, dropped: ${outcome.message}`;
  return `${head} → ${outcome.status ?? 'no answer'} in ${took}, will retry: ${outcome.message}`;
}
