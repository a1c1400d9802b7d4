/**
 * Transport relations between diffusion, viscosity and conductivity: finite-size correction of
 * D, Nernst–Einstein conductivity, Stokes–Einstein radius, limiting molar conductivity of one
 * ion and the Walden product. All functions are pure and take/return SI units unless a
 * parameter name says otherwise (volumes in Å^3 and box lengths in Å, as elsewhere in sojourn).
 *
 * The joins — numbers that combine two measured ones (D∞, r_H, r_H/r_crystal, λ, the Walden
 * product, ratios of conductivities) — live here once, for the report and `sojourn stokes`
 * alike. They return Estimates (src/estimate.ts) and keep one rule for a missing uncertainty:
 * an input without one gives an output without one (null: unknown, never taken as exact), with
 * a reason naming that input. Uncertainties are propagated to first order (JCGM 100:2008, GUM,
 * §5.1.2: u²(y) = Σ (∂y/∂x_i)² u²(x_i) for independent inputs); where two inputs of a join are
 * not independent the derivation is written at the function.
 */
import { BOLTZMANN, ELEMENTARY_CHARGE, FARADAY, GAS_CONSTANT, CUBIC_ANGSTROM, ANGSTROM } from './units.js';
import { quantity, type Quantity } from './types.js';
import { asQuantity, estimate, reason, type Estimate, type Reason } from './estimate.js';
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
// Joins: numbers combined from two measured ones, as Estimates

/** How the joined uncertainties are obtained (written into results.json and the report). */
export const PROPAGATION_RULE =
  'first-order (linear) propagation of one-standard-error uncertainties, u²(y) = Σ (∂y/∂x_i)² u²(x_i) ' +
  '(JCGM 100:2008, GUM §5.1.2); inputs from different analyses are treated as independent; ' +
  'the temperature and the box length are taken as exact';

/** One input of a joined number: what it is, its value and the data window it came from. */
export interface JoinInput {
  /** What the input is, as a reason names it ("D(Na), MSD"). */
  name: string;
  value: Quantity;
  /** The data window it came from, in words ('' when it did not come from data). */
  window: string;
  /** False when the analysis behind it did not converge. */
  converged: boolean;
}

/** A join input: the Quantity part of `value` (an Estimate's extras left out), its name and window. */
export function joinInput(name: string, value: Quantity, window = '', converged = true): JoinInput {
  return { name, value: asQuantity(value), window, converged };
}

/** A join's argument: a named input, or a plain number named by the join. */
export type JoinArg = Quantity | JoinInput;

function inputOf(a: JoinArg, name: string): JoinInput {
  return typeof (a as JoinInput).value === 'object' ? (a as JoinInput) : joinInput(name, a as Quantity);
}

/**
 * Uncertainty √(Σ u_i²) of independent contributions (GUM eq. 10 with the sensitivities already
 * applied). A null contribution means "unknown" (its input's uncertainty could not be estimated),
 * never "exact" — an exact input is passed as 0 or left out — so one null makes the result null:
 * a total from the other contributions alone would look precise without being so.
 */
export function rootSumSquares(parts: ReadonlyArray<number | null>): number | null {
  if (parts.some((p) => p === null)) return null;
  return Math.sqrt(parts.reduce<number>((s, p) => s + p! ** 2, 0));
}

/** Names of the inputs of a join whose uncertainty is unknown (null). */
export function inputsWithoutUncertainty(inputs: readonly JoinInput[]): string[] {
  return inputs.filter((i) => i.value.uncertainty === null).map((i) => i.name);
}

/**
 * The reasons a joined number inherits from its inputs: 'join.input-not-converged' (verdict
 * 'not-converged') naming the inputs whose analysis did not converge, and
 * 'join.input-without-uncertainty' (verdict 'unreliable') naming those without an uncertainty,
 * which leave the joined number without one. None when every input converged with one. A
 * number built on an unconverged input, or without an error bar, is not one to rely on (common
 * practice, no source).
 */
