/**
 * Atom selection: a small syntax of sojourn's own, the same in every command.
 *
 *   selection := term ( ',' term )*          union of terms
 *   term      := factor ( '&' factor )*      intersection of factors
 *   factor    := '!'? atom                   '!' negates
 *   atom      := 'all'
 *              | 'el=' SYMBOL                element symbol (case-insensitive)
 *              | 'res=' NAME                 residue name
 *              | 'idx=' N | 'idx=' N '-' M   0-based atom indices, inclusive range
 *              | 'label=' PATTERN | PATTERN  atom label; '*' matches any run of characters
 *
 * Examples: "Na", "el=O&res=SOL", "OW,HW*", "idx=0-99", "!el=H".
 * A ':' separates the two selections of a pair option ("Na:el=O"), so it never appears inside one.
 */
import { UsageError } from './errors.js';
import type { Topology } from './types.js';

/** One parsed factor. */
export type SelectionFactor =
  | { kind: 'all'; negate: boolean }
  | { kind: 'element'; value: string; negate: boolean }
  | { kind: 'residue'; value: string; negate: boolean }
  | { kind: 'index'; from: number; to: number; negate: boolean }
  | { kind: 'label'; pattern: RegExp; text: string; negate: boolean };

/** A parsed selection: a union of intersections. */
export interface Selection {
  text: string;
  terms: SelectionFactor[][];
}

function globToRegExp(p: string): RegExp {
  const esc = p.replace(/[.+?^${}()|[\]\\]/g, '\\$&').replace(/\*/g, '.*');
  return new RegExp(`^${esc}$`);
}

function parseFactor(raw: string, whole: string): SelectionFactor {
  let s = raw.trim();
  let negate = false;
  while (s.startsWith('!')) {
    negate = !negate;
    s = s.slice(1).trim();
  }
  if (s === '') throw new UsageError(`selection "${whole}": empty term`);
  if (s === 'all') return { kind: 'all', negate };
  const eq = s.indexOf('=');
  if (eq < 0) return { kind: 'label', pattern: globToRegExp(s), text: s, negate };
  const key = s.slice(0, eq).trim();
  const value = s.slice(eq + 1).trim();
  if (value === '') throw new UsageError(`selection "${whole}": "${key}=" needs a value`);
  switch (key) {
    case 'el':
      return { kind: 'element', value: value.toLowerCase(), negate };
    case 'res':
      return { kind: 'residue', value, negate };
    case 'label':
      return { kind: 'label', pattern: globToRegExp(value), text: value, negate };
    case 'idx': {
      const m = /^(\d+)(?:-(\d+))?$/.exec(value);
      if (!m) throw new UsageError(`selection "${whole}": idx= takes N or N-M (0-based), got "${value}"`);
      const from = Number(m[1]);
      const to = m[2] === undefined ? from : Number(m[2]);
      if (to < from) throw new UsageError(`selection "${whole}": range ${value} runs backwards`);
      return { kind: 'index', from, to, negate };
    }
    default:
      throw new UsageError(`selection "${whole}": unknown key "${key}="; use el=, res=, idx= or label=`);
  }
}

/** Parse a selection string (see the module comment for the grammar). */
export function parseSelection(text: string): Selection {
  if (text.includes(':')) throw new UsageError(`selection "${text}": ':' is not allowed inside a selection`);
  const terms = text.split(',').map((t) => t.split('&').map((f) => parseFactor(f, text)));
  return { text, terms };
}

function matches(f: SelectionFactor, topo: Topology, i: number): boolean {
  let r: boolean;
  switch (f.kind) {
    case 'all':
      r = true;
      break;
    case 'element':
      r = topo.elements[i].toLowerCase() === f.value;
      break;
    case 'residue':
      r = topo.residues !== null && topo.residues.names[i] === f.value;
      break;
    case 'index':
      r = i >= f.from && i <= f.to;
      break;
    case 'label':
      r = f.pattern.test(topo.labels[i]);
      break;
  }
  return f.negate ? !r : r;
}

/**
 * Indices (ascending, 0-based) of the atoms a selection picks. An empty result is a usage
 * error that lists the labels present, so a typo is caught rather than giving g(r) = 0.
 */
export function selectAtoms(sel: Selection | string, topo: Topology): Int32Array {
  const s = typeof sel === 'string' ? parseSelection(sel) : sel;
  const out: number[] = [];
  for (let i = 0; i < topo.atoms; i++) {
    if (s.terms.some((term) => term.every((f) => matches(f, topo, i)))) out.push(i);
  }
  if (out.length === 0) {
    const labels = [...new Set(topo.labels)].slice(0, 20).join(', ');
    throw new UsageError(`selection "${s.text}" picks no atoms; labels present: ${labels}`);
  }
  return Int32Array.from(out);
}

/** Distinct labels in order of first appearance, with their counts. */
export function speciesCounts(topo: Topology): Map<string, number> {
  const m = new Map<string, number>();
  for (const l of topo.labels) m.set(l, (m.get(l) ?? 0) + 1);
  return m;
}
