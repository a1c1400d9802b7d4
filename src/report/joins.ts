/**
 * The report's joins step: the numbers that combine two analyses — D∞ and r_H of every species
 * (MSD with the viscosity), σ_NE from the species' D, the ionicity σ_EH/σ_NE, the Haven ratio,
 * the molar conductivity and the Walden product — computed once here from the analyses' results
 * and handed to the sections that show them. No section reads another section's data: what
 * crosses sections crosses here. Formulas, first-order propagation and the rule for an input
 * without an uncertainty (its output has none, with a reason naming it) are those of
 * src/transport.ts; each joined number is an Estimate whose verdict and reasons come from its
 * inputs (`joinReasons`).
 */
import { asQuantity, estimate, hasReason, isOk, reason, type Estimate } from '../estimate.js';
import { DOES_NOT_MOVE } from '../../analyses/msd.js';
import { quantity } from '../types.js';
import {
  joinEstimate,
  joinInput,
  radiusRatioJoin,
  ratioJoin,
  stokesFactor,
  stokesRadiusJoin,
  waldenJoin,
  yehHummerJoin,
  PROPAGATION_RULE,
  YEH_HUMMER_XI,
  type JoinInput,
} from '../transport.js';
import { crystalRadius, type IonRadius } from '../radii.js';
import type { MsdGroupResult } from '../../analyses/msd.js';
import type { ConductivityResult } from '../../analyses/conductivity.js';
import { range, type ReportData } from './model.js';
import { viscosityWindowText } from './sections/viscosity.js';

/**
 * Ion name for the crystal-radius table from a label and its charge ("Na", +1 → "Na+";
 * "Mg", +2 → "Mg2+"); null when the charge is unknown, zero or not a whole number.
 */
export function ionName(label: string, charge: number | null): string | null {
  if (charge === null || charge === 0 || !Number.isInteger(charge)) return null;
  const z = Math.abs(charge);
  return `${label}${z === 1 ? '' : z}${charge > 0 ? '+' : '-'}`;
}

/** The window an MSD D came from, in words: "fit from–to ps", "(user)" for a window given. */
export function msdWindowText(g: MsdGroupResult): string {
  return `fit ${range(g.fit.from, g.fit.to)}${g.fit.automatic ? '' : ' (user)'}`;
}

/** The window σ_EH came from, in words, as `msdWindowText`. */
export function einsteinHelfandWindowText(k: ConductivityResult): string {
  return `fit ${range(k.fit.from, k.fit.to)}${k.fit.automatic ? '' : ' (user)'}`;
}

/** The joins of one species' D with the viscosity. */
export interface SpeciesJoin {
  label: string;
  /** D (MSD) and η as join inputs, with their windows. */
  inputs: JoinInput[];
  /** Both windows in words: "D from–to ps; η fit …". */
  window: string;
  /** Yeh–Hummer ΔD and D∞. */
  correction: Estimate;
  corrected: Estimate;
  /** Stokes–Einstein radius from D∞ (Å). */
  radius: Estimate;
  /** Ion name, its Shannon radius and r_H/r_crystal when the label has a known whole charge. */
  ion: string | null;
  crystal: IonRadius | null;
  ratio: Estimate | null;
}

/** The joins of the conductivity analysis. */
export interface ConductivityJoins {
  /** Each ion species' D (MSD), the inputs of σ_NE. */
  inputsNE: JoinInput[];
  inputEH: JoinInput;
  /** σ_NE with the verdict of its inputs. */
  nernstEinstein: Estimate;
  /** σ_EH/σ_NE, with the verdict of σ_EH and of every species' D. */
  ionicity: Estimate;
  havenRatio: Estimate | null;
  /** Λ = σ_EH/c, with the verdict of σ_EH. */
  molar: Estimate | null;
  /** Λη with its inputs, when Λ and a usable η exist. */
  walden: { si: Estimate; conventional: Estimate; inputs: JoinInput[] } | null;
}

/** Everything the joins step hands to the sections, and the results.json "joins" object. */
export interface ReportJoins {
  /** D∞, r_H, r_H/r_crystal per MSD species (empty without a usable η or a box length). */
  species: Map<string, SpeciesJoin>;
  /** The box length the Yeh–Hummer correction used, when it was applied. */
  box: { length: number; note: string } | null;
  /** Why there are no species joins, in words (for the diffusion notes); null when there are. */
  missing: string | null;
  conductivity: ConductivityJoins | null;
  json: Record<string, unknown>;
}

