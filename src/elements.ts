/**
 * Element symbols, atomic numbers and standard atomic weights.
 *
 * Masses (g/mol) are the IUPAC/CIAAW standard atomic weights abridged to five significant
 * figures, from T. Prohaska et al., "Standard atomic weights of the elements 2021 (IUPAC
 * Technical Report)", Pure Appl. Chem. 94 (2022) 573–600, doi:10.1515/pac-2019-0603.
 * For the elements whose standard atomic weight is an interval (H, Li, B, C, N, O, Mg, Si, S,
 * Cl, Ar, Br, Tl, Pb) the abridged value given there is the conventional value used here
 * (e.g. Ar → 39.95, Pb → 207.2, not the older single values 39.948 and 207.2±0.1).
 * Elements without a standard atomic weight (Tc, Pm, Po…Ac, Np and heavier) have no mass
 * here: atomicMass() returns NaN for them.
 *
 * 'D' (deuterium, ²H) is accepted as a pseudo-element with mass 2.014 (relative atomic mass of
 * ²H, 2.014 101 78, rounded to the same number of decimals as hydrogen's 1.008).
 */

/** Symbols by atomic number (index 0 unused). */
const SYMBOLS: readonly string[] = [
  '',
  'H', 'He', 'Li', 'Be', 'B', 'C', 'N', 'O', 'F', 'Ne',
  'Na', 'Mg', 'Al', 'Si', 'P', 'S', 'Cl', 'Ar', 'K', 'Ca',
  'Sc', 'Ti', 'V', 'Cr', 'Mn', 'Fe', 'Co', 'Ni', 'Cu', 'Zn',
  'Ga', 'Ge', 'As', 'Se', 'Br', 'Kr', 'Rb', 'Sr', 'Y', 'Zr',
  'Nb', 'Mo', 'Tc', 'Ru', 'Rh', 'Pd', 'Ag', 'Cd', 'In', 'Sn',
  'Sb', 'Te', 'I', 'Xe', 'Cs', 'Ba', 'La', 'Ce', 'Pr', 'Nd',
  'Pm', 'Sm', 'Eu', 'Gd', 'Tb', 'Dy', 'Ho', 'Er', 'Tm', 'Yb',
  'Lu', 'Hf', 'Ta', 'W', 'Re', 'Os', 'Ir', 'Pt', 'Au', 'Hg',
  'Tl', 'Pb', 'Bi', 'Po', 'At', 'Rn', 'Fr', 'Ra', 'Ac', 'Th',
  'Pa', 'U', 'Np', 'Pu', 'Am', 'Cm', 'Bk', 'Cf', 'Es', 'Fm',
  'Md', 'No', 'Lr', 'Rf', 'Db', 'Sg', 'Bh', 'Hs', 'Mt', 'Ds',
  'Rg', 'Cn', 'Nh', 'Fl', 'Mc', 'Lv', 'Ts', 'Og',
];

/**
 * CIAAW 2021 abridged standard atomic weights (conventional values for interval elements,
 * marked "interval"). Keyed by symbol.
 */
