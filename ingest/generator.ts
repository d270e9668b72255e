/**
 * Packet generator of the simulated feed: runs a spacecraft simulation and turns its telemetry into
 * CCSDS space packets (the telemetry contract, version 1), numbering each APID's packets with the
 * 14-bit sequence count and applying the scenario's link faults (dropped, duplicated and corrupted
 * packets).
 */

import type { SpacecraftSheet } from '../src/lib/spacecraft-sheet.schema';
import { encodePacketInto, packetLength } from '../src/lib/telemetry/encode';
import { CRC_LENGTH, PRIMARY_HEADER_LENGTH, SEQUENCE_COUNT_MASK } from '../src/lib/telemetry/layout';
import { APID } from '../src/lib/telemetry/types';
import type { TelemetryApid, TelemetryRecord } from '../src/lib/telemetry/types';
import { checkScenarioAgainstSheet } from './scenario.schema';
import type { Fault, Scenario } from './scenario.schema';
import { Rng } from './sim/rng';
import { SpacecraftSim, TICK_MS } from './sim/spacecraft-sim';

/** Default size of the byte chunks the generator hands out. */
export const DEFAULT_CHUNK_BYTES = 1 << 20;

/** What happened to the packets of one APID. */
export interface ApidCounts {
  /** Packets the spacecraft produced (each took a sequence count). */
  generated: number;
  /** Packets written to the output, duplicates included. */
  written: number;
  /** Packets lost on the link (sequence-gap faults). */
  dropped: number;
  /** Extra copies written (duplicate-packets faults). */
  duplicated: number;
  /** Packets written with a flipped bit (corrupt-packets faults). */
  corrupted: number;
}

export type PacketCounts = Record<TelemetryApid, ApidCounts>;

/** One corrupted packet: where it was written in the output and which bit was flipped. */
export interface CorruptionNote {
  apid: number;
  seq: number;
  /** Octet offset of the packet from the start of the output. */
  offset: number;
  /** Octet offset within the packet of the flipped bit. */
  octet: number;
  bit: number;
}

export interface PacketStreamOptions {
  sheet: SpacecraftSheet;
  scenario: Scenario;
  /** Unix ms of the scenario start; the first housekeeping sample is 100 ms later. */
  startMs: number;
  chunkBytes?: number;
  /** Gravity-gradient and magnetic torques on the truth model; default on. */
  disturbances?: boolean;
}

type LinkFault = Extract<Fault, { kind: 'sequence-gap' | 'duplicate-packets' | 'corrupt-packets' }>;

interface LinkFaultState {
  fault: LinkFault;
  remaining: number;
}

const APID_OF: Record<TelemetryRecord['kind'], TelemetryApid> = {
  attitude: APID.attitude,
  loop: APID.loop,
  burst: APID.burst,
  event: APID.event,
};

function emptyCounts(): ApidCounts {
  return { generated: 0, written: 0, dropped: 0, duplicated: 0, corrupted: 0 };
}

/** A spacecraft simulation whose telemetry comes out as packet bytes, advanced on demand. */
export class PacketStream {
  readonly sim: SpacecraftSim;
  readonly counts: PacketCounts = {
    [APID.attitude]: emptyCounts(),
    [APID.loop]: emptyCounts(),
    [APID.burst]: emptyCounts(),
    [APID.event]: emptyCounts(),
  };
  /** Every corruption made, in output order (for tests and forensics of the demo). */
  readonly corruptions: CorruptionNote[] = [];
  private readonly chunkBytes: number;
  private readonly ready: Uint8Array[] = [];
  private readonly seq = new Map<number, number>();
  private readonly linkFaults: LinkFaultState[];
  private readonly linkRng: Rng;
  private buf: Uint8Array;
  private used = 0;
  private bytesBefore = 0;
  private packetsWritten = 0;

  constructor(opts: PacketStreamOptions) {
    checkScenarioAgainstSheet(opts.scenario, opts.sheet);
    this.chunkBytes = opts.chunkBytes ?? DEFAULT_CHUNK_BYTES;
    this.buf = new Uint8Array(this.chunkBytes);
    this.linkRng = new Rng((opts.scenario.seed ^ 0x5a5a_1234) >>> 0);
    this.linkFaults = opts.scenario.faults
      .filter((f): f is LinkFault => f.kind === 'sequence-gap' || f.kind === 'duplicate-packets' || f.kind === 'corrupt-packets')
      .map((fault) => ({ fault, remaining: fault.count }));
    this.sim = new SpacecraftSim({
      sheet: opts.sheet,
      scenario: opts.scenario,
      startMs: opts.startMs,
      disturbances: opts.disturbances,
      emit: (rec) => this.write(rec),
    });
  }

