/**
 * Mean-squared displacement (MSD) and self-diffusion, and the coordinate store it shares with
 * the velocity autocorrelation and conductivity analyses.
 *
 * The coordinate store
 * --------------------
 * The MSD over all time origins needs every frame, so this is the one analysis that keeps the
 * whole trajectory of its "sites" in memory: unwrapped positions as Float64Array, frame-major,
 * in chunks of whole frames (3 × 8 bytes per site-frame; the result reports the bytes held).
 * A site is an atom, or the centre of mass of a molecule (residue) with `molecules`.
 * - Unwrapping: src/unwrap.ts (previous unwrapped position + minimum-image step). Input that
 *   is already unwrapped passes through unchanged as long as no atom moves half a cell between
 *   frames. With molecules, each molecule is first made whole in the first frame (minimum image
 *   of each atom relative to the molecule's first atom) and then followed continuously.
 * - Drift: by default the system's centre-of-mass position R(t), mass-weighted over ALL atoms
 *   with a known mass (equal weights if none has one), is stored per frame and subtracted from
 *   every site: r_i(t) − R(t). Velocities get the same treatment with the centre-of-mass velocity.
 * - Partials and merge: a partial holds the unwrapped block of a frame range, plus the raw and
 *   unwrapped positions of its first and last frame. merge(a, b) makes b continue a exactly as a
 *   single run would: every atom of b is shifted by
 *     s = u_a(last) + mic(x_b(first) − x_a(last)) − u_b(first),
 *   the minimum image taken in b's first cell (as the unwrapper does for a step), sites and
 *   centre of mass by the same linear combination. b's arrays are shifted in place (b is
 *   consumed). The shifts compose, so the merge is associative.
 *
 * The MSD
 * -------
 * For one coordinate x(t), t = 0 … T−1, over all time origins,
 *   MSD(m) = 1/(T−m) Σ_{t=0}^{T−m−1} [x(t+m) − x(t)]² = S1(m) − 2 S2(m),
 *   S1(m) = 1/(T−m) Σ_{t=0}^{T−m−1} [x(t)² + x(t+m)²]  (a running sum),
 *   S2(m) = 1/(T−m) Σ_{t=0}^{T−m−1} x(t) x(t+m)        (autocorrelation by FFT, src/correlate.ts),
 * the Wiener–Khinchin route of Kneller, Keiner, Kneller & Schiller, Comput. Phys. Commun. 91,
 * 191 (1995) (also Calandrini et al., École thématique SFN 12, 201 (2011)). Each series is
 * centred on its mean first (the MSD does not change; the sums stay well conditioned).
 * D = slope / (2d) over the fit window of src/fit.ts (d = 3, or 2 with a plane).
 * The non-Gaussian parameter α2 (Rahman 1964) is computed from its definition over all time
 * origins, at about five log-spaced lags per decade, on the same gathered series (the exact FFT
 * form needs a dozen correlations of powers of the coordinates and loses precision).
 * One gather of each block of sites serves the full-run MSD, the segment MSDs and α2.
 * Every curve is a sum over sites (`GroupSums`), so a run whose sites do not fit in memory can
 * store the sites in batches over several reads of the file (`StoreOptions.sites`,
 * src/commands/batching.ts) and add the batches' sums (`addGroupSums`, `finishMsd`): the result
 * equals one read's to round-off.
 */
import type { CellMatrix, Frame, Pass, PassContext, Quantity, Topology } from '../src/types.js';
import { quantity } from '../src/types.js';
import { CellGeometry, isOrthorhombic, volume as cellVolume } from '../src/cell.js';
import { Unwrapper } from '../src/unwrap.js';
import { parseSelection, selectAtoms } from '../src/selection.js';
import { sumOfAutocorrelations } from '../src/correlate.js';
import { AnalysisError, UsageError } from '../src/errors.js';
import { A2_PER_PS } from '../src/units.js';
import { checkMassesUsed } from '../src/masses.js';
import { warnDiffusionRange } from '../src/checks.js';
import { yehHummerCorrection, YEH_HUMMER_XI } from '../src/transport.js';
import {
  blockStatistics,
  fitLine,
  maxLagIndex,
  planSegments,
  segmentedDiffusiveWindow,
  segmentFactorNote,
  segmentUncertaintyFactor,
  windowFromTimes,
  FULL_CONFIDENCE_SEGMENTS,
  DEFAULT_MAX_FRACTION,
  DEFAULT_SEGMENTS,
  DEFAULT_SLOPE_TOLERANCE,
  MIN_SEGMENTS,
  MIN_WINDOW_POINTS,
  type LagWindow,
} from '../src/fit.js';

// ---------------------------------------------------------------------------------------------
// Sites and groups
// ---------------------------------------------------------------------------------------------

/**
 * Sites as linear combinations of atoms (compressed rows): site s is
 * Σ_{k=start[s]}^{start[s+1]−1} weights[k] · r(atoms[k]).
 */
export interface SiteMap {
  count: number;
  start: Int32Array;
  atoms: Int32Array;
  weights: Float64Array;
}

/** A group of sites reported together (a species, a molecule kind, a selection). */
export interface SiteGroup {
  label: string;
  /** Site indices (into the SiteMap). */
  sites: Int32Array;
  /** Charge of each site of the group in e, when known (conductivity). */
  charge?: number;
  /** Whether the group's sites are ions (conductivity: Nernst–Einstein and concentration). */
  ion?: boolean;
}

/** Sites and groups for one topology. */
export interface SiteLayout {
  map: SiteMap;
  groups: SiteGroup[];
  molecules: boolean;
  notes: string[];
}

/** Builds the layout from the topology (called at create and at finish; must be deterministic). */
export type LayoutSpec = (topology: Topology) => SiteLayout;

/** One site per atom, weight 1, in the given order. */
export function atomSiteMap(atoms: Int32Array): SiteMap {
  const start = new Int32Array(atoms.length + 1);
  for (let i = 0; i <= atoms.length; i++) start[i] = i;
  return { count: atoms.length, start, atoms: Int32Array.from(atoms), weights: new Float64Array(atoms.length).fill(1) };
}

/**
 * One site per molecule: the centre of mass R = Σ m_i r_i / Σ m_i of its atoms (equal weights
 * when a mass is unknown). `molecules` lists, per site, the atom indices.
 */
export function moleculeSiteMap(molecules: number[][], masses: Float64Array): { map: SiteMap; equalWeights: boolean } {
  const start = new Int32Array(molecules.length + 1);
  let total = 0;
  molecules.forEach((m, i) => {
    start[i] = total;
    total += m.length;
  });
  start[molecules.length] = total;
  const atoms = new Int32Array(total);
  const weights = new Float64Array(total);
  let equalWeights = false;
  molecules.forEach((m, s) => {
    const known = m.every((a) => Number.isFinite(masses[a]) && masses[a] > 0);
    if (!known) equalWeights = true;
    const sum = known ? m.reduce((acc, a) => acc + masses[a], 0) : m.length;
    m.forEach((a, j) => {
      atoms[start[s] + j] = a;
      weights[start[s] + j] = known ? masses[a] / sum : 1 / m.length;
    });
  });
  return { map: { count: molecules.length, start, atoms, weights }, equalWeights };
}

