/**
 * Physical constants (CODATA 2018 exact values) and the parser for quantities written as
 * number+unit on the command line ("0.05ps", "27nm^3", "300K", "1.01325bar").
 *
 * Internal units: length Å, time ps, volume Å^3, temperature K; pressure Pa, viscosity Pa s,
 * diffusion coefficient m^2/s (SI for the transport quantities, as in the JSON output).
 */
import { UsageError } from './errors.js';

/** Boltzmann constant, J/K (CODATA 2018, exact by the 2019 SI definition). */
export const BOLTZMANN = 1.380649e-23;
/** Elementary charge, C (CODATA 2018, exact). */
export const ELEMENTARY_CHARGE = 1.602176634e-19;
/** Avogadro constant, 1/mol (CODATA 2018, exact). */
export const AVOGADRO = 6.02214076e23;
/** Molar gas constant R = N_A k_B, J/(mol K) (exact product of CODATA 2018 constants). */
export const GAS_CONSTANT = AVOGADRO * BOLTZMANN;
/** Faraday constant F = N_A e, C/mol (exact product of CODATA 2018 constants). */
export const FARADAY = AVOGADRO * ELEMENTARY_CHARGE;
/** Planck constant, J s (CODATA 2018, exact). */
export const PLANCK = 6.62607015e-34;
/** Speed of light in vacuum, m/s (exact). */
export const SPEED_OF_LIGHT = 299792458;

/** 1 Å in m. */
export const ANGSTROM = 1e-10;
/** 1 ps in s. */
export const PICOSECOND = 1e-12;
/** 1 Å^3 in m^3. */
export const CUBIC_ANGSTROM = 1e-30;
/** 1 Å^2/ps in m^2/s (= 1e-8). */
export const A2_PER_PS = (ANGSTROM * ANGSTROM) / PICOSECOND;
/** Atomic mass constant: 1 g/mol per particle in kg (= 1e-3 / N_A). */
export const GRAM_PER_MOL = 1e-3 / AVOGADRO;

/** The dimensions the quantity parser knows, each with its internal unit. */
export type Dimension =
  | 'length'
  | 'time'
  | 'volume'
  | 'pressure'
  | 'viscosity'
  | 'diffusion'
  | 'temperature'
  | 'conductivity'
  | 'velocity';

/** Internal unit of each dimension (what parseQuantity returns). */
export const INTERNAL_UNIT: Record<Dimension, string> = {
  length: 'A',
  time: 'ps',
  volume: 'A^3',
  pressure: 'Pa',
  viscosity: 'Pa s',
  diffusion: 'm^2/s',
  temperature: 'K',
  conductivity: 'S/m',
  velocity: 'A/ps',
};

/** Factor that converts one of each accepted unit into the internal unit of its dimension. */
export const UNIT_FACTORS: Record<Dimension, Record<string, number>> = {
  length: { A: 1, 'Å': 1, nm: 10, pm: 0.01, m: 1e10 },
  time: { fs: 1e-3, ps: 1, ns: 1e3 },
  volume: { 'A^3': 1, 'Å^3': 1, 'nm^3': 1e3 },
  pressure: { Pa: 1, kPa: 1e3, MPa: 1e6, GPa: 1e9, bar: 1e5, atm: 101325 },
  viscosity: { 'Pa.s': 1, 'Pa s': 1, 'mPa.s': 1e-3, 'mPa s': 1e-3, cP: 1e-3 },
  diffusion: { 'm^2/s': 1, 'cm^2/s': 1e-4, 'A^2/ps': A2_PER_PS, 'Å^2/ps': A2_PER_PS },
  temperature: { K: 1 },
  conductivity: { 'S/m': 1, 'mS/cm': 0.1, 'S/cm': 100 },
  // 1 Å/fs = 1000 Å/ps; 1 nm/ps = 10 Å/ps; 1 m/s = 10¹⁰ Å / 10¹² ps = 0.01 Å/ps.
  velocity: { 'A/ps': 1, 'Å/ps': 1, 'A/fs': 1000, 'Å/fs': 1000, 'nm/ps': 10, 'm/s': 0.01 },
};

const NUMBER_PREFIX = /^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$/;

/**
 * Parse "number unit" (space optional) into the internal unit of `dim`. A bare number is
 * accepted only when `allowBare` names the unit it is taken in. Unknown units, missing
 * numbers and non-finite values are usage errors that list the accepted units.
 */
export function parseQuantity(text: string, dim: Dimension, what: string, allowBare?: string): number {
  const m = NUMBER_PREFIX.exec(text);
  const accepted = Object.keys(UNIT_FACTORS[dim]).join(', ');
  if (!m) throw new UsageError(`${what}: expected a number with a unit (${accepted}), got "${text}"`);
  const value = Number(m[1]);
  let unit = m[2];
  if (unit === '' && allowBare !== undefined) unit = allowBare;
  const factor = UNIT_FACTORS[dim][unit];
  if (factor === undefined) {
    throw new UsageError(
      unit === ''
        ? `${what}: "${text}" has no unit; write it with one of: ${accepted}`
        : `${what}: unknown unit "${unit}" in "${text}"; accepted: ${accepted}`,
    );
  }
  if (!Number.isFinite(value)) throw new UsageError(`${what}: "${text}" is not a finite number`);
  return value * factor;
}

/** Convert a value from the internal unit of `dim` into `unit` (one of UNIT_FACTORS[dim]). */
export function convertFromInternal(value: number, dim: Dimension, unit: string): number {
  const f = UNIT_FACTORS[dim][unit];
  if (f === undefined) throw new Error(`no unit ${unit} for ${dim}`);
  return value / f;
}

/**
 * Lennard-Jones reduced units: given σ (Å), ε (J per particle) and m (g/mol), the factors
 * that turn reduced length, time, temperature, pressure, viscosity and diffusion into
 * internal units. τ = σ √(m/ε) (Allen & Tildesley, Computer Simulation of Liquids, 2nd ed.,
 * 2017, Appendix B).
 */
export function reducedUnitScales(sigmaA: number, epsilonJ: number, massGPerMol: number) {
  const sigma = sigmaA * ANGSTROM; // m
  const m = massGPerMol * GRAM_PER_MOL; // kg
  const tau = sigma * Math.sqrt(m / epsilonJ); // s
  return {
    length: sigmaA, // Å per σ
    time: tau / PICOSECOND, // ps per τ
    temperature: epsilonJ / BOLTZMANN, // K per ε/k_B
    pressure: epsilonJ / sigma ** 3, // Pa per ε/σ³
    viscosity: (epsilonJ * tau) / sigma ** 3, // Pa s per ε τ/σ³
    diffusion: (sigma * sigma) / tau, // m²/s per σ²/τ
  };
}
