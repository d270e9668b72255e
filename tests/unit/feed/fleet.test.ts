import { twoline2satrec, propagate } from 'satellite.js';
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { spacecraftSheetSchema } from '../../../src/lib/spacecraft-sheet.schema';
import { symmetricEigenvalues3 } from '../../../src/lib/physics/eigen3';
import { idealTorqueConstant } from '../../../src/lib/physics/pump';
import { tleEpochMs } from '../../../ingest/sim/orbit';
import { INGEST_DIR } from './feed-helpers';
import { PLAYBACK_CLEARANCE_MS, playbackTimelineStart } from '../../../ingest/demo-fleet';
import { GAP_LINK_S } from '../../../src/lib/server/telemetry-store';

const KEYS = ['MR-1', 'MR-2', 'MR-3'] as const;
const raw = (key: string): unknown => JSON.parse(readFileSync(`${INGEST_DIR}fleet/${key}.json`, 'utf8'));

describe('demo fleet sheets', () => {
  it('are valid against the sheet schema and named by their file', () => {
    for (const key of KEYS) {
      const r = spacecraftSheetSchema.safeParse(raw(key));
      expect(r.success, JSON.stringify(r.error?.issues)).toBe(true);
      if (!r.success) continue;
      expect(r.data.spacecraft.key).toBe(key);
      expect(r.data.effectiveFrom).toBe('2026-11-01T00:00:00Z');
      expect(r.data.massProperties.mass_kg).toBeGreaterThanOrEqual(10);
      expect(r.data.massProperties.mass_kg).toBeLessThanOrEqual(30);
      const ev = symmetricEigenvalues3(r.data.massProperties.inertia_kg_m2);
      expect(ev[0]).toBeGreaterThan(0);
    }
  });

  it('have the loops the demo calls for', () => {
    const [s1, s2, s3] = KEYS.map((k) => spacecraftSheetSchema.parse(raw(k)));
    expect(s1!.loops).toHaveLength(1);
    expect(s1!.loops[0]!.shape).toEqual({ kind: 'circle', radius_m: 0.08 });
    expect(s2!.loops).toHaveLength(1);
    expect(s2!.loops[0]!.shape.kind).toBe('rounded-rectangle');
    expect(s2!.loops[0]!.pumpStations).toHaveLength(2);
    expect(s3!.loops).toHaveLength(3);
    const axes = s3!.loops.map((l) => l.axis);
    for (let i = 0; i < 3; i++) for (let j = i + 1; j < 3; j++) {
      expect(Math.abs(axes[i]![0] * axes[j]![0] + axes[i]![1] * axes[j]![1] + axes[i]![2] * axes[j]![2])).toBeLessThan(1e-12);
    }
    for (const s of [s1!, s2!, s3!]) {
      for (const loop of s.loops) {
        expect(loop.shape.kind === 'circle' || loop.pumpStations.length === 2).toBe(true);
        expect(loop.channel.alongField_m).toBeLessThan(0.01);
        expect(loop.ratedCurrent_A).toBeGreaterThanOrEqual(20);
        expect(loop.ratedCurrent_A).toBeLessThanOrEqual(30);
        for (const st of loop.pumpStations) {
          expect(st.field_T).toBeGreaterThanOrEqual(0.3);
          expect(st.field_T).toBeLessThanOrEqual(0.5);
        }
        // A desk-built loop: a few mN·m at rated current.
        const torque = idealTorqueConstant(loop) * loop.ratedCurrent_A;
        expect(torque).toBeGreaterThan(1e-3);
        expect(torque).toBeLessThan(2e-2);
      }
    }
  });

  it('carry element sets that SGP4 (satellite.js) flies at 500–600 km, 45–98°, epoch late 2026', () => {
    for (const key of KEYS) {
      const tle = spacecraftSheetSchema.parse(raw(key)).orbit.tle;
      const sat = twoline2satrec(tle[0], tle[1]);
      expect(sat.error).toBe(0);
      const inc = (sat.inclo * 180) / Math.PI;
      expect(inc).toBeGreaterThanOrEqual(45);
      expect(inc).toBeLessThanOrEqual(98);
      const epoch = tleEpochMs(tle[0]);
      expect(epoch).toBeGreaterThanOrEqual(Date.UTC(2026, 8, 1));
      expect(epoch).toBeLessThan(Date.UTC(2027, 0, 1));
      for (let h = 0; h < 24; h += 3) {
        const p = propagate(sat, new Date(epoch + h * 3_600_000));
        if (!p || typeof p.position === 'boolean') throw new Error('propagation failed');
        const alt = Math.hypot(p.position.x, p.position.y, p.position.z) - 6378.137;
        expect(alt).toBeGreaterThan(480);
        expect(alt).toBeLessThan(620);
      }
    }
  });
});

describe('the demo feed asked for a playback', () => {
  const end = Date.UTC(2026, 11, 2, 12, 0, 0, 250);
  it('starts its timeline the asked hours before its end, so the hours played back have passed', () => {
    expect(playbackTimelineStart(['--playback', '--hours', '24'], end)).toBe(Date.UTC(2026, 11, 1, 12));
    expect(playbackTimelineStart(['--playback', '--hours', '1.5'], end)).toBe(Date.UTC(2026, 11, 2, 10, 30));
    expect(playbackTimelineStart(['--playback'], end)).toBe(Date.UTC(2026, 11, 1, 12)); // the feed's default, 24 h
  });
  it('leaves a real-time run, or hours the feed will refuse, to the usual start', () => {
    expect(playbackTimelineStart([], end)).toBeNull();
    expect(playbackTimelineStart(['--station', 'north-fell'], end)).toBeNull();
    expect(playbackTimelineStart(['--playback', '--hours', 'many'], end)).toBeNull();
  });
  it('ends clear of the stored telemetry by more than any sequence-gap link window', () => {
    expect(PLAYBACK_CLEARANCE_MS).toBeGreaterThan(Math.max(...Object.values(GAP_LINK_S)) * 1000);
  });
});
