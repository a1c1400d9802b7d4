/**
 * Reading a coordinate store (src/store/store.ts) back out: random access to its frames
 * (`StoreView`) and the per-site, per-component time series the MSD, VACF and conductivity
 * correlate (`gatherSeries`), with the stored centre of mass subtracted.
 */
import type { StorePartial } from './store.js';

/** Random access to the frames of a store: chunk and offset of frame t. */
export class StoreView {
  readonly frames: number;
  readonly sites: number;
  /** Chunk index of each frame. */
  readonly chunkOf: Int32Array;
  /** Offset of each frame within its chunk. */
  readonly offsetOf: Int32Array;
  constructor(readonly store: StorePartial) {
    this.frames = store.frames;
    this.sites = store.map.count;
    this.chunkOf = new Int32Array(store.frames);
    this.offsetOf = new Int32Array(store.frames);
    let t = 0;
    store.chunkFrames.forEach((nf, c) => {
      for (let j = 0; j < nf; j++, t++) {
        this.chunkOf[t] = c;
        this.offsetOf[t] = j * 3 * this.sites;
      }
    });
  }

  /** Chunk array and offset of frame t (positions, or velocities with `velocity`). */
  at(t: number, velocity = false): [Float64Array, number] {
    const arr = velocity ? this.store.velocityChunks! : this.store.chunks;
    return [arr[this.chunkOf[t]], this.offsetOf[t]];
  }

  /** Mean cell volume (Å^3) or null when no frame had a cell. */
  meanVolume(): number | null {
    return this.store.volumeFrames > 0 ? this.store.volumeSum / this.store.volumeFrames : null;
  }
}

/**
 * Series of the given sites and components over frames [from, from+count): out[b·nc + c][t] =
 * r_{site b, comp c}(from+t) − R_c(from+t) (R the stored centre of mass, when `drift` is given).
 * With `velocity`, the stored velocities and centre-of-mass velocity instead.
 */
export function gatherSeries(
  view: StoreView,
  sites: ArrayLike<number>,
  comps: readonly number[],
  from: number,
  count: number,
  drift: Float64Array | null,
  out: Float64Array[],
  velocity = false,
): void {
  const nc = comps.length;
  const chunks = velocity ? view.store.velocityChunks! : view.store.chunks;
  if (nc === 3 && comps[0] === 0 && comps[1] === 1 && comps[2] === 2) {
    for (let t = 0; t < count; t++) {
      const arr = chunks[view.chunkOf[from + t]];
      const off = view.offsetOf[from + t];
      const d = 3 * (from + t);
      const d0 = drift ? drift[d] : 0, d1 = drift ? drift[d + 1] : 0, d2 = drift ? drift[d + 2] : 0;
      for (let b = 0; b < sites.length; b++) {
        const o = off + 3 * sites[b];
        out[3 * b][t] = arr[o] - d0;
        out[3 * b + 1][t] = arr[o + 1] - d1;
        out[3 * b + 2][t] = arr[o + 2] - d2;
      }
    }
    return;
  }
  for (let t = 0; t < count; t++) {
    const [arr, off] = view.at(from + t, velocity);
    const dOff = 3 * (from + t);
    for (let b = 0; b < sites.length; b++) {
      const o = off + 3 * sites[b];
      for (let c = 0; c < nc; c++) {
        const comp = comps[c];
        out[b * nc + c][t] = arr[o + comp] - (drift ? drift[dOff + comp] : 0);
      }
    }
  }
}