const MASSES: Readonly<Record<string, number>> = {
  H: 1.008, // interval [1.00784, 1.00811]; abridged/conventional 1.0080
  D: 2.014, // deuterium (not a CIAAW entry): relative atomic mass of 2H, 2.01410178
  He: 4.0026,
  Li: 6.94, // interval [6.938, 6.997]
  Be: 9.0122,
  B: 10.81, // interval [10.806, 10.821]
  C: 12.011, // interval [12.0096, 12.0116]
  N: 14.007, // interval [14.00643, 14.00728]
  O: 15.999, // interval [15.99903, 15.99977]
  F: 18.998,
  Ne: 20.18,
  Na: 22.99,
  Mg: 24.305, // interval [24.304, 24.307]
  Al: 26.982,
  Si: 28.085, // interval [28.084, 28.086]
  P: 30.974,
  S: 32.06, // interval [32.059, 32.076]
  Cl: 35.45, // interval [35.446, 35.457]
  Ar: 39.95, // interval [39.792, 39.963] (since 2017)
  K: 39.098,
  Ca: 40.078,
  Sc: 44.956,
  Ti: 47.867,
  V: 50.942,
  Cr: 51.996,
  Mn: 54.938,
  Fe: 55.845,
  Co: 58.933,
  Ni: 58.693,
  Cu: 63.546,
  Zn: 65.38,
  Ga: 69.723,
  Ge: 72.63,
  As: 74.922,
  Se: 78.971,
  Br: 79.904, // interval [79.901, 79.907]
  Kr: 83.798,
  Rb: 85.468,
  Sr: 87.62,
  Y: 88.906,
  Zr: 91.224,
  Nb: 92.906,
  Mo: 95.95,
  Ru: 101.07,
  Rh: 102.91,
  Pd: 106.42,
  Ag: 107.87,
  Cd: 112.41,
  In: 114.82,
  Sn: 118.71,
  Sb: 121.76,
  Te: 127.6,
  I: 126.9,
  Xe: 131.29,
  Cs: 132.91,
  Ba: 137.33,
  La: 138.91,
  Ce: 140.12,
  Pr: 140.91,
  Nd: 144.24,
  Sm: 150.36,
  Eu: 151.96,
  Gd: 157.25,
  Tb: 158.93,
  Dy: 162.5,
  Ho: 164.93,
  Er: 167.26,
  Tm: 168.93,
  Yb: 173.05,
  Lu: 174.97,
  Hf: 178.49,
  Ta: 180.95,
  W: 183.84,
  Re: 186.21,
  Os: 190.23,
  Ir: 192.22,
  Pt: 195.08,
  Au: 196.97,
  Hg: 200.59,
  Tl: 204.38, // interval [204.382, 204.385]
  Pb: 207.2, // interval [206.14, 207.94] (since 2021)
  Bi: 208.98,
  Th: 232.04,
  Pa: 231.04,
  U: 238.03,
};

/** Upper-case symbol → canonical symbol, for every element 1..118 plus 'D'. */
const BY_UPPER = new Map<string, string>();
/** Canonical symbol → atomic number. */
const ATOMIC_NUMBER = new Map<string, number>();
for (let z = 1; z < SYMBOLS.length; z++) {
  BY_UPPER.set(SYMBOLS[z]!.toUpperCase(), SYMBOLS[z]!);
  ATOMIC_NUMBER.set(SYMBOLS[z]!, z);
}
BY_UPPER.set('D', 'D');
ATOMIC_NUMBER.set('D', 1);

/** Heaviest atomic number considered when a label's first two letters are read as a symbol. */
const MAX_Z_FOR_LABEL_MATCH = 103;

/** Standard atomic weight (g/mol) of an element symbol (any capitalisation); NaN if unknown. */
export function atomicMass(symbol: string): number {
  const canon = BY_UPPER.get(symbol.trim().toUpperCase());
  if (canon === undefined) return NaN;
  return MASSES[canon] ?? NaN;
}

/**
 * Canonical capitalisation of an element symbol ("CL" → "Cl", "na" → "Na"), or null when
 * the text is not an element symbol (or 'D').
 */
export function normaliseElement(symbol: string): string | null {
  return BY_UPPER.get(symbol.trim().toUpperCase()) ?? null;
}

/** Atomic number of an element symbol (any capitalisation; 'D' → 1), or 0 when unknown. */
export function atomicNumber(symbol: string): number {
  const canon = normaliseElement(symbol);
  return canon === null ? 0 : (ATOMIC_NUMBER.get(canon) ?? 0);
}

/** Element symbol for atomic number z (1..118), or null. */
export function symbolOf(z: number): string | null {
  return Number.isInteger(z) && z >= 1 && z < SYMBOLS.length ? SYMBOLS[z]! : null;
}

function isUpper(c: string): boolean {
  return c >= 'A' && c <= 'Z';
}
function isLower(c: string): boolean {
  return c >= 'a' && c <= 'z';
}

/**
 * Upper-case atom-name prefixes starting with C whose first two letters are read as the
 * two-letter element (chloro/copper/cobalt/chromium/caesium ions and ligands), even though C
 * names are otherwise carbon. Everything else starting with C (CA, CB, CD1, CE2, CG, CZ…) is
 * carbon.
 */
const C_TWO_LETTER = new Set(['CL', 'CU', 'CO', 'CR', 'CS']);

/** Three-letter ion atom names used by some biomolecular force fields (exact, any case) that no letter rule would read right. */
const ION_ALIASES: ReadonlyMap<string, string> = new Map([
  ['SOD', 'Na'],
  ['POT', 'K'],
  ['CLA', 'Cl'],
  ['CAL', 'Ca'],
  ['CES', 'Cs'],
  ['LIT', 'Li'],
  ['RUB', 'Rb'],
  ['BAR', 'Ba'],
  ['ZN2', 'Zn'],
]);

