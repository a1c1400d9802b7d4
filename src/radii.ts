/**
 * Effective ionic radii of common ions in six-fold coordination, from R. D. Shannon, "Revised
 * effective ionic radii and systematic studies of interatomic distances in halides and
 * chalcogenides", Acta Cryst. A32, 751–767 (1976), scale with r(O2−, VI) = 1.40 Å and
 * r(F−, VI) = 1.33 Å. Used to compare a Stokes radius with the bare-ion size.
 */

/** One tabulated ion. */
export interface IonRadius {
  /** Canonical name: element symbol then charge, "Li+", "Mg2+", "Cl-". */
  name: string;
  /** Charge number z. */
  charge: number;
  /** Effective ionic radius, Å, coordination number 6. */
  radiusA: number;
  /** How the value was checked. */
  note: string;
}

const CHECKED = 'Shannon (1976), checked against a reprint of the CN 6 table';
const DERIVED = 'Shannon (1976), checked as crystal radius − 0.14 Å (Shannon\u2019s crystal-radius scale)';
const MEMORY = 'Shannon (1976), from memory';

/** Six-coordinate effective ionic radii (Shannon, Acta Cryst. A32, 751 (1976)). */
export const SHANNON_RADII: readonly IonRadius[] = [
  { name: 'Li+', charge: 1, radiusA: 0.76, note: DERIVED },
  { name: 'Na+', charge: 1, radiusA: 1.02, note: DERIVED },
  { name: 'K+', charge: 1, radiusA: 1.38, note: DERIVED },
  { name: 'Rb+', charge: 1, radiusA: 1.52, note: MEMORY },
  { name: 'Cs+', charge: 1, radiusA: 1.67, note: CHECKED },
  { name: 'Mg2+', charge: 2, radiusA: 0.72, note: CHECKED },
  { name: 'Ca2+', charge: 2, radiusA: 1.0, note: CHECKED },
  { name: 'F-', charge: -1, radiusA: 1.33, note: CHECKED },
  { name: 'Cl-', charge: -1, radiusA: 1.81, note: CHECKED },
  { name: 'Br-', charge: -1, radiusA: 1.96, note: CHECKED },
  { name: 'I-', charge: -1, radiusA: 2.2, note: MEMORY },
];

/**
 * Normalise an ion name written as "Li+", "li", "Mg2+", "Mg++", "Mg+2", "Cl-", "cl−" into the
 * canonical "Li+", "Mg2+", "Cl-"; null when it is not of that shape. A bare element symbol is
 * returned without charge (e.g. "Na") so the caller can resolve it against the table.
 */
export function normaliseIonName(text: string): string | null {
  const t = text.trim().replace(/\u2212/g, '-');
  const m = /^([A-Za-z]{1,2})(?:(\d*)([+-])|([+-]+)|([+-])(\d+))?$/.exec(t);
  if (!m) return null;
  const sym = m[1][0].toUpperCase() + m[1].slice(1).toLowerCase();
  let n = 0;
  let sign = '';
  if (m[3]) {
    sign = m[3];
    n = m[2] ? Number(m[2]) : 1;
  } else if (m[4]) {
    sign = m[4][0];
    if (!/^(\+*|-*)$/.test(m[4])) return null;
    n = m[4].length;
  } else if (m[5]) {
    sign = m[5];
    n = Number(m[6]);
  }
  if (sign === '') return sym;
  if (!(n >= 1)) return null;
  return `${sym}${n === 1 ? '' : n}${sign}`;
}

/**
 * The tabulated six-coordinate Shannon radius (Å) of an ion, or null when it is not in the
 * table. A bare element symbol matches when exactly one ion of that element is tabulated.
 */
export function crystalRadius(ion: string): IonRadius | null {
  const name = normaliseIonName(ion);
  if (name === null) return null;
  const exact = SHANNON_RADII.find((r) => r.name === name);
  if (exact) return exact;
  const byElement = SHANNON_RADII.filter((r) => r.name.replace(/\d*[+-]$/, '') === name);
  return byElement.length === 1 ? byElement[0] : null;
}
