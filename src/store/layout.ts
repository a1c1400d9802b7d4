/**
 * Which sites and groups a coordinate store holds, as plain data: a `LayoutSpec` survives
 * structured clone and JSON, so worker threads and partial files can carry it, and
 * `resolveLayout` turns it into the site map and groups for one topology (deterministically:
 * the store resolves it when its first frame arrives and the analyses again when they finish).
 *
 * Kinds: 'species' — atoms (or molecule centres) grouped by label or residue name, or by
 * selections (src/store/sites.ts `speciesLayout`), optionally with a charge per site; 'ions' — the
 * charged sites of the conductivity (src/store/charges.ts `chargeLayout`).
 *
 * Cost: that of the layout built (O(atoms) plus selections).
 */
import type { Topology } from '../types.js';
import { UsageError } from '../errors.js';
import { atomCharges, chargeLayout, chargesFor, type ChargeRule } from './charges.js';
import { speciesLayout, type SiteLayout, type SpeciesLayoutOptions } from './sites.js';

/**
 * Species layout. With `charges`, every site also carries a charge: from the rules
 * (`atomCharges`), or with `rules: null` from the file's formal charges, and 0 for every site
 * when the file has none either (`chargesFor`); a molecule site carries its molecule's net
 * charge (the sum over its atoms).
 */
export interface SpeciesLayoutSpec {
  kind: 'species';
  options: SpeciesLayoutOptions;
  charges?: { rules: ChargeRule[] | null };
}

/** The charged sites of the conductivity (`chargeLayout`): charges from the rules, or the file's formal charges when `charges` is null. */
export interface IonLayoutSpec {
  kind: 'ions';
  charges: ChargeRule[] | null;
  molecules?: boolean;
  /** Selection of the atoms that count as ions whatever their charge, or null. */
  ions?: string | null;
}

/** Which sites and groups a store holds (plain data; `resolveLayout` builds the layout). */
export type LayoutSpec = SpeciesLayoutSpec | IonLayoutSpec;

/** A layout whose every site carries a charge (e). */
export type ChargedLayout = SiteLayout & { siteCharges: Float64Array };

/**
 * The species layout spec of the given site options, keeping only the layout's own fields
 * (selection, species, molecules) so that the spec stays plain data whatever else the options
 * object carries.
 */
export function speciesSpec(options: SpeciesLayoutOptions, charges?: { rules: ChargeRule[] | null }): SpeciesLayoutSpec {
  const o: SpeciesLayoutOptions = {};
  if (options.selection !== undefined) o.selection = options.selection;
  if (options.species !== undefined) o.species = [...options.species];
  if (options.molecules !== undefined) o.molecules = options.molecules;
  return charges ? { kind: 'species', options: o, charges: { rules: charges.rules } } : { kind: 'species', options: o };
}

/**
 * The site layout a spec describes for one topology: 'species' → `speciesLayout` (with
 * `siteCharges` when the spec has charges: per site Σ q_a over its atoms, the atom's own charge
 * for a one-atom site); 'ions' → `chargeLayout` with the charges of `atomCharges`.
 */
export function resolveLayout(spec: IonLayoutSpec, topology: Topology): ChargedLayout;
export function resolveLayout(spec: LayoutSpec, topology: Topology): SiteLayout & { siteCharges?: Float64Array };
export function resolveLayout(spec: LayoutSpec, topology: Topology): SiteLayout & { siteCharges?: Float64Array } {
  if (spec.kind === 'ions') return chargeLayout(topology, atomCharges(topology, spec.charges), !!spec.molecules, spec.ions ?? null);
  if (spec.kind !== 'species') throw new UsageError(`unknown site layout kind "${(spec as { kind: unknown }).kind}"`);
  const layout = speciesLayout(topology, spec.options);
  if (!spec.charges) return layout;
  const q = chargesFor(topology, spec.charges.rules);
  const { map } = layout;
  const siteCharges = new Float64Array(map.count);
  if (q) {
    for (let s = 0; s < map.count; s++) {
      const from = map.start[s];
      const to = map.start[s + 1];
      if (to - from === 1) siteCharges[s] = q[map.atoms[from]];
      else for (let j = from; j < to; j++) siteCharges[s] += q[map.atoms[j]];
    }
  }
  return { ...layout, siteCharges };
}