export function joinReasons(inputs: readonly JoinInput[]): Reason[] {
  const out: Reason[] = [];
  const notConverged = inputs.filter((i) => !i.converged).map((i) => i.name);
  const unknown = inputsWithoutUncertainty(inputs);
  if (notConverged.length) out.push(reason('join.input-not-converged', `inputs not converged: ${notConverged.join(', ')}`, 'not-converged'));
  if (unknown.length) {
    out.push(reason('join.input-without-uncertainty', `no uncertainty, because ${unknown.join(' and ')} ${unknown.length > 1 ? 'have' : 'has'} none`, 'unreliable'));
  }
  return out;
}

/**
 * Verdict of a joined number from its inputs, in words: 'inputs converged' when every input
 * converged and has an uncertainty (ok), otherwise the texts of `joinReasons` joined by "; ".
 */
export function joinVerdict(inputs: readonly JoinInput[]): { verdict: string; ok: boolean } {
  const reasons = joinReasons(inputs);
  return reasons.length === 0 ? { verdict: 'inputs converged', ok: true } : { verdict: reasons.map((r) => r.text).join('; '), ok: false };
}

/**
 * A joined number as an Estimate: value, uncertainty (computed by the caller with the rule above:
 * null when an input has none) and unit, no window (the inputs carry theirs), and the verdict and
 * reasons of `joinReasons(inputs)`.
 */
export function joinEstimate(value: number, uncertainty: number | null, unit: string, inputs: readonly JoinInput[]): Estimate {
  return estimate(value, uncertainty, unit, { reasons: joinReasons(inputs) });
}

/**
 * Finite-size-corrected self-diffusion coefficient D∞ = D_PBC + ΔD, ΔD = k_B T ξ/(6π η L),
 * ξ = 2.837297 (Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004); `yehHummerCorrection`).
 * First-order uncertainty with T and L exact: u²(D∞) = u²(D_PBC) + (ΔD · u(η)/η)², since
 * ∂ΔD/∂η = −ΔD/η. A null (unknown) uncertainty of D or η makes u(D∞) null; a null u(η) also makes
 * u(ΔD) null. D in m²/s, η in Pa s, T in K, L in Å.
 */
export function yehHummerJoin(diffusion: JoinArg, viscosity: JoinArg, temperatureK: number, boxLengthA: number): { corrected: Estimate; correction: Estimate } {
  const d = inputOf(diffusion, 'the diffusion coefficient');
  const eta = inputOf(viscosity, 'the viscosity');
  const dd = yehHummerCorrection(temperatureK, eta.value.value, boxLengthA);
  const uCorr = eta.value.uncertainty === null ? null : (dd * eta.value.uncertainty) / Math.abs(eta.value.value);
  return {
    correction: joinEstimate(dd, uCorr, 'm^2/s', [eta]),
    corrected: joinEstimate(d.value.value + dd, rootSumSquares([d.value.uncertainty, uCorr]), 'm^2/s', [d, eta]),
  };
}

/**
 * Stokes–Einstein hydrodynamic radius r = k_B T/(c π η D∞) (c = 6 stick, 4 slip; Einstein 1905;
 * `stokesEinsteinRadius`) from the finite-size-corrected D∞ = D + k_B T ξ/(6π η L) (Yeh & Hummer
 * 2004), or from D itself when `boxLengthA` is null. D∞ depends on η, so the two are not
 * independent: with X = η D∞ = η D + k_B T ξ/(6π L), r = k_B T/(c π X) and, to first order with T
 * and L exact, u(X)² = (D u(η))² + (η u(D))², u(r) = r · u(X)/X. Without the correction
 * u(r)/r = √((u(D)/D)² + (u(η)/η)²) (GUM eq. 12). A null (unknown) uncertainty of either input
 * gives a null u(r). D in m²/s, η in Pa s; returns Å.
 */
