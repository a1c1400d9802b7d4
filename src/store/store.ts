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
 */
import type { CellMatrix, Frame, Pass, PassContext, Topology } from '../types.js';
import { CellGeometry, isOrthorhombic, volume as cellVolume } from '../cell.js';
import { Unwrapper } from '../unwrap.js';
import { UsageError } from '../errors.js';
import { resolveLayout, type LayoutSpec } from './layout.js';
import { subsetSiteMap, type SiteLayout, type SiteMap } from './sites.js';

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
const CHUNK_TARGET_DOUBLES = 1 << 18; // 2 MiB per chunk

/** True when a cell is cubic: orthorhombic with equal edges to 1e-6 relative. */
export function isCubicCell(h: CellMatrix): boolean {
  if (!isOrthorhombic(h)) return false;
  const a = h[0], b = h[4], c = h[8];
  return Math.abs(a - b) <= 1e-6 * a && Math.abs(a - c) <= 1e-6 * a;
}

/** Growable Float64Array (amortised doubling). */
class Growable {
  data = new Float64Array(96);
  length = 0;
  push3(x: number, y: number, z: number): void {
    if (this.length + 3 > this.data.length) {
      const d = new Float64Array(this.data.length * 2);
      d.set(this.data);
      this.data = d;
    }
    this.data[this.length++] = x;
    this.data[this.length++] = y;
    this.data[this.length++] = z;
  }
  trimmed(): Float64Array {
    return this.data.slice(0, this.length);
  }
}

/** What a store fixes before its first frame: the sites, the atoms it unwraps and their weights. */
interface StoreSetup {
  layout: SiteLayout;
  /** Site map of the whole layout, and of the sites stored (a subset with `sites`). */
  fullMap: SiteMap;
  map: SiteMap;
  /** Charge per site of the full layout for the collective sums, or null. */
  q: Float64Array | null;
  unwrapAtoms: Int32Array;
  /** Index in unwrapAtoms of each atom of `map` (siteSlot) and of `fullMap` (fullSlot, with q). */
  siteSlot: Int32Array;
  fullSlot: Int32Array | null;
  collectiveAtomCharge: Float64Array | null;
  /** Centre-of-mass weight per unwrapped atom and their sum (drift removal), or null. */
  comWeights: Float64Array | null;
  comTotal: number;
  /** Slot of each site when every site is a single atom of weight 1 (fast path), else null. */
  simpleSlots: Int32Array | null;
  /** True when every atom is unwrapped, in order. */
  identity: boolean;
}