/** Options that say which sites and groups the species analyses use. */
export interface SpeciesLayoutOptions {
  /** Selection of atoms (src/selection.ts syntax); default all atoms. */
  selection?: string;
  /** Groups as selections; default one group per distinct label (or residue name). */
  species?: string[];
  /** Sites are molecules (residues) instead of atoms. */
  molecules?: boolean;
}

/**
 * The layout for the MSD/VACF commands: atoms (or molecules having an atom in the selection)
 * grouped by label (or residue name), or by the `species` selections in the order given
 * (a site goes to the first group that selects it).
 */
export function speciesLayout(topology: Topology, opts: SpeciesLayoutOptions): SiteLayout {
  const selected = opts.selection ? selectAtoms(opts.selection, topology) : Int32Array.from({ length: topology.atoms }, (_, i) => i);
  const groupSelections = (opts.species ?? []).map((s) => ({ text: s, atoms: new Set(selectAtoms(parseSelection(s), topology)) }));
  const inSelection = new Uint8Array(topology.atoms);
  for (const a of selected) inSelection[a] = 1;
  const notes: string[] = [];
  if (opts.molecules) {
    const res = topology.residues;
    if (!res) throw new UsageError('--molecules needs residues (a PDB file with residue names and numbers); this file has none');
    const members: number[][] = Array.from({ length: res.count }, () => []);
    for (let a = 0; a < topology.atoms; a++) members[res.molecule[a]].push(a);
    const chosen: number[][] = [];
    const keys: string[] = [];
    for (const m of members) {
      if (m.length === 0 || !m.some((a) => inSelection[a])) continue;
      let key: string | null = null;
      if (groupSelections.length) {
        const g = groupSelections.find((gs) => m.some((a) => gs.atoms.has(a)));
        if (!g) continue;
        key = g.text;
      } else key = res.names[m[0]];
      chosen.push(m);
      keys.push(key);
    }
    if (chosen.length === 0) throw new UsageError('no molecule has an atom in the selection');
    const { map, equalWeights } = moleculeSiteMap(chosen, topology.masses);
    if (equalWeights) notes.push('some molecules contain atoms of unknown mass: their centres use equal atom weights');
    return { map, groups: groupsByKey(keys, groupSelections.map((g) => g.text)), molecules: true, notes };
  }
  const atoms: number[] = [];
  const keys: string[] = [];
  for (const a of selected) {
    let key: string;
    if (groupSelections.length) {
      const g = groupSelections.find((gs) => gs.atoms.has(a));
      if (!g) continue;
      key = g.text;
    } else key = topology.labels[a];
    atoms.push(a);
    keys.push(key);
  }
  if (atoms.length === 0) throw new UsageError('the --species selections pick no atom of the selection');
  return { map: atomSiteMap(Int32Array.from(atoms)), groups: groupsByKey(keys, groupSelections.map((g) => g.text)), molecules: false, notes };
}

/** Group site indices by key, in the order of `order` first, then of first appearance. */
function groupsByKey(keys: string[], order: string[]): SiteGroup[] {
  const m = new Map<string, number[]>();
  for (const k of order) m.set(k, []);
  keys.forEach((k, i) => {
    if (!m.has(k)) m.set(k, []);
    m.get(k)!.push(i);
  });
  return [...m.entries()].filter(([, v]) => v.length > 0).map(([label, v]) => ({ label, sites: Int32Array.from(v) }));
}

// ---------------------------------------------------------------------------------------------
// The coordinate store (a Pass whose partial is the stored trajectory)
// ---------------------------------------------------------------------------------------------

/** Options of the coordinate store. */
export interface StoreOptions {
  layout: LayoutSpec;
  /** Subtract the system's centre-of-mass motion (default true). */
  removeDrift?: boolean;
  /** Keep the velocities the file carries (for the VACF and Green–Kubo). */
  keepVelocities?: boolean;
  /**
   * Store only these sites of the layout (indices into its SiteMap, increasing); default all.
   * Used to process the sites in batches over several reads of a file (`--max-memory`).
   */
  sites?: Int32Array;
  /**
   * Charge of every site of the full layout: the store then also keeps, per frame, the
   * collective sums Σ_s q_s r_s (and Σ_s q_s v_s with velocities) over all sites, 3 doubles per
   * frame, whichever sites it stores (the collective conductivity in batched runs).
   */
  collectiveCharges?: Float64Array | ((layout: SiteLayout) => Float64Array);
  /** With collectiveCharges: also Σ_s q_s v_s per frame, without storing site velocities. */
  collectiveVelocities?: boolean;
}

