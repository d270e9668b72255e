import { createServer } from 'node:http';
import type { IncomingMessage, Server, ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Backoff, MAX_REQUEST_BYTES, countPackets, formatOutcome, postPackets, takeBatch } from '../../../ingest/uplink';
import { encodePacket } from '../../../src/lib/telemetry/encode';
import type { AttitudeRecord } from '../../../src/lib/telemetry/types';

interface Seen { url: string; headers: IncomingMessage['headers']; body: Buffer }

let server: Server;
let baseUrl = '';
const seen: Seen[] = [];
let answer: (req: IncomingMessage, res: ServerResponse, body: Buffer) => void = () => {};

beforeAll(async () => {
  server = createServer((req, res) => {
    const parts: Buffer[] = [];
    req.on('data', (c: Buffer) => parts.push(c));
    req.on('end', () => {
      const body = Buffer.concat(parts);
      seen.push({ url: req.url ?? '', headers: req.headers, body });
      answer(req, res, body);
    });
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  baseUrl = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});

afterAll(() => new Promise<void>((resolve) => server.close(() => resolve())));

function att(seq: number): Uint8Array {
  const r: AttitudeRecord = { kind: 'attitude', seq, coarse: 849_000_000, fine: 0, mode: 1, rate_rad_s: [0, 0, 0], quaternion: [0, 0, 0, 1], mag_nT: [1, 2, 3] };
  return encodePacket(r);
}

function json(res: ServerResponse, status: number, body: unknown): void {
  res.writeHead(status, { 'content-type': 'application/json' });
  res.end(JSON.stringify(body));
}

describe('postPackets', () => {
  it('posts the octets with the bearer token, content type and station, and reads the report', async () => {
    answer = (_req, res, body) => json(res, 200, { accepted: countPackets(body), duplicates: 0, rejected: [], gaps: [{ apid: 16, from: 3, to: 5 }] });
    const body = new Uint8Array([...att(1), ...att(2)]);
    const out = await postPackets({ baseUrl, token: 'tok-123', station: 'north-fell', body });
    expect(out.kind).toBe('stored');
    if (out.kind !== 'stored') return;
    expect(out.response.accepted).toBe(2);
    const last = seen.at(-1)!;
    expect(last.url).toBe('/api/ingest?station=north-fell');
    expect(last.headers.authorization).toBe('Bearer tok-123');
    expect(last.headers['content-type']).toBe('application/octet-stream');
    expect([...last.body]).toEqual([...body]);
    const line = formatOutcome(new Date(0), 'MR-1', 'north-fell', 'real time', body.length, 2, out);
    expect(line).toMatch(/MR-1 north-fell real time 0\.1 KiB 2 packets → 200 in \d+ ms: accepted 2, duplicates 0, rejected 0, gaps 1 \[apid 16 3–5\]/);
  });

  it('asks for a retry on 503, 429 and 401, and drops what a 400 refuses', async () => {
    for (const status of [503, 429, 401]) {
      answer = (_req, res) => json(res, status, { error: { code: 'X', message: `status ${status}` } });
      const out = await postPackets({ baseUrl, token: 't', station: null, body: att(1) });
      expect(out).toMatchObject({ kind: 'retry', status, message: `status ${status}` });
    }
    answer = (_req, res) => json(res, 400, { error: { code: 'BAD_REQUEST', message: 'No packet in the body could be read' }, accepted: 0, duplicates: 0, rejected: [{ offset: 0, reason: 'crc mismatch' }], gaps: [] });
    const out = await postPackets({ baseUrl, token: 't', station: null, body: att(1) });
    expect(out).toMatchObject({ kind: 'refused', status: 400, message: 'No packet in the body could be read' });
    expect(seen.at(-1)!.url).toBe('/api/ingest');
  });

  it('never throws when nothing listens; it asks for a retry', async () => {
    const probe = createServer();
    await new Promise<void>((resolve) => probe.listen(0, '127.0.0.1', resolve));
    const port = (probe.address() as AddressInfo).port;
    await new Promise<void>((resolve) => probe.close(() => resolve()));
    const out = await postPackets({ baseUrl: `http://127.0.0.1:${port}`, token: 't', station: null, body: att(1) });
    expect(out.kind).toBe('retry');
    expect(out.status).toBeNull();
    expect(out.kind === 'retry' && out.message).toMatch(/network error/);
  });
});

describe('batching', () => {
  it('fills requests up to 8 MiB from whole chunks and keeps the order', () => {
    const chunk = (n: number, fill: number) => new Uint8Array(n).fill(fill);
    const queue = [chunk(3 << 20, 1), chunk(3 << 20, 2), chunk(3 << 20, 3), chunk(100, 4)];
    const a = takeBatch(queue)!;
    expect(a.length).toBe(6 << 20);
    expect(a[0]).toBe(1);
    expect(a[(6 << 20) - 1]).toBe(2);
    const b = takeBatch(queue)!;
    expect(b.length).toBe((3 << 20) + 100);
    expect(takeBatch(queue)).toBeNull();
    expect(MAX_REQUEST_BYTES).toBe(8 * 1024 * 1024);
    expect(() => takeBatch([chunk(10, 0)], 5)).toThrow(RangeError);
  });

  it('counts whole packets only', () => {
    const two = new Uint8Array([...att(1), ...att(2)]);
    expect(countPackets(two)).toBe(2);
    expect(countPackets(two.subarray(0, 80))).toBe(1);
  });

  it('backs off 1, 2, 4 … s up to a minute, and starts over after a success', () => {
    const b = new Backoff();
    expect([b.next(), b.next(), b.next(), b.next()]).toEqual([1000, 2000, 4000, 8000]);
    for (let i = 0; i < 10; i++) b.next();
    expect(b.next()).toBe(60_000);
    b.reset();
    expect(b.next()).toBe(1000);
  });
});
