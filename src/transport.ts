/**
 * Transport relations between diffusion, viscosity and conductivity: finite-size correction of
 * D, Nernst–Einstein conductivity, Stokes–Einstein radius, limiting molar conductivity of one
 * ion and the Walden product. All functions are pure and take/return SI units unless a
 * parameter name says otherwise (volumes in Å^3 and box lengths in Å, as elsewhere in sojourn).
 */
import { BOLTZMANN, ELEMENTARY_CHARGE, FARADAY, GAS_CONSTANT, CUBIC_ANGSTROM, ANGSTROM } from './units.js';
import { quantity, type Quantity } from './types.js';
import { UsageError } from './errors.js';
import { crystalRadius, SHANNON_RADII, type IonRadius } from './radii.js';
import { productUncertainty, type ProductTerm } from './numerics/propagation.js';

/**
 * ξ of the cubic periodic lattice in the Yeh–Hummer correction, 2.837297 (Yeh & Hummer,
 * J. Phys. Chem. B 108, 15873 (2004); the lattice sum of Oseen tensors for a simple cubic
 * lattice).
 */
export const YEH_HUMMER_XI = 2.837297;

/**
 * Finite-size correction of a self-diffusion coefficient in a cubic box of edge L:
 * ΔD = k_B T ξ / (6 π η L), so that D(∞) = D(L) + ΔD (Yeh & Hummer, J. Phys. Chem. B 108,
 * 15873 (2004)). Inputs: T in K, η in Pa s, L in Å; returns m^2/s.
 */
export function yehHummerCorrection(temperatureK: number, viscosityPaS: number, boxLengthA: number): number {
  return (BOLTZMANN * temperatureK * YEH_HUMMER_XI) / (6 * Math.PI * viscosityPaS * boxLengthA * ANGSTROM);
}

/** One ionic species for the Nernst–Einstein sum. */
export interface NernstEinsteinSpecies {
  /** Number of ions of this species in the volume. */
  count: number;
  /** Charge number z (in units of e). */
  charge: number;
  /** Self-diffusion coefficient, m^2/s. */
  diffusion: number;
}

/**
 * Nernst–Einstein conductivity (ions moving independently):
 * σ_NE = e² / (V k_B T) · Σ_i N_i z_i² D_i, in S/m, with V in Å^3 and D in m^2/s
 * (the uncorrelated-ion limit of the Green–Kubo conductivity; e.g. Hansen & McDonald, Theory
 * of Simple Liquids, 4th ed. (2013), chapter on ionic liquids).
 */
export function nernstEinsteinConductivity(species: NernstEinsteinSpecies[], volumeA3: number, temperatureK: number): number {
  let sum = 0;
  for (const s of species) sum += s.count * s.charge * s.charge * s.diffusion;
  return (ELEMENTARY_CHARGE * ELEMENTARY_CHARGE * sum) / (volumeA3 * CUBIC_ANGSTROM * BOLTZMANN * temperatureK);
}

/**
 * Standard uncertainty of σ_NE from independent uncertainties δD_i of the diffusion
 * coefficients, by first-order (linear) propagation: δσ = e²/(V k_B T) · √(Σ_i (N_i z_i² δD_i)²)
 * (JCGM 100:2008, Guide to the expression of uncertainty in measurement, eq. 10). S/m.
 */
export function nernstEinsteinUncertainty(
  species: Array<NernstEinsteinSpecies & { diffusionError: number }>,
  volumeA3: number,
  temperatureK: number,
): number {
  let sq = 0;
  for (const s of species) {
    const t = s.count * s.charge * s.charge * s.diffusionError;
    sq += t * t;
  }
  return (ELEMENTARY_CHARGE * ELEMENTARY_CHARGE * Math.sqrt(sq)) / (volumeA3 * CUBIC_ANGSTROM * BOLTZMANN * temperatureK);
}

/** Hydrodynamic boundary condition of the Stokes drag: stick (c = 6) or slip (c = 4). */
export type Boundary = 'stick' | 'slip';

/**
 * Drag coefficient c in F = c π η r v: 6 for stick, 4 for slip (Stokes, Trans. Camb. Phil. Soc. 9, 8
 * (1851) for stick; the slip value for a sphere is Basset's (1888); see Happel & Brenner, Low
 * Reynolds Number Hydrodynamics (1965) — references from memory).
 */
export function stokesFactor(boundary: Boundary): number {
  return boundary === 'stick' ? 6 : 4;
}

/**
 * Stokes–Einstein hydrodynamic radius r = k_B T / (c π η D), c = 6 (stick) or 4 (slip)
 * (Einstein, Ann. Phys. 17, 549 (1905)). D in m^2/s, η in Pa s, T in K; returns m.
 */
