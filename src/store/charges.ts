/**
 * Charges of atoms and sites, and the charged site layout of the conductivity: which sites carry
 * a charge, which of them are ions (single atoms or molecules with a non-zero whole charge, or
 * the sites a user selection names) and how they are grouped.
 *
 * Rules (stated at the functions; analyses/conductivity.ts explains why): a charge is "whole"
 * when |q − round(q)| < 1e-6 and round(q) ≠ 0; an atom site is an ion when its charge is whole and
 * its molecule (when the file has residues) carries the same net charge; a molecule site when its
 * net charge is whole. Partial charges of neutral molecules are charged sites but not ions.
 *
 * Cost: O(atoms) per layout, plus the selections' own cost.
 */
import { noteReason, reason, type Reason } from '../estimate.js';
import type { Topology } from '../types.js';
import { parseSelection, selectAtoms } from '../selection.js';
import { UsageError } from '../errors.js';
import { atomSiteMap, moleculeSiteMap, type SiteGroup, type SiteLayout } from './sites.js';

/** One entry of a charge option: the atoms a selection picks get `charge` (e). */
export interface ChargeRule {
  selection: string;
  charge: number;
}

const CHARGE_TAIL = /^(.*)=\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*$/;

/**
 * Parse "SEL=CHARGE,SEL=CHARGE,…" (e.g. "Na=+1,Cl=-1", "res=SOL&el=O=-0.8476"). The charge is the
 * number after the last '='; a piece without one belongs to the next entry, so a selection may
 * itself contain ',' ("OW,HW*=0"). Later entries override earlier ones for the atoms they pick.
 */
export function parseChargeRules(text: string): ChargeRule[] {
  const rules: ChargeRule[] = [];
  let pending = '';
  for (const piece of text.split(',')) {
    const joined = pending ? `${pending},${piece}` : piece;
    const m = CHARGE_TAIL.exec(joined);
    if (!m || m[1].trim() === '') {
      pending = joined;
      continue;
    }
    const charge = Number(m[2]);
    if (!Number.isFinite(charge)) throw new UsageError(`--charges: "${m[2]}" is not a number`);
    const selection = m[1].trim();
    parseSelection(selection);
    rules.push({ selection, charge });
    pending = '';
  }
  if (pending) throw new UsageError(`--charges: "${pending}" has no "=CHARGE"; expected entries like Na=+1,Cl=-1`);
  if (rules.length === 0) throw new UsageError('--charges: no entries');
  return rules;
}

/**
 * Charge per atom (e) from rules, or from the file's formal charges when `rules` is null.
 * Atoms no rule picks are neutral.
 */
export function atomCharges(topology: Topology, rules: ChargeRule[] | null): Float64Array {
  if (rules === null) {
    if (!topology.charges) {
      throw new UsageError('no charges: give --charges (e.g. Na=+1,Cl=-1) or use a file that carries formal charges');
    }
    return Float64Array.from(topology.charges);
  }
  const q = new Float64Array(topology.atoms);
  for (const r of rules) for (const a of selectAtoms(r.selection, topology)) q[a] = r.charge;
  return q;
}

/** A charge as text with its sign and at most 6 significant digits: "+1", "-0.5" (common practice, no source). */
export function chargeText(q: number): string {
  return `${q > 0 ? '+' : ''}${Number(q.toPrecision(6))}`;
}

/** Largest |q − round(q)| (e) for a charge to count as whole. */
export const WHOLE_CHARGE_TOLERANCE = 1e-6;

/** True for a non-zero whole charge: |q − round(q)| < 1e-6 and round(q) ≠ 0. */
export function isWholeCharge(q: number): boolean {
  const n = Math.round(q);
  return n !== 0 && Math.abs(q - n) < WHOLE_CHARGE_TOLERANCE;
}

/**
 * Which charged sites of a conductivity layout are ions (rule in the module comment): with
 * `ionAtoms` (the atoms a user selection picks) a site is an ion when all its atoms are picked;
 * with molecule sites, when its net charge is a non-zero whole number; with atom sites, when the
 * atom's charge is a non-zero whole number and, if the file has residues, its molecule's net
 * charge (from the charges of the layout's sites; atoms outside the layout are neutral) equals
 * it. Returns one flag per site and notes on what was left out.
 */
