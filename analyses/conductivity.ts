/**
 * Ionic conductivity three ways, from one stored trajectory (the coordinate store of
 * analyses/msd.ts, shared with the per-species MSD):
 *
 * - Nernst–Einstein (ions independent): σ_NE = e²/(V k_B T) Σ_i N_i z_i² D_i with each species'
 *   MSD self-diffusion coefficient (src/transport.ts), uncertainty by first-order propagation
 *   of the D uncertainties (JCGM 100:2008).
 * - Einstein–Helfand (collective, includes ion–ion correlations):
 *     σ = lim_{t→∞} 1/(6 V k_B T) d/dt ⟨|ΔM(t)|²⟩,  M(t) = Σ_i q_i [r_i(t) − R(t)],
 *   with unwrapped, drift-corrected positions (R = the same centre of mass as the MSD; for a
 *   neutral system it cancels exactly), all time origins by FFT, slope over the automatic
 *   diffusive window of src/fit.ts (or the user's), uncertainty over independent segments
 *   (Helfand, Phys. Rev. 119, 1 (1960); e.g. Hansen & McDonald, Theory of Simple Liquids).
 * - Green–Kubo, when the file carries velocities:
 *     σ = 1/(3 V k_B T) ∫₀^∞ ⟨J(0)·J(t)⟩ dt,  J = Σ_i q_i v_i,
 *   value on the running integral's plateau (src/fit.ts), uncertainty over segments (Green,
 *   J. Chem. Phys. 22, 398 (1954); Kubo, J. Phys. Soc. Jpn. 12, 570 (1957)).
 *
 * Ionicity σ/σ_NE (Einstein–Helfand over Nernst–Einstein) and the Haven ratio H = σ_NE/σ, both
 * with first-order uncertainties treating the two conductivities as independent (they are
 * positively correlated, so this overstates the uncertainty). Molar conductivity Λ = σ/c with
 * c the salt concentration, defined as the concentration of cations (count of cations /
 * (N_A ⟨V⟩)) — for a 1:1 salt the salt concentration; for other stoichiometries divide by the
 * number of cations per formula unit.
 *
 * Ions and other charged sites (`ionSites`): every charged site enters the collective current M
 * (or J), but only ions enter the Nernst–Einstein sum and the concentration. An ion is a single
 * atom with a non-zero whole charge (|q − round(q)| < 1e-6) that is not part of a larger
 * molecule (its residue, when the file has residues, carries the same net charge), or with
 * `molecules` a molecule with a non-zero whole net charge; or, when the user names them
 * (`ions`, for scaled-charge models), the sites the selection picks. Partial charges of neutral
 * molecules (water O −0.8476, H +0.4238) are not ions: their motion is part of the collective
 * current, but they carry no net charge and do not conduct independently.
 *
 * Green–Kubo is guarded as the VACF is (src/fit.ts): the charge-current autocorrelation must keep
 * at least half of its zero-lag value after one frame interval (`correlationSamplingProblem`),
 * and the running integral must stay on its plateau (`plateauDriftCheck`).
 */
import type { Pass, PassContext, Quantity, Topology } from '../src/types.js';
import { quantity } from '../src/types.js';
import { asQuantity, estimate, noteReason, reason, type Estimate, type Reason } from '../src/estimate.js';
import { parseSelection, selectAtoms } from '../src/selection.js';
import { UsageError } from '../src/errors.js';
import { AVOGADRO, BOLTZMANN, ELEMENTARY_CHARGE, CUBIC_ANGSTROM, A2_PER_PS } from '../src/units.js';
import { nernstEinsteinConductivity, nernstEinsteinUncertainty } from '../src/transport.js';
import { ratioWithUncertainty } from '../src/numerics/propagation.js';
import { sumOfAutocorrelations } from '../src/correlate.js';
import { correlationSamplingProblem, maxLagIndex, DEFAULT_MAX_FRACTION } from '../src/fit.js';
import { cumulativeTrapezoid } from '../src/numerics/trapezoid.js';
import {
  StoreView,
  analyseMsd,
  atomSiteMap,
  driftDescription,
  fitSlopeWithSegments,
  moleculeSiteMap,
  msdSumFft,
  requireFrameInterval,
  storeBytes,
  storePass,
  uncertaintyRuleText,
  windowRuleText,
  type LayoutSpec,
  type MsdResult,
  type ReadInfo,
  type SiteGroup,
  type SiteLayout,
  type StorePartial,
} from './msd.js';
import { plateauWithSegments, velocitySourceOf } from './vacf.js';

