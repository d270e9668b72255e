import MLR from 'ml-regression-multivariate-linear';
import { describe, expect, it } from 'vitest';
import { PacketStream, generatePackets } from '../../../ingest/generator';
import type { GenerationSummary } from '../../../ingest/generator';
import { BURST_CURRENT_EVERY, BURST_PERIOD_S, BURST_RATE_HZ, BURST_SAMPLES, STEP_S, quantizeSamples } from '../../../ingest/sim/spacecraft-sim';
import { windowResistance } from '../../../src/lib/physics/heating';
import { mhdPressureLoss } from '../../../src/lib/physics/friction';
import { idealPressureConstant } from '../../../src/lib/physics/pump';
import { cucToUnixMs } from '../../../src/lib/telemetry/cuc';
import { APID } from '../../../src/lib/telemetry/types';
import type { Scenario } from '../../../ingest/scenario.schema';
import type { SpacecraftSheet } from '../../../src/lib/spacecraft-sheet.schema';
import { T0, decodeChunks, loadScenario, loadSheet, ofKind, scenario } from './feed-helpers';

function generate(sheet: SpacecraftSheet, sc: Scenario, seconds: number, chunkBytes?: number): { chunks: Uint8Array[]; summary: GenerationSummary } {
  const gen = generatePackets({ sheet, scenario: sc, startMs: T0, durationMs: seconds * 1000, chunkBytes });
  const chunks: Uint8Array[] = [];
  for (let r = gen.next(); ; r = gen.next()) {
    if (r.done) return { chunks, summary: r.value };
    chunks.push(r.value);
  }
}

/** Burst captures of one loop that complete within `seconds`: start 60 s + 20 s × index, then every period. */
function expectedBursts(loopIndex: number, seconds: number): number {
  let n = 0;
  for (let k = 0; ; k++) {
    const start = 60 + 20 * loopIndex + k * BURST_PERIOD_S;
    if (start + BURST_SAMPLES / BURST_RATE_HZ + 0.1 > seconds) return n;
    n += k % BURST_CURRENT_EVERY === 0 ? 2 : 1;
  }
}

