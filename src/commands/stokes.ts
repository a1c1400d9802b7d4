/**
 * `sojourn stokes`: Stokes–Einstein hydrodynamic radius of an ion from its diffusion coefficient
 * and the solvent viscosity (or the reverse), compared with its Shannon crystal radius, plus the
 * Walden product when a molar conductivity is given.
 */
import { lowTemperatureWarning } from '../checks.js';
import type { CommandContext } from './common.js';
import { Option, type Command } from 'commander';
import { addOutputOptions, emit } from './common.js';
import { parseQuantity, UNIT_FACTORS, type Dimension } from '../units.js';
import { UsageError } from '../errors.js';
import { formatQuantity, formatSig, formatTable } from '../output.js';
import { quantity, type Quantity } from '../types.js';
import { stokesSummary, type Boundary, type StokesResult } from '../transport.js';
import { CAUTION } from '../caution.js';

interface StokesOptions {
  diffusion?: string;
  radius?: string;
  viscosity: string;
  temperature: string;
  boundary: Boundary;
  species?: string;
  molarConductivity?: string;
  json?: boolean;
  quiet?: boolean;
}

/** Accepted units of molar conductivity and their factor to S m^2/mol. */
export const MOLAR_CONDUCTIVITY_UNITS: Record<string, number> = {
  'S m^2/mol': 1,
  'S cm^2/mol': 1e-4,
  'mS m^2/mol': 1e-3,
};

const NUM = '[+-]?(?:\\d+\\.?\\d*|\\.\\d+)(?:[eE][+-]?\\d+)?';
const PM = '(?:±|\\+-|\\+/-)';
const PLAIN = new RegExp(`^\\s*(${NUM})\\s*(?:${PM}\\s*(${NUM}))?\\s*(.*?)\\s*$`);
const GROUPED = new RegExp(`^\\s*\\(\\s*(${NUM})\\s*${PM}\\s*(${NUM})\\s*\\)\\s*(?:[eE]([+-]?\\d+))?\\s*(.*?)\\s*$`);

/**
 * Parse "VALUE[±UNC]UNIT" — e.g. "1.0e-9±0.05e-9m^2/s", "0.89 +- 0.02 mPa s",
 * "(1.03 ± 0.05)e-9 m^2/s" — into a value and standard uncertainty in the unit that `factors`
 * maps to 1. "+-" and "+/-" stand for "±". A missing uncertainty gives null. Usage errors name
 * the option and the accepted units.
 */
export function parseUncertainValue(text: string, factors: Record<string, number>, what: string): { value: number; uncertainty: number | null } {
  let value: number;
  let unc: number | null;
  let unit: string;
  const g = GROUPED.exec(text);
  const p = g ? null : PLAIN.exec(text);
  if (g) {
    const scale = g[3] !== undefined ? 10 ** Number(g[3]) : 1;
    value = Number(g[1]) * scale;
    unc = Number(g[2]) * scale;
    unit = g[4];
  } else if (p) {
    value = Number(p[1]);
    unc = p[2] !== undefined ? Number(p[2]) : null;
    unit = p[3];
  } else {
    throw new UsageError(`${what}: expected VALUE[±UNCERTAINTY]UNIT (e.g. 1.0e-9±0.05e-9m^2/s), got "${text}"`);
  }
  const accepted = Object.keys(factors).join(', ');
  const normalised = unit.replace(/\s+/g, ' ');
  const f = factors[normalised] ?? factors[normalised.replace(/·/g, ' ')];
  if (f === undefined) {
    throw new UsageError(unit === '' ? `${what}: "${text}" has no unit; accepted: ${accepted}` : `${what}: unknown unit "${unit}" in "${text}"; accepted: ${accepted}`);
  }
  if (!Number.isFinite(value) || (unc !== null && !(Number.isFinite(unc) && unc >= 0))) {
    throw new UsageError(`${what}: "${text}" needs a finite value and a non-negative uncertainty`);
  }
  return { value: value * f, uncertainty: unc === null ? null : unc * f };
}

/** `parseUncertainValue` for a dimension of src/units.ts, returned as a Quantity in `unit`. */
function uncertainQuantity(text: string, dim: Dimension, what: string, unit: string): Quantity {
  const v = parseUncertainValue(text, UNIT_FACTORS[dim], what);
  return quantity(v.value, v.uncertainty, unit);
}