/** The sub-map of the given sites (increasing indices into `map`), in that order. */
export function subsetSiteMap(map: SiteMap, sites: Int32Array): SiteMap {
  const start = new Int32Array(sites.length + 1);
  let total = 0;
  sites.forEach((s, i) => {
    if (!(s >= 0 && s < map.count) || (i > 0 && s <= sites[i - 1])) throw new UsageError('site subset must be increasing site indices');
    start[i] = total;
    total += map.start[s + 1] - map.start[s];
  });
  start[sites.length] = total;
  const atoms = new Int32Array(total);
  const weights = new Float64Array(total);
  sites.forEach((s, i) => {
    atoms.set(map.atoms.subarray(map.start[s], map.start[s + 1]), start[i]);
    weights.set(map.weights.subarray(map.start[s], map.start[s + 1]), start[i]);
  });
  return { count: sites.length, start, atoms, weights };
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

/** Create the store accumulator for one stream of frames. */
function createStore(ctx: PassContext, opts: StoreOptions) {
  const topo = ctx.topology;
  const layout = opts.layout(topo);
  const fullMap = layout.map;
  const map = opts.sites ? subsetSiteMap(fullMap, opts.sites) : fullMap;
  const removeDrift = opts.removeDrift ?? true;
  // Drift removal and molecule centres weigh atoms by mass: say where the masses came from.
  if (removeDrift || layout.molecules) checkMassesUsed(topo, ctx.file ?? '<input>', ctx.warnings, removeDrift ? 'removing the centre-of-mass drift (--keep-drift keeps it)' : 'the molecules\' centres of mass');
  const q = typeof opts.collectiveCharges === 'function' ? opts.collectiveCharges(layout) : opts.collectiveCharges ?? null;
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
  const coll = q ? new Growable() : null;
  let collV = q && (opts.keepVelocities || opts.collectiveVelocities) ? new Growable() : null;
  const comWeights = comWeightsAll ? Float64Array.from(unwrapAtoms, (a) => comWeightsAll![a]) : null;
  let comTotal = 0;
  if (comWeights) for (const w of comWeights) comTotal += w;

  const unwrapper = new Unwrapper(unwrapAtoms);
  // Fast paths: sites that are single atoms of weight 1; unwrapped atoms that are all atoms in order.
  let simple = true;
  for (let s = 0; s < map.count && simple; s++) simple = map.start[s + 1] - map.start[s] === 1 && map.weights[map.start[s]] === 1;
  const simpleSlots = simple ? Int32Array.from({ length: map.count }, (_, s) => siteSlot[map.start[s]]) : null;
  const identity = unwrapAtoms.length === topo.atoms;
  const S = map.count;
  const perFrame = 3 * S;
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

  function makeMoleculesWhole(u: Float64Array, cell: CellMatrix, m: SiteMap, slot: Int32Array): void {
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

  function flush(): void {
    if (inChunk === 0) return;
    chunks.push(inChunk === chunkCap ? current : current.slice(0, inChunk * perFrame));
    chunkFrames.push(inChunk);
    if (velocityChunks && currentV) velocityChunks.push(inChunk === chunkCap ? currentV : currentV.slice(0, inChunk * perFrame));
    current = new Float64Array(chunkCap * perFrame);
    currentV = velocityChunks ? new Float64Array(chunkCap * perFrame) : null;
    inChunk = 0;
  }

  return {
    frame(f: Frame): void {
      const u = unwrapper.step(f.positions, f.cell);
      const pos = f.positions;
      if (frames === 0) {
        if (layout.molecules && f.cell) makeMoleculesWhole(u, f.cell, fullSlot ? fullMap : map, fullSlot ?? siteSlot);
        firstRaw = new Float64Array(3 * n);
        for (let k = 0; k < n; k++) {
          const o = 3 * unwrapAtoms[k];
          firstRaw[3 * k] = pos[o];
          firstRaw[3 * k + 1] = pos[o + 1];
          firstRaw[3 * k + 2] = pos[o + 2];
        }
        firstUnwrapped = Float64Array.from(u);
        firstCell = f.cell ? Float64Array.from(f.cell) : null;
      }
      if (identity) lastRaw.set(pos.subarray(0, 3 * n));
      else {
        for (let k = 0; k < n; k++) {
          const o = 3 * unwrapAtoms[k];
          lastRaw[3 * k] = pos[o];
          lastRaw[3 * k + 1] = pos[o + 1];
          lastRaw[3 * k + 2] = pos[o + 2];
        }
      }
      const base = inChunk * perFrame;
      if (simpleSlots) {
        for (let s = 0; s < S; s++) {
          const k = 3 * simpleSlots[s];
          const o = base + 3 * s;
          current[o] = u[k];
          current[o + 1] = u[k + 1];
          current[o + 2] = u[k + 2];
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
        current[base + 3 * s] = x;
        current[base + 3 * s + 1] = y;
        current[base + 3 * s + 2] = z;
      }
      if (com && comWeights) {
        let x = 0, y = 0, z = 0;
        for (let k = 0; k < n; k++) {
          const w = comWeights[k];
          x += w * u[3 * k];
          y += w * u[3 * k + 1];
          z += w * u[3 * k + 2];
        }
        com.push3(x / comTotal, y / comTotal, z / comTotal);
      }
      if (coll && q && fullSlot) {
        // Same arithmetic as the stored site positions and `collectiveSeries` (bit-identical).
        let mx = 0, my = 0, mz = 0;
        for (let s = 0; s < fullMap.count; s++) {
          let x = 0, y = 0, z = 0;
          for (let j = fullMap.start[s]; j < fullMap.start[s + 1]; j++) {
            const k = 3 * fullSlot[j];
            const w = fullMap.weights[j];
            x += w * u[k];
            y += w * u[k + 1];
            z += w * u[k + 2];
          }
          mx += q[s] * x;
          my += q[s] * y;
          mz += q[s] * z;
        }
        coll.push3(mx, my, mz);
        const v = f.velocities;
        if (collV && !v) collV = null;
        if (collV && v) {
          let jx = 0, jy = 0, jz = 0;
          for (let s = 0; s < fullMap.count; s++) {
            let x = 0, y = 0, z = 0;
            for (let j = fullMap.start[s]; j < fullMap.start[s + 1]; j++) {
              const o = 3 * fullMap.atoms[j];
              const w = fullMap.weights[j];
              x += w * v[o];
              y += w * v[o + 1];
              z += w * v[o + 2];
            }
            jx += q[s] * x;
            jy += q[s] * y;
            jz += q[s] * z;
          }
          collV.push3(jx, jy, jz);
        }
      }
      if (velocityChunks && currentV) {
        const v = f.velocities;
        if (!v) {
          velocitiesMissing = true;
          velocityChunks = null;
          currentV = null;
        } else {
          for (let s = 0; s < S; s++) {
            let x = 0, y = 0, z = 0;
            for (let j = map.start[s]; j < map.start[s + 1]; j++) {
              const o = 3 * map.atoms[j];
              const w = map.weights[j];
              x += w * v[o];
              y += w * v[o + 1];
              z += w * v[o + 2];
            }
            currentV[base + 3 * s] = x;
            currentV[base + 3 * s + 1] = y;
            currentV[base + 3 * s + 2] = z;
          }
          if (comV && comWeights) {
            let x = 0, y = 0, z = 0;
            for (let k = 0; k < n; k++) {
              const o = 3 * unwrapAtoms[k];
              const w = comWeights[k];
              x += w * v[o];
              y += w * v[o + 1];
              z += w * v[o + 2];
            }
            comV.push3(x / comTotal, y / comTotal, z / comTotal);
          }
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
    create: (ctx) => createStore(ctx, opts),
    merge: mergeStores,
    finish: (p) => p,
  };
}

/**
 * The coordinate store over the species layout (`speciesLayout`) described by plain data, so
 * that it can be rebuilt from a pass recipe in a worker thread or a merge.
 */
export function speciesStorePass(opts: { layout: SpeciesLayoutOptions; removeDrift: boolean; keepVelocities: boolean }): Pass<StorePartial, StorePartial> {
  return storePass({ layout: (t) => speciesLayout(t, opts.layout), removeDrift: opts.removeDrift, keepVelocities: opts.keepVelocities });
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

// ---------------------------------------------------------------------------------------------
// MSD of series
// ---------------------------------------------------------------------------------------------

/**
 * Self term S1(m) summed over series: Σ_series 1/(T−m) Σ_{t=0}^{T−m−1} [x(t)² + x(t+m)²], by the
 * recursion Q(0) = 2 Σ x², Q(m) = Q(m−1) − x(m−1)² − x(T−m)², S1 = Q/(T−m) (Kneller et al.,
 * Comput. Phys. Commun. 91, 191 (1995)). Adds into `acc` (length maxLag+1).
 */
export function addSelfTerm(x: Float64Array, maxLag: number, acc: Float64Array): void {
  const T = x.length;
  let q = 0;
  for (let t = 0; t < T; t++) q += x[t] * x[t];
  q *= 2;
  acc[0] += q / T;
  for (let m = 1; m <= maxLag; m++) {
    q -= x[m - 1] * x[m - 1] + x[T - m] * x[T - m];
    acc[m] += q / (T - m);
  }
}

/** Subtract the mean of x from every element, in place (the MSD is shift invariant). */
export function centreInPlace(x: Float64Array): void {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += x[i];
  const m = s / x.length;
  for (let i = 0; i < x.length; i++) x[i] -= m;
}

/**
 * Sum over series of the all-origins MSD, MSD(m) = S1(m) − 2 S2(m) (Kneller et al. 1995; S2 by
 * FFT, src/correlate.ts). The series are centred in place first. m = 0 … maxLag.
 */
export function msdSumFft(series: Float64Array[], maxLag: number): Float64Array {
  const out = new Float64Array(maxLag + 1);
  if (series.length === 0) return out;
  for (const x of series) {
    centreInPlace(x);
    addSelfTerm(x, maxLag, out);
  }
  const s2 = sumOfAutocorrelations(series, { maxLag });
  for (let m = 0; m <= maxLag; m++) out[m] -= 2 * s2[m];
  out[0] = 0;
  return out;
}

/** All-origins MSD of one series by FFT: msdSumFft([x]) on a copy of x. */
export function msdOfSeries(x: Float64Array, maxLag = x.length - 1): Float64Array {
  return msdSumFft([Float64Array.from(x)], maxLag);
}

/**
 * Direct O(T·maxLag) all-origins MSD of one series, MSD(m) = 1/(T−m) Σ_t [x(t+m) − x(t)]²
 * (the definition; the reference the FFT form is tested against).
 */
export function directMsdOfSeries(x: Float64Array, maxLag = x.length - 1): Float64Array {
  const T = x.length;
  const out = new Float64Array(maxLag + 1);
  for (let m = 1; m <= maxLag; m++) {
    let s = 0;
    for (let t = 0; t + m < T; t++) {
      const d = x[t + m] - x[t];
      s += d * d;
    }
    out[m] = s / (T - m);
  }
  return out;
}

/** Sites per block so that a block's series take at most ~16 MB. */
function blockSize(frames: number, comps: number): number {
  return Math.max(1, Math.min(64, Math.floor(16e6 / (8 * comps * Math.max(1, frames)))));
}

/**
 * Per-component MSD of a group of sites over frames [from, from+count), averaged over the sites:
 * result[c][m] for c = x, y, z and m = 0 … maxLag (Å²), all time origins by FFT.
 */
export function groupMsdComponents(
  view: StoreView,
  sites: Int32Array,
  from: number,
  count: number,
  maxLag: number,
  removeDrift: boolean,
): Float64Array[] {
  const comps = [0, 1, 2];
  const drift = removeDrift ? view.store.com : null;
  const result = comps.map(() => new Float64Array(maxLag + 1));
  const B = blockSize(count, 3);
  const buffers = Array.from({ length: Math.min(B, sites.length) * 3 }, () => new Float64Array(count));
  for (let i0 = 0; i0 < sites.length; i0 += B) {
    const block = sites.subarray(i0, Math.min(sites.length, i0 + B));
    const bufs = buffers.slice(0, block.length * 3);
    gatherSeries(view, block, comps, from, count, drift, bufs);
    for (let c = 0; c < 3; c++) {
      const series = bufs.filter((_, j) => j % 3 === c);
      const part = msdSumFft(series, maxLag);
      for (let m = 0; m <= maxLag; m++) result[c][m] += part[m];
    }
  }
  for (const r of result) for (let m = 0; m <= maxLag; m++) r[m] /= sites.length;
  return result;
}

/** Curves of one group from a single gather of its series (see `groupCurves`). */
export interface GroupCurves {
  /** Per-component MSD, lags 0 … maxLag, averaged over the sites (Å²). */
  xyz: Float64Array[];
  /** Per segment, per-component MSD for lags 0 … segmentMaxLag (default all lags, L−1). */
  segments: Float64Array[][];
  /** Frames per segment L = ⌊T/M⌋ (0 without segments). */
  segmentFrames: number;
  /** Non-Gaussian parameter at the requested lags (empty when none asked). */
  nonGaussian: { lag: number; msd: number; value: number }[];
}

/** Segment curves for one segment count M: per segment, per component, lags 0 … lag. */
export interface SegmentSums {
  segments: number;
  /** Frames per segment L = ⌊T/M⌋. */
  frames: number;
  lag: number;
  curves: Float64Array[][];
}

/**
 * Site sums of one group's MSD curves (not yet divided by the number of sites), so that sums
 * from batches of sites add up to those of the whole group (`addGroupSums`).
 */
export interface GroupSums {
  sites: number;
  /** Σ_sites per-component MSD, lags 0 … maxLag. */
  xyz: Float64Array[];
  /** Segment sums for each segment count computed. */
  segments: SegmentSums[];
  /** Σ |Δr|² and Σ |Δr|⁴ over sites and origins at the α2 lags. */
  s2: Float64Array;
  s4: Float64Array;
}

/** Add the sums of b (other sites, same curves) into a; returns a. */
export function addGroupSums(a: GroupSums, b: GroupSums): GroupSums {
  const add = (x: Float64Array, y: Float64Array) => {
    for (let i = 0; i < x.length; i++) x[i] += y[i];
  };
  a.sites += b.sites;
  a.xyz.forEach((x, c) => add(x, b.xyz[c]));
  a.segments.forEach((sa, i) => sa.curves.forEach((seg, k) => seg.forEach((x, c) => add(x, b.segments[i].curves[k][c]))));
  add(a.s2, b.s2);
  add(a.s4, b.s4);
  return a;
}

/**
 * Everything the MSD analysis needs from one group in one gather per block of sites (so each
 * stored coordinate is read once), as sums over the sites: the full-run per-component MSD up to
 * maxLag, for each requested segment count M and its lag the MSD of each of the M equal
 * segments [kL, (k+1)L), and the α2 moment sums at `ngLags` (direct sums over all origins on the
 * gathered, cache-resident series). Order matters: α2 sums, then the full run (centring each
 * series once), then the segments (each centred on its own mean; the MSD is shift invariant,
 * Kneller et al. 1995).
 */
export function groupCurveSums(
  view: StoreView,
  sites: Int32Array,
  maxLag: number,
  removeDrift: boolean,
  opts: { segments: ReadonlyArray<{ segments: number; lag: number }>; ngLags: readonly number[]; ngComps: readonly number[] },
): GroupSums {
  const T = view.frames;
  const comps = [0, 1, 2];
  const drift = removeDrift ? view.store.com : null;
  const xyz = comps.map(() => new Float64Array(maxLag + 1));
  const segs: SegmentSums[] = opts.segments
    .filter((p) => p.segments > 0 && Math.floor(T / p.segments) >= 2)
    .map((p) => {
      const L = Math.floor(T / p.segments);
      const lag = Math.max(1, Math.min(L - 1, p.lag));
      return { segments: p.segments, frames: L, lag, curves: Array.from({ length: p.segments }, () => comps.map(() => new Float64Array(lag + 1))) };
    });
  const nl = opts.ngLags.length;
  const s2 = new Float64Array(nl);
  const s4 = new Float64Array(nl);
  const B = blockSize(T, 3);
  const buffers = Array.from({ length: Math.min(B, sites.length) * 3 }, () => new Float64Array(T));
  for (let i0 = 0; i0 < sites.length; i0 += B) {
    const block = sites.subarray(i0, Math.min(sites.length, i0 + B));
    const bufs = buffers.slice(0, block.length * 3);
    gatherSeries(view, block, comps, 0, T, drift, bufs);
    if (nl > 0) {
      for (let b = 0; b < block.length; b++) {
        addNonGaussianSums(opts.ngComps.map((c) => bufs[3 * b + c]), opts.ngLags, s2, s4);
      }
    }
    for (let c = 0; c < 3; c++) {
      const series = bufs.filter((_, j) => j % 3 === c);
      const part = msdSumFft(series, maxLag);
      for (let m = 0; m <= maxLag; m++) xyz[c][m] += part[m];
      for (const sg of segs) {
        const L = sg.frames;
        for (let k = 0; k < sg.segments; k++) {
          // Copies: msdSumFft centres its series in place, which must not shift the full series
          // seen by the next segment length.
          const seg = msdSumFft(series.map((x) => x.slice(k * L, (k + 1) * L)), sg.lag);
          const acc = sg.curves[k][c];
          for (let m = 0; m <= sg.lag; m++) acc[m] += seg[m];
        }
      }
    }
  }
  return { sites: sites.length, xyz, segments: segs, s2, s4 };
}

/**
 * Everything the MSD analysis needs from one group in one gather (see `groupCurveSums`),
 * averaged over the sites: the full-run per-component MSD up to maxLag, the MSD of each of M
 * equal segments up to segmentMaxLag (default all lags of a segment), and α2 at `ngLags`.
 */
export function groupCurves(
  view: StoreView,
  sites: Int32Array,
  maxLag: number,
  removeDrift: boolean,
  opts: { segments: number; ngLags: readonly number[]; ngComps: readonly number[]; segmentMaxLag?: number },
): GroupCurves {
  const T = view.frames;
  const L = opts.segments > 0 ? Math.floor(T / opts.segments) : 0;
  const sums = groupCurveSums(view, sites, maxLag, removeDrift, {
    segments: [{ segments: opts.segments, lag: opts.segmentMaxLag ?? L - 1 }],
    ngLags: opts.ngLags,
    ngComps: opts.ngComps,
  });
  return curvesFromSums(sums, T, opts.ngLags, opts.ngComps.length);
}

/** Site averages of group sums (the `GroupCurves` of the first segment count). */
function curvesFromSums(sums: GroupSums, T: number, ngLags: readonly number[], dims: number): GroupCurves {
  const n = sums.sites;
  const xyz = sums.xyz.map((r) => r.map((v) => v / n));
  const first = sums.segments[0];
  const segments = first ? first.curves.map((seg) => seg.map((r) => r.map((v) => v / n))) : [];
  const nonGaussian = ngLags.map((lag, i) => {
    const pairs = (T - lag) * n;
    const msd = sums.s2[i] / pairs;
    return { lag, msd, value: nonGaussianFromMoments(msd, sums.s4[i] / pairs, dims) };
  });
  return { xyz, segments, segmentFrames: first ? first.frames : 0, nonGaussian };
}

/**
 * Add Σ_t |Δr|² and Σ_t |Δr|⁴ over all origins t for each lag m of `lags` to s2 and s4, for one
 * site whose coordinate series (the analysed axes) are `axes`: |Δr|² = Σ_axes [x(t+m) − x(t)]²
 * (the moments of Rahman, Phys. Rev. 136, A405 (1964), directly from the definition).
 */
export function addNonGaussianSums(axes: Float64Array[], lags: readonly number[], s2: Float64Array, s4: Float64Array): void {
  const T = axes[0].length;
  const x = axes[0];
  const y = axes.length > 1 ? axes[1] : null;
  const z = axes.length > 2 ? axes[2] : null;
  for (let li = 0; li < lags.length; li++) {
    const m = lags[li];
    let a2 = 0, a4 = 0;
    if (y && z) {
      // Two origins per step with separate partial sums (shorter dependency chains).
      let b2 = 0, b4 = 0;
      let t = 0;
      for (; t + 1 + m < T; t += 2) {
        const dx = x[t + m] - x[t], dy = y[t + m] - y[t], dz = z[t + m] - z[t];
        const r2 = dx * dx + dy * dy + dz * dz;
        a2 += r2;
        a4 += r2 * r2;
        const ex = x[t + 1 + m] - x[t + 1], ey = y[t + 1 + m] - y[t + 1], ez = z[t + 1 + m] - z[t + 1];
        const q2 = ex * ex + ey * ey + ez * ez;
        b2 += q2;
        b4 += q2 * q2;
      }
      if (t + m < T) {
        const dx = x[t + m] - x[t], dy = y[t + m] - y[t], dz = z[t + m] - z[t];
        const r2 = dx * dx + dy * dy + dz * dz;
        a2 += r2;
        a4 += r2 * r2;
      }
      a2 += b2;
      a4 += b4;
    } else if (y) {
      for (let t = 0; t + m < T; t++) {
        const dx = x[t + m] - x[t], dy = y[t + m] - y[t];
        const r2 = dx * dx + dy * dy;
        a2 += r2;
        a4 += r2 * r2;
      }
    } else {
      for (let t = 0; t + m < T; t++) {
        const dx = x[t + m] - x[t];
        const r2 = dx * dx;
        a2 += r2;
        a4 += r2 * r2;
      }
    }
    s2[li] += a2;
    s4[li] += a4;
  }
}

// ---------------------------------------------------------------------------------------------
// Non-Gaussian parameter
// ---------------------------------------------------------------------------------------------

/** Lags per decade at which the non-Gaussian parameter is computed (ratio 10^(1/5) ≈ 1.58). */
export const NON_GAUSSIAN_LAGS_PER_DECADE = 5;

/**
 * Log-spaced integer lags 1 … maxLag, about `perDecade` per decade (duplicates removed):
 * round(10^(k/perDecade)) for k = 0, 1, …, plus maxLag itself.
 */
export function logSpacedLags(maxLag: number, perDecade = NON_GAUSSIAN_LAGS_PER_DECADE): number[] {
  const out: number[] = [];
  if (maxLag < 1) return out;
  for (let k = 0; ; k++) {
    const m = Math.round(10 ** (k / perDecade));
    if (m > maxLag) break;
    if (out[out.length - 1] !== m) out.push(m);
  }
  if (out[out.length - 1] !== maxLag) out.push(maxLag);
  return out;
}

/**
 * Non-Gaussian parameter in d dimensions, α₂ = d⟨Δr⁴⟩ / ((d+2)⟨Δr²⟩²) − 1 (Rahman, Phys. Rev.
 * 136, A405 (1964) for d = 3: 3⟨Δr⁴⟩/(5⟨Δr²⟩²) − 1; the d-dimensional form follows from the
 * Gaussian moment ⟨r⁴⟩ = (1 + 2/d)⟨r²⟩²). Zero for Gaussian displacements.
 */
export function nonGaussianFromMoments(msd: number, fourth: number, dims: number): number {
  return (dims * fourth) / ((dims + 2) * msd * msd) - 1;
}

// ---------------------------------------------------------------------------------------------
// Diffusion from the MSD
// ---------------------------------------------------------------------------------------------

/** Components of a plane option: 'xy' → [0, 1], etc.; undefined → [0, 1, 2]. */
export function planeComponents(plane: string | undefined): number[] {
  if (plane === undefined) return [0, 1, 2];
  const map: Record<string, number[]> = { xy: [0, 1], xz: [0, 2], yz: [1, 2] };
  const c = map[plane];
  if (!c) throw new UsageError(`--plane: expected xy, xz or yz, got "${plane}"`);
  return c;
}

/**
 * Self-diffusion coefficient from an MSD slope in d dimensions: D = slope / (2d) (Einstein,
 * Ann. Phys. 17, 549 (1905)), with the slope in Å²/ps and D returned in m²/s (1 Å²/ps = 1e-8 m²/s).
 */
export function diffusionFromSlope(slopeA2PerPs: number, dims: number): number {
  return (slopeA2PerPs / (2 * dims)) * A2_PER_PS;
}

/** Options of the MSD analysis. */
export interface MsdOptions {
  /** Plane for 2-D diffusion ('xy', 'xz', 'yz'); default 3-D. */
  plane?: string;
  /** User fit window in ps (both or neither). */
  fitFrom?: number;
  fitTo?: number;
  /** Window rule parameters (src/fit.ts). */
  tolerance?: number;
  maxFraction?: number;
  segments?: number;
  /** Yeh–Hummer correction inputs: viscosity (Pa s) and temperature (K). */
  viscosity?: number;
  temperature?: number;
  /** Compute the non-Gaussian parameter (default true). */
  nonGaussian?: boolean;
}

/** Diffusion from one MSD-like curve: the window, slope, D, segments and the verdict. */
export interface SlopeFit {
  window: LagWindow;
  /** Window in ps. */
  from: number;
  to: number;
  points: number;
  automatic: boolean;
  slope: number;
  /** Segment values of the slope, and their standard error (null when no plan works). */
  segmentSlopes: number[];
  slopeError: number | null;
  /** Segments used for the uncertainty (0: none). */
  segments: number;
  /** Factor applied to the segment standard error (Student-t for M < 5, else 1). */
  uncertaintyFactor: number;
  converged: boolean;
  notes: string[];
}

/**
 * Fit the slope of an MSD-like curve y(m·dt) over the user window or the automatic diffusive
 * window, and its uncertainty over independent segments whose curves `segmentCurve(start,
 * frames, maxLag)` computes (rules in src/fit.ts): an automatic window is searched only among
 * the lags a segment holds (`segmentedDiffusiveWindow`); a user window keeps its lags and the
 * segment count is reduced until it fits (`planSegments`). The uncertainty is the standard error
 * over the M segments used, times the Student-t factor t_{0.8413, M−1} when M < 5
 * (`segmentUncertaintyFactor`).
 */
export function fitSlopeWithSegments(
  curve: Float64Array,
  dt: number,
  frames: number,
  opts: { fitFrom?: number; fitTo?: number; tolerance?: number; maxFraction?: number; segments?: number },
  segmentCurve: (start: number, count: number, maxLag: number) => Float64Array,
): SlopeFit {
  const notes: string[] = [];
  const time = Float64Array.from(curve, (_, k) => k * dt);
  let window: LagWindow;
  let automatic: boolean;
  let found = true;
  let plan: { ok: boolean; segments: number; segmentFrames: number };
  if (opts.fitFrom !== undefined && opts.fitTo !== undefined) {
    window = windowFromTimes(opts.fitFrom, opts.fitTo, dt, frames);
    if (window.to >= curve.length) throw new UsageError(`fit window ends beyond the computed curve (${(curve.length - 1) * dt} ps)`);
    automatic = false;
    const p = planSegments(frames, window, { segments: opts.segments ?? DEFAULT_SEGMENTS, maxFraction: 1, mayShrink: false });
    notes.push(...p.notes.map((n) => (p.ok ? n : `not converged: ${n}`)));
    window = p.window;
    plan = p;
  } else {
    const w = segmentedDiffusiveWindow(time, curve, frames, {
      tolerance: opts.tolerance,
      maxFraction: opts.maxFraction,
      segments: opts.segments ?? DEFAULT_SEGMENTS,
    });
    window = w.window;
    automatic = true;
    found = w.found;
    notes.push(...w.notes);
    plan = w;
  }
  const points = window.to - window.from + 1;
  if (points < 3) throw new AnalysisError(`fit window of ${points} lag(s) is too short to fit a line`);
  const fit = fitLine(time, curve, { from: window.from, to: window.to });
  const segmentSlopes: number[] = [];
  let slopeError: number | null = null;
  let factor = 1;
  if (plan.ok) {
    for (let k = 0; k < plan.segments; k++) {
      const c = segmentCurve(k * plan.segmentFrames, plan.segmentFrames, window.to);
      segmentSlopes.push(fitLine(time, c, { from: window.from, to: window.to }).slope);
    }
    factor = segmentUncertaintyFactor(plan.segments);
    slopeError = blockStatistics(segmentSlopes).standardError * factor;
    const fn = segmentFactorNote(plan.segments);
    if (fn) notes.push(fn);
  }
  if (points < MIN_WINDOW_POINTS) notes.push(`not converged: the fit window holds ${points} lags, fewer than ${MIN_WINDOW_POINTS}`);
  const converged = found && plan.ok && points >= MIN_WINDOW_POINTS;
  return {
    window,
    from: window.from * dt,
    to: window.to * dt,
    points,
    automatic,
    slope: fit.slope,
    segmentSlopes,
    slopeError,
    segments: plan.ok ? plan.segments : 0,
    uncertaintyFactor: factor,
    converged,
    notes,
  };
}

/** MSD result of one group. */
export interface MsdGroupResult {
  label: string;
  count: number;
  /** Lag times, ps. */
  time: Float64Array;
  /** Total MSD over the analysed dimensions, Å². */
  msd: Float64Array;
  /** MSD of x, y and z, Å². */
  msdXYZ: [Float64Array, Float64Array, Float64Array];
  /** Non-Gaussian parameter at log-spaced lags. */
  nonGaussian: { time: number; value: number }[];
  fit: { from: number; to: number; points: number; automatic: boolean };
  slope: Quantity;
  diffusion: Quantity;
  diffusionCorrected: Quantity | null;
  /** D in each independent segment, m²/s. */
  segmentDiffusion: number[];
  /** Segments the uncertainty rests on (0: none), and the factor applied to their standard error. */
  segments: number;
  uncertaintyFactor: number;
  converged: boolean;
  notes: string[];
}

/** MSD result of the whole analysis. */
export interface MsdResult {
  groups: MsdGroupResult[];
  dimensions: number;
  plane: string | null;
  frames: number;
  frameInterval: number;
  driftRemoved: boolean;
  driftNote: string;
  molecules: boolean;
  /** Bytes of coordinates held at once (the largest store when the sites were batched). */
  bytesHeld: number;
  /** Reads of the trajectory (more than 1 when --max-memory split the sites into batches). */
  reads: number;
  /** How the sites were batched over several reads (null for one read). */
  memoryNote: string | null;
  yehHummer: { viscosity: Quantity; temperature: Quantity; boxLength: Quantity; correction: Quantity; note: string } | null;
  rules: { window: string; uncertainty: string; nonGaussian: string };
}

/** Why the Yeh–Hummer correction is refused for in-plane (2-D) diffusion. */
export const YEH_HUMMER_PLANE_ERROR =
  'the Yeh–Hummer correction (--viscosity with --temperature) applies to 3-D diffusion in a cubic periodic cell; ' +
  'in-plane diffusion (--plane), e.g. in a slab, has a different finite-size correction: drop --plane or the correction inputs';

/** Frame interval of a context, or a usage error asking for it. */
export function requireFrameInterval(ctx: PassContext): number {
  if (ctx.frameInterval === null || !(ctx.frameInterval > 0)) {
    throw new UsageError(`${ctx.file ?? 'the file'} carries no frame times: give the time between frames with --frame-interval`);
  }
  return ctx.frameInterval;
}

/** Description of the drift treatment for the output. */
export function driftDescription(store: StorePartial, topology: Topology): string {
  if (!store.com) return 'centre-of-mass drift kept (--keep-drift)';
  let known = 0;
  for (let a = 0; a < topology.atoms; a++) if (Number.isFinite(topology.masses[a]) && topology.masses[a] > 0) known++;
  if (known === 0) return `centre-of-mass drift removed (no atom has a known mass: equal weights over all ${topology.atoms} atoms)`;
  return `centre-of-mass drift removed (mass-weighted over the ${known} of ${topology.atoms} atoms with known masses)`;
}

/** Box length for the Yeh–Hummer correction: ⟨V⟩^(1/3), with a note when the cell is not cubic. */
export function yehHummerBoxLength(store: StorePartial): { length: number; note: string } {
  if (store.volumeFrames === 0) {
    throw new UsageError('the Yeh–Hummer correction needs the periodic cell and the file has none: give --box');
  }
  const v = store.volumeSum / store.volumeFrames;
  const L = Math.cbrt(v);
  const note = store.allCubic
    ? `cubic cell: L = <V>^(1/3) = ${L.toPrecision(6)} A`
    : `the cell is not cubic: L = <V>^(1/3) = ${L.toPrecision(6)} A is used, but the correction (ξ = ${YEH_HUMMER_XI}) is derived for cubic cells only`;
  return { length: L, note };
}

/** Lag ranges of an MSD analysis of T frames (shared by the one-read and the batched paths). */
export interface MsdPlan {
  frames: number;
  maxLag: number;
  ngLags: number[];
  /** Segment counts and lags whose sums are computed with the full-run curve. */
  segments: Array<{ segments: number; lag: number }>;
}

/**
 * The lag ranges for T frames: lags up to half the run (or the end of a user window), α2 lags,
 * and the segment curves: the requested count M with the lags a segment window may use; with
 * `allCounts`, also every smaller count down to MIN_SEGMENTS that the segment plan may fall back
 * to (src/fit.ts planSegments), so that no stored coordinates are needed afterwards.
 */
export function msdPlan(T: number, dt: number, opts: MsdOptions, allCounts = false): MsdPlan {
  if (T < 2 * MIN_WINDOW_POINTS) throw new AnalysisError(`only ${T} frames: the MSD needs at least ${2 * MIN_WINDOW_POINTS}`);
  const userTo = opts.fitTo !== undefined ? Math.floor(opts.fitTo / dt + 1e-9) : 0;
  const f = opts.maxFraction ?? DEFAULT_MAX_FRACTION;
  const maxLag = Math.min(T - 1, Math.max(maxLagIndex(T, f), userTo));
  const want = opts.segments ?? DEFAULT_SEGMENTS;
  // An automatic window never ends past ⌊f_max (L−1)⌋ of a segment (src/fit.ts planSegments); a
  // user window may use every lag of a segment.
  const userWindow = opts.fitFrom !== undefined && opts.fitTo !== undefined;
  const lagFor = (m: number) => (userWindow ? Math.floor(T / m) - 1 : maxLagIndex(Math.floor(T / m), f));
  const counts = allCounts ? Array.from({ length: Math.max(1, want - Math.min(want, MIN_SEGMENTS) + 1) }, (_, i) => want - i) : [want];
  return {
    frames: T,
    maxLag,
    ngLags: opts.nonGaussian ?? true ? logSpacedLags(maxLag) : [],
    segments: counts.map((m) => ({ segments: m, lag: lagFor(m) })),
  };
}

/**
 * Sums of every group's curves over the sites a store holds. `groupSites` gives, per group of
 * the layout, the indices of its sites in the store's site map (default: the layout's own).
 */
export function msdSums(store: StorePartial, layout: SiteLayout, plan: MsdPlan, comps: readonly number[], groupSites?: Int32Array[]): GroupSums[] {
  const view = new StoreView(store);
  return layout.groups.map((g, i) =>
    groupCurveSums(view, groupSites ? groupSites[i] : g.sites, plan.maxLag, store.com !== null, { segments: plan.segments, ngLags: plan.ngLags, ngComps: comps }),
  );
}

/** How the MSD sums were obtained: reads of the file and the largest store held. */
export interface ReadInfo {
  reads: number;
  bytesHeld: number;
  /** Why and how the sites were batched (several reads), or absent. */
  note?: string;
}

/**
 * The MSD analysis on a finished store: per group, MSD per component and total for all lags up
 * to half the run (or the end of a user window), the non-Gaussian parameter, the diffusion
 * coefficient with its segment uncertainty and fit window, and the Yeh–Hummer-corrected value
 * when viscosity and temperature are given.
 */
export function analyseMsd(store: StorePartial, layout: SiteLayout, ctx: PassContext, opts: MsdOptions = {}): MsdResult {
  const dt = requireFrameInterval(ctx);
  const plan = msdPlan(store.frames, dt, opts);
  const comps = planeComponents(opts.plane);
  const sums = msdSums(store, layout, plan, comps);
  const view = new StoreView(store);
  return finishMsd(sums, plan, store, layout, ctx, opts, { reads: 1, bytesHeld: storeBytes(store) }, (g, start, count, lag) =>
    groupMsdComponents(view, layout.groups[g].sites, start, count, lag, store.com !== null),
  );
}

/**
 * The MSD result from site sums (`msdSums`, possibly added over batches of sites): fits, segment
 * uncertainty, α2 and the Yeh–Hummer correction (see `analyseMsd`). `info` is a store of the run
 * (its cell, drift and unwrapping records; its coordinates are not used). Segment curves come
 * from the sums; `recompute`, when the coordinates are still held, serves a segment count that
 * was not summed (else that count gives no uncertainty, which `msdPlan(…, true)` prevents).
 */
export function finishMsd(
  sums: GroupSums[],
  plan: MsdPlan,
  info: StorePartial,
  layout: SiteLayout,
  ctx: PassContext,
  opts: MsdOptions,
  read: ReadInfo,
  recompute?: (group: number, start: number, count: number, maxLag: number) => Float64Array[],
): MsdResult {
  const dt = requireFrameInterval(ctx);
  const T = plan.frames;
  const maxLag = plan.maxLag;
  const comps = planeComponents(opts.plane);
  const dims = comps.length;
  const removeDrift = info.com !== null;
  let yh: MsdResult['yehHummer'] = null;
  let correction = 0;
  if (opts.viscosity !== undefined || opts.temperature !== undefined) {
    if (opts.viscosity === undefined || opts.temperature === undefined) {
      throw new UsageError('the Yeh–Hummer correction needs both --viscosity and --temperature');
    }
    if (opts.plane !== undefined) throw new UsageError(YEH_HUMMER_PLANE_ERROR);
    const box = yehHummerBoxLength(info);
    if (!info.allCubic) ctx.warnings.push(box.note);
    correction = yehHummerCorrection(opts.temperature, opts.viscosity, box.length);
    yh = {
      viscosity: quantity(opts.viscosity, null, 'Pa s'),
      temperature: quantity(opts.temperature, null, 'K'),
      boxLength: quantity(box.length, null, 'A'),
      correction: quantity(correction, null, 'm^2/s'),
      note: `${box.note}; D_inf = D_PBC + k_B T ξ/(6 π η L), ξ = ${YEH_HUMMER_XI} (Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004)); η and T taken as exact`,
    };
  }
  const groups: MsdGroupResult[] = [];
  layout.groups.forEach((g, gi) => {
    const sum = sums[gi];
    const curves = curvesFromSums(sum, T, plan.ngLags, comps.length);
    const xyz = curves.xyz;
    const total = new Float64Array(maxLag + 1);
    for (const c of comps) for (let m = 0; m <= maxLag; m++) total[m] += xyz[c][m];
    const sf = fitSlopeWithSegments(total, dt, T, opts, (start, count, lag) => {
      const s = new Float64Array(lag + 1);
      // Segments of a summed count come from the sums; others (fewer segments chosen by the
      // plan) are computed here from the coordinates when they are still held.
      const sg = sum.segments.find((x) => x.frames === count && start % count === 0 && lag <= x.lag);
      let seg: Float64Array[];
      if (sg) seg = sg.curves[start / count].map((r) => r.map((v) => v / sum.sites));
      else if (recompute) seg = recompute(gi, start, count, lag);
      else throw new AnalysisError(`no segment curves of ${count} frames were summed`);
      for (const c of comps) for (let m = 0; m <= lag; m++) s[m] += seg[c][m];
      return s;
    });
    const notes = [...sf.notes];
    const dUnc = sf.slopeError === null ? null : diffusionFromSlope(sf.slopeError, dims);
    const D = diffusionFromSlope(sf.slope, dims);
    const ng = curves.nonGaussian.map((r) => ({ time: r.lag * dt, value: r.value }));
    if (g.sites.length < 2) notes.push('a single site: its D rests on one trajectory');
    groups.push({
      label: g.label,
      count: g.sites.length,
      time: Float64Array.from({ length: maxLag + 1 }, (_, k) => k * dt),
      msd: total,
      msdXYZ: [xyz[0], xyz[1], xyz[2]],
      nonGaussian: ng,
      fit: { from: sf.from, to: sf.to, points: sf.points, automatic: sf.automatic },
      slope: quantity(sf.slope, sf.slopeError, 'A^2/ps'),
      diffusion: quantity(D, dUnc, 'm^2/s'),
      diffusionCorrected: yh ? quantity(D + correction, dUnc, 'm^2/s') : null,
      segmentDiffusion: sf.segmentSlopes.map((s) => diffusionFromSlope(s, dims)),
      segments: sf.segments,
      uncertaintyFactor: sf.uncertaintyFactor,
      converged: sf.converged,
      notes,
    });
  });
  const warn = unwrapWarning(info);
  if (warn) ctx.warnings.push(warn);
  for (const g of groups) warnDiffusionRange(ctx, g.label, g.diffusion.value, 'MSD');
  return {
    groups,
    dimensions: dims,
    plane: opts.plane ?? null,
    frames: T,
    frameInterval: dt,
    driftRemoved: removeDrift,
    driftNote: driftDescription(info, ctx.topology),
    molecules: layout.molecules,
    bytesHeld: read.bytesHeld,
    reads: read.reads,
    memoryNote: read.note ?? null,
    yehHummer: yh,
    rules: {
      window: windowRuleText(opts),
      uncertainty: uncertaintyRuleText(opts, groups.map((g) => ({ label: g.label, segments: g.segments }))),
      nonGaussian:
        `α2 = d<Δr^4>/((d+2)<Δr^2>^2) − 1 (Rahman 1964), computed directly over all time origins at about ${NON_GAUSSIAN_LAGS_PER_DECADE} log-spaced lags per decade`,
    },
  };
}

/** Text of the window rule with the parameters in force. */
export function windowRuleText(opts: { fitFrom?: number; fitTo?: number; tolerance?: number; maxFraction?: number }): string {
  if (opts.fitFrom !== undefined && opts.fitTo !== undefined) return `user window ${opts.fitFrom}–${opts.fitTo} ps`;
  return (
    `automatic: the longest run of lags up to ${Math.round(100 * (opts.maxFraction ?? DEFAULT_MAX_FRACTION))}% of the run ` +
    `where d ln MSD/d ln t is within 1 ± ${opts.tolerance ?? DEFAULT_SLOPE_TOLERANCE} (at least ${MIN_WINDOW_POINTS} lags)`
  );
}

/**
 * Text of the uncertainty rule with the segment counts actually used: `used` lists, per result
 * (group, or one collective curve), the segments its uncertainty rests on (0: none). Without
 * `used`, the requested count is stated as requested.
 */
export function uncertaintyRuleText(opts: { segments?: number }, used?: ReadonlyArray<{ label: string; segments: number }>): string {
  const want = opts.segments ?? DEFAULT_SEGMENTS;
  const source = '(block averages: Frenkel & Smit, Understanding Molecular Simulation, 2nd ed., §4.4.1)';
  const widen =
    `; with fewer than ${FULL_CONFIDENCE_SEGMENTS} segments multiplied by Student's t(0.8413, M−1) so that ± stays a 68 % confidence half-width (Student 1908)`;
  if (!used || used.length === 0) {
    return `standard error over ${want} (requested) independent segments of the run, SD/√M, same window ${source}${widen}`;
  }
  const counts = new Map<number, string[]>();
  for (const u of used) {
    if (!counts.has(u.segments)) counts.set(u.segments, []);
    counts.get(u.segments)!.push(u.label);
  }
  let how: string;
  if (counts.size === 1) {
    const m = [...counts.keys()][0];
    how = m === 0 ? 'no segments fit: no uncertainty' : `standard error over M = ${m} independent segments of the run`;
  } else {
    how =
      'standard error over M independent segments of the run, M = ' +
      [...counts.entries()].map(([m, labels]) => `${m === 0 ? 'none' : m} (${labels.join(', ')})`).join('; ');
  }
  return `${how} (${want} requested), SD/√M, same window ${source}${widen}`;
}

/** The unwrapping warning of a store, or null. */
export function unwrapWarning(store: StorePartial): string | null {
  if (store.longSteps === 0) return null;
  return (
    `${store.longSteps} step(s) between consecutive frames exceeded a third of the smallest cell width ` +
    `(largest ${(store.maxStepFraction * 100).toFixed(0)}% of it): frames may be too far apart to unwrap reliably`
  );
}

/** Options of the MSD pass: which sites, drift, and the analysis options. */
export interface MsdPassOptions extends MsdOptions, SpeciesLayoutOptions {
  /** Keep the centre-of-mass drift (default false: drift removed). */
  keepDrift?: boolean;
}

/** The MSD Pass: stores the unwrapped coordinates, finishes with `analyseMsd`. */
export function msdPass(opts: MsdPassOptions = {}): Pass<StorePartial, MsdResult> {
  const layout: LayoutSpec = (t) => speciesLayout(t, opts);
  const store = storePass({ layout, removeDrift: !opts.keepDrift, keepVelocities: false });
  return {
    name: 'msd',
    create: store.create,
    merge: store.merge,
    finish: (p, ctx) => analyseMsd(p, layout(ctx.topology), ctx, opts),
  };
}
