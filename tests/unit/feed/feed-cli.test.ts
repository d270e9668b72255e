import { spawn } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:http';
import type { Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { FeedConfigError, loadFeedConfig, parseFeedConfig } from '../../../ingest/feed-config.schema';
import { passAt } from '../../../ingest/passes';
import { countPackets } from '../../../ingest/uplink';
import { INGEST_DIR, decodeChunks, ofKind } from './feed-helpers';

const ROOT = join(INGEST_DIR, '..');
const dir = mkdtempSync(join(tmpdir(), 'millrace-feed-'));

interface Request { url: string; auth: string | undefined; type: string | undefined; body: Buffer }
let server: Server;
let baseUrl = '';
const requests: Request[] = [];
let failFirst = 0;

beforeAll(async () => {
  server = createServer((req, res) => {
    const parts: Buffer[] = [];
    req.on('data', (c: Buffer) => parts.push(c));
    req.on('end', () => {
      const body = Buffer.concat(parts);
      requests.push({ url: req.url ?? '', auth: req.headers.authorization, type: req.headers['content-type'], body });
      if (failFirst > 0) {
        failFirst--;
        res.writeHead(503, { 'content-type': 'application/json' });
        res.end(JSON.stringify({ error: { code: 'INTERNAL_SERVER_ERROR', message: 'warming up' } }));
        return;
      }
      res.writeHead(200, { 'content-type': 'application/json' });
      res.end(JSON.stringify({ accepted: countPackets(body), duplicates: 0, rejected: [], gaps: [] }));
    });
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  baseUrl = `http://127.0.0.1:${(server.address() as AddressInfo).port}`;
});

afterAll(async () => {
  await new Promise<void>((resolve) => server.close(() => resolve()));
  rmSync(dir, { recursive: true, force: true });
});

function writeConfig(name: string, cfg: unknown): string {
  const path = join(dir, name);
  writeFileSync(path, JSON.stringify(cfg));
  return path;
}

/** Runs the feed; resolves with its exit code and output once it exits (or after `killAfter` a SIGTERM). */
function runFeed(args: string[], opts: { killWhen?: (out: string) => boolean } = {}): Promise<{ code: number | null; out: string }> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', join(INGEST_DIR, 'feed.ts'), ...args], { cwd: ROOT, stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '';
    let killed = false;
    const timer = setTimeout(() => child.kill('SIGKILL'), 25_000);
    const onData = (d: Buffer) => {
      out += d.toString();
      if (!killed && opts.killWhen?.(out)) {
        killed = true;
        child.kill('SIGTERM');
      }
    };
    child.stdout.on('data', onData);
    child.stderr.on('data', onData);
    child.on('error', reject);
    child.on('exit', (code) => {
      clearTimeout(timer);
      resolve({ code, out });
    });
  });
}

describe('feed configuration', () => {
  it('loads sheets and scenarios by path, relative to the configuration file or the working folder', () => {
    const path = writeConfig('ok.json', {
      baseUrl: 'http://127.0.0.1:1/',
      spacecraft: [{ key: 'MR-1', token: 't', sheet: join(INGEST_DIR, 'fleet/MR-1.json'), scenario: 'ingest/scenarios/healthy.json' }],
      stations: ['ribeira', { key: 'north-fell' }],
    });
    const cfg = loadFeedConfig(path);
    expect(cfg.baseUrl).toBe('http://127.0.0.1:1');
    expect(cfg.stations).toEqual(['ribeira', 'north-fell']);
    expect(cfg.spacecraft[0]!.sheet.loops).toHaveLength(1);
    expect(cfg.spacecraft[0]!.scenario.name).toBe('healthy');
  });

  it('lists every problem with its path', () => {
    const sheet = JSON.parse(readFileSync(join(INGEST_DIR, 'fleet/MR-1.json'), 'utf8')) as Record<string, unknown>;
    let message = '';
    try {
      parseFeedConfig({
        baseUrl: 'http://127.0.0.1:1',
        spacecraft: [
          { key: 'MR-2', token: 't', sheet, scenario: join(INGEST_DIR, 'scenarios/healthy.json') },
          { key: 'MR-1', token: 't', sheet: { ...sheet, massProperties: { mass_kg: -1, inertia_kg_m2: [[1, 0, 0], [0, 1, 0], [0, 0, 1]] } }, scenario: join(INGEST_DIR, 'scenarios/nope.json') },
        ],
      }, dir, 'cfg.json');
    } catch (err) {
      expect(err).toBeInstanceOf(FeedConfigError);
      message = (err as Error).message;
    }
    expect(message).toContain('spacecraft[0].sheet: the sheet is for MR-1, not MR-2');
    expect(message).toContain('spacecraft[1].sheet.massProperties.mass_kg: mass_kg must be greater than 0');
    expect(() => parseFeedConfig({ baseUrl: 'not a url', spacecraft: [] }, dir)).toThrow(/baseUrl must be an absolute URL[\s\S]*spacecraft must list at least one spacecraft/);
  });
});

