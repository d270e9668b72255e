/**
 * Hydraulic losses of one loop sampled once on a fine velocity grid. The truth model evaluates the
 * loss four times per RK4 step for every loop; the physics functions recompute the loop geometry on
 * each call, so a 24-hour run would spend most of its time there. The table is built from those
 * same functions (one implementation of the physics) and read by linear interpolation; outside the
 * grid it calls them directly.
 */

import type { SheetLoop } from '../../src/lib/spacecraft-sheet.schema';
import { frictionPressureLoss, mhdPressureLoss } from '../../src/lib/physics/friction';

export class LossTable {
  private readonly loop: SheetLoop;
  private readonly vMax: number;
  private readonly step: number;
  private readonly inv: number;
  private readonly cells: number;
  private readonly totalPa: Float64Array;
  private readonly mhdPa: Float64Array;

  /** Grid of 2·cells + 1 points over [−vMax, vMax] m/s. */
  constructor(loop: SheetLoop, vMax_m_s = 4, cells = 8192) {
    this.loop = loop;
    this.vMax = vMax_m_s;
    this.cells = cells;
    this.step = vMax_m_s / cells;
    this.inv = 1 / this.step;
    this.totalPa = new Float64Array(2 * cells + 1);
    this.mhdPa = new Float64Array(2 * cells + 1);
    for (let i = 0; i <= 2 * cells; i++) {
      const v = (i - cells) * this.step;
      const mhd = mhdPressureLoss(v, loop);
      this.mhdPa[i] = mhd;
      this.totalPa[i] = frictionPressureLoss(v, loop) + mhd;
    }
  }

  /** Friction + MHD loss round the loop, Pa, signed like v. */
  total(v: number): number {
    if (v >= this.vMax || v <= -this.vMax) return frictionPressureLoss(v, this.loop) + mhdPressureLoss(v, this.loop);
    const x = (v + this.vMax) * this.inv;
    const i = Math.floor(x);
    const f = x - i;
    const a = this.totalPa[i]!;
    return a + f * (this.totalPa[i + 1]! - a);
  }

  /** MHD (Hartmann) loss in the pump gaps, Pa, signed like v. */
  mhd(v: number): number {
    if (v >= this.vMax || v <= -this.vMax) return mhdPressureLoss(v, this.loop);
    const x = (v + this.vMax) * this.inv;
    const i = Math.floor(x);
    const f = x - i;
    const a = this.mhdPa[i]!;
    return a + f * (this.mhdPa[i + 1]! - a);
  }

  /** Grid spacing, m/s. */
  get spacing(): number {
    return this.step;
  }

  /** Number of cells on each side of zero. */
  get halfCells(): number {
    return this.cells;
  }
}