/** Resolve the layout and work out which atoms the store unwraps, with their slots and weights. */
function storeSetup(topo: Topology, opts: StoreOptions): StoreSetup {
  const layout = resolveLayout(opts.layout, topo);
  const fullMap = layout.map;
  const map = opts.sites ? subsetSiteMap(fullMap, Int32Array.from(opts.sites)) : fullMap;
  const removeDrift = opts.removeDrift ?? true;
  let q: Float64Array | null = null;
  if (opts.collectiveCharges) {
    if (!layout.siteCharges) throw new UsageError('collective charge sums need a site layout with charges');
    q = layout.siteCharges;
  }
  if (q && q.length !== fullMap.count) throw new UsageError('collective charges must be given for every site of the layout');
  const need = new Uint8Array(topo.atoms);
  for (const a of map.atoms) need[a] = 1;
  if (q) for (const a of fullMap.atoms) need[a] = 1;
  let comWeightsAll: Float64Array | null = null;
  if (removeDrift) {
    need.fill(1);
    comWeightsAll = new Float64Array(topo.atoms);
    let known = 0;
    for (let a = 0; a < topo.atoms; a++) {
      const m = topo.masses[a];
      if (Number.isFinite(m) && m > 0) {
        comWeightsAll[a] = m;
        known++;
      }
    }
    if (known === 0) comWeightsAll.fill(1);
  }
  const unwrapList: number[] = [];
  for (let a = 0; a < topo.atoms; a++) if (need[a]) unwrapList.push(a);
  const unwrapAtoms = Int32Array.from(unwrapList);
  const slotOf = new Int32Array(topo.atoms).fill(-1);
  unwrapAtoms.forEach((a, k) => (slotOf[a] = k));
  const siteSlot = Int32Array.from(map.atoms, (a) => slotOf[a]);
  const fullSlot = q ? Int32Array.from(fullMap.atoms, (a) => slotOf[a]) : null;
  let collectiveAtomCharge: Float64Array | null = null;
  if (q && fullSlot) {
    collectiveAtomCharge = new Float64Array(unwrapAtoms.length);
    for (let s = 0; s < fullMap.count; s++) {
      for (let j = fullMap.start[s]; j < fullMap.start[s + 1]; j++) collectiveAtomCharge[fullSlot[j]] += q[s] * fullMap.weights[j];
    }
  }
  const comWeights = comWeightsAll ? Float64Array.from(unwrapAtoms, (a) => comWeightsAll![a]) : null;
  let comTotal = 0;
  if (comWeights) for (const w of comWeights) comTotal += w;
  // Fast paths: sites that are single atoms of weight 1; unwrapped atoms that are all atoms in order.
  let simple = true;
  for (let s = 0; s < map.count && simple; s++) simple = map.start[s + 1] - map.start[s] === 1 && map.weights[map.start[s]] === 1;
  const simpleSlots = simple ? Int32Array.from({ length: map.count }, (_, s) => siteSlot[map.start[s]]) : null;
  const identity = unwrapAtoms.length === topo.atoms;
  return { layout, fullMap, map, q, unwrapAtoms, siteSlot, fullSlot, collectiveAtomCharge, comWeights, comTotal, simpleSlots, identity };
}

/**
 * Make every site of `m` whole in the unwrapped positions u (3 per slot): each atom moved to the
 * minimum image of its site's first atom (src/cell.ts). `d` is a 3-vector of scratch space.
 */
function makeMoleculesWhole(u: Float64Array, cell: CellMatrix, m: SiteMap, slot: Int32Array, d: Float64Array): void {
  const g = new CellGeometry(cell);
  for (let s = 0; s < m.count; s++) {
    const k0 = slot[m.start[s]];
    for (let j = m.start[s] + 1; j < m.start[s + 1]; j++) {
      const k = slot[j];
      d[0] = u[3 * k] - u[3 * k0];
      d[1] = u[3 * k + 1] - u[3 * k0 + 1];
      d[2] = u[3 * k + 2] - u[3 * k0 + 2];
      g.minimumImage(d, 0);
      u[3 * k] = u[3 * k0] + d[0];
      u[3 * k + 1] = u[3 * k0 + 1] + d[1];
      u[3 * k + 2] = u[3 * k0 + 2] + d[2];
    }
  }
}

/** Site positions Σ_j w_j u(slot j) of one frame into `out` from `base` ([site][xyz]). */
function storeSitePositions(u: Float64Array, map: SiteMap, siteSlot: Int32Array, simpleSlots: Int32Array | null, out: Float64Array, base: number): void {
  const S = map.count;
  if (simpleSlots) {
    for (let s = 0; s < S; s++) {
      const k = 3 * simpleSlots[s];
      const o = base + 3 * s;
      out[o] = u[k];
      out[o + 1] = u[k + 1];
      out[o + 2] = u[k + 2];
    }
  } else for (let s = 0; s < S; s++) {
    let x = 0, y = 0, z = 0;
    for (let j = map.start[s]; j < map.start[s + 1]; j++) {
      const k = 3 * siteSlot[j];
      const w = map.weights[j];
      x += w * u[k];
      y += w * u[k + 1];
      z += w * u[k + 2];
    }
    out[base + 3 * s] = x;
    out[base + 3 * s + 1] = y;
    out[base + 3 * s + 2] = z;
  }
}

