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
import { eciToGeodetic, gstime, propagate, twoline2satrec } from 'satellite.js';
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
    const check = () => {
      if (!killed && opts.killWhen?.(out)) {
        killed = true;
        child.kill('SIGTERM');
      }
    };
    // Checked on output and every 200 ms (the feed logs only some of its real-time posts).
    const poll = setInterval(check, 200);
    const onData = (d: Buffer) => {
      out += d.toString();
      check();
    };
    child.stdout.on('data', onData);
    child.stderr.on('data', onData);
    child.on('error', reject);
    child.on('exit', (code) => {
      clearTimeout(timer);
      clearInterval(poll);
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
      schedule: 'fixed',
    });
    const cfg = loadFeedConfig(path);
    expect(cfg.baseUrl).toBe('http://127.0.0.1:1');
    expect(cfg.stations).toEqual(['ribeira', 'north-fell']);
    expect(cfg.schedule).toBe('fixed');
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

describe('feed configuration of ground stations', () => {
  const base = { baseUrl: 'http://127.0.0.1:1', spacecraft: [{ key: 'MR-1', token: 't', sheet: join(INGEST_DIR, 'fleet/MR-1.json'), scenario: join(INGEST_DIR, 'scenarios/healthy.json') }] };
  const site = { key: 'north-fell', latitude_deg: 67.88, longitude_deg: 21.07, altitude_m: 380, elevation_mask_deg: 5 };

  it('predicted passes (the default) take stations with positions', () => {
    const cfg = parseFeedConfig({ ...base, stations: [site] }, dir);
    expect(cfg.schedule).toBe('predicted');
    expect(cfg.stations).toEqual(['north-fell']);
    expect(cfg.stationSites).toEqual([site]);
  });

  it('refuses a station without a position for predicted passes, and a position out of range', () => {
    expect(() => parseFeedConfig({ ...base, stations: [site, 'ribeira'] }, dir)).toThrow(/stations\[1\]: predicted passes need the station's latitude_deg/);
    expect(() => parseFeedConfig({ ...base, stations: [{ ...site, elevation_mask_deg: 60 }] }, dir)).toThrow(/elevation_mask_deg must be from 0 to 45/);
    expect(() => parseFeedConfig({ ...base, schedule: 'weekly' }, dir)).toThrow(/schedule must be "predicted" or "fixed"/);
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
    // A playback names its station and needs no pass prediction.
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
      const p = passAt(`RT-${i}`, now, { schedule: 'fixed' });
      if (p && p.losMs - now > 40_000 && now - p.aosMs > 5_000) key = `RT-${i}`;
    }
    expect(key).not.toBe('');
    const sheet = JSON.parse(readFileSync(join(INGEST_DIR, 'fleet/MR-1.json'), 'utf8')) as { spacecraft: { key: string } };
    sheet.spacecraft.key = key;
    writeFileSync(join(dir, 'rt-sheet.json'), JSON.stringify(sheet));
    const path = writeConfig('realtime.json', {
      baseUrl,
      spacecraft: [{ key, token: 'secret-rt', sheet: 'rt-sheet.json', scenario: join(INGEST_DIR, 'scenarios/healthy.json'), startedAtMs: now - 120_000 }],
      schedule: 'fixed',
    });
    const { code, out } = await runFeed(['--config', path], { killWhen: () => requests.length >= 3 });
    expect(code, out).toBe(0);
    expect(out).toMatch(new RegExp(`${key} AOS [a-z-]+ until`));
    expect(out).toMatch(/ playback [\d.]+ KiB \d+ packets → 200/);
    expect(out).toContain('SIGTERM: stopping');
    // the first request dumps the two minutes simulated before the start, the next ones carry about a second each
    expect(countPackets(new Uint8Array(requests[0]!.body))).toBeGreaterThanOrEqual(1190 * 2);
    expect(countPackets(new Uint8Array(requests.at(-1)!.body))).toBeLessThanOrEqual(40);
    expect(requests.every((r) => r.auth === 'Bearer secret-rt' && /^\/api\/ingest\?station=[a-z-]+$/.test(r.url))).toBe(true);
  }, 30_000);

  it('real time, predicted: posts through the station that SGP4 says sees the spacecraft now', async () => {
    requests.length = 0;
    failFirst = 0;
    // A station right under MR-1 now (its sub-satellite point from satellite.js), mask 0°: the spacecraft
    // is overhead, so the predicted pass runs for minutes either side. A second station on the far side
    // of the Earth sees nothing.
    const now = Date.now();
    const sheet = JSON.parse(readFileSync(join(INGEST_DIR, 'fleet/MR-1.json'), 'utf8')) as { orbit: { tle: [string, string] } };
    const at = new Date(now + 5_000);
    const pv = propagate(twoline2satrec(sheet.orbit.tle[0], sheet.orbit.tle[1]), at);
    if (!pv) throw new Error('satellite.js could not propagate MR-1');
    const geo = eciToGeodetic(pv.position, gstime(at));
    const lat = (geo.latitude * 180) / Math.PI;
    const lon = (((geo.longitude * 180) / Math.PI + 540) % 360) - 180;
    const path = writeConfig('predicted.json', {
      baseUrl,
      spacecraft: [{ key: 'MR-1', token: 'secret-p', sheet: join(INGEST_DIR, 'fleet/MR-1.json'), scenario: join(INGEST_DIR, 'scenarios/healthy.json'), startedAtMs: now - 60_000 }],
      stations: [
        { key: 'far-side', latitude_deg: -lat, longitude_deg: lon > 0 ? lon - 180 : lon + 180, altitude_m: 0, elevation_mask_deg: 10 },
        { key: 'overhead', latitude_deg: lat, longitude_deg: lon, altitude_m: 0, elevation_mask_deg: 0 },
      ],
    });
    const { code, out } = await runFeed(['--config', path], { killWhen: () => requests.length >= 2 });
    expect(code, out).toBe(0);
    expect(out).toContain('passes predicted over far-side, overhead');
    expect(out).toMatch(/MR-1 AOS overhead until/);
    expect(requests.length).toBeGreaterThanOrEqual(1);
    expect(requests.every((r) => r.url === '/api/ingest?station=overhead' && r.auth === 'Bearer secret-p')).toBe(true);
  }, 30_000);

  it('real time, predicted, without station positions: exits 2 and says what is missing', async () => {
    const path = writeConfig('no-stations.json', {
      baseUrl,
      spacecraft: [{ key: 'MR-1', token: 't', sheet: join(INGEST_DIR, 'fleet/MR-1.json'), scenario: join(INGEST_DIR, 'scenarios/healthy.json') }],
    });
    const { code, out } = await runFeed(['--config', path]);
    expect(code).toBe(2);
    expect(out).toMatch(/predicted passes needs ground stations with positions/);
  }, 30_000);

  it('refuses a bad configuration with exit code 2 and the reasons', async () => {
    const path = writeConfig('bad.json', { baseUrl, spacecraft: [{ key: 'MR-1', token: 't', sheet: 'missing.json', scenario: 'x.json' }] });
    const { code, out } = await runFeed(['--config', path]);
    expect(code).toBe(2);
    expect(out).toMatch(/spacecraft\[0\]\.sheet: cannot read/);
  }, 30_000);
});
