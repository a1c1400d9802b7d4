/**
 * Options declared as data. An analysis lists the options it takes (flag, help text, kind with
 * its unit, default and limits); the command-line layer turns each declaration into a commander
 * option, and `readOptionValues` here turns the texts the user gave into values in the fixed
 * internal units (Å, ps, K), raising a UsageError naming the option for anything out of range.
 *
 * The options every trajectory command shares (frames, cell, masses, threads, output) are
 * declared once, in `SHARED`; so are those several analyses share (temperature, segments, the
 * site choice, the fit windows).
 */
import { UsageError } from '../errors.js';
import { parseQuantity, type Dimension } from '../units.js';

/** How an option's text is read. */
export type OptionKind =
  | { kind: 'quantity'; dimension: Dimension; bare?: string; positive?: boolean; nonNegative?: boolean }
  | { kind: 'integer'; min: number }
  | { kind: 'fraction'; lo: number; hi: number }
  | { kind: 'text' }
  | { kind: 'list' }
  | { kind: 'flag' }
  | { kind: 'choice'; choices: readonly string[] }
  | { kind: 'file'; output: 'file' | 'prefix' };

/** One option as data. */
export interface OptionSpec {
  /** Property name of the parsed value (commander's camel-case attribute of the flag). */
  readonly key: string;
  /** The flag with its value placeholder, e.g. "--cutoff <length>". */
  readonly flag: string;
  readonly help: string;
  readonly type: OptionKind;
  /** Default as text (read like a user value). */
  readonly default?: string;
  /** The command cannot run without it (commander reports it missing, exit 2). */
  readonly required?: boolean;
}

/** Parsed option values by key: numbers in internal units, texts, flags, lists, output paths. */
export type OptionValues = Record<string, unknown>;