describe('packet generator, healthy three-loop spacecraft over 28 minutes', () => {
  const sheet = loadSheet('MR-3');
  const seconds = 28 * 60;
  const { chunks, summary } = generate(sheet, loadScenario('healthy'), seconds);
  const d = decodeChunks(chunks, [0, 1, 2]);

  it('decodes every packet, with 10 Hz attitude, 10 Hz per loop and the scheduled bursts', () => {
    expect(d.rejects).toEqual([]);
    expect(ofKind(d, 'attitude')).toHaveLength(seconds * 10);
    expect(ofKind(d, 'loop')).toHaveLength(seconds * 10 * 3);
    for (const id of [0, 1, 2]) expect(ofKind(d, 'loop').filter((r) => r.loopId === id)).toHaveLength(seconds * 10);
    const bursts = ofKind(d, 'burst');
    expect(bursts).toHaveLength(expectedBursts(0, seconds) + expectedBursts(1, seconds) + expectedBursts(2, seconds));
    expect(summary.counts[APID.attitude].generated).toBe(seconds * 10);
    expect(summary.packets).toBe(d.records.length);
    expect(summary.bytes).toBe(chunks.reduce((s, c) => s + c.length, 0));
  });

  it('hands out chunks of whole packets no bigger than 1 MiB', () => {
    for (const c of chunks) expect(c.length).toBeLessThanOrEqual(1 << 20);
    expect(chunks.length).toBeGreaterThan(1);
  });

  it('numbers each APID with a 14-bit count that wraps 16383 → 0', () => {
    for (const kind of ['attitude', 'loop', 'burst', 'event'] as const) {
      const seqs = ofKind(d, kind).map((r) => r.seq);
      expect(seqs.findIndex((s, i) => s !== i % 16384)).toBe(-1);
    }
    expect(ofKind(d, 'attitude').length).toBeGreaterThan(16384);
    expect(ofKind(d, 'attitude')[16384]!.seq).toBe(0);
  });

  it('time-tags housekeeping every 100 ms from the start, bursts at their first sample', () => {
    const att = ofKind(d, 'attitude');
    expect(att.findIndex((r, i) => Math.round(cucToUnixMs(r.coarse, r.fine)) !== T0 + 100 * (i + 1))).toBe(-1);
    const first = ofKind(d, 'burst').find((b) => b.loopId === 1 && b.channel === 0)!;
    expect(cucToUnixMs(first.coarse, first.fine)).toBeCloseTo(T0 + 80_000, 0);
    expect(first.raw).toHaveLength(BURST_SAMPLES);
    expect(first.sampleRate_hz).toBe(BURST_RATE_HZ);
  });

  it('reports slews through mode changes and events, with unit quaternions and an Earth-like field', () => {
    const att = ofKind(d, 'attitude');
    expect(new Set(att.map((r) => r.mode))).toEqual(new Set([1, 2]));
    const events = ofKind(d, 'event');
    expect(events.some((e) => e.text.startsWith('ADCS mode SLEW'))).toBe(true);
    expect(events.some((e) => e.text.startsWith('slew complete'))).toBe(true);
    const qNorm = att.map((r) => Math.hypot(...r.quaternion));
    const field = att.map((r) => Math.hypot(...r.mag_nT));
    expect(Math.max(...qNorm.map((n) => Math.abs(n - 1)))).toBeLessThan(1e-5);
    expect(Math.min(...field)).toBeGreaterThan(15_000);
    expect(Math.max(...field)).toBeLessThan(60_000);
  });

  it('keeps the loops inside their rating, pumping, and in a sensible temperature range', () => {
    const bad = ofKind(d, 'loop').filter((l) =>
      Math.abs(l.commandedCurrent_a) > sheet.loops[l.loopId]!.ratedCurrent_A || (l.status & 1) !== 1 || l.fluidTemp_c < -10 || l.electrodeTemp_c > 75);
    expect(bad).toEqual([]);
    expect(Math.max(...ofKind(d, 'loop').map((l) => Math.abs(l.measuredCurrent_a)))).toBeGreaterThan(0.5);
  });
});

describe('link faults show up at the ground', () => {
  const sheet = loadSheet('MR-1');

  it('sequence-gap: 9 loop packets missing, the count jumps by 10 once', () => {
    const { chunks, summary } = generate(sheet, loadScenario('sequence-gap'), 60);
    const seqs = ofKind(decodeChunks(chunks, [0]), 'loop').map((r) => r.seq);
    const jumps = seqs.slice(1).map((s, i) => (s - seqs[i]! + 16384) % 16384).filter((j) => j !== 1);
    expect(jumps).toEqual([10]);
    expect(seqs).toHaveLength(600 - 9);
    expect(summary.counts[APID.loop].dropped).toBe(9);
    const at = seqs.findIndex((s, i) => i > 0 && s - seqs[i - 1]! === 10);
    expect(at).toBe(200 - 1); // first dropped packet is the first one at or after t = 20 s
  });

  it('duplicate-packets: five attitude packets arrive twice, identical', () => {
    const { chunks, summary } = generate(sheet, loadScenario('duplicate-packets'), 60);
    const att = ofKind(decodeChunks(chunks, [0]), 'attitude');
    expect(att).toHaveLength(600 + 5);
    const key = (r: (typeof att)[number]) => `${r.seq}/${r.coarse}/${r.fine}`;
    const seen = new Map<string, number>();
    for (const r of att) seen.set(key(r), (seen.get(key(r)) ?? 0) + 1);
    const twice = [...seen.entries()].filter(([, n]) => n === 2);
    expect(twice).toHaveLength(5);
    expect(summary.counts[APID.attitude].duplicated).toBe(5);
  });

  it('corrupt-packets: four CRC mismatches at the offsets where bits were flipped', () => {
    const { chunks, summary } = generate(sheet, loadScenario('corrupt-packets'), 60, 4096);
    const d = decodeChunks(chunks, [0]);
    expect(d.rejects.map((r) => r.reason)).toEqual(['crc mismatch', 'crc mismatch', 'crc mismatch', 'crc mismatch']);
    expect(d.rejects.map((r) => r.offset)).toEqual(summary.corruptions.map((c) => c.offset));
    expect(ofKind(d, 'loop')).toHaveLength(600 - 4);
    expect(summary.corruptions.every((c) => c.apid === APID.loop)).toBe(true);
  });
});