export function stokesRadiusJoin(diffusion: JoinArg, viscosity: JoinArg, temperatureK: number, boxLengthA: number | null, boundary: Boundary): Estimate {
  const dIn = inputOf(diffusion, 'the diffusion coefficient');
  const etaIn = inputOf(viscosity, 'the viscosity');
  const eta = etaIn.value.value;
  const D = dIn.value.value;
  const dInf = boxLengthA === null ? D : D + yehHummerCorrection(temperatureK, eta, boxLengthA);
  const r = stokesEinsteinRadius(dInf, eta, temperatureK, boundary) / ANGSTROM;
  let u: number | null;
  if (boxLengthA === null) {
    u = productUncertainty(r, [{ value: D, uncertainty: dIn.value.uncertainty, power: -1 }, { value: eta, uncertainty: etaIn.value.uncertainty, power: -1 }]);
  } else {
    const X = eta * dInf;
    const uEta = etaIn.value.uncertainty;
    const uD = dIn.value.uncertainty;
    const uX = rootSumSquares([uEta === null ? null : D * uEta, uD === null ? null : eta * uD]);
    u = uX === null ? null : (Math.abs(r) * uX) / Math.abs(X);
  }
  return joinEstimate(r, u, 'A', [dIn, etaIn]);
}

/**
 * Stokes–Einstein diffusion coefficient of a sphere of radius r, D = k_B T/(c π η r) (c = 6 stick,
 * 4 slip; Einstein 1905; `stokesEinsteinDiffusion`), with u(D)/D = √((u(r)/r)² + (u(η)/η)²) to
 * first order (GUM eq. 12); null when either input has none. r in Å, η in Pa s; returns m²/s.
 */
export function stokesDiffusionJoin(radius: JoinArg, viscosity: JoinArg, temperatureK: number, boundary: Boundary): Estimate {
  const r = inputOf(radius, 'the radius');
  const eta = inputOf(viscosity, 'the viscosity');
  const d = stokesEinsteinDiffusion(r.value.value * ANGSTROM, eta.value.value, temperatureK, boundary);
  const u = productUncertainty(d, [{ value: r.value.value, uncertainty: r.value.uncertainty, power: -1 }, { value: eta.value.value, uncertainty: eta.value.uncertainty, power: -1 }]);
  return joinEstimate(d, u, 'm^2/s', [r, eta]);
}

/**
 * Ratio r_H/r_crystal of a hydrodynamic radius to a tabulated crystal radius (taken as exact: a
 * table value, src/radii.ts): u = u(r_H)/r_crystal. An Estimate keeps its verdict and reasons;
 * a plain radius without an uncertainty gives a ratio without one and says so.
 */
export function radiusRatioJoin(radius: Quantity | Estimate, crystalRadiusA: number): Estimate {
  const u = radius.uncertainty === null ? null : radius.uncertainty / crystalRadiusA;
  const e = radius as Partial<Estimate>;
  if (e.reasons !== undefined && e.verdict !== undefined) {
    return estimate(radius.value / crystalRadiusA, u, '1', { verdict: e.verdict, reasons: e.reasons });
  }
  return joinEstimate(radius.value / crystalRadiusA, u, '1', [joinInput('the radius', radius)]);
}

/**
 * Limiting molar conductivity of one ion from its diffusion coefficient, λ = z²F²D/(RT)
 * (`limitingMolarConductivity`; Robinson & Stokes 1959), with u(λ) = λ·u(D)/D (T exact); null
 * when D has none. S m²/mol.
 */
export function limitingConductivityJoin(diffusion: JoinArg, charge: number, temperatureK: number): Estimate {
  const d = inputOf(diffusion, 'the diffusion coefficient');
  const l = limitingMolarConductivity(charge, d.value.value, temperatureK);
  return joinEstimate(l, productUncertainty(l, [{ value: d.value.value, uncertainty: d.value.uncertainty }]), 'S m^2/mol', [d]);
}

/**
 * Walden product W = Λ η (Walden 1906; `waldenProduct`) in S m² Pa s/mol and in the
 * conventional S cm² P/mol (× 10⁵), with u(W)/W = √((u(Λ)/Λ)² + (u(η)/η)²) to first order
 * (GUM eq. 12); null when either input's uncertainty is unknown (null).
 */