export function ionSites(
  topology: Topology,
  layout: SiteLayout & { siteCharges: Float64Array },
  ionAtoms: ReadonlySet<number> | null = null,
): { ion: Uint8Array; notes: string[]; reasons: Reason[] } {
  const { map, siteCharges } = layout;
  const ion = new Uint8Array(map.count);
  const notes: string[] = [];
  const reasons: Reason[] = [];
  const atomsOf = (s: number) => Array.from(map.atoms.subarray(map.start[s], map.start[s + 1]));
  if (ionAtoms) {
    for (let s = 0; s < map.count; s++) ion[s] = atomsOf(s).every((a) => ionAtoms.has(a)) ? 1 : 0;
  } else if (layout.molecules) {
    for (let s = 0; s < map.count; s++) ion[s] = isWholeCharge(siteCharges[s]) ? 1 : 0;
  } else {
    const res = topology.residues;
    const qAtom = new Float64Array(topology.atoms);
    for (let s = 0; s < map.count; s++) if (map.start[s + 1] - map.start[s] === 1) qAtom[map.atoms[map.start[s]]] = siteCharges[s];
    let net: Float64Array | null = null;
    let charged: Int32Array | null = null;
    let firstAtom: Int32Array | null = null;
    if (res) {
      net = new Float64Array(res.count);
      charged = new Int32Array(res.count);
      firstAtom = new Int32Array(res.count).fill(-1);
      for (let a = 0; a < topology.atoms; a++) {
        const m = res.molecule[a];
        net[m] += qAtom[a];
        if (qAtom[a] !== 0) charged[m]++;
        if (firstAtom[m] < 0) firstAtom[m] = a;
      }
    }
    const molecularIons = new Set<string>();
    for (let s = 0; s < map.count; s++) {
      const atoms = atomsOf(s);
      if (atoms.length !== 1 || !isWholeCharge(siteCharges[s])) continue;
      const a = atoms[0];
      if (res && net && Math.abs(net[res.molecule[a]] - siteCharges[s]) >= WHOLE_CHARGE_TOLERANCE) continue;
      ion[s] = 1;
    }
    if (res && net && charged && firstAtom) {
      for (let m = 0; m < res.count; m++) if (charged[m] > 1 && isWholeCharge(net[m])) molecularIons.add(res.names[firstAtom[m]]);
      if (molecularIons.size) {
        noteReason(notes, reasons, reason(
          'conductivity.molecular-ions-as-atoms',
          `molecule(s) ${[...molecularIons].join(', ')} carry a whole net charge spread over several atoms: their atoms are not counted as ions ` +
            '(Nernst–Einstein, concentration); follow molecule centres with --molecules to count them',
        ));
      }
    }
  }
  let others = 0;
  for (let s = 0; s < map.count; s++) if (!ion[s] && siteCharges[s] !== 0) others++;
  if (others > 0) {
    noteReason(notes, reasons, reason(
      'conductivity.partial-charges',
      `${others} charged site(s) are not ions (partial charges of neutral molecules${ionAtoms ? ', or not picked by --ions' : ''}): ` +
        'they enter the collective current (Einstein–Helfand, Green–Kubo) but not the Nernst–Einstein sum or the concentration',
    ));
  }
  return { ion, notes, reasons };
}

/**
 * Sites for the conductivity: every charged atom (grouped by label, charge and whether it is an
 * ion, `ionSites`), or with `molecules` every molecule with a non-zero net charge (grouped by
 * residue name and charge). `ions`, when given, is the selection of the atoms to count as ions.
 */
export function chargeLayout(
  topology: Topology,
  q: Float64Array,
  molecules: boolean,
  ions: string | null = null,
): SiteLayout & { siteCharges: Float64Array } {
  const notes: string[] = [];
  const keys: string[] = [];
  const charges: number[] = [];
  let map;
  if (molecules) {
    const res = topology.residues;
    if (!res) throw new UsageError('--molecules needs residues (a PDB file with residue names and numbers); this file has none');
    const members: number[][] = Array.from({ length: res.count }, () => []);
    for (let a = 0; a < topology.atoms; a++) members[res.molecule[a]].push(a);
    const chosen: number[][] = [];
    for (const m of members) {
      const net = m.reduce((s, a) => s + q[a], 0);
      if (m.length === 0 || Math.abs(net) < 1e-9) continue;
      chosen.push(m);
      keys.push(res.names[m[0]]);
      charges.push(net);
    }
    const built = moleculeSiteMap(chosen, topology.masses);
    if (built.equalWeights) notes.push('some molecules contain atoms of unknown mass: their centres use equal atom weights');
    map = built.map;
  } else {
    const atoms: number[] = [];
    for (let a = 0; a < topology.atoms; a++) {
      if (q[a] === 0) continue;
      atoms.push(a);
      keys.push(topology.labels[a]);
      charges.push(q[a]);
    }
    map = atomSiteMap(Int32Array.from(atoms));
  }
  if (map.count === 0) throw new UsageError('no charged atoms (or molecules): check --charges');
  const siteCharges = Float64Array.from(charges);
  const ionAtoms = ions === null ? null : new Set(selectAtoms(ions, topology));
  // (The notes on what is not an ion are added by analyseConductivity, which repeats this rule.)
  const { ion } = ionSites(topology, { map, groups: [], molecules, notes: [], siteCharges }, ionAtoms);
  // Group by key, charge and ion status; a key with several of them gets them in its label.
  const kinds = new Map<string, Set<string>>();
  const kindOf = (i: number) => `${charges[i]}|${ion[i]}`;
  keys.forEach((k, i) => {
    if (!kinds.has(k)) kinds.set(k, new Set());
    kinds.get(k)!.add(kindOf(i));
  });
  const groups = new Map<string, { sites: number[]; charge: number; ion: boolean }>();
  keys.forEach((k, i) => {
    const several = kinds.get(k)!;
    const chargesOfKey = new Set([...several].map((x) => x.split('|')[0]));
    let label = k;
    if (several.size > 1) {
      label = chargesOfKey.size > 1 ? `${k}(${chargeText(charges[i])})` : k;
      if (chargesOfKey.size < several.size) label += ion[i] ? '(ion)' : '(in molecule)';
    }
    if (!groups.has(label)) groups.set(label, { sites: [], charge: charges[i], ion: ion[i] === 1 });
    groups.get(label)!.sites.push(i);
  });
  const out: SiteGroup[] = [...groups.entries()].map(([label, g]) => ({ label, sites: Int32Array.from(g.sites), charge: g.charge, ion: g.ion }));
  return { map, groups: out, molecules, notes, siteCharges };
}

/**
 * Charges per atom from charge rules (`atomCharges`), else the file's formal charges when any is
 * non-zero, else null (the report's rule: no charges, no conductivity).
 */
export function chargesFor(topology: Topology, rules: ChargeRule[] | null): Float64Array | null {
  if (rules) return atomCharges(topology, rules);
  if (topology.charges && topology.charges.some((q) => q !== 0)) return Float64Array.from(topology.charges);
  return null;
}