describe('physical faults show up in the telemetry', () => {
  it('torque-constant-loss: the true effectiveness falls as scheduled, and so does pressure per amp', () => {
    const sheet = loadSheet('MR-1');
    const stream = new PacketStream({ sheet, scenario: loadScenario('torque-constant-loss'), startMs: T0 });
    const eta: Record<number, number> = {};
    for (const t of [0, 600, 630, 660, 720, 900]) {
      stream.advanceTo(T0 + t * 1000);
      eta[t] = stream.sim.trueEffectiveness(0);
    }
    // 0.7 until 600 s, falling by half over 120 s
    expect(eta[0]).toBe(0.7);
    expect(eta[600]).toBeCloseTo(0.7, 12);
    expect(eta[630]).toBeCloseTo(0.7 * (1 - 0.5 * 0.25), 2);
    expect(eta[660]).toBeCloseTo(0.7 * (1 - 0.5 * 0.5), 2);
    expect(eta[720]).toBeCloseTo(0.35, 12);
    expect(eta[900]).toBeCloseTo(0.35, 12);

    const loops = ofKind(decodeChunks(stream.flush(), [0]), 'loop');
    const kp = idealPressureConstant(sheet.loops[0]!);
    // Measured rise + the MHD loss in the gap, over the ideal Σ I·B/b: the effectiveness (least squares through 0).
    const ratio = (from: number, to: number) => {
      let sxy = 0, sxx = 0;
      for (const l of loops) {
        const t = (cucToUnixMs(l.coarse, l.fine) - T0) / 1000;
        if (t < from || t >= to || Math.abs(l.measuredCurrent_a) < 0.3) continue;
        const x = kp * l.measuredCurrent_a;
        sxy += x * (l.pressureRise_pa + mhdPressureLoss(l.flowVelocity_m_s, sheet.loops[0]!));
        sxx += x * x;
      }
      return sxy / sxx;
    };
    expect(ratio(300, 600)).toBeCloseTo(0.7, 2);
    expect(ratio(725, 900)).toBeCloseTo(0.35, 2);
  });

  it('pulsation: the first burst capture carries a 37 Hz, 60 Pa pressure sine', () => {
    const sheet = loadSheet('MR-1');
    const { chunks } = generate(sheet, loadScenario('pulsation'), 70);
    const burst = ofKind(decodeChunks(chunks, [0]), 'burst').find((b) => b.channel === 0)!;
    const x: number[][] = [], y: number[][] = [];
    burst.raw.forEach((r, i) => {
      const t = i / burst.sampleRate_hz;
      x.push([Math.sin(2 * Math.PI * 37 * t), Math.cos(2 * Math.PI * 37 * t), t]);
      y.push([r * burst.scale + burst.offset]);
    });
    // least-squares sine fit with an independent regression library (ml-regression-multivariate-linear)
    const fit = new MLR(x, y);
    const [s, c] = [fit.weights[0]![0]!, fit.weights[1]![0]!];
    expect(Math.hypot(s, c)).toBeCloseTo(60, 0);
  });

  it('gyro-bias: in steady pointing the gyro reads the bias while the true rate is held near zero', () => {
    const sheet = loadSheet('MR-3');
    const stream = new PacketStream({ sheet, scenario: loadScenario('gyro-bias'), startMs: T0 });
    stream.advanceTo(T0 + 180_000);
    // over the last minute: the mean true rate (the identification dither makes it jitter about zero)
    const w = [0, 0, 0];
    for (let k = 1; k <= 600; k++) {
      stream.advanceTo(T0 + 180_000 + 100 * k);
      const y = stream.sim.state;
      for (let j = 0; j < 3; j++) w[j]! += y[j]! / 600;
    }
    const att = ofKind(decodeChunks(stream.flush(), [0, 1, 2]), 'attitude').slice(-600);
    const mean = [0, 1, 2].map((j) => att.reduce((s, r) => s + r.rate_rad_s[j]!, 0) / att.length);
    const bias = [2e-4, -1e-4, 5e-5];
    for (let j = 0; j < 3; j++) expect(Math.abs(mean[j]! - bias[j]!)).toBeLessThan(2e-5);
    expect(Math.hypot(w[0]!, w[1]!, w[2]!)).toBeLessThan(2e-5);
  });

  it('electrode-resistance-rise: (V − back-EMF)/I doubles', () => {
    const sheet = loadSheet('MR-1');
    const { chunks } = generate(sheet, loadScenario('electrode-resistance-rise'), 900);
    const loops = ofKind(decodeChunks(chunks, [0]), 'loop');
    const cols = (from: number, to: number) => {
      const sel = loops.filter((l) => { const t = (cucToUnixMs(l.coarse, l.fine) - T0) / 1000; return t >= from && t < to; });
      return windowResistance(sel.map((l) => l.measuredCurrent_a), sel.map((l) => l.electrodeVoltage_v), sel.map((l) => l.flowVelocity_m_s), sheet.loops[0]!, 0, sel.length, 0.2);
    };
    const before = cols(300, 600)!, after = cols(720, 900)!;
    expect(before).toBeGreaterThan(0.01);
    expect(after / before).toBeCloseTo(2, 1);
  });

  it('thermal-degradation: the faulty loop runs at other temperatures; the others barely feel it (only through its weaker warm magnets and the attitude control)', () => {
    const sheet = loadSheet('MR-3');
    const faulty = loadScenario('thermal-degradation');
    const healthy = { ...faulty, faults: [] };
    const temps = (sc: Scenario) => {
      const stream = new PacketStream({ sheet, scenario: sc, startMs: T0 });
      stream.advanceTo(T0 + 900_000);
      return { loops: ofKind(decodeChunks(stream.flush(), [0, 1, 2]), 'loop'), sim: stream.sim };
    };
    const a = temps(faulty), b = temps(healthy);
    const last = (x: typeof a, id: number) => x.loops.filter((l) => l.loopId === id).at(-1)!;
    expect(Math.abs(last(a, 1).electrodeTemp_c - last(b, 1).electrodeTemp_c)).toBeLessThan(0.01);
    expect(Math.abs(a.sim.electrodeTemperature(1) - b.sim.electrodeTemperature(1))).toBeLessThan(0.005);
    expect(Math.abs(a.sim.electrodeTemperature(0) - b.sim.electrodeTemperature(0))).toBeGreaterThan(0.05);
  });
});