/** Human-readable table of a Stokes–Einstein summary (D in 10^-9 m^2/s, η in mPa·s). */
export function renderStokes(r: StokesResult): string {
  const rows: string[][] = [
    ['temperature', `${formatSig(r.temperature.value, 5)} K`],
    ['viscosity', formatQuantity(r.viscosity, 1e3, 'mPa·s')],
    [`diffusion coefficient${r.computed === 'diffusion' ? ' (computed)' : ''}`, formatQuantity(r.diffusion, 1e9, '10⁻⁹ m²/s')],
    [`hydrodynamic radius, ${r.boundary}${r.computed === 'radius' ? ' (computed)' : ''}`, formatQuantity(r.hydrodynamicRadius, 1, 'Å')],
  ];
  if (r.crystalRadius) {
    rows.push([`crystal radius of ${r.species} (Shannon 1976, CN 6)`, formatQuantity(r.crystalRadius, 1, 'Å')]);
    rows.push(['r_H / r_crystal', formatQuantity(r.radiusRatio, 1, '')]);
  }
  if (r.limitingMolarConductivity) {
    rows.push(['λ from D (Nernst–Einstein)', formatQuantity(r.limitingMolarConductivity, 1e4, 'S cm² mol⁻¹')]);
  }
  if (r.waldenProductConventional) rows.push(['Walden product Λη', formatQuantity(r.waldenProductConventional, 1, 'S cm² mol⁻¹ P')]);
  const out = [formatTable(['quantity', 'value'], rows)];
  if (r.radiusRatio && r.radiusRatio.value > 1.5) {
    out.push(
      `\nr_H is ${formatSig(r.radiusRatio.value, 3)} times the crystal radius: consistent with an ion that drags a bound solvation shell, which is why it conducts less than its bare size suggests.`,
    );
  }
  out.push('', CAUTION);
  return out.join('\n');
}

export function register(program: Command, cc: CommandContext): void {
  const cmd = program
    .command('stokes')
    .description('Stokes–Einstein hydrodynamic radius from D and η (or D from a radius), against the Shannon crystal radius; Walden product')
    .option('--diffusion <D>', 'diffusion coefficient with optional uncertainty, e.g. 1.03e-9±0.05e-9m^2/s or 1.03e-5cm^2/s')
    .option('--radius <r>', 'radius to turn into a diffusion coefficient, e.g. 2.4A or 0.24nm (instead of --diffusion)')
    .requiredOption('--viscosity <eta>', 'solvent viscosity with optional uncertainty, e.g. 0.89±0.02mPa.s or 0.89cP')
    .requiredOption('--temperature <T>', 'temperature, e.g. 298.15K')
    .addOption(new Option('--boundary <kind>', 'hydrodynamic boundary condition (stick: 6πηr, slip: 4πηr)').choices(['stick', 'slip']).default('stick'))
    .option('--species <ion>', 'ion name for the crystal radius and charge, e.g. Li+, Mg2+, Cl-')
    .option('--molar-conductivity <L>', `molar conductivity for the Walden product, e.g. 38.7S cm^2/mol (units: ${Object.keys(MOLAR_CONDUCTIVITY_UNITS).join(', ')})`);
  addOutputOptions(cmd).action(async (opts: StokesOptions) => {
    const warnings: string[] = [];
    if ((opts.diffusion === undefined) === (opts.radius === undefined)) throw new UsageError('give exactly one of --diffusion and --radius');
    const temperatureK = parseQuantity(opts.temperature, 'temperature', '--temperature', 'K');
    const lowT = lowTemperatureWarning(temperatureK);
    if (lowT) warnings.push(lowT);
    const viscosity = uncertainQuantity(opts.viscosity, 'viscosity', '--viscosity', 'Pa s');
    const diffusion = opts.diffusion !== undefined ? uncertainQuantity(opts.diffusion, 'diffusion', '--diffusion', 'm^2/s') : null;
    const radius = opts.radius !== undefined ? uncertainQuantity(opts.radius, 'length', '--radius', 'A') : null;
    let molar: Quantity | null = null;
    if (opts.molarConductivity !== undefined) {
      const v = parseUncertainValue(opts.molarConductivity, MOLAR_CONDUCTIVITY_UNITS, '--molar-conductivity');
      molar = quantity(v.value, v.uncertainty, 'S m^2/mol');
    }
    // A number typed without ± is the user's own value, taken as exact (it contributes nothing to
    // the propagated uncertainties), unlike a number from an analysis that could not estimate one.
    const r = stokesSummary({
      diffusion,
      radius,
      viscosity,
      temperatureK,
      boundary: opts.boundary,
      species: opts.species ?? null,
      molarConductivity: molar,
      missingUncertainty: 'exact',
    });
    if (r.hydrodynamicRadius.uncertainty === null && r.diffusion.uncertainty === null) {
      warnings.push('no uncertainties were given, so the result carries none; write them as VALUE±UNCERTAINTY UNIT');
    } else if (r.inputsWithoutUncertainty.length > 0) {
      const options = r.inputsWithoutUncertainty.map((k) => `--${k.replace(/[A-Z]/g, (c) => `-${c.toLowerCase()}`)}`);
      warnings.push(
        `${options.join(' and ')} ${options.length > 1 ? 'were' : 'was'} given without ±, so taken as exact: the uncertainties shown leave ${options.length > 1 ? 'them' : 'it'} out; write VALUE±UNCERTAINTY UNIT to include ${options.length > 1 ? 'them' : 'it'}`,
      );
    }
    emit('stokes', opts, [], { ...opts }, r, warnings, () => renderStokes(r));
  });
}
