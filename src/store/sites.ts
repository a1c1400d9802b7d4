/**
 * Sites and groups: what a coordinate store follows. A site is a linear combination of atom
 * positions — one atom (weight 1), or the centre of mass of a molecule (residue),
 * R = Σ m_i r_i / Σ m_i (equal weights when a mass is unknown) — and a group is a set of sites
 * reported together (a species, a molecule kind, a selection, a charge group).
 *
 * Maps are compressed rows (site s = Σ_{k=start[s]}^{start[s+1]−1} weights[k]·r(atoms[k])), plain
 * typed arrays that survive structured clone. Layouts are built from the topology by
 * src/store/layout.ts (`resolveLayout`); the charged layouts of the conductivity live in
 * src/store/charges.ts.
 *
 * Cost: building a layout is O(atoms) plus the selection's own cost.
 */
import type { Topology } from '../types.js';
import { parseSelection, selectAtoms } from '../selection.js';
import { UsageError } from '../errors.js';

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