/** η as a join input when it is a positive number (the joins need it), else null. */
function viscosityInput(data: ReportData): JoinInput | null {
  const v = data.viscosity?.result;
  if (!v || !(Number.isFinite(v.viscosity.value) && v.viscosity.value > 0)) return null;
  return joinInput('shear viscosity η (Green–Kubo)', v.viscosity, viscosityWindowText(v), isOk(v.viscosity));
}

/** D∞, r_H and r_H/r_crystal of one MSD species (Yeh & Hummer 2004; Einstein 1905; Shannon 1976). */
function speciesJoin(g: MsdGroupResult, eta: JoinInput, data: ReportData, L: number): SpeciesJoin {
  const T = data.temperatureK;
  const d = joinInput(`D(${g.label}), MSD`, g.diffusion, msdWindowText(g), isOk(g.diffusion));
  const inputs = [d, eta];
  const yh = yehHummerJoin(d, eta, T, L);
  const radius = stokesRadiusJoin(d, eta, T, L, data.boundary);
  const ion = ionName(g.label, data.labelCharges.get(g.label) ?? null);
  const crystal = ion ? crystalRadius(ion) : null;
  return {
    label: g.label,
    inputs,
    window: `D ${range(g.fit.from, g.fit.to)}; η ${eta.window}`,
    correction: yh.correction,
    corrected: yh.corrected,
    radius,
    ion,
    crystal,
    ratio: crystal ? radiusRatioJoin(radius, crystal.radiusA) : null,
  };
}

/** The conductivity joins: σ_NE, ionicity, Haven ratio, Λ and (with η) the Walden product. */
function conductivityJoins(k: ConductivityResult, eta: JoinInput | null): ConductivityJoins {
  const ehWindow = einsteinHelfandWindowText(k);
  // A species that does not move adds exactly 0 to σ_NE: no failed fit.
  const inputsNE = k.species.map((s) => joinInput(`D(${s.label}), MSD`, s.diffusion, `fit ${range(s.fit.from, s.fit.to)}`, s.converged || hasReason(s.diffusion, DOES_NOT_MOVE)));
  const inputEH = joinInput('σ, Einstein–Helfand', k.einsteinHelfand, ehWindow, isOk(k.einsteinHelfand));
  // The ratios take their uncertainty from σ_EH and σ_NE, their verdict from σ_EH and every D.
  const ratio = ratioJoin(inputEH, joinInput('σ, Nernst–Einstein', k.nernstEinstein), '1');
  let walden: ConductivityJoins['walden'] = null;
  if (k.molarConductivity && eta) {
    const lambda = joinInput('molar conductivity Λ = σ_EH/c', k.molarConductivity, ehWindow, isOk(k.einsteinHelfand));
    walden = { ...waldenJoin(lambda, eta), inputs: [lambda, eta] };
  }
  return {
    inputsNE,
    inputEH,
    nernstEinstein: joinEstimate(k.nernstEinstein.value, k.nernstEinstein.uncertainty, k.nernstEinstein.unit, inputsNE),
    ionicity: hasReason(k.einsteinHelfand, 'conductivity.does-not-move')
      ? estimate(NaN, null, '1', { verdict: 'not-determined', reasons: [reason('join.input-does-not-move', 'no charged site moves: no ratio', 'not-determined')] })
      : joinEstimate(ratio.value, ratio.uncertainty, ratio.unit, [inputEH, ...inputsNE]),
    havenRatio: k.havenRatio ? ratioJoin(joinInput('σ, Nernst–Einstein', k.nernstEinstein), inputEH, '1') : null,
    molar: k.molarConductivity ? joinEstimate(k.molarConductivity.value, k.molarConductivity.uncertainty, k.molarConductivity.unit, [inputEH]) : null,
    walden,
  };
}

