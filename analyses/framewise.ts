/**
 * Per-frame observables recorded as time series, so that the convergence analysis
 * (analyses/converge.ts) can be run on them: time, cell volume and number density.
 */
import type { Frame, Pass, PassAccumulator, PassContext } from '../src/types.js';
import { volume as cellVolume } from '../src/cell.js';

/** Per-frame arrays for a contiguous frame range (NaN where a value is unknown). */
export interface FramewisePartial {
  /** Time in ps: the frame's own time, else index × frame interval, else NaN. */
  time: Float64Array;
  /** Cell volume |det(cell)| in Å³, NaN for frames without a cell. */
  volume: Float64Array;
  /** Number density atoms/volume in Å⁻³, NaN for frames without a cell. */
  density: Float64Array;
}

/** Final series; an array is null when no frame had the value. */
export interface FramewiseResult {
  frames: number;
  time: Float64Array | null;
  volume: Float64Array | null;
  density: Float64Array | null;
}

/** Growable Float64Array (capacity doubles), so recording N frames costs O(N) amortised. */
class Column {
  private data = new Float64Array(64);
  length = 0;
  push(v: number): void {
    if (this.length === this.data.length) {
      const bigger = new Float64Array(this.data.length * 2);
      bigger.set(this.data);
      this.data = bigger;
    }
    this.data[this.length++] = v;
  }
  /** Copy of the filled part. */
  snapshot(): Float64Array {
    return this.data.slice(0, this.length);
  }
}

/** Concatenation of two arrays, a then b. */
export function concatenate(a: Float64Array, b: Float64Array): Float64Array {
  const out = new Float64Array(a.length + b.length);
  out.set(a, 0);
  out.set(b, a.length);
  return out;
}

function allNaN(x: Float64Array): boolean {
  for (let i = 0; i < x.length; i++) if (!Number.isNaN(x[i]!)) return false;
  return true;
}

/**
 * Pass recording, per frame, the time (ps), the cell volume V = |det H| (Å³, rows of H are the
 * cell vectors; the triple product a·(b×c)) and the number density N_atoms/V (Å⁻³). Partials are
 * arrays over a frame range; merge concatenates (earlier range first), which is associative.
 */
export const framewiseObservables: Pass<FramewisePartial, FramewiseResult> = {
  name: 'framewise',
  create(ctx: PassContext): PassAccumulator<FramewisePartial> {
    const time = new Column();
    const vol = new Column();
    const dens = new Column();
    const interval = ctx.frameInterval;
    return {
      frame(f: Frame) {
        time.push(f.time ?? (interval !== null ? f.index * interval : NaN));
        if (f.cell) {
          const v = cellVolume(f.cell);
          vol.push(v);
          dens.push(v > 0 ? f.topology.atoms / v : NaN);
        } else {
          vol.push(NaN);
          dens.push(NaN);
        }
      },
      partial() {
        return { time: time.snapshot(), volume: vol.snapshot(), density: dens.snapshot() };
      },
    };
  },
  merge(a: FramewisePartial, b: FramewisePartial): FramewisePartial {
    return {
      time: concatenate(a.time, b.time),
      volume: concatenate(a.volume, b.volume),
      density: concatenate(a.density, b.density),
    };
  },
  finish(p: FramewisePartial): FramewiseResult {
    return {
      frames: p.time.length,
      time: allNaN(p.time) ? null : p.time,
      volume: allNaN(p.volume) ? null : p.volume,
      density: allNaN(p.density) ? null : p.density,
    };
  },
};