// ---------------------------------------------------------------------------------------------
// Charges
// ---------------------------------------------------------------------------------------------

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

/** Format a charge as "+1", "-0.5". */
function chargeText(q: number): string {
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

// ---------------------------------------------------------------------------------------------
// Pure conversions
// ---------------------------------------------------------------------------------------------

/**
 * Conductivity from a collective time integral: σ = I / (3 V k_B T) with I = ∫⟨J(0)·J(t)⟩dt in
 * e²Å²/ps (Green–Kubo), or I = slope/2 of ⟨|ΔM|²⟩ in e²Å²/ps (Einstein–Helfand: σ = slope/(6VkT)).
 * Units: e² · 1e-8 m²/s per e²Å²/ps, V in Å³ → S/m (Helfand 1960; Green 1954; Kubo 1957).
 */
export function conductivityFromIntegral(integralE2A2PerPs: number, volumeA3: number, temperatureK: number): number {
  return (
    (ELEMENTARY_CHARGE * ELEMENTARY_CHARGE * integralE2A2PerPs * A2_PER_PS) /
    (3 * volumeA3 * CUBIC_ANGSTROM * BOLTZMANN * temperatureK)
  );
}

/** Einstein–Helfand conductivity from the slope of ⟨|ΔM|²⟩ (e²Å²/ps): σ = slope/(6 V k_B T), S/m. */
export function einsteinHelfandFromSlope(slopeE2A2PerPs: number, volumeA3: number, temperatureK: number): number {
  return conductivityFromIntegral(slopeE2A2PerPs / 2, volumeA3, temperatureK);
}

/** Concentration c = N/(N_A V) in mol/m³ for N particles in V Å³ (1 mol/L = 1000 mol/m³). */
export function concentrationMolPerM3(count: number, volumeA3: number): number {
  return count / (AVOGADRO * volumeA3 * CUBIC_ANGSTROM);
}

// ---------------------------------------------------------------------------------------------
// Collective series
// ---------------------------------------------------------------------------------------------

/**
 * Collective series X_c(t) = Σ_s q_s [x_{s,c}(t) − R_c(t)] over frames [from, from+count), for
 * positions (M, e·Å) or with `velocity` for velocities (J, e·Å/ps); from the store's own
 * per-frame sums Σ q_s r_s when it kept them (`collectiveCharges`, same arithmetic).
 */
export function collectiveSeries(view: StoreView, q: Float64Array, from: number, count: number, velocity: boolean): Float64Array[] {
  const store = view.store;
  const drift = velocity ? store.comVelocity : store.com;
  const out = [0, 1, 2].map(() => new Float64Array(count));
  let qsum = 0;
  for (const x of q) qsum += x;
  // Sums kept by the store while reading (batched runs), else summed here from the sites.
  const kept = velocity ? store.collectiveVelocity : store.collective;
  for (let t = 0; t < count; t++) {
    let x = 0, y = 0, z = 0;
    if (kept) {
      const o = 3 * (from + t);
      x = kept[o];
      y = kept[o + 1];
      z = kept[o + 2];
    } else {
      const [arr, off] = view.at(from + t, velocity);
      for (let s = 0; s < q.length; s++) {
        const o = off + 3 * s;
        x += q[s] * arr[o];
        y += q[s] * arr[o + 1];
        z += q[s] * arr[o + 2];
      }
    }
    if (drift) {
      const d = 3 * (from + t);
      x -= qsum * drift[d];
      y -= qsum * drift[d + 1];
      z -= qsum * drift[d + 2];
    }
    out[0][t] = x;
    out[1][t] = y;
    out[2][t] = z;
  }
  return out;
}

/** ⟨|ΔM(m)|²⟩ over all origins (e²Å²) of frames [from, from+count), m = 0 … maxLag, by FFT. */
export function collectiveMsd(view: StoreView, q: Float64Array, from: number, count: number, maxLag: number): Float64Array {
  return msdSumFft(collectiveSeries(view, q, from, count, false), maxLag);
}

/** ⟨J(0)·J(m)⟩ over all origins (e²Å²/ps²), m = 0 … maxLag, by FFT. */
export function currentAutocorrelation(view: StoreView, q: Float64Array, from: number, count: number, maxLag: number): Float64Array {
  return sumOfAutocorrelations(collectiveSeries(view, q, from, count, true), { maxLag });
}

// ---------------------------------------------------------------------------------------------
// The analysis
// ---------------------------------------------------------------------------------------------

/** Options of the conductivity analysis. */
export interface ConductivityOptions {
  temperature: number;
  fitFrom?: number;
  fitTo?: number;
  tolerance?: number;
  maxFraction?: number;
  segments?: number;
  plateauTolerance?: number;
  plateauSpan?: number;
  /** Compute the Green–Kubo value when velocities exist (default true). */
  greenKubo?: boolean;
  /** Selection of the atoms to count as ions regardless of their charge (scaled-charge models). */
  ions?: string | null;
}

/** Per-species part of the result. */
export interface ConductivitySpecies {
  label: string;
  count: number;
  charge: number;
  /** True for ions (in the Nernst–Einstein sum and the concentration). */
  ion: boolean;
  /** Segments the D uncertainty rests on. */
  segments: number;
  /** D from the MSD of the species (its Estimate, src/estimate.ts). */
  diffusion: Estimate;
  fit: { from: number; to: number };
  converged: boolean;
  notes: string[];
  /** The notes, coded (src/estimate.ts), one for one. */
  reasons: Reason[];
}

/** Conductivity result (JSON `results`). */
export interface ConductivityResult {
  /** σ_NE; verdict 'not-determined' without ions, else the worst of its inputs' (each species' D from the MSD). */
  nernstEinstein: Estimate;
  /** σ_EH with its fit window (ps); 'ok' when the slope fit converged and gave an uncertainty. */
  einsteinHelfand: Estimate;
  /** σ_GK with its plateau window (ps); 'ok' when the plateau, drift and sampling checks passed. */
  greenKubo: Estimate | null;
  ionicity: Quantity;
  havenRatio: Quantity | null;
  molarConductivity: Quantity | null;
  concentration: Quantity | null;
  fit: { from: number; to: number; points: number; automatic: boolean };
  greenKuboPlateau: { from: number; to: number; found: boolean } | null;
  /** Whether the Green–Kubo value passed its checks (plateau, drift, sampling); null without it. */
  greenKuboConverged: boolean | null;
  /** The drift check of the Green–Kubo plateau (src/fit.ts plateauDriftCheck): later lags in ps, change and its threshold in S/m. */
  greenKuboDrift: { from: number; to: number; change: number; error: number | null; threshold: number; drifting: boolean } | null;
  /** The ions: the species of the Nernst–Einstein sum and the concentration. */
  species: ConductivitySpecies[];
  /** Charged sites that are not ions (partial charges of neutral molecules): current only. */
  otherCharged: ConductivitySpecies[];
  volume: Quantity;
  temperature: Quantity;
  netCharge: number;
  converged: boolean;
  notes: string[];
  /**
   * The notes, coded (src/estimate.ts), one for one. A note is its reason's words, in the
   * `convergenceNote` form for those of the fits and plateaus, after "Einstein–Helfand: " or
   * "Green–Kubo: " for the reasons of those two values (whose Estimates carry them without it).
   */
  reasons: Reason[];
  curves: {
    time: Float64Array;
    /** ⟨|ΔM|²⟩, e²Å². */
    collectiveMsd: Float64Array;
    /** Running Green–Kubo conductivity, S/m (null without velocities). */
    greenKuboRunning: Float64Array | null;
  };
  frames: number;
  frameInterval: number;
  driftRemoved: boolean;
  driftNote: string;
  /** Bytes of coordinates held at once, reads of the file, and how the sites were batched. */
  bytesHeld: number;
  reads: number;
  memoryNote: string | null;
  rules: { window: string; uncertainty: string; concentration: string; ratios: string };
}

/**
 * Conductivity from a finished store whose sites carry charges (`chargeLayout`). `msd` may be
 * given when the per-species MSD analysis of the same store has already run (no second
 * computation); otherwise it is run here without the non-Gaussian parameter.
 */
export function analyseConductivity(
  store: StorePartial,
  layout: SiteLayout & { siteCharges: Float64Array },
  ctx: PassContext,
  opts: ConductivityOptions,
  msd?: MsdResult,
  read?: ReadInfo,
): ConductivityResult {
  const dt = requireFrameInterval(ctx);
  const T = store.frames;
  const temp = opts.temperature;
  if (!(temp > 0)) throw new UsageError('conductivity needs a positive --temperature');
  const view = new StoreView(store);
  const V = view.meanVolume();
  if (V === null) throw new UsageError('conductivity needs the cell volume and the file has no cell: give --box');
  const q = layout.siteCharges;
  const notes: string[] = [];
  const reasons: Reason[] = [];
  let net = 0;
  for (const x of q) net += x;
  if (Math.abs(net) > 1e-6) {
    const w = `the charged sites are not neutral (net charge ${chargeText(net)} e): the Einstein–Helfand dipole depends on the drift treatment`;
    noteReason(notes, reasons, reason('conductivity.net-charge', w));
    ctx.warnings.push(w);
  }
  const m =
    msd ??
    analyseMsd(store, layout, ctx, {
      fitFrom: opts.fitFrom,
      fitTo: opts.fitTo,
      tolerance: opts.tolerance,
      maxFraction: opts.maxFraction,
      segments: opts.segments,
      nonGaussian: false,
    });
  // Ions (Nernst–Einstein, concentration) and the other charged sites (current only).
  const ionAtoms = opts.ions ? new Set(selectAtoms(opts.ions, ctx.topology)) : null;
  const ionInfo = ionSites(ctx.topology, layout, ionAtoms);
  for (const r of ionInfo.reasons) if (!notes.includes(r.text)) noteReason(notes, reasons, r);
  const all: ConductivitySpecies[] = layout.groups.map((g, i) => {
    const r = m.groups[i];
    let ion = g.ion;
    if (ion === undefined) {
      const flags = Array.from(g.sites, (s) => ionInfo.ion[s]);
      ion = flags.every((x) => x === 1);
      if (!ion && flags.some((x) => x === 1)) {
        noteReason(notes, reasons, reason('conductivity.mixed-group', `group ${g.label} mixes ions and partial-charge sites: it is left out of the Nernst–Einstein sum`));
      }
    }
    return {
      label: g.label,
      count: g.sites.length,
      charge: g.charge ?? 0,
      ion,
      segments: r.segments,
      diffusion: r.diffusion,
      fit: { from: r.fit.from, to: r.fit.to },
      converged: r.converged,
      notes: r.notes,
      reasons: r.reasons,
    };
  });
  const species = all.filter((x) => x.ion);
  const otherCharged = all.filter((x) => !x.ion);
  let nernstEinstein: Estimate;
  if (species.length > 0) {
    const neInput = species.map((s) => ({ count: s.count, charge: s.charge, diffusion: s.diffusion.value }));
    const neValue = nernstEinsteinConductivity(neInput, V, temp);
    const allUnc = species.every((s) => s.diffusion.uncertainty !== null);
    const neUnc = allUnc
      ? nernstEinsteinUncertainty(species.map((s, i) => ({ ...neInput[i], diffusionError: s.diffusion.uncertainty! })), V, temp)
      : null;
    // Its verdict is its inputs': the D of every ion species (a join, src/transport.ts).
    const neReasons: Reason[] = [];
    const unconverged = species.filter((x) => !x.converged).map((x) => x.label);
    if (unconverged.length) {
      neReasons.push(reason('conductivity.ne-input-not-converged', `the MSD diffusion coefficient of ${unconverged.join(', ')} did not converge`, 'not-converged'));
    }
    if (!allUnc) {
      const r = reason('conductivity.ne-without-uncertainty', 'some species D has no uncertainty: the Nernst–Einstein value has none', 'unreliable');
      noteReason(notes, reasons, r);
      neReasons.push(r);
    }
    nernstEinstein = estimate(neValue, neUnc, 'S/m', { reasons: neReasons });
  } else {
    const r = reason(
      'conductivity.no-ions',
      'no site is an ion (no single atom or molecule with a non-zero whole charge): no Nernst–Einstein value, ' +
        'concentration or molar conductivity; for scaled charges name the ions with --ions',
      'not-converged',
    );
    noteReason(notes, reasons, r, '', true);
    nernstEinstein = estimate(NaN, null, 'S/m', { verdict: 'not-determined', reasons: [r] });
  }

  // Einstein–Helfand.
  const maxLag = Math.min(T - 1, Math.max(maxLagIndex(T, opts.maxFraction ?? DEFAULT_MAX_FRACTION), opts.fitTo !== undefined ? Math.floor(opts.fitTo / dt + 1e-9) : 0));
  const ehCurve = collectiveMsd(view, q, 0, T, maxLag);
  const sf = fitSlopeWithSegments(ehCurve, dt, T, opts, (start, count, lag) => collectiveMsd(view, q, start, count, lag));
  const ehValue = einsteinHelfandFromSlope(sf.slope, V, temp);
  const ehUnc = sf.slopeError === null ? null : einsteinHelfandFromSlope(sf.slopeError, V, temp);
  const einsteinHelfand = estimate(ehValue, ehUnc, 'S/m', {
    window: { from: sf.from, to: sf.to, unit: 'ps' },
    verdict: sf.converged && ehUnc !== null ? 'ok' : 'not-converged',
    reasons: sf.reasons,
  });
  for (const r of sf.reasons) noteReason(notes, reasons, r, 'Einstein–Helfand: ', true);

  // Green–Kubo.
  let greenKubo: Estimate | null = null;
  let gkPlateau: ConductivityResult['greenKuboPlateau'] = null;
  let gkRunning: Float64Array | null = null;
  let gkConverged = true;
  let gkDrift: ConductivityResult['greenKuboDrift'] = null;
  if ((opts.greenKubo ?? true) && (store.collective ? store.collectiveVelocity !== null : velocitySourceOf(store) === 'file')) {
    const toSigma = (c: Float64Array) => cumulativeTrapezoid(c, dt).map((x) => conductivityFromIntegral(x, V, temp));
    const jj = currentAutocorrelation(view, q, 0, T, maxLag);
    gkRunning = toSigma(jj);
    const pw = plateauWithSegments(gkRunning, T, { ...opts, timeStep: dt }, (start, count, lag) => toSigma(currentAutocorrelation(view, q, start, count, lag)));
    gkPlateau = { from: pw.window.from * dt, to: pw.window.to * dt, found: pw.found };
    const d = pw.drift;
    gkDrift = d.checked ? { from: d.from * dt, to: d.to * dt, change: d.drift, error: d.error, threshold: d.threshold, drifting: d.drifting } : null;
    const sampling = correlationSamplingProblem(jj, dt, 'the charge-current autocorrelation');
    gkConverged = pw.converged && sampling === null;
    const gkReasons = [...pw.reasons];
    if (sampling) {
      gkReasons.push(reason('conductivity.coarse-sampling', `${sampling}; the Einstein–Helfand value does not depend on this sampling`, 'not-converged'));
    }
    for (const r of gkReasons) noteReason(notes, reasons, r, 'Green–Kubo: ', true);
    greenKubo = estimate(pw.value, pw.error, 'S/m', {
      window: { from: gkPlateau.from, to: gkPlateau.to, unit: 'ps' },
      verdict: gkConverged && pw.error !== null ? 'ok' : 'not-converged',
      reasons: gkReasons,
    });
  } else if (opts.greenKubo ?? true) {
    noteReason(notes, reasons, reason(
      'conductivity.no-velocities',
      'Green–Kubo value not computed: the file carries no velocities (finite differences are not used for collective currents)',
    ));
  }

  const ionicity = species.length > 0 ? ratioWithUncertainty(einsteinHelfand, nernstEinstein, '1') : quantity(NaN, null, '1');
  let havenRatio: Quantity | null = null;
  // One rule for a missing uncertainty (src/numerics/propagation.ts): unknown in, unknown out.
  if (ehValue > 0 && species.length > 0) havenRatio = ratioWithUncertainty(nernstEinstein, einsteinHelfand, '1');
  else if (!(ehValue > 0)) noteReason(notes, reasons, reason('conductivity.no-haven-ratio', 'Einstein–Helfand conductivity is not positive: no Haven ratio'));

  let cations = 0;
  for (const x of species) if (x.charge > 0) cations += x.count;
  let concentration: Quantity | null = null;
  let molar: Quantity | null = null;
  if (cations > 0) {
    const c = concentrationMolPerM3(cations, V);
    concentration = quantity(c / 1000, null, 'mol/L');
    molar = quantity(ehValue / c, ehUnc === null ? null : ehUnc / c, 'S m^2/mol');
  } else if (species.length > 0) {
    noteReason(notes, reasons, reason('conductivity.no-cations', 'no cations among the ions: no salt concentration and no molar conductivity'));
  }

  const greenKuboConverged = greenKubo === null ? null : gkConverged;
  const converged = sf.converged && gkConverged && species.length > 0 && species.every((s) => s.converged);
  return {
    nernstEinstein,
    einsteinHelfand,
    greenKubo,
    ionicity,
    havenRatio,
    molarConductivity: molar,
    concentration,
    fit: { from: sf.from, to: sf.to, points: sf.points, automatic: sf.automatic },
    greenKuboPlateau: gkPlateau,
    greenKuboConverged,
    greenKuboDrift: gkDrift,
    species,
    otherCharged,
    volume: quantity(V, null, 'A^3'),
    temperature: quantity(temp, null, 'K'),
    netCharge: net,
    converged,
    notes,
    reasons,
    curves: {
      time: Float64Array.from(ehCurve, (_, k) => k * dt),
      collectiveMsd: ehCurve,
      greenKuboRunning: gkRunning,
    },
    frames: T,
    frameInterval: dt,
    driftRemoved: store.com !== null,
    driftNote: driftDescription(store, ctx.topology),
    bytesHeld: read ? read.bytesHeld : storeBytes(store),
    reads: read ? read.reads : 1,
    memoryNote: read?.note ?? null,
    rules: {
      window: windowRuleText(opts),
      uncertainty: uncertaintyRuleText(opts, [
        ...all.map((x) => ({ label: `D(${x.label})`, segments: x.segments })),
        { label: 'Einstein–Helfand', segments: sf.segments },
      ]),
      concentration:
        'salt concentration c = (number of cations)/(N_A <V>): the salt concentration of a 1:1 salt; ions are single atoms or molecules with a non-zero whole charge ' +
        '(or the --ions selection); partial charges of neutral molecules enter the collective current only, not the Nernst–Einstein sum or c',
      ratios:
        'ionicity = σ_EH/σ_NE, Haven ratio = σ_NE/σ_EH; first-order uncertainties treating both as independent (an upper estimate: they are positively correlated)',
    },
  };
}

/** Options of the conductivity pass. */
export interface ConductivityPassOptions extends ConductivityOptions {
  /** Charge rules (parseChargeRules), or null to use the file's formal charges. */
  charges: ChargeRule[] | null;
  molecules?: boolean;
  keepDrift?: boolean;
}

/** Layout spec of the conductivity sites for the pass options. */
export function conductivityLayout(opts: { charges: ChargeRule[] | null; molecules?: boolean; ions?: string | null }): (t: Topology) => SiteLayout & { siteCharges: Float64Array } {
  return (t) => chargeLayout(t, atomCharges(t, opts.charges), !!opts.molecules, opts.ions ?? null);
}

/** The conductivity Pass: one coordinate store, finished by `analyseConductivity`. */
export function conductivityPass(opts: ConductivityPassOptions): Pass<StorePartial, ConductivityResult> {
  const layout = conductivityLayout(opts);
  const spec: LayoutSpec = layout;
  const store = storePass({ layout: spec, removeDrift: !opts.keepDrift, keepVelocities: opts.greenKubo ?? true });
  return {
    name: 'conductivity',
    create: store.create,
    merge: store.merge,
    finish: (p, ctx) => analyseConductivity(p, layout(ctx.topology), ctx, opts),
  };
}
