/**
 * Unwrapping of wrapped (periodic) coordinates across frames: the unwrapped position is the
 * previous unwrapped position plus the minimum-image step between consecutive frames,
 *   u(t) = u(t−1) + mic(x(t) − x(t−1)),
 * which is exact as long as no atom moves more than half a cell width between frames
 * (common practice, no source; see e.g. von Bülow, Bullerjahn & Hummer, J. Chem. Phys. 153,
 * 021101 (2020) for the NPT subtleties — here the current frame's cell is used for the step).
 */
import { CellGeometry } from './cell.js';
import type { CellMatrix } from './types.js';

/** Streaming unwrapper for a fixed set of atoms (indices into the frame). */
export class Unwrapper {
  /** Unwrapped positions of the selected atoms (Å), valid after each `step`. */
  readonly unwrapped: Float64Array;
  private readonly previous: Float64Array;
  private readonly atoms: Int32Array;
  private started = false;
  private geometry: CellGeometry | null = null;
  private geometryCell: CellMatrix | null = null;
  private readonly delta = new Float64Array(3);
  /** Largest step seen so far as a fraction of the smallest perpendicular cell width. */
  maxStepFraction = 0;
  /** Number of atom steps longer than a third of the smallest perpendicular width. */
  longSteps = 0;

  constructor(atoms: Int32Array) {
    this.atoms = atoms;
    this.unwrapped = new Float64Array(atoms.length * 3);
    this.previous = new Float64Array(atoms.length * 3);
  }

  private geometryFor(cell: CellMatrix): CellGeometry {
    const g = this.geometry;
    if (g && this.geometryCell) {
      let same = true;
      for (let k = 0; k < 9; k++) if (cell[k] !== this.geometryCell[k]) { same = false; break; }
      if (same) return g;
    }
    this.geometry = new CellGeometry(cell);
    this.geometryCell = Float64Array.from(cell);
    return this.geometry;
  }

  /** Advance by one frame of wrapped positions; `cell` null means no periodicity (copy). */
  step(positions: Float64Array, cell: CellMatrix | null): Float64Array {
    const n = this.atoms.length;
    const u = this.unwrapped, p = this.previous, at = this.atoms;
    if (!this.started) {
      for (let k = 0; k < n; k++) {
        const o = 3 * at[k];
        u[3 * k] = p[3 * k] = positions[o];
        u[3 * k + 1] = p[3 * k + 1] = positions[o + 1];
        u[3 * k + 2] = p[3 * k + 2] = positions[o + 2];
      }
      this.started = true;
      return u;
    }
    const g = cell ? this.geometryFor(cell) : null;
    const third = g ? (2 * g.limit) / 3 : Infinity;
    const width = g ? 2 * g.limit : Infinity;
    const d = this.delta;
    for (let k = 0; k < n; k++) {
      const o = 3 * at[k];
      const x = positions[o], y = positions[o + 1], z = positions[o + 2];
      d[0] = x - p[3 * k];
      d[1] = y - p[3 * k + 1];
      d[2] = z - p[3 * k + 2];
      if (g) g.minimumImage(d, 0);
      const len = Math.sqrt(d[0] * d[0] + d[1] * d[1] + d[2] * d[2]);
      if (len > third) this.longSteps++;
      if (len / width > this.maxStepFraction) this.maxStepFraction = len / width;
      u[3 * k] += d[0];
      u[3 * k + 1] += d[1];
      u[3 * k + 2] += d[2];
      p[3 * k] = x;
      p[3 * k + 1] = y;
      p[3 * k + 2] = z;
    }
    return u;
  }

  /** A warning text when steps longer than a third of the cell were seen, else null. */
  warning(): string | null {
    if (this.longSteps === 0) return null;
    return (
      `${this.longSteps} atom step(s) between consecutive frames exceeded a third of the smallest cell width ` +
      `(largest ${(this.maxStepFraction * 100).toFixed(0)}% of it): frames may be too far apart to unwrap reliably`
    );
  }
}
