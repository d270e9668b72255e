/**
 * Seeded pseudo-random numbers for the simulated feed, so that a scenario replays identically.
 * xoshiro128** (Blackman & Vigna, "Scrambled linear pseudorandom number generators", 2021),
 * seeded through SplitMix32; normal deviates by the Box–Muller transform (Box & Muller, 1958).
 */
export class Rng {
  private a: number;
  private b: number;
  private c: number;
  private d: number;
  private spare = 0;
  private hasSpare = false;

  constructor(seed: number) {
    let s = seed >>> 0;
    const next = (): number => {
      s = (s + 0x9e3779b9) >>> 0;
      let z = s;
      z = Math.imul(z ^ (z >>> 16), 0x85ebca6b) >>> 0;
      z = Math.imul(z ^ (z >>> 13), 0xc2b2ae35) >>> 0;
      return (z ^ (z >>> 16)) >>> 0;
    };
    this.a = next();
    this.b = next();
    this.c = next();
    this.d = next() | 1;
  }

  /** Next 32-bit unsigned integer. */
  nextUint32(): number {
    const result = Math.imul(rotl(Math.imul(this.b, 5), 7), 9) >>> 0;
    const t = this.b << 9;
    this.c ^= this.a;
    this.d ^= this.b;
    this.b ^= this.c;
    this.a ^= this.d;
    this.c ^= t;
    this.d = rotl(this.d, 11);
    return result;
  }

  /** Uniform deviate in [0, 1). */
  uniform(): number {
    return this.nextUint32() / 4294967296;
  }

  /** Integer in [0, n). */
  int(n: number): number {
    return Math.floor(this.uniform() * n);
  }

  /** Standard normal deviate (Box & Muller, 1958). */
  normal(): number {
    if (this.hasSpare) {
      this.hasSpare = false;
      return this.spare;
    }
    let u = this.uniform();
    while (u === 0) u = this.uniform();
    const r = Math.sqrt(-2 * Math.log(u));
    const phi = 2 * Math.PI * this.uniform();
    this.spare = r * Math.sin(phi);
    this.hasSpare = true;
    return r * Math.cos(phi);
  }
}

function rotl(x: number, k: number): number {
  return ((x << k) | (x >>> (32 - k))) >>> 0;
}