/**
 * Element symbol from an atom label, or 'X' when none can be derived. The rule, in order:
 *
 * 0. The force-field ion names SOD, POT, CLA, CAL, CES, LIT, RUB, BAR, ZN2 (exact, any case) map to
 *    Na, K, Cl, Ca, Cs, Li, Rb, Ba, Zn.
 * 1. Whitespace is trimmed and a trailing charge ("+", "-", "2+", "3-", "++") is removed;
 *    remember that the label carried a charge (it names an ion).
 * 2. A label made only of digits is an atomic number ("8" → O); unknown numbers give 'X'.
 * 3. Leading digits are dropped (PDB hydrogen names such as "1HB", "2HG1").
 * 4. The leading run of letters is looked at; none → 'X'.
 * 5. Mixed case decides: an upper-case letter followed by a lower-case letter that together
 *    form an element symbol is that element ("Na", "Cl", "Ca", "Li", "Mg", "Zn", "Na1").
 *    Otherwise (e.g. "Ow", "Hw") only the first letter counts.
 * 6. Otherwise (all upper- or all lower-case) the first two letters are taken as a two-letter
 *    element when they form the symbol of an element with Z ≤ 103 AND the label is not read as
 *    a common water/biomolecular atom name:
 *    - with a charge suffix (step 1) the two-letter element always wins ("NA+", "CA2+", "CL-");
 *    - names starting with H or O are always hydrogen/oxygen ("HW1", "HE2", "HG", "OW", "OS",
 *      "OG1": so Hg, He, Ho, Hf, Os must be written in mixed case or given by the PDB element
 *      column);
 *    - names starting with N are nitrogen ("NE", "ND1", "NH2"), except the exact name "NA"
 *      (a common sodium-ion atom name), which is sodium;
 *    - names starting with C are carbon ("CA" alpha carbon, "CD", "CE", "CG"), except those
 *      starting with CL, CU, CO, CR or CS ("CL", "CL1" → Cl);
 *    - any other first letter uses the two-letter element ("ZN", "MG", "FE", "BR", "LI", "SI").
 *      Superheavy symbols are never matched, so "SG" (cysteine) is sulfur, "OG" oxygen.
 * 7. Failing that, the first letter if it is a one-letter element symbol (H, B, C, N, O, F, P,
 *    S, K, V, Y, I, W, U, or 'D' for deuterium), else 'X' (virtual sites "MW", "LP", "EP").
 *
 * Known consequences: an all-caps "CA" is carbon, not calcium (write "Ca", "CA2+", or use the
 * PDB element column); "HG" is hydrogen, not mercury.
 */
export function elementFromLabel(label: string): string {
  let s = label.trim();
  const alias = ION_ALIASES.get(s.toUpperCase());
  if (alias !== undefined) return alias;
  let charged = false;
  const m = /^(.*?)(\d*[+-]+)$/.exec(s);
  if (m && m[1]!.length > 0) {
    s = m[1]!;
    charged = true;
  }
  if (s.length === 0) return 'X';
  if (/^\d+$/.test(s)) return symbolOf(Number(s)) ?? 'X';
  s = s.replace(/^\d+/, '');
  const lm = /^[A-Za-z]+/.exec(s);
  if (!lm) return 'X';
  const letters = lm[0];
  const rest = s.slice(letters.length);
  const c0 = letters[0]!;
  if (letters.length >= 2) {
    const c1 = letters[1]!;
    if (isUpper(c0) && isLower(c1)) {
      const two = c0 + c1;
      if (BY_UPPER.get(two.toUpperCase()) === two && two !== 'D') return two;
      return oneLetter(c0);
    }
    const twoUpper = (c0 + c1).toUpperCase();
    const canon = BY_UPPER.get(twoUpper);
    if (canon !== undefined && (ATOMIC_NUMBER.get(canon) ?? 999) <= MAX_Z_FOR_LABEL_MATCH) {
      if (charged) return canon;
      const first = c0.toUpperCase();
      if (first === 'H' || first === 'O') return first;
      if (first === 'N') {
        return letters.toUpperCase() === 'NA' && rest.length === 0 ? 'Na' : 'N';
      }
      if (first === 'C') return C_TWO_LETTER.has(twoUpper) ? canon : 'C';
      return canon;
    }
  }
  return oneLetter(c0);
}

function oneLetter(c: string): string {
  const canon = BY_UPPER.get(c.toUpperCase());
  return canon !== undefined && canon.length === 1 ? canon : 'X';
}