describe('burst quantisation', () => {
  it('spans the samples with int16 and reads back within half a step (values as float32, as on the wire)', () => {
    const samples = Float32Array.from({ length: 1024 }, (_, i) => 1234.5 + 80 * Math.sin(i / 7) + (i % 13));
    const q = quantizeSamples(samples);
    expect(Math.max(...q.raw)).toBeLessThanOrEqual(32_767);
    expect(Math.min(...q.raw)).toBeGreaterThanOrEqual(-32_767);
    expect(Math.max(...q.raw) - Math.min(...q.raw)).toBeGreaterThan(60_000);
    expect(q.scale).toBe(Math.fround(q.scale));
    let worst = 0;
    samples.forEach((x, i) => { worst = Math.max(worst, Math.abs(Math.fround(q.raw[i]! * q.scale + q.offset) - x)); });
    expect(worst).toBeLessThanOrEqual(q.scale * 0.51 + 1e-4);
    const flat = quantizeSamples(new Float32Array(16).fill(-3));
    expect(flat.scale).toBeGreaterThan(0);
    expect([...flat.raw].every((r) => Math.abs(r * flat.scale + flat.offset + 3) < 1e-5)).toBe(true);
  });

  it('the truth model steps at 100 Hz or faster', () => {
    expect(STEP_S).toBeLessThanOrEqual(0.01);
  });
});
