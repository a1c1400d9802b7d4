/**
 * Where every atom's element and mass come from, and the checks made before a number that
 * depends on masses (mass density, centre-of-mass drift, molecule centres, kinetic temperature)
 * is computed.
 *
 * Each atom carries a code (Topology.massFrom) saying how its mass was set: the label is an
 * element symbol; the file's element column (PDB); --elements; --masses; guessed from a label
 * that is not an element symbol (src/elements.ts readLabel, elementFromLabel); a label that reads
 * two ways; no element at all. `atomKinds` groups the atoms by label, element, mass and origin for
 * the output; `checkMassesUsed` turns the guesses into one warning and the two-way labels into a
 * usage error that asks for --elements or --masses.
 */
import { UsageError } from './errors.js';
import { atomicMass, elementName, normaliseElement, readLabel } from './elements.js';
import type { Topology, Warnings } from './types.js';

/** Origin of an atom's mass, by code (the index into this list). */
export const MASS_ORIGINS = [
  'element symbol',
  'element column',
  '--elements',
  '--masses',
  'inferred from the label',
  'ambiguous label',
  'no element',
] as const;

/** One origin of MASS_ORIGINS. */
export type MassOrigin = (typeof MASS_ORIGINS)[number];

/**
 * Code of an origin (for Topology.massFrom): the low bits say where the element came from; the
 * bit MASS_GIVEN is set when --masses replaced the element's mass.
 */
export const MASS_FROM = {
  symbol: 0,
  column: 1,
  elements: 2,
  masses: 3,
  inferred: 4,
  ambiguous: 5,
  none: 6,
} as const;

/** Bit of a massFrom code: the mass was given with --masses. */
export const MASS_GIVEN = 0x80;

/** One group of atoms sharing label, element, mass and origin, as the output lists them. */
export interface AtomKind {
  label: string;
  atoms: number;
  /** Element symbol, or 'X' when none. */
  element: string;
  /** g/mol, or null when unknown. */
  mass: number | null;
  /** Where the mass came from. */
  from: MassOrigin;
  /** Where the element came from (the same as `from` unless --masses gave the mass). */
  elementFrom: MassOrigin;
  /** For an ambiguous label: the two elements it can name. */
  readings?: [string, string];
}

/** The origin code of a label read without any help (src/elements.ts readLabel). */
export function labelOriginCode(label: string): number {
  const r = readLabel(label);
  return r.kind === 'symbol' ? MASS_FROM.symbol : r.kind === 'inferred' ? MASS_FROM.inferred : r.kind === 'ambiguous' ? MASS_FROM.ambiguous : MASS_FROM.none;
}

/**
 * Parse --elements "CA=C,Sv=O" into label → canonical element symbol. A symbol that is not an
 * element, or an element without a standard atomic weight (CIAAW 2021; e.g. Tc), is a usage
 * error (give --masses for those).
 */
export function parseElements(text: string | undefined): Map<string, string> | undefined {
  if (text === undefined) return undefined;
  const m = new Map<string, string>();
  for (const part of text.split(',')) {
    const i = part.lastIndexOf('=');
    const label = part.slice(0, i).trim();
    const symbol = normaliseElement(part.slice(i + 1));
    if (i <= 0 || label === '' || symbol === null) {
      throw new UsageError(`--elements: expected LABEL=ELEMENT pairs separated by commas (e.g. "CA=C,OW=O"), got "${part}"`);
    }
    if (!Number.isFinite(atomicMass(symbol))) {
      throw new UsageError(`--elements: ${symbol} has no standard atomic weight; give its mass with --masses ${label}=…`);
    }
    m.set(label, symbol);
  }
  return m;
}

/** The atoms' labels that `map` names, or a usage error naming the first label no atom carries. */
function atomsLabelled(topology: Topology, label: string, option: string, path: string): number[] {
  const out: number[] = [];
  for (let i = 0; i < topology.atoms; i++) if (topology.labels[i] === label) out.push(i);
  if (out.length === 0) throw new UsageError(`${option}: no atom labelled "${label}" in ${path}`);
  return out;
}

/** The per-atom origin codes of a topology (all "inferred or symbol" by label when the reader set none). */
export function massOrigins(topology: Topology): Uint8Array {
  if (!topology.massFrom) topology.massFrom = Uint8Array.from(topology.labels, labelOriginCode);
  return topology.massFrom;
}

/**
 * Set the element (and its standard atomic weight) of every atom whose label is in `elements`
 * (from --elements); a label that matches no atom is a usage error.
 */