  /** Unix ms the simulation has reached. */
  get timeMs(): number {
    return this.sim.timeMs;
  }

  /** Packets written so far, duplicates included. */
  get packets(): number {
    return this.packetsWritten;
  }

  /** Octets written so far. */
  get bytes(): number {
    return this.bytesBefore + this.used;
  }

  /** Runs the simulation up to untilMs (whole 100 ms housekeeping periods). */
  advanceTo(untilMs: number): void {
    while (this.sim.timeMs + TICK_MS <= untilMs) this.sim.tick();
  }

  /** Chunks completed so far (each ≤ chunkBytes, whole packets only); they are the caller's now. */
  takeFullChunks(): Uint8Array[] {
    return this.ready.splice(0, this.ready.length);
  }

  /** Every byte written so far, as chunks of whole packets; the stream keeps nothing. */
  flush(): Uint8Array[] {
    if (this.used > 0) {
      this.ready.push(this.buf.slice(0, this.used));
      this.bytesBefore += this.used;
      this.used = 0;
    }
    return this.takeFullChunks();
  }

  private write(rec: TelemetryRecord): void {
    const apid = APID_OF[rec.kind];
    const seq = this.seq.get(apid) ?? 0;
    rec.seq = seq;
    this.seq.set(apid, (seq + 1) & SEQUENCE_COUNT_MASK);
    const counts = this.counts[apid];
    counts.generated++;

    let drop = false, duplicate = false, corrupt = false;
    if (this.linkFaults.length > 0) {
      const t = this.sim.timeS;
      for (const lf of this.linkFaults) {
        if (lf.remaining <= 0 || lf.fault.apid !== apid || t < lf.fault.start_s) continue;
        lf.remaining--;
        if (lf.fault.kind === 'sequence-gap') drop = true;
        else if (lf.fault.kind === 'duplicate-packets') duplicate = true;
        else corrupt = true;
      }
    }
    if (drop) {
      counts.dropped++;
      return;
    }
    const len = packetLength(rec);
    const at = this.reserve(duplicate ? 2 * len : len);
    encodePacketInto(rec, this.buf, at);
    this.used = at + len;
    counts.written++;
    this.packetsWritten++;
    if (duplicate) {
      this.buf.copyWithin(this.used, at, at + len);
      this.used += len;
      counts.written++;
      counts.duplicated++;
      this.packetsWritten++;
    }
    if (corrupt) {
      // Flip one bit after the primary header and before the CRC: the packet still frames, its CRC fails.
      const octet = PRIMARY_HEADER_LENGTH + this.linkRng.int(len - PRIMARY_HEADER_LENGTH - CRC_LENGTH);
      const bit = this.linkRng.int(8);
      this.buf[at + octet] = this.buf[at + octet]! ^ (1 << bit);
      counts.corrupted++;
      this.corruptions.push({ apid, seq, offset: this.bytesBefore + at, octet, bit });
    }
  }

  /** Offset in the current chunk where n octets fit, starting a new chunk when needed. */
  private reserve(n: number): number {
    if (this.used + n <= this.buf.length) return this.used;
    if (this.used > 0) {
      this.ready.push(this.buf.subarray(0, this.used));
      this.bytesBefore += this.used;
    }
    this.buf = new Uint8Array(Math.max(this.chunkBytes, n));
    this.used = 0;
    return 0;
  }
}

export interface GenerateOptions extends PacketStreamOptions {
  durationMs: number;
}

/** What a generation produced. */
export interface GenerationSummary {
  packets: number;
  bytes: number;
  counts: PacketCounts;
  corruptions: CorruptionNote[];
}

/**
 * Generates the packets of `durationMs` of one spacecraft from `startMs`, as chunks of whole
 * packets of at most `chunkBytes` (1 MiB by default); returns the summary when done.
 */
export function* generatePackets(opts: GenerateOptions): Generator<Uint8Array, GenerationSummary, void> {
  const stream = new PacketStream(opts);
  const end = opts.startMs + opts.durationMs;
  const sliceMs = 10_000;
  while (stream.timeMs + TICK_MS <= end) {
    stream.advanceTo(Math.min(end, stream.timeMs + sliceMs));
    yield* stream.takeFullChunks();
  }
  yield* stream.flush();
  return { packets: stream.packets, bytes: stream.bytes, counts: stream.counts, corruptions: stream.corruptions };
}