/** How an atom label was read as an element (see readLabel). */
export type LabelReading =
  /** The label is an element symbol, written exactly ("Na", "O", "Cl"; 'D' for deuterium). */
  | { kind: 'symbol'; element: string }
  /** The element was guessed from the label by elementFromLabel's rule ("OW" → O, "Sv" → S). */
  | { kind: 'inferred'; element: string }
  /** The label reads two ways ("CA": C or Ca); `element` is elementFromLabel's choice. */
  | { kind: 'ambiguous'; element: string; readings: [string, string] }
  /** No element can be read ("MW", "LP"): element 'X'. */
  | { kind: 'unknown'; element: 'X' };

/**
 * How a label names an element, for saying where a mass came from:
 *
 * - 'symbol': the label is exactly an element symbol in its usual capitalisation (or 'D');
 * - 'ambiguous': the label is two letters in one case ("CA", "co", "HG") that spell a
 *   two-letter element (Z ≤ 103) while the first letter alone is another element: "CA" is
 *   calcium or a carbon named "A" (the C-alpha of a protein), "HG" mercury or a hydrogen, "NA"
 *   sodium or a nitrogen (as in haem). Nothing in the label decides; the caller must be told;
 * - 'inferred': any other label from which elementFromLabel reads an element (a guess);
 * - 'unknown': no element can be read.
 *
 * Rule of our own (common practice, no source: force fields name atoms by element plus
 * letters for position or type, so an all-capital two-letter name has no single reading).
 */
export function readLabel(label: string): LabelReading {
  const canon = normaliseElement(label);
  if (canon !== null && canon === label) return { kind: 'symbol', element: canon };
  const element = elementFromLabel(label);
  if (/^([A-Z]{2}|[a-z]{2})$/.test(label)) {
    const two = BY_UPPER.get(label.toUpperCase());
    const one = oneLetter(label[0]!);
    if (two !== undefined && two !== 'D' && (ATOMIC_NUMBER.get(two) ?? 999) <= MAX_Z_FOR_LABEL_MATCH && one !== 'X' && one !== two) {
      return { kind: 'ambiguous', element, readings: [one, two] };
    }
  }
  if (element === 'X') return { kind: 'unknown', element: 'X' };
  return { kind: 'inferred', element };
}

/** English name of an element symbol, for messages ("S" → "sulfur"); the symbol itself when not listed. */
export function elementName(symbol: string): string {
  return ELEMENT_NAMES[symbol] ?? symbol;
}

/** Names (IUPAC spelling) of the elements most often met in liquids and salts; others print as symbols. */
const ELEMENT_NAMES: Readonly<Record<string, string>> = {
  H: 'hydrogen', D: 'deuterium', He: 'helium', Li: 'lithium', Be: 'beryllium', B: 'boron', C: 'carbon', N: 'nitrogen',
  O: 'oxygen', F: 'fluorine', Ne: 'neon', Na: 'sodium', Mg: 'magnesium', Al: 'aluminium', Si: 'silicon', P: 'phosphorus',
  S: 'sulfur', Cl: 'chlorine', Ar: 'argon', K: 'potassium', Ca: 'calcium', Cr: 'chromium', Mn: 'manganese', Fe: 'iron',
  Co: 'cobalt', Ni: 'nickel', Cu: 'copper', Zn: 'zinc', Br: 'bromine', Kr: 'krypton', Rb: 'rubidium', Sr: 'strontium',
  Ag: 'silver', Cd: 'cadmium', Sn: 'tin', I: 'iodine', Xe: 'xenon', Cs: 'caesium', Ba: 'barium', Ce: 'cerium',
  Pt: 'platinum', Au: 'gold', Hg: 'mercury', Pb: 'lead', Os: 'osmium', Ho: 'holmium', Hf: 'hafnium', Se: 'selenium',
  Sc: 'scandium', Sb: 'antimony', Sm: 'samarium', Pd: 'palladium', Nd: 'neodymium', Nb: 'niobium', Np: 'neptunium',
  Pa: 'protactinium', Po: 'polonium', Pr: 'praseodymium', Pm: 'promethium', Pu: 'plutonium', Bi: 'bismuth', Bk: 'berkelium',
  Cf: 'californium', Cm: 'curium', In: 'indium', Ir: 'iridium', Yb: 'ytterbium', Y: 'yttrium', W: 'tungsten', U: 'uranium', V: 'vanadium',
  No: 'nobelium', Ti: 'titanium', Ga: 'gallium', Ge: 'germanium', As: 'arsenic', Te: 'tellurium', La: 'lanthanum',
};