export function stokesEinsteinRadius(diffusion: number, viscosity: number, temperatureK: number, boundary: Boundary): number {
  return (BOLTZMANN * temperatureK) / (stokesFactor(boundary) * Math.PI * viscosity * diffusion);
}

/**
 * Stokes–Einstein diffusion coefficient D = k_B T / (c π η r), c = 6 (stick) or 4 (slip)
 * (Einstein, Ann. Phys. 17, 549 (1905)). r in m, η in Pa s, T in K; returns m^2/s.
 */
export function stokesEinsteinDiffusion(radiusM: number, viscosity: number, temperatureK: number, boundary: Boundary): number {
  return (BOLTZMANN * temperatureK) / (stokesFactor(boundary) * Math.PI * viscosity * radiusM);
}

/**
 * Limiting molar conductivity of one ion from its diffusion coefficient (Nernst–Einstein):
 * λ = z² F² D / (R T), in S m^2/mol (Robinson & Stokes, Electrolyte Solutions, 2nd ed. (1959)). D in m^2/s, T in K.
 */
export function limitingMolarConductivity(charge: number, diffusion: number, temperatureK: number): number {
  return (charge * charge * FARADAY * FARADAY * diffusion) / (GAS_CONSTANT * temperatureK);
}

/**
 * Walden product Λ η (Walden, Z. Phys. Chem. 55, 207 (1906), from memory): molar conductivity in S m^2/mol
 * times viscosity in Pa s; returns S m^2 Pa s / mol.
 */
export function waldenProduct(molarConductivity: number, viscosity: number): number {
  return molarConductivity * viscosity;
}

/**
 * 1 S m^2 Pa s / mol expressed in the conventional Walden unit S cm^2 mol^-1 P:
 * 1 m^2 = 10^4 cm^2 and 1 Pa s = 10 P (1 P = 0.1 Pa s, CGS definition), so the factor is 10^5.
 */
export const WALDEN_SI_TO_CONVENTIONAL = 1e5;

/** Walden product from SI (S m^2 Pa s / mol) into S cm^2 mol^-1 P: multiply by 10^5. */
export function waldenToConventional(waldenSI: number): number {
  return waldenSI * WALDEN_SI_TO_CONVENTIONAL;
}

// ---------------------------------------------------------------------------------------------
// Per-ion summary used by `sojourn stokes` and the report

/** Input of `stokesSummary`: quantities in SI (D m^2/s, η Pa s, Λ S m^2/mol) and radius in Å. */
export interface StokesInput {
  /** Self-diffusion coefficient (m^2/s); give this or `radius`. */
  diffusion?: Quantity | null;
  /** Radius (Å) to turn into a diffusion coefficient; give this or `diffusion`. */
  radius?: Quantity | null;
  viscosity: Quantity;
  temperatureK: number;
  boundary: Boundary;
  /** Ion name such as "Li+" (for the crystal radius and the charge), or null. */
  species?: string | null;
  /** Measured molar conductivity Λ (S m^2/mol), for the Walden product. */
  molarConductivity?: Quantity | null;
  /**
   * How to read an input whose `uncertainty` is null. 'unknown' (default): it could not be
   * estimated, so every output that depends on it gets a null uncertainty. 'exact': a number
   * given without ± that the caller takes as exact (the `stokes` command), so it contributes
   * nothing and the others' uncertainties are propagated alone.
   */
  missingUncertainty?: 'unknown' | 'exact';
}

/** What `stokesSummary` returns (JSON-ready). */
export interface StokesResult {
  hydrodynamicRadius: Quantity;
  diffusion: Quantity;
  viscosity: Quantity;
  temperature: Quantity;
  boundary: Boundary;
  /** Which of radius and diffusion was computed from the other. */
  computed: 'radius' | 'diffusion';
  species: string | null;
  crystalRadius: Quantity | null;
  crystalRadiusSource: string | null;
  /** r_H / r_crystal. */
  radiusRatio: Quantity | null;
  /** λ = z²F²D/(RT) from the diffusion coefficient (needs the species' charge), S m^2/mol. */
  limitingMolarConductivity: Quantity | null;
  /** Λ η from the given Λ, S m^2 Pa s/mol. */
  waldenProduct: Quantity | null;
  /** The same in S cm^2 mol^-1 P. */
  waldenProductConventional: Quantity | null;
  /** How inputs without an uncertainty were read (`StokesInput.missingUncertainty`). */
  missingUncertainty: 'unknown' | 'exact';
  /** Inputs given without an uncertainty ("diffusion", "radius", "viscosity", "molarConductivity"). */
  inputsWithoutUncertainty: string[];
}

