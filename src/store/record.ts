/**
 * Filling the coordinate store (src/store/store.ts) frame by frame: which atoms are unwrapped and
 * with which centre-of-mass weights, molecules made whole in the first frame, site positions and
 * velocities Σ_j w_j r_j copied into chunks of whole frames, the centre of mass R(t) and the
 * collective sums Σ_s q_s r_s per frame. Unwrapping by src/unwrap.ts (previous unwrapped position
 * + minimum-image step; Allen & Tildesley, Computer Simulation of Liquids, 2nd ed. 2017, §1.6).
 * Cost O(atoms) per frame; memory as in the store's module comment.
 */
import { checkMassesUsed } from '../masses.js';
import type { CellMatrix, Frame, PassContext, Topology } from '../types.js';
import { CellGeometry, isOrthorhombic, volume as cellVolume } from '../cell.js';
import { Unwrapper } from '../unwrap.js';
import { UsageError } from '../errors.js';
import { resolveLayout } from './layout.js';
import { subsetSiteMap, type SiteLayout, type SiteMap } from './sites.js';
import type { StoreOptions, StorePartial } from './store.js';

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

/**
 * Create the store accumulator for one stream of frames: per frame, unwrap (src/unwrap.ts), store
 * the site positions Σ_j w_j u_j (and velocities), the centre of mass R = Σ w_k u_k / Σ w_k and
 * the collective sums Σ_s q_s r_s; `partial()` returns the StorePartial of the frames so far.
 */
export function createStore(ctx: PassContext, opts: StoreOptions) {
  const topo = ctx.topology;
  const setup = storeSetup(topo, opts);
  const { layout, fullMap, map, q, unwrapAtoms, siteSlot, fullSlot, collectiveAtomCharge, comWeights, comTotal, simpleSlots, identity } = setup;
  const removeDrift = opts.removeDrift ?? true;
  // Drift removal and molecule centres weigh atoms by mass: say where the masses came from.
  if (removeDrift || layout.molecules) checkMassesUsed(topo, ctx.file ?? '<input>', ctx.warnings, removeDrift ? 'removing the centre-of-mass drift (--keep-drift keeps it)' : 'the molecules\' centres of mass');
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
