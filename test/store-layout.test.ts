/**
 * The coordinate store's plain-data options (src/store/layout.ts, src/store/store.ts): layout
 * specs resolved for a topology, site charges checked by hand, collective sums Σq r checked by
 * hand, and the exact invariance of the stored trajectory under JSON and structured-clone
 * transport of the options (what worker threads will receive).
 */
import { describe, expect, it } from 'vitest';
import type { Frame, PassContext, Residues, Topology } from '../src/types.js';
import { UsageError } from '../src/errors.js';
import { Random } from '../src/random.js';
import { parseChargeRules } from '../src/store/charges.js';
import { resolveLayout, speciesSpec, type LayoutSpec } from '../src/store/layout.js';
import { storePass, type StoreOptions, type StorePartial } from '../src/store/store.js';

/** Three molecules: water-like O H H, a single Na, water-like O H H (residues SOL, ION, SOL). */
function molecules(charges: number[] | null = null): Topology {
  const labels = ['O', 'H', 'H', 'Na', 'O', 'H', 'H'];
  const names = ['SOL', 'SOL', 'SOL', 'ION', 'SOL', 'SOL', 'SOL'];
  const molecule = Int32Array.from([0, 0, 0, 1, 2, 2, 2]);
  const residues: Residues = { names, numbers: Int32Array.from([1, 1, 1, 2, 3, 3, 3]), chains: labels.map(() => ''), molecule, count: 3 };
  return {
    atoms: labels.length,
    labels,
    elements: labels,
    masses: Float64Array.from([16, 1, 1, 23, 16, 1, 1]),
    charges: charges ? Float64Array.from(charges) : null,
    residues,
  };
}

function context(topo: Topology): PassContext {
  return { topology: topo, firstCell: null, frameInterval: 0.1, warnings: [] };
}

/** Store partial of `frames` random frames (positions and velocities) with the given options. */
function storeOf(opts: StoreOptions, topo: Topology, frames: number, seed: number): StorePartial {
  const rng = new Random(seed);
  const acc = storePass(opts).create(context(topo));
  const pos = new Float64Array(3 * topo.atoms);
  const vel = new Float64Array(3 * topo.atoms);
  for (let t = 0; t < frames; t++) {
    for (let k = 0; k < pos.length; k++) {
      pos[k] = 5 + 3 * rng.normal();
      vel[k] = rng.normal();
    }
    const f: Frame = { index: t, time: null, cell: null, positions: pos, velocities: vel, line: 1, topology: topo };
    acc.frame(f);
  }
  return acc.partial();
}

describe('layout specs', () => {
  it('species spec with charges: a molecule carries its net charge, an atom its own (hand computation)', () => {
    // Rules O = −0.8476, H = +0.4238, Na = +1: a water-like molecule sums to −0.8476 + 2·0.4238 = 0
    // (to round-off: tolerance 1e-15), the Na site to +1 exactly.
    const rules = parseChargeRules('O=-0.8476,H=+0.4238,Na=+1');
    const mol = resolveLayout(speciesSpec({ molecules: true }, { rules }), molecules());
    expect(mol.map.count).toBe(3);
    expect(Math.abs(mol.siteCharges![0])).toBeLessThan(1e-15);
    expect(mol.siteCharges![1]).toBe(1);
    const atoms = resolveLayout(speciesSpec({}, { rules }), molecules());
    expect(Array.from(atoms.siteCharges!)).toEqual([-0.8476, 0.4238, 0.4238, 1, -0.8476, 0.4238, 0.4238]);
    // No rules: the file's formal charges, or 0 for every site when the file has none.
    expect(Array.from(resolveLayout(speciesSpec({}, { rules: null }), molecules([0, 0, 0, 1, 0, 0, 0])).siteCharges!)).toEqual([0, 0, 0, 1, 0, 0, 0]);
    expect(Array.from(resolveLayout(speciesSpec({}, { rules: null }), molecules()).siteCharges!)).toEqual([0, 0, 0, 0, 0, 0, 0]);
    // Without charges the layout has none.
    expect(resolveLayout(speciesSpec({}), molecules()).siteCharges).toBeUndefined();
  });

  it('a species spec keeps only the layout fields, and an ions spec resolves to the charged sites', () => {
    const spec = speciesSpec({ selection: 'Na', molecules: false, keepDrift: true, plane: 'xy' } as never);
    expect(spec).toEqual({ kind: 'species', options: { selection: 'Na', molecules: false } });
    // The charged atoms of the rules, grouped by label (the conductivity's layout): O, H, Na.
    const ions: LayoutSpec = { kind: 'ions', charges: parseChargeRules('O=-0.8476,H=+0.4238,Na=+1'), molecules: false, ions: null };
    const l = resolveLayout(ions, molecules());
    expect(l.groups.map((g) => [g.label, g.sites.length, g.ion])).toEqual([['O', 2, false], ['H', 4, false], ['Na', 1, true]]);
  });
});

describe('collective charge sums', () => {
  it('Σ q r and Σ q v per frame equal the hand sums; asking without charges is refused', () => {
    // Two ions q = +1 (Na) and −1 (Cl) at r₁ = (1, 2, 3), r₂ = (4, 6, 8), v₁ = (1, 0, 0),
    // v₂ = (0, 2, 0): Σ q r = (−3, −4, −5), Σ q v = (1, −2, 0) (hand computation; exact).
    const topo: Topology = { atoms: 2, labels: ['Na', 'Cl'], elements: ['Na', 'Cl'], masses: Float64Array.from([23, 35.45]), charges: null, residues: null };
    const spec: LayoutSpec = { kind: 'ions', charges: parseChargeRules('Na=+1,Cl=-1'), molecules: false, ions: null };
    const acc = storePass({ layout: spec, removeDrift: false, keepVelocities: false, collectiveCharges: true, collectiveVelocities: true }).create(context(topo));
    acc.frame({ index: 0, time: null, cell: null, positions: Float64Array.from([1, 2, 3, 4, 6, 8]), velocities: Float64Array.from([1, 0, 0, 0, 2, 0]), line: 1, topology: topo });
    const p = acc.partial();
    expect(Array.from(p.collective!)).toEqual([-3, -4, -5]);
    expect(Array.from(p.collectiveVelocity!)).toEqual([1, -2, 0]);
    expect(() => storePass({ layout: speciesSpec({}), collectiveCharges: true }).create(context(topo))).toThrow(UsageError);
  });
});

describe('plain-data store options', () => {
  it('options sent through JSON or structured clone give the identical stored trajectory', () => {
    // Invariance: the store must not depend on how its options travelled (common practice, no
    // source). Molecule sites with charges, a subset of sites, drift removal, velocities and
    // collective sums: every array of the partial must be bit-identical.
    const opts: StoreOptions = {
      layout: speciesSpec({ molecules: true }, { rules: parseChargeRules('O=-0.8476,H=+0.4238,Na=+1') }),
      removeDrift: true,
      keepVelocities: true,
      sites: [0, 2],
      collectiveCharges: true,
      collectiveVelocities: true,
    };
    const viaJson = JSON.parse(JSON.stringify(opts)) as StoreOptions;
    expect(viaJson).toEqual(opts);
    const topo = molecules();
    const direct = storeOf(opts, topo, 12, 5);
    expect(storeOf(viaJson, topo, 12, 5)).toEqual(direct);
    expect(storeOf(structuredClone(opts), topo, 12, 5)).toEqual(direct);
    expect(direct.map.count).toBe(2);
    expect(direct.collective!.length).toBe(3 * 12);
  });
});
