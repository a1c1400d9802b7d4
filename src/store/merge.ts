/**
 * Joining two stores of consecutive frame ranges (src/store/store.ts) so that b continues a
 * exactly as a single run would: every unwrapped atom of b is shifted by
 *   s = u_a(last) + mic(x_b(first) − x_a(last)) − u_b(first),
 * the minimum image taken in b's first cell (as the unwrapper does for a step), sites, centre of
 * mass and collective sums by the same linear combination. The shifts compose, so the merge is
 * associative.
 */
import { CellGeometry } from '../cell.js';
import type { StorePartial } from './store.js';

/**
 * Concatenate two stores (a covers the frames before b) with unwrapping continuity across the
 * boundary (formula in the module comment). b's position arrays are shifted in place.
 */
export function mergeStores(a: StorePartial, b: StorePartial): StorePartial {
  if (a.frames === 0) return b;
  if (b.frames === 0) return a;
  const n = a.unwrapAtoms.length;
  const shift = new Float64Array(3 * n);
  const geo = b.firstCell ? new CellGeometry(b.firstCell) : null;
  const d = new Float64Array(3);
  let longSteps = a.longSteps + b.longSteps;
  let maxFrac = Math.max(a.maxStepFraction, b.maxStepFraction);
  const aLastRaw = a.lastRaw!, aLastU = a.lastUnwrapped!, bFirstRaw = b.firstRaw!, bFirstU = b.firstUnwrapped!;
  for (let k = 0; k < 3 * n; k += 3) {
    d[0] = bFirstRaw[k] - aLastRaw[k];
    d[1] = bFirstRaw[k + 1] - aLastRaw[k + 1];
    d[2] = bFirstRaw[k + 2] - aLastRaw[k + 2];
    if (geo) {
      geo.minimumImage(d, 0);
      const frac = Math.hypot(d[0], d[1], d[2]) / (2 * geo.limit);
      if (frac > 1 / 3) longSteps++;
      if (frac > maxFrac) maxFrac = frac;
    }
    shift[k] = aLastU[k] + d[0] - bFirstU[k];
    shift[k + 1] = aLastU[k + 1] + d[1] - bFirstU[k + 1];
    shift[k + 2] = aLastU[k + 2] + d[2] - bFirstU[k + 2];
  }
  const map = b.map;
  const S = map.count;
  const siteShift = new Float64Array(3 * S);
  for (let s = 0; s < S; s++) {
    for (let j = map.start[s]; j < map.start[s + 1]; j++) {
      const k = 3 * b.siteSlot[j];
      const w = map.weights[j];
      siteShift[3 * s] += w * shift[k];
      siteShift[3 * s + 1] += w * shift[k + 1];
      siteShift[3 * s + 2] += w * shift[k + 2];
    }
  }
  for (const c of b.chunks) {
    for (let o = 0; o < c.length; o += 3 * S) {
      for (let q = 0; q < 3 * S; q++) c[o + q] += siteShift[q];
    }
  }
  let com: Float64Array | null = null;
  if (a.com && b.com && b.comWeights) {
    let cx = 0, cy = 0, cz = 0, tot = 0;
    for (let k = 0; k < n; k++) {
      const w = b.comWeights[k];
      cx += w * shift[3 * k];
      cy += w * shift[3 * k + 1];
      cz += w * shift[3 * k + 2];
      tot += w;
    }
    cx /= tot;
    cy /= tot;
    cz /= tot;
    for (let o = 0; o < b.com.length; o += 3) {
      b.com[o] += cx;
      b.com[o + 1] += cy;
      b.com[o + 2] += cz;
    }
    com = new Float64Array(a.com.length + b.com.length);
    com.set(a.com);
    com.set(b.com, a.com.length);
  }
  let collective: Float64Array | null = null;
  if (a.collective && b.collective && b.collectiveAtomCharge) {
    // M = Σ q_s r_s shifts by Σ_atoms (Σ q_s w) · shift, the same linear combination.
    let cx = 0, cy = 0, cz = 0;
    for (let k = 0; k < n; k++) {
      const w = b.collectiveAtomCharge[k];
      cx += w * shift[3 * k];
      cy += w * shift[3 * k + 1];
      cz += w * shift[3 * k + 2];
    }
    for (let o = 0; o < b.collective.length; o += 3) {
      b.collective[o] += cx;
      b.collective[o + 1] += cy;
      b.collective[o + 2] += cz;
    }
    collective = concat(a.collective, b.collective);
  }
  const collectiveVelocity = a.collectiveVelocity && b.collectiveVelocity ? concat(a.collectiveVelocity, b.collectiveVelocity) : null;
  const lastUnwrapped = Float64Array.from(b.lastUnwrapped!, (v, k) => v + shift[k]);
  const hasV = a.velocityChunks !== null && b.velocityChunks !== null;
  let comVelocity: Float64Array | null = null;
  if (hasV && a.comVelocity && b.comVelocity) {
    comVelocity = new Float64Array(a.comVelocity.length + b.comVelocity.length);
    comVelocity.set(a.comVelocity);
    comVelocity.set(b.comVelocity, a.comVelocity.length);
  }
  return {
    map: a.map,
    unwrapAtoms: a.unwrapAtoms,
    comWeights: a.comWeights,
    siteSlot: a.siteSlot,
    frames: a.frames + b.frames,
    chunkFrames: [...a.chunkFrames, ...b.chunkFrames],
    chunks: [...a.chunks, ...b.chunks],
    velocityChunks: hasV ? [...a.velocityChunks!, ...b.velocityChunks!] : null,
    velocitiesMissing: a.velocitiesMissing || b.velocitiesMissing,
    com,
    comVelocity,
    collective,
    collectiveVelocity,
    collectiveAtomCharge: a.collectiveAtomCharge,
    firstRaw: a.firstRaw,
    firstUnwrapped: a.firstUnwrapped,
    firstCell: a.firstCell,
    lastRaw: b.lastRaw,
    lastUnwrapped,
    volumeSum: a.volumeSum + b.volumeSum,
    volumeFrames: a.volumeFrames + b.volumeFrames,
    allCubic: a.allCubic && b.allCubic,
    longSteps,
    maxStepFraction: maxFrac,
  };
}

/** a followed by b. */
function concat(a: Float64Array, b: Float64Array): Float64Array {
  const c = new Float64Array(a.length + b.length);
  c.set(a);
  c.set(b, a.length);
  return c;
}