/** Site velocities Σ_j w_j v(atom j) of one frame (v over all atoms) into `out` from `base`. */
function storeSiteVelocities(v: Float64Array, map: SiteMap, out: Float64Array, base: number): void {
  for (let s = 0; s < map.count; s++) {
    let x = 0, y = 0, z = 0;
    for (let j = map.start[s]; j < map.start[s + 1]; j++) {
      const o = 3 * map.atoms[j];
      const w = map.weights[j];
      x += w * v[o];
      y += w * v[o + 1];
      z += w * v[o + 2];
    }
    out[base + 3 * s] = x;
    out[base + 3 * s + 1] = y;
    out[base + 3 * s + 2] = z;
  }
}

/**
 * Weighted centre Σ_k w_k r_k / W of the unwrapped atoms, pushed to g: positions from u (3 per
 * slot), or with `atoms` from a full-atom array (velocities).
 */
function pushCentre(g: Growable, weights: Float64Array, total: number, r: Float64Array, atoms: Int32Array | null): void {
  let x = 0, y = 0, z = 0;
  for (let k = 0; k < weights.length; k++) {
    const o = atoms ? 3 * atoms[k] : 3 * k;
    const w = weights[k];
    x += w * r[o];
    y += w * r[o + 1];
    z += w * r[o + 2];
  }
  g.push3(x / total, y / total, z / total);
}

/**
 * Collective sum Σ_s q_s Σ_j w_j r(j) over every site of `fullMap`, pushed to g: positions from u
 * through `slot`, or (slot null) velocities from a full-atom array. Same arithmetic as the stored
 * site positions and `collectiveSeries` (bit-identical).
 */
function pushCollective(g: Growable, fullMap: SiteMap, q: Float64Array, r: Float64Array, slot: Int32Array | null): void {
  let mx = 0, my = 0, mz = 0;
  for (let s = 0; s < fullMap.count; s++) {
    let x = 0, y = 0, z = 0;
    for (let j = fullMap.start[s]; j < fullMap.start[s + 1]; j++) {
      const k = slot ? 3 * slot[j] : 3 * fullMap.atoms[j];
      const w = fullMap.weights[j];
      x += w * r[k];
      y += w * r[k + 1];
      z += w * r[k + 2];
    }
    mx += q[s] * x;
    my += q[s] * y;
    mz += q[s] * z;
  }
  g.push3(mx, my, mz);
}