describe('feed process', () => {
  it('playback: posts the span in requests, retries a 503, prints packets/s and exits 0', async () => {
    requests.length = 0;
    failFirst = 1;
    const path = writeConfig('playback.json', {
      baseUrl,
      spacecraft: [{ key: 'MR-1', token: 'secret-1', sheet: join(INGEST_DIR, 'fleet/MR-1.json'), scenario: join(INGEST_DIR, 'scenarios/healthy.json'), startedAtMs: Date.UTC(2026, 10, 2) }],
    });
    const { code, out } = await runFeed(['--config', path, '--playback', '--hours', '0.05', '--station', 'ribeira']);
    expect(code, out).toBe(0);
    expect(out).toMatch(/→ 503 in \d+ ms, will retry: warming up/);
    expect(out).toMatch(/playback done: 3602 packets stored \([\d.]+ MiB\) in 2 requests, [\d.]+ s, \d+ packets\/s/);
    expect(requests).toHaveLength(2);
    for (const r of requests) {
      expect(r.url).toBe('/api/ingest?station=ribeira');
      expect(r.auth).toBe('Bearer secret-1');
      expect(r.type).toBe('application/octet-stream');
    }
    const d = decodeChunks([new Uint8Array(requests[1]!.body)], [0]);
    expect(d.rejects).toEqual([]);
    expect(ofKind(d, 'attitude')).toHaveLength(1800);
    expect(ofKind(d, 'burst')).toHaveLength(2);
  }, 30_000);

  it('real time: in a pass it dumps what was stored, then posts each second; SIGTERM stops it cleanly', async () => {
    requests.length = 0;
    failFirst = 0;
    // A spacecraft key whose fixed schedule has it in a pass for the next 40 s.
    const now = Date.now();
    let key = '';
    for (let i = 1; i < 500 && !key; i++) {
      const p = passAt(`RT-${i}`, now);
      if (p && p.losMs - now > 40_000 && now - p.aosMs > 5_000) key = `RT-${i}`;
    }
    expect(key).not.toBe('');
    const sheet = JSON.parse(readFileSync(join(INGEST_DIR, 'fleet/MR-1.json'), 'utf8')) as { spacecraft: { key: string } };
    sheet.spacecraft.key = key;
    writeFileSync(join(dir, 'rt-sheet.json'), JSON.stringify(sheet));
    const path = writeConfig('realtime.json', {
      baseUrl,
      spacecraft: [{ key, token: 'secret-rt', sheet: 'rt-sheet.json', scenario: join(INGEST_DIR, 'scenarios/healthy.json'), startedAtMs: now - 120_000 }],
    });
    const { code, out } = await runFeed(['--config', path], { killWhen: (o) => (o.match(/ real time /g) ?? []).length >= 3 });
    expect(code, out).toBe(0);
    expect(out).toMatch(new RegExp(`${key} AOS [a-z-]+ until`));
    expect(out).toMatch(/ playback [\d.]+ KiB \d+ packets → 200/);
    expect(out).toContain('SIGTERM: stopping');
    // the first request dumps the two minutes simulated before the start, the next ones carry about a second each
    expect(countPackets(new Uint8Array(requests[0]!.body))).toBeGreaterThanOrEqual(1190 * 2);
    expect(countPackets(new Uint8Array(requests.at(-1)!.body))).toBeLessThanOrEqual(40);
    expect(requests.every((r) => r.auth === 'Bearer secret-rt' && /^\/api\/ingest\?station=[a-z-]+$/.test(r.url))).toBe(true);
  }, 30_000);

  it('refuses a bad configuration with exit code 2 and the reasons', async () => {
    const path = writeConfig('bad.json', { baseUrl, spacecraft: [{ key: 'MR-1', token: 't', sheet: 'missing.json', scenario: 'x.json' }] });
    const { code, out } = await runFeed(['--config', path]);
    expect(code).toBe(2);
    expect(out).toMatch(/spacecraft\[0\]\.sheet: cannot read/);
  }, 30_000);
});