/** The option name a message uses ("--cutoff"). */
export function flagName(spec: OptionSpec): string {
  return spec.flag.split(/[ <[]/)[0]!;
}

/**
 * Read one option's text into its value (a number in the internal unit of its dimension for a
 * quantity). Messages name the flag and the text, as every command's did before.
 */
export function readOptionValue(spec: OptionSpec, text: unknown): unknown {
  const what = flagName(spec);
  const t = spec.type;
  switch (t.kind) {
    case 'quantity': {
      const v = parseQuantity(String(text), t.dimension, what, t.bare);
      if (t.positive && !(v > 0)) throw new UsageError(`${what} must be positive, got "${text}"`);
      if (t.nonNegative && !(v >= 0)) throw new UsageError(`${what} must not be negative`);
      return v;
    }
    case 'integer': {
      const v = Number(text);
      if (!(Number.isInteger(v) && v >= t.min)) throw new UsageError(`${what} must be a whole number ≥ ${t.min}, got "${text}"`);
      return v;
    }
    case 'fraction': {
      const v = Number(text);
      if (!(v > t.lo && v < t.hi)) throw new UsageError(`${what} must be a number between ${t.lo} and ${t.hi} (exclusive), got "${text}"`);
      return v;
    }
    case 'choice':
      if (!t.choices.includes(String(text))) throw new UsageError(`${what} must be one of ${t.choices.join(', ')}, got "${text}"`);
      return String(text);
    case 'flag':
      return text === true;
    case 'list':
      return Array.isArray(text) ? text.map(String) : [String(text)];
    case 'text':
    case 'file':
      return String(text);
  }
}

/**
 * Read every declared option from the raw values (commander's attributes); an option not given
 * and without a default is absent from the result.
 */
export function readOptionValues(specs: readonly OptionSpec[], raw: Record<string, unknown>): OptionValues {
  const out: OptionValues = {};
  for (const s of specs) {
    const text = raw[s.key] ?? s.default;
    if (text === undefined || text === false) continue;
    out[s.key] = readOptionValue(s, text);
  }
  return out;
}

/** A number value or undefined. */
export function numberOr(values: OptionValues, key: string): number | undefined {
  const v = values[key];
  return typeof v === 'number' ? v : undefined;
}

/** A text value or undefined. */
export function textOr(values: OptionValues, key: string): string | undefined {
  const v = values[key];
  return typeof v === 'string' ? v : undefined;
}

/** The options shared by analyses, declared once. */
export const SHARED = {
  temperature: (help: string): OptionSpec => ({
    key: 'temperature',
    flag: '--temperature <T>',
    help,
    type: { kind: 'quantity', dimension: 'temperature', bare: 'K' },
  }),
  segments: (help = 'independent segments for the uncertainty', fallback?: number): OptionSpec => ({
    key: 'segments',
    flag: '--segments <M>',
    help: fallback === undefined ? help : `${help} (default ${fallback})`,
    type: { kind: 'integer', min: 2 },
  }),
  /** An output file written after a successful run (checked before reading). */
  csvFile: (help: string, key = 'csv', flag = '--csv <file>'): OptionSpec => ({ key, flag, help, type: { kind: 'file', output: 'file' } }),
  /** An output prefix for several files. */
  csvPrefix: (help: string): OptionSpec => ({ key: 'csv', flag: '--csv <prefix>', help, type: { kind: 'file', output: 'prefix' } }),
  maxMemory: {
    key: 'maxMemory',
    flag: '--max-memory <size>',
    help: 'largest memory for stored coordinates, e.g. 512MB or 2GB; beyond it the atoms are processed in batches, one read of the file each',
    type: { kind: 'text' },
  } satisfies OptionSpec,
} as const;

/** The site choice shared by the analyses that follow atoms or molecules (msd, vacf, diffusion). */
export const SITE_OPTIONS: readonly OptionSpec[] = [
  { key: 'select', flag: '--select <sel>', help: 'atoms to analyse (selection syntax: "Na", "el=O&res=SOL", "idx=0-99"); default all', type: { kind: 'text' } },
  { key: 'species', flag: '--species <sel>', help: 'report this selection as one group (repeatable); default one group per atom label', type: { kind: 'list' } },
  { key: 'molecules', flag: '--molecules', help: 'follow molecule (residue) centres of mass instead of atoms; groups by residue name', type: { kind: 'flag' } },
  { key: 'keepDrift', flag: '--keep-drift', help: 'do not remove the centre-of-mass drift (removed by default, mass-weighted over all atoms)', type: { kind: 'flag' } },
];

/** 2-D diffusion in a plane. */
export const PLANE_OPTION: OptionSpec = { key: 'plane', flag: '--plane <xy|xz|yz>', help: '2-D diffusion in a plane (d = 2) instead of 3-D', type: { kind: 'text' } };

/** The plateau rule of running integrals (vacf, diffusion, conductivity). */
export function plateauOptions(defaults: { tolerance: number; span: number }): OptionSpec[] {
  return [
    {
      key: 'plateauTolerance',
      flag: '--plateau-tolerance <x>',
      help: `plateau: largest relative change of the running integral over the span (default ${defaults.tolerance})`,
      type: { kind: 'fraction', lo: 0, hi: 1 },
    },
    {
      key: 'plateauSpan',
      flag: '--plateau-span <f>',
      help: `plateau: span as a fraction of the lags a segment holds (default ${defaults.span})`,
      type: { kind: 'fraction', lo: 0, hi: 0.5 },
    },
  ];
}

/** The site options as species-layout options (analyses/msd.ts `SpeciesLayoutOptions`). */
export function siteValues(v: OptionValues): { selection?: string; species?: string[]; molecules?: boolean; keepDrift?: boolean; plane?: string } {
  const out: { selection?: string; species?: string[]; molecules?: boolean; keepDrift?: boolean; plane?: string } = {};
  if (typeof v.select === 'string') out.selection = v.select;
  if (Array.isArray(v.species)) out.species = v.species as string[];
  if (v.molecules === true) out.molecules = true;
  if (v.keepDrift === true) out.keepDrift = true;
  if (typeof v.plane === 'string') out.plane = v.plane;
  return out;
}

/** The MSD fit window (msd, diffusion, conductivity). */
export function windowOptionSpecs(defaults: { slopeTolerance: number; segments: number }): OptionSpec[] {
  return [
    { key: 'fitFrom', flag: '--fit-from <time>', help: 'start of the fit window, e.g. 20ps (with --fit-to; default: automatic)', type: { kind: 'quantity', dimension: 'time', nonNegative: true } },
    { key: 'fitTo', flag: '--fit-to <time>', help: 'end of the fit window, e.g. 200ps', type: { kind: 'quantity', dimension: 'time' } },
    {
      key: 'slopeTolerance',
      flag: '--slope-tolerance <x>',
      help: `automatic window: largest |d ln MSD/d ln t − 1| (default ${defaults.slopeTolerance})`,
      type: { kind: 'fraction', lo: 0, hi: 1 },
    },
    SHARED.segments(undefined, defaults.segments),
  ];
}

/** The fit-window values as analysis options (times in ps); both ends or neither. */
export function windowValues(v: OptionValues): { fitFrom?: number; fitTo?: number; tolerance?: number; segments?: number } {
  if ((v.fitFrom === undefined) !== (v.fitTo === undefined)) throw new UsageError('give both --fit-from and --fit-to, or neither');
  const out: { fitFrom?: number; fitTo?: number; tolerance?: number; segments?: number } = {};
  if (v.fitFrom !== undefined) out.fitFrom = v.fitFrom as number;
  if (v.fitTo !== undefined) out.fitTo = v.fitTo as number;
  if (v.slopeTolerance !== undefined) out.tolerance = v.slopeTolerance as number;
  if (v.segments !== undefined) out.segments = v.segments as number;
  return out;
}

/** The plateau values as analysis options. */
export function plateauValues(v: OptionValues): { plateauTolerance?: number; plateauSpan?: number; segments?: number } {
  const out: { plateauTolerance?: number; plateauSpan?: number; segments?: number } = {};
  if (v.plateauTolerance !== undefined) out.plateauTolerance = v.plateauTolerance as number;
  if (v.plateauSpan !== undefined) out.plateauSpan = v.plateauSpan as number;
  if (v.segments !== undefined) out.segments = v.segments as number;
  return out;
}
