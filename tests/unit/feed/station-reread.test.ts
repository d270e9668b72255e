import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { createPassSchedule, fileStationReader, writeConfigStations, type FeedStation } from '../../../ingest/passes';
import { loadFeedConfig } from '../../../ingest/feed-config.schema';
import { MR1_TLE } from '../orbit/fixtures';
import { T0 } from './feed-helpers';

const DAY = 86_400_000;
const MINUTE = 60_000;
const northFell: FeedStation = { key: 'north-fell', latitude_deg: 67.88, longitude_deg: 21.07, altitude_m: 380, elevation_mask_deg: 5 };
const karoo: FeedStation = { key: 'karoo-ridge', latitude_deg: -31.52, longitude_deg: 21.93, altitude_m: 1210, elevation_mask_deg: 10 };

describe('a running feed re-reads its ground stations', () => {
  it('predicts over the re-read stations once the check interval has passed, and only then', () => {
    let clock = T0;
    let listed: readonly FeedStation[] = [northFell];
    let reads = 0;
    const schedule = createPassSchedule('MR-1', {
      tle: MR1_TLE,
      stations: [northFell],
      reloadStations: { read: () => (reads++, listed), everyMs: 10 * MINUTE, now: () => clock },
    });
    const before = schedule.between(T0, T0 + DAY);
    expect(before.length).toBeGreaterThan(5);
    expect(new Set(before.map((p) => p.station))).toEqual(new Set(['north-fell']));
    expect(reads).toBe(0);

    // The station list changes (north-fell removed, karoo-ridge added); not looked at before ten minutes.
    listed = [karoo];
    clock += 9 * MINUTE;
    expect(schedule.between(T0, T0 + DAY)).toEqual(before);
    expect(reads).toBe(0);
    clock += MINUTE;
    const after = schedule.between(T0, T0 + DAY);
    expect(reads).toBe(1);
    expect(after).toEqual(createPassSchedule('MR-1', { tle: MR1_TLE, stations: [karoo] }).between(T0, T0 + DAY));
    expect(new Set(after.map((p) => p.station))).toEqual(new Set(['karoo-ridge']));

    // A failing or empty read keeps the stations in use.
    clock += 10 * MINUTE;
    const failing = createPassSchedule('MR-1', {
      tle: MR1_TLE,
      stations: [karoo],
      reloadStations: {
        read: () => {
          throw new Error('file half written');
        },
        everyMs: MINUTE,
        now: () => clock,
      },
    });
    clock += MINUTE;
    expect(failing.between(T0, T0 + DAY)).toEqual(after);
  });

  it('takes station edits through the configuration file: written only when they changed, parsed again only when the file changed', () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'feed-stations-'));
    try {
      const file = path.join(dir, 'feed.json');
      const sheet = path.resolve('ingest/fleet/MR-1.json');
      fs.writeFileSync(
        file,
        JSON.stringify({ baseUrl: 'http://127.0.0.1:4321', spacecraft: [{ key: 'MR-1', token: 't', sheet, scenario: path.resolve('ingest/scenarios/healthy.json') }], stations: [northFell] }),
      );
      let parses = 0;
      const read = fileStationReader(file, (f) => (parses++, loadFeedConfig(f).stationSites));
      expect(read()).toEqual([northFell]);
      expect(read()).toEqual([northFell]);
      expect(parses).toBe(1);

      // The same stations: nothing written.
      expect(writeConfigStations(file, [northFell])).toBe(false);
      // A moved mask and a new station: the file is rewritten whole, the rest kept, and it still validates.
      const raised = { ...northFell, elevation_mask_deg: 12 };
      expect(writeConfigStations(file, [karoo, raised])).toBe(true);
      expect(writeConfigStations(file, [raised, karoo])).toBe(false);
      const cfg = loadFeedConfig(file);
      expect(cfg.spacecraft.map((s) => s.key)).toEqual(['MR-1']);
      expect(read()).toEqual([karoo, raised]);
      expect(parses).toBe(2);
      expect(fs.readdirSync(dir)).toEqual(['feed.json']);
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  });
});