export function applyElements(topology: Topology, elements: Map<string, string>, path: string): void {
  const from = massOrigins(topology);
  for (const [label, symbol] of elements) {
    for (const i of atomsLabelled(topology, label, '--elements', path)) {
      topology.elements[i] = symbol;
      // --masses (applied after) may still replace the mass.
      topology.masses[i] = atomicMass(symbol);
      from[i] = MASS_FROM.elements;
    }
  }
}

/**
 * Replace the masses of atoms whose label is in `masses` (g/mol, from --masses). A label that
 * matches no atom is a usage error, so a typo cannot silently leave the element mass in place.
 */
export function applyMasses(topology: Topology, masses: Map<string, number>, path: string): void {
  const from = massOrigins(topology);
  for (const [label, m] of masses) {
    for (const i of atomsLabelled(topology, label, '--masses', path)) {
      topology.masses[i] = m;
      from[i] = (from[i]! & ~MASS_GIVEN & 0xff) | MASS_GIVEN;
    }
  }
}

/** The atoms grouped by label, element, mass and origin, in order of first appearance. */
export function atomKinds(topology: Topology): AtomKind[] {
  const from = massOrigins(topology);
  const byKey = new Map<string, AtomKind>();
  for (let i = 0; i < topology.atoms; i++) {
    const label = topology.labels[i]!;
    const m = topology.masses[i]!;
    const key = `${label}\u0000${topology.elements[i]}\u0000${m}\u0000${from[i]}`;
    const k = byKey.get(key);
    if (k) {
      k.atoms++;
      continue;
    }
    const code = from[i]!;
    const elementFrom = MASS_ORIGINS[code & ~MASS_GIVEN]!;
    const kind: AtomKind = {
      label,
      atoms: 1,
      element: topology.elements[i]!,
      mass: Number.isFinite(m) ? m : null,
      from: code & MASS_GIVEN ? '--masses' : elementFrom,
      elementFrom,
    };
    if ((code & ~MASS_GIVEN) === MASS_FROM.ambiguous) {
      const r = readLabel(label);
      if (r.kind === 'ambiguous') kind.readings = r.readings;
    }
    byKey.set(key, kind);
  }
  return [...byKey.values()];
}

/** "S (sulfur, 32.06 g/mol)". */
function describe(k: AtomKind): string {
  return `${k.element} (${elementName(k.element)}${k.mass !== null ? `, ${k.mass} g/mol` : ''})`;
}

/** Add a warning once. */
function warnOnce(warnings: Warnings, text: string): void {
  if (!warnings.includes(text)) warnings.push(text);
}

/**
 * Before `purpose` (e.g. "the mass density") uses the masses of `topology` read from `file`:
 * a label that reads two ways without --elements or --masses is a usage error asking for them;
 * masses guessed from labels are one warning naming each label and its guess; labels with no
 * element are one warning (their atoms are left out of mass-weighted sums).
 */
export function checkMassesUsed(topology: Topology, file: string, warnings: Warnings, purpose: string): void {
  const kinds = atomKinds(topology);
  const ambiguous = kinds.filter((k) => k.from === 'ambiguous label');
  if (ambiguous.length > 0) {
    const each = ambiguous.map((k) => {
      const [a, b] = k.readings ?? [k.element, k.element];
      return `"${k.label}" can be ${a} (${elementName(a)}) or ${b} (${elementName(b)})`;
    });
    const k0 = ambiguous[0]!;
    const [a] = k0.readings ?? [k0.element];
    throw new UsageError(
      `${file}: the atoms' masses are needed (for ${purpose}), but ${each.join('; ')}: say which with --elements (e.g. --elements ${k0.label}=${a}) or give the mass with --masses (e.g. --masses ${k0.label}=${atomicMass(a!)})`,
    );
  }
  const inferred = kinds.filter((k) => k.from === 'inferred from the label');
  if (inferred.length > 0) {
    warnOnce(
      warnings,
      `${file}: ${inferred.length === 1 ? 'a label is not an element symbol, so its mass was guessed from it' : 'labels are not element symbols, so their masses were guessed from them'}: ${inferred.map((k) => `"${k.label}" → ${describe(k)}`).join(', ')}; if a guess is wrong, give --elements LABEL=ELEMENT or --masses LABEL=MASS`,
    );
  }
  const none = kinds.filter((k) => k.mass === null);
  if (none.length > 0) {
    warnOnce(
      warnings,
      `${file}: no mass is known for ${none.map((k) => `"${k.label}"`).join(', ')} (no element with a standard atomic weight can be read from ${none.length === 1 ? 'it' : 'them'}); those atoms are left out of mass-weighted sums and the mass density is not given: give --masses LABEL=MASS (0 for a massless site)`,
    );
  }
}