/**
 * Stokes–Einstein summary for one ion: r_H = k_B T/(c π η D) or D = k_B T/(c π η r), with
 * first-order propagation of the uncertainties of D (or r) and η (GUM eq. 12); the Shannon
 * radius and r_H/r_crystal when the ion is tabulated (src/radii.ts); λ = z²F²D/(RT) when the
 * charge is known; the Walden product Λη when Λ is given. Sources at the functions used.
 *
 * Inputs without an uncertainty are read as `input.missingUncertainty` says: 'unknown' (default)
 * makes every output that depends on one carry none; 'exact' propagates the others' alone. An
 * output whose inputs all lack an uncertainty carries none either way (nothing to propagate;
 * the `stokes` command warns).
 */
export function stokesSummary(input: StokesInput): StokesResult {
  const { viscosity: eta, temperatureK: T, boundary } = input;
  const policy = input.missingUncertainty ?? 'unknown';
  /** Uncertainty of `value` = Π factors^p, reading null uncertainties by the policy. */
  const propagate = (value: number, terms: ProductTerm[]): number | null => {
    if (terms.every((t) => t.uncertainty === null)) return null;
    return productUncertainty(value, terms.map((t) => ({ ...t, exact: policy === 'exact' && t.uncertainty === null })));
  };
  const hasD = input.diffusion !== undefined && input.diffusion !== null;
  const hasR = input.radius !== undefined && input.radius !== null;
  if (hasD === hasR) throw new UsageError('give exactly one of a diffusion coefficient and a radius');
  if (!(eta.value > 0)) throw new UsageError('the viscosity must be positive');
  if (!(T > 0)) throw new UsageError('the temperature must be positive');
  let D: Quantity;
  let r: Quantity;
  if (hasD) {
    D = input.diffusion!;
    if (!(D.value > 0)) throw new UsageError('the diffusion coefficient must be positive');
    const rm = stokesEinsteinRadius(D.value, eta.value, T, boundary) / ANGSTROM;
    r = quantity(rm, propagate(rm, [{ ...D, power: -1 }, { ...eta, power: -1 }]), 'A');
  } else {
    r = input.radius!;
    if (!(r.value > 0)) throw new UsageError('the radius must be positive');
    const d = stokesEinsteinDiffusion(r.value * ANGSTROM, eta.value, T, boundary);
    D = quantity(d, propagate(d, [{ ...r, power: -1 }, { ...eta, power: -1 }]), 'm^2/s');
  }
  let crystal: IonRadius | null = null;
  const species = input.species ?? null;
  if (species !== null) {
    crystal = crystalRadius(species);
    if (crystal === null) {
      throw new UsageError(`no tabulated Shannon radius for "${species}"; known ions: ${SHANNON_RADII.map((x) => x.name).join(', ')}`);
    }
  }
  const ratio = crystal ? quantity(r.value / crystal.radiusA, r.uncertainty === null ? null : r.uncertainty / crystal.radiusA, '1') : null;
  let lambda: Quantity | null = null;
  if (crystal) {
    const l = limitingMolarConductivity(crystal.charge, D.value, T);
    lambda = quantity(l, propagate(l, [D]), 'S m^2/mol');
  }
  let walden: Quantity | null = null;
  let waldenConv: Quantity | null = null;
  const L = input.molarConductivity ?? null;
  if (L !== null) {
    const w = waldenProduct(L.value, eta.value);
    walden = quantity(w, propagate(w, [L, eta]), 'S m^2 Pa s/mol');
    waldenConv = quantity(
      waldenToConventional(w),
      walden.uncertainty === null ? null : waldenToConventional(walden.uncertainty),
      'S cm^2 P/mol',
    );
  }
  const given: Array<[string, Quantity | null]> = [[hasD ? 'diffusion' : 'radius', hasD ? D : r], ['viscosity', eta], ['molarConductivity', L]];
  return {
    hydrodynamicRadius: r,
    diffusion: D,
    viscosity: eta,
    temperature: quantity(T, null, 'K'),
    boundary,
    computed: hasD ? 'radius' : 'diffusion',
    species: crystal ? crystal.name : null,
    crystalRadius: crystal ? quantity(crystal.radiusA, null, 'A') : null,
    crystalRadiusSource: crystal ? crystal.note : null,
    radiusRatio: ratio,
    limitingMolarConductivity: lambda,
    waldenProduct: walden,
    waldenProductConventional: waldenConv,
    missingUncertainty: policy,
    inputsWithoutUncertainty: given.filter(([, q]) => q !== null && q.uncertainty === null).map(([k]) => k),
  };
}