/** The results.json "joins" object: the rule, then each join with its inputs, formula and source. */
function joinsJson(data: ReportData, species: SpeciesJoin[], box: ReportJoins['box'], cj: ConductivityJoins | null): Record<string, unknown> {
  const json: Record<string, unknown> = { propagation: PROPAGATION_RULE };
  const T = data.temperatureK;
  if (species.length && box) {
    json.yehHummer = {
      xi: YEH_HUMMER_XI, boxLength: quantity(box.length, null, 'A'), temperature: quantity(T, null, 'K'), note: box.note,
      formula: 'D_inf = D_PBC + k_B T ξ/(6π η L) (Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004)); u² = u²(D_PBC) + (ΔD u(η)/η)²',
      species: species.map((s) => ({ label: s.label, diffusionPeriodic: s.inputs[0].value, correction: s.correction, diffusion: s.corrected, inputs: s.inputs })),
    };
    json.stokesEinstein = {
      boundary: data.boundary, factor: stokesFactor(data.boundary),
      formula: 'r_H = k_B T/(c π η D_inf), c = 6 stick / 4 slip; η D_inf = η D_PBC + k_B T ξ/(6π L), so u(r)/r = √((D_PBC u(η))² + (η u(D_PBC))²)/(η D_inf)',
      crystalRadii: 'Shannon, Acta Cryst. A32, 751 (1976), six-coordinate (src/radii.ts); looked up only for labels with a known whole-number charge',
      species: species.map((s) => ({
        label: s.label, radius: s.radius, boundary: data.boundary, diffusionUsed: s.corrected, ion: s.ion, crystalRadius: s.crystal ? quantity(s.crystal.radiusA, null, 'A') : null,
        crystalRadiusSource: s.crystal?.note ?? null, radiusRatio: s.ratio, inputs: s.inputs,
      })),
    };
  }
  const k = data.conductivity;
  if (k && cj) {
    json.conductivity = {
      nernstEinstein: { value: cj.nernstEinstein, inputs: cj.inputsNE, formula: 'σ_NE = e²/(V k_B T) Σ N_i z_i² D_i (src/transport.ts)' },
      einsteinHelfand: { value: asQuantity(k.einsteinHelfand), window: cj.inputEH.window },
      greenKubo: k.greenKubo ? { value: asQuantity(k.greenKubo), window: k.greenKuboPlateau ? `plateau ${range(k.greenKuboPlateau.from, k.greenKuboPlateau.to)}` : null } : null,
      ionicity: { value: cj.ionicity, inputs: [cj.inputEH, ...cj.inputsNE], formula: 'σ_EH/σ_NE; first order, σ_EH and σ_NE treated as independent (they are positively correlated, so the uncertainty is an upper estimate); none when either has none' },
      havenRatio: cj.havenRatio,
    };
    if (cj.walden) {
      json.walden = { product: cj.walden.si, productConventional: cj.walden.conventional, inputs: cj.walden.inputs, formula: 'W = Λ η (Walden 1906); 1 S m² Pa s/mol = 10⁵ S cm² P/mol; first order, Λ and η independent' };
    }
  }
  return json;
}

/**
 * The joins step: from the measured data, every joined number with its inputs (src/transport.ts
 * joins; the species joins need a positive η and a box length), why the species joins are
 * missing when they are, and the results.json "joins" object.
 */
export function reportJoins(data: ReportData): ReportJoins {
  const eta = viscosityInput(data);
  const L = data.boxLength?.length ?? null;
  const species = new Map<string, SpeciesJoin>();
  // A species that does not move (D = 0 exactly) has no finite-size correction or radius.
  if (data.msd && eta && L !== null) for (const g of data.msd.groups) if (!hasReason(g.diffusion, DOES_NOT_MOVE)) species.set(g.label, speciesJoin(g, eta, data, L));
  const box = species.size ? data.boxLength : null;
  let missing: string | null = null;
  if (!species.size && data.msd) {
    missing = eta
      ? 'No cell volume: no finite-size correction.'
      : `No finite-size correction or hydrodynamic radius: ${data.viscosity ? 'the viscosity is not a positive number' : 'needs the viscosity (give --pressure)'}.`;
  }
  const cj = data.conductivity ? conductivityJoins(data.conductivity, eta) : null;
  return { species, box, missing, conductivity: cj, json: joinsJson(data, [...species.values()], box, cj) };
}