export function waldenJoin(molarConductivity: JoinArg, viscosity: JoinArg): { si: Estimate; conventional: Estimate } {
  const lam = inputOf(molarConductivity, 'the molar conductivity');
  const eta = inputOf(viscosity, 'the viscosity');
  const w = waldenProduct(lam.value.value, eta.value.value);
  const u = productUncertainty(w, [
    { value: lam.value.value, uncertainty: lam.value.uncertainty },
    { value: eta.value.value, uncertainty: eta.value.uncertainty },
  ]);
  return {
    si: joinEstimate(w, u, 'S m^2 Pa s/mol', [lam, eta]),
    conventional: joinEstimate(waldenToConventional(w), u === null ? null : waldenToConventional(u), 'S cm^2 P/mol', [lam, eta]),
  };
}

/**
 * Ratio a/b of two independent quantities (ionicity σ_EH/σ_NE, Haven ratio σ_NE/σ_EH) with the
 * first-order uncertainty |a/b|·√((u_a/a)² + (u_b/b)²) (GUM eq. 12), null when either input's
 * uncertainty is unknown (null).
 */
export function ratioJoin(a: JoinArg, b: JoinArg, unit: string): Estimate {
  const x = inputOf(a, 'the numerator');
  const y = inputOf(b, 'the denominator');
  const r = x.value.value / y.value.value;
  const u = productUncertainty(r, [{ value: x.value.value, uncertainty: x.value.uncertainty }, { value: y.value.value, uncertainty: y.value.uncertainty, power: -1 }]);
  return joinEstimate(r, u, unit, [x, y]);
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
  /**
   * The inputs of one output as the joins see them. With 'exact', an input the caller gave
   * without an uncertainty counts as exact (u = 0, contributing nothing), unless every input of
   * that output lacks one (then there is nothing to propagate and the output has none).
   */
  const read = (...inputs: JoinInput[]): JoinInput[] => {
    if (policy !== 'exact' || inputs.every((i) => i.value.uncertainty === null)) return inputs;
    return inputs.map((i) => (i.value.uncertainty === null ? { ...i, value: { ...i.value, uncertainty: 0 } } : i));
  };
  const hasD = input.diffusion !== undefined && input.diffusion !== null;
  const hasR = input.radius !== undefined && input.radius !== null;
  if (hasD === hasR) throw new UsageError('give exactly one of a diffusion coefficient and a radius');
  if (!(eta.value > 0)) throw new UsageError('the viscosity must be positive');
  if (!(T > 0)) throw new UsageError('the temperature must be positive');
  const etaIn = joinInput('viscosity', eta);
  let D: Quantity;
  let r: Estimate | Quantity;
  if (hasD) {
    D = input.diffusion!;
    if (!(D.value > 0)) throw new UsageError('the diffusion coefficient must be positive');
    r = stokesRadiusJoin(...(read(joinInput('diffusion', D), etaIn) as [JoinInput, JoinInput]), T, null, boundary);
  } else {
    r = input.radius!;
    if (!(r.value > 0)) throw new UsageError('the radius must be positive');
    D = asQuantity(stokesDiffusionJoin(...(read(joinInput('radius', r), etaIn) as [JoinInput, JoinInput]), T, boundary));
  }
  let crystal: IonRadius | null = null;
  const species = input.species ?? null;
  if (species !== null) {
    crystal = crystalRadius(species);
    if (crystal === null) {
      throw new UsageError(`no tabulated Shannon radius for "${species}"; known ions: ${SHANNON_RADII.map((x) => x.name).join(', ')}`);
    }
  }
  const ratio = crystal ? asQuantity(radiusRatioJoin(r, crystal.radiusA)) : null;
  const lambda = crystal ? asQuantity(limitingConductivityJoin(read(joinInput('diffusion', D))[0], crystal.charge, T)) : null;
  let walden: Quantity | null = null;
  let waldenConv: Quantity | null = null;
  const L = input.molarConductivity ?? null;
  if (L !== null) {
    const w = waldenJoin(...(read(joinInput('molarConductivity', L), etaIn) as [JoinInput, JoinInput]));
    walden = asQuantity(w.si);
    waldenConv = asQuantity(w.conventional);
  }
  const given: Array<[string, Quantity | null]> = [[hasD ? 'diffusion' : 'radius', hasD ? D : r], ['viscosity', eta], ['molarConductivity', L]];
  return {
    hydrodynamicRadius: asQuantity(r),
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
