/**
 * The coordinate store: a Pass whose partial is the stored trajectory of its sites, shared by
 * the MSD, the velocity autocorrelation and the conductivity (one read, one copy of the
 * coordinates).
 *
 * The MSD over all time origins needs every frame, so the store keeps the whole trajectory of its
 * sites (src/store/sites.ts) in memory: unwrapped positions as Float64Array, frame-major, in
 * chunks of whole frames (3 × 8 bytes per site-frame; `storeBytes` reports the bytes held).
 * - Unwrapping: src/unwrap.ts (previous unwrapped position + minimum-image step). Input that
 *   is already unwrapped passes through unchanged as long as no atom moves half a cell between
 *   frames. With molecules, each molecule is first made whole in the first frame (minimum image
 *   of each atom relative to the molecule's first atom) and then followed continuously.
 * - Drift: by default the system's centre-of-mass position R(t), mass-weighted over ALL atoms
 *   with a known mass (equal weights if none has one), is stored per frame and subtracted from
 *   every site: r_i(t) − R(t). Velocities get the same treatment with the centre-of-mass velocity.
 * - Collective sums: with `collectiveCharges` the store also keeps Σ_s q_s r_s (and Σ_s q_s v_s)
 *   per frame over every site of the layout, whichever sites it stores (batched conductivity).
 * - Partials and merge: a partial holds the unwrapped block of a frame range, plus the raw and
 *   unwrapped positions of its first and last frame. merge(a, b) makes b continue a exactly as a
 *   single run would: every atom of b is shifted by
 *     s = u_a(last) + mic(x_b(first) − x_a(last)) − u_b(first),
 *   the minimum image taken in b's first cell (as the unwrapper does for a step), sites and
 *   centre of mass by the same linear combination. b's arrays are shifted in place (b is
 *   consumed). The shifts compose, so the merge is associative.
 * The store's options are plain data (`StoreOptions`: a `LayoutSpec`, flags and a list of site
 * indices), so they cross worker threads and JSON as they are.
 *
 * Cost: O(atoms) per frame for unwrapping and the site sums; memory 24 bytes per site-frame
 * (48 with velocities) plus 24–96 bytes per frame for the centre of mass and collective sums.
 *
 * Files: this one holds the options, the partial and the pass; src/store/record.ts fills a store
 * frame by frame, src/store/merge.ts joins two, src/store/view.ts reads series back out.
 */
import type { Pass, Topology } from '../types.js';
import type { LayoutSpec } from './layout.js';
import type { SiteMap } from './sites.js';
import { createStore } from './record.js';
import { mergeStores } from './merge.js';

/** Options of the coordinate store: plain data, structured-clone and JSON safe (worker threads receive them as they are). */
export interface StoreOptions {
  /** Which sites and groups (resolved with `resolveLayout` when the first frame arrives). */
  layout: LayoutSpec;
  /** Subtract the system's centre-of-mass motion (default true). */
  removeDrift?: boolean;
  /** Keep the velocities the file carries (for the VACF and Green–Kubo). */
  keepVelocities?: boolean;
  /**
   * Store only these sites of the layout (indices into its SiteMap, increasing); default all.
   * Used to process the sites in batches over several reads of a file (`--max-memory`).
   */
  sites?: readonly number[];
  /**
   * Also keep, per frame, the collective sums Σ_s q_s r_s (and Σ_s q_s v_s with velocities) over
   * every site of the full layout, 3 doubles per frame, whichever sites the store holds (the
   * collective conductivity in batched runs). The charges q_s are the layout's `siteCharges`,
   * so the spec must give charges (an 'ions' layout, or a 'species' one with `charges`).
   */
  collectiveCharges?: boolean;
  /** With collectiveCharges: also Σ_s q_s v_s per frame, without storing site velocities. */
  collectiveVelocities?: boolean;
}

/** The stored trajectory of a frame range (survives structured clone). */
export interface StorePartial {
  /** Site map (needed to shift sites on merge). */
  map: SiteMap;
  /** Atoms that are unwrapped, and the centre-of-mass weight of each (0 when not in R). */
  unwrapAtoms: Int32Array;
  comWeights: Float64Array | null;
  /** Index of each site-map atom in unwrapAtoms. */
  siteSlot: Int32Array;
  frames: number;
  /** Frames in each chunk. */
  chunkFrames: number[];
  /** Unwrapped site positions, frame-major [frame][site][xyz]. */
  chunks: Float64Array[];
  /** Site velocities in the same layout, when every frame carried velocities; else null. */
  velocityChunks: Float64Array[] | null;
  /** True when velocities were asked for but some frame had none. */
  velocitiesMissing: boolean;
  /** Centre of mass per frame (3 per frame), or null when drift is kept. */
  com: Float64Array | null;
  /** Σ_s q_s r_s over all sites of the layout per frame (3 per frame), with collectiveCharges. */
  collective: Float64Array | null;
  /** Σ_s q_s v_s per frame, with collectiveCharges and velocities in every frame. */
  collectiveVelocity: Float64Array | null;
  /** Per unwrapped atom, Σ q_s w over the sites it belongs to (shifts `collective` on merge). */
  collectiveAtomCharge: Float64Array | null;
  comVelocity: Float64Array | null;
  firstRaw: Float64Array | null;
  firstUnwrapped: Float64Array | null;
  firstCell: Float64Array | null;
  lastRaw: Float64Array | null;
  lastUnwrapped: Float64Array | null;
  volumeSum: number;
  volumeFrames: number;
  /** False when some frame's cell is not cubic. */
  allCubic: boolean;
  longSteps: number;
  maxStepFraction: number;
}

/**
 * The coordinate-store pass: its result is the merged store itself, from which the MSD, VACF
 * and conductivity analyses finish (so one read and one copy of the coordinates serve all).
 */
export function storePass(opts: StoreOptions, name = 'store'): Pass<StorePartial, StorePartial> {
  return {
    name,
    needsEvenSpacing: true,
    create: (ctx) => createStore(ctx, opts),
    merge: mergeStores,
    finish: (p) => p,
  };
}

/** Bytes held by the store's arrays (positions, velocities, centre-of-mass series). */
export function storeBytes(p: StorePartial): number {
  let b = 0;
  for (const c of p.chunks) b += c.byteLength;
  if (p.velocityChunks) for (const c of p.velocityChunks) b += c.byteLength;
  if (p.com) b += p.com.byteLength;
  if (p.comVelocity) b += p.comVelocity.byteLength;
  if (p.collective) b += p.collective.byteLength;
  if (p.collectiveVelocity) b += p.collectiveVelocity.byteLength;
  return b;
}

/** Description of the drift treatment for the output. */
export function driftDescription(store: StorePartial, topology: Topology): string {
  if (!store.com) return 'centre-of-mass drift kept (--keep-drift)';
  let known = 0;
  for (let a = 0; a < topology.atoms; a++) if (Number.isFinite(topology.masses[a]) && topology.masses[a] > 0) known++;
  if (known === 0) return `centre-of-mass drift removed (no atom has a known mass: equal weights over all ${topology.atoms} atoms)`;
  return `centre-of-mass drift removed (mass-weighted over the ${known} of ${topology.atoms} atoms with known masses)`;
}

/** The unwrapping warning of a store, or null. */
export function unwrapWarning(store: StorePartial): string | null {
  if (store.longSteps === 0) return null;
  return (
    `${store.longSteps} step(s) between consecutive frames exceeded a third of the smallest cell width ` +
    `(largest ${(store.maxStepFraction * 100).toFixed(0)}% of it): frames may be too far apart to unwrap reliably`
  );
}