/** Create the store accumulator for one stream of frames. */
function createStore(ctx: PassContext, opts: StoreOptions) {
  const topo = ctx.topology;
  const setup = storeSetup(topo, opts);
  const { layout, fullMap, map, q, unwrapAtoms, siteSlot, fullSlot, collectiveAtomCharge, comWeights, comTotal, simpleSlots, identity } = setup;
  const removeDrift = opts.removeDrift ?? true;
  const coll = q ? new Growable() : null;
  let collV = q && (opts.keepVelocities || opts.collectiveVelocities) ? new Growable() : null;
  const unwrapper = new Unwrapper(unwrapAtoms);
  const perFrame = 3 * map.count;
  const chunkCap = Math.max(1, Math.floor(CHUNK_TARGET_DOUBLES / Math.max(1, perFrame)));
  const chunks: Float64Array[] = [];
  const chunkFrames: number[] = [];
  let velocityChunks: Float64Array[] | null = opts.keepVelocities ? [] : null;
  let velocitiesMissing = false;
  let current = new Float64Array(chunkCap * perFrame);
  let currentV: Float64Array | null = velocityChunks ? new Float64Array(chunkCap * perFrame) : null;
  let inChunk = 0;
  const com = removeDrift ? new Growable() : null;
  const comV = removeDrift && opts.keepVelocities ? new Growable() : null;
  const n = unwrapAtoms.length;
  const lastRaw = new Float64Array(3 * n);
  let firstRaw: Float64Array | null = null;
  let firstUnwrapped: Float64Array | null = null;
  let firstCell: Float64Array | null = null;
  let frames = 0;
  let volumeSum = 0;
  let volumeFrames = 0;
  let allCubic = true;
  const d = new Float64Array(3);

  function flush(): void {
    if (inChunk === 0) return;
    chunks.push(inChunk === chunkCap ? current : current.slice(0, inChunk * perFrame));
    chunkFrames.push(inChunk);
    if (velocityChunks && currentV) velocityChunks.push(inChunk === chunkCap ? currentV : currentV.slice(0, inChunk * perFrame));
    current = new Float64Array(chunkCap * perFrame);
    currentV = velocityChunks ? new Float64Array(chunkCap * perFrame) : null;
    inChunk = 0;
  }

  /** Raw positions of the unwrapped atoms of a frame, 3 per slot, into `out`. */
  function rawOfSlots(pos: Float64Array, out: Float64Array): void {
    for (let k = 0; k < n; k++) {
      const o = 3 * unwrapAtoms[k];
      out[3 * k] = pos[o];
      out[3 * k + 1] = pos[o + 1];
      out[3 * k + 2] = pos[o + 2];
    }
  }

  return {
    frame(f: Frame): void {
      const u = unwrapper.step(f.positions, f.cell);
      const pos = f.positions;
      if (frames === 0) {
        if (layout.molecules && f.cell) makeMoleculesWhole(u, f.cell, fullSlot ? fullMap : map, fullSlot ?? siteSlot, d);
        firstRaw = new Float64Array(3 * n);
        rawOfSlots(pos, firstRaw);
        firstUnwrapped = Float64Array.from(u);
        firstCell = f.cell ? Float64Array.from(f.cell) : null;
      }
      if (identity) lastRaw.set(pos.subarray(0, 3 * n));
      else rawOfSlots(pos, lastRaw);
      const base = inChunk * perFrame;
      storeSitePositions(u, map, siteSlot, simpleSlots, current, base);
      if (com && comWeights) pushCentre(com, comWeights, comTotal, u, null);
      if (coll && q && fullSlot) {
        pushCollective(coll, fullMap, q, u, fullSlot);
        const v = f.velocities;
        if (collV && !v) collV = null;
        if (collV && v) pushCollective(collV, fullMap, q, v, null);
      }
      if (velocityChunks && currentV) {
        const v = f.velocities;
        if (!v) {
          velocitiesMissing = true;
          velocityChunks = null;
          currentV = null;
        } else {
          storeSiteVelocities(v, map, currentV, base);
          if (comV && comWeights) pushCentre(comV, comWeights, comTotal, v, unwrapAtoms);
        }
      }
      if (f.cell) {
        volumeSum += cellVolume(f.cell);
        volumeFrames++;
        if (allCubic && !isCubicCell(f.cell)) allCubic = false;
      }
      frames++;
      inChunk++;
      if (inChunk === chunkCap) flush();
    },
    partial(): StorePartial {
      flush();
      const hasV = velocityChunks !== null && !velocitiesMissing;
      return {
        map,
        unwrapAtoms,
        comWeights,
        siteSlot,
        frames,
        chunkFrames: chunkFrames.slice(),
        chunks: chunks.slice(),
        velocityChunks: hasV ? velocityChunks!.slice() : null,
        velocitiesMissing,
        com: com ? com.trimmed() : null,
        comVelocity: hasV && comV ? comV.trimmed() : null,
        collective: coll ? coll.trimmed() : null,
        collectiveVelocity: collV ? collV.trimmed() : null,
        collectiveAtomCharge,
        firstRaw,
        firstUnwrapped,
        firstCell,
        lastRaw: frames > 0 ? Float64Array.from(lastRaw) : null,
        lastUnwrapped: frames > 0 ? Float64Array.from(unwrapper.unwrapped) : null,
        volumeSum,
        volumeFrames,
        allCubic,
        longSteps: unwrapper.longSteps,
        maxStepFraction: unwrapper.maxStepFraction,
      };
    },
  };
}

/**
 * Concatenate two stores (a covers the frames before b) with unwrapping continuity across the
 * boundary (module comment). b's position arrays are shifted in place.
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
