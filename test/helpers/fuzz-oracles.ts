/**
 * Oracles for the fuzz tests: read a text (optionally gzipped, in chunks) through the public
 * readers, and check what came back against the text itself.
 *
 * The checks re-derive each frame or row from the file by the published layouts — the
 * extended-XYZ convention (count line, comment line with key=value pairs, one row per atom),
 * wwPDB format v3.3 (fixed columns, MODEL/ENDMDL/END) and plain column tables — using
 * ECMA-262 Number() on each token: whatever a reader returns must be exactly what the file
 * says at the place the reader says it read it, frames must follow each other with nothing
 * skipped, and anything left unread at the end must have been reported.
 */
import { Readable } from 'node:stream';
import { openTrajectory, readTable } from '../../readers/index.js';
import { InputError } from '../../src/errors.js';
import type { Frame } from '../../src/types.js';

export const NAME = '<stdin>';

/** A frame with its arrays copied (readers reuse them). */
export interface FrameCopy {
  index: number;
  time: number | null;
  cell: number[] | null;
  positions: number[];
  velocities: number[] | null;
  line: number;
}

export type TrajOutcome =
  | { ok: true; frames: FrameCopy[]; labels: string[]; atoms: number; warnings: string[] }
  | { ok: false; error: InputError; warnings: string[] };

export interface ReadOpts {
  /** The format, or undefined to let the reader tell it from the content. */
  format: 'xyz' | 'pdb' | undefined;
  strict?: boolean;
  /** Sizes of the chunks the input arrives in (cycled); null: one chunk. */
  chunks?: number[] | null;
  /** gzip output chunk size. */
  outputChunk?: number;
}

/** Latin-1 bytes of a text (one char = one byte). */
export function bytesOf(text: string): Buffer {
  return Buffer.from(text, 'latin1');
}

/** A token of the (one char = one byte) text as the readers decode labels and names: UTF-8 (WHATWG decoder, U+FFFD for malformed bytes). */
export function utf8Of(token: string): string {
  return Buffer.from(token, 'latin1').toString('utf8');
}

/** Cut bytes into chunks of the given sizes (cycled). */
export function chunked(buf: Uint8Array, sizes: number[] | null | undefined): Uint8Array[] {
  if (!sizes || sizes.length === 0) return [buf];
  const out: Uint8Array[] = [];
  let p = 0;
  let k = 0;
  while (p < buf.length) {
    const n = Math.max(1, sizes[k++ % sizes.length]!);
    out.push(buf.subarray(p, p + n));
    p += n;
  }
  return out;
}

function copyFrame(f: Frame): FrameCopy {
  return {
    index: f.index,
    time: f.time,
    cell: f.cell ? Array.from(f.cell) : null,
    positions: Array.from(f.positions),
    velocities: f.velocities ? Array.from(f.velocities) : null,
    line: f.line,
  };
}

/** Thrown for anything that is not an InputError: the fuzz test reports it as a crash. */
export class Crash extends Error {}

/** Read raw bytes as a trajectory through openTrajectory('-', {stdin}). */
export async function readTrajectoryBytes(raw: Uint8Array, o: ReadOpts): Promise<TrajOutcome> {
  const warnings: string[] = [];
  try {
    const input = await openTrajectory('-', {
      ...(o.format ? { format: o.format } : {}),
      strict: o.strict ?? false,
      warnings,
      stdin: Readable.from(chunked(raw, o.chunks)),
      ...(o.outputChunk ? { outputChunk: o.outputChunk } : {}),
    });
    const frames: FrameCopy[] = [];
    let labels: string[] = [];
    let atoms = 0;
    for await (const f of input.frames()) {
      frames.push(copyFrame(f));
      labels = f.topology.labels;
      atoms = f.topology.atoms;
      if (f.positions.length !== 3 * atoms) throw new Crash(`frame ${f.index} has ${f.positions.length / 3} positions for ${atoms} atoms`);
    }
    return { ok: true, frames, labels, atoms, warnings };
  } catch (e) {
    if (e instanceof InputError) return { ok: false, error: e, warnings };
    if (e instanceof Crash) throw e;
    throw new Crash(`not an InputError: ${e instanceof Error ? `${e.name}: ${e.message}\n${e.stack}` : String(e)}`);
  }
}


export type TableOutcome =
  | { ok: true; names: string[]; columns: Map<string, number[]>; rows: number; time: number[] | null; warnings: string[] }
  | { ok: false; error: InputError; warnings: string[] };

/** Read raw bytes as a table through readTable('-', {stdin}). */
export async function readTableBytes(raw: Uint8Array, chunks: number[] | null, outputChunk?: number): Promise<TableOutcome> {
  const warnings: string[] = [];
  try {
    const t = await readTable('-', { warnings, stdin: Readable.from(chunked(raw, chunks)), ...(outputChunk ? { outputChunk } : {}) });
    const columns = new Map<string, number[]>();
    for (const [k, v] of t.columns) columns.set(k, Array.from(v));
    return { ok: true, names: t.names, columns, rows: t.rows, time: t.time ? Array.from(t.time) : null, warnings };
  } catch (e) {
    if (e instanceof InputError) return { ok: false, error: e, warnings };
    throw new Crash(`not an InputError: ${e instanceof Error ? `${e.name}: ${e.message}\n${e.stack}` : String(e)}`);
  }
}

// ---------------------------------------------------------------------------------------------
// Error messages

/** Whole-file problems have no line to name (empty input, gzip layer, nothing found). */
const WHOLE_FILE = /: (the file is empty|no frame found|no ATOM\/HETATM records|no data rows|the table has a header but no data rows|gzip (data corrupted|stream truncated)|cannot tell the trajectory format)/;

/**
 * Classify an InputError: 'line' when it names file:line (line ≥ 1), 'whole-file' for the
 * listed whole-file problems; anything else is a defect (returns a description).
 */
export function errorClass(e: InputError): 'line' | 'whole-file' | string {
  if (!e.message.startsWith(NAME + ':')) return `message does not start with the file name: ${e.message}`;
  if (e.line !== null) {
    if (!(Number.isInteger(e.line) && e.line >= 1)) return `bad line number ${e.line}: ${e.message}`;
    if (!e.message.startsWith(`${NAME}:${e.line}`)) return `message does not show the line: ${e.message}`;
    return 'line';
  }
  if (WHOLE_FILE.test(e.message)) return 'whole-file';
  return `no line number: ${e.message}`;
}

// ---------------------------------------------------------------------------------------------
// Text helpers (the readers' line rules: '\n' ends a line, one '\r' before it is dropped, a
// last line without '\n' is a line)

/** Lines of a text by the readers' rules ('\n' ends a line, one '\r' before it dropped, a last line without '\n' kept). */
export function textLines(text: string): string[] {
  const parts = text.split('\n');
  if (parts[parts.length - 1] === '') parts.pop();
  return parts.map((l) => (l.endsWith('\r') ? l.slice(0, -1) : l));
}

const isBlank = (l: string) => /^[ \t\r]*$/.test(l);
const tokens = (l: string) => l.split(/[ \t\r]+/).filter((t) => t.length > 0);
const NUM = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eEdD][+-]?\d+)?$/;

/** ECMA-262 Number() of a token in the readers' grammar (Fortran D exponents as E), or NaN. */
export function numberOf(tok: string | undefined): number {
  if (tok === undefined || !NUM.test(tok)) return NaN;
  const v = Number(tok.replace(/[dD]/, 'e'));
  return Number.isFinite(v) ? v : NaN;
}

/** Problems found by a check, collected and thrown together with the input. */
export class Problems {
  list: string[] = [];
  add(msg: string): void {
    if (this.list.length < 12) this.list.push(msg);
  }
  expect(cond: boolean, msg: () => string): void {
    if (!cond) this.add(msg());
  }
  get ok(): boolean {
    return this.list.length === 0;
  }
}

function same(a: number, b: number): boolean {
  return a === b || (Number.isNaN(a) && Number.isNaN(b));
}

// ---------------------------------------------------------------------------------------------
// Extended-XYZ comment line

/**
 * key=value pairs of an extended-XYZ comment line, as the convention describes them: keys
 * case-insensitive, the first occurrence wins, values bare, "quoted" or 'quoted' (a backslash
 * escapes the next character), {braced} or [bracketed] (nesting allowed, separators → blanks).
 */
export function commentPairs(text: string): Map<string, string> {
  const out = new Map<string, string>();
  if (!text.includes('=')) return out;
  const n = text.length;
  const ws = (c: string | undefined) => c === ' ' || c === '\t' || c === '\r';
  let i = 0;
  while (i < n) {
    while (i < n && ws(text[i])) i++;
    if (i >= n) break;
    const k0 = i;
    while (i < n && !ws(text[i]) && text[i] !== '=') i++;
    const key = text.slice(k0, i).toLowerCase();
    if (text[i] !== '=') continue;
    i++;
    const ch = text[i];
    let value = '';
    if (ch === '"' || ch === "'") {
      i++;
      while (i < n && text[i] !== ch) {
        if (text[i] === '\\' && i + 1 < n) i++;
        value += text[i];
        i++;
      }
      i++;
    } else if (ch === '{' || ch === '[') {
      const close = ch === '{' ? '}' : ']';
      const v0 = i;
      let depth = 0;
      while (i < n) {
        if (text[i] === ch) depth++;
        else if (text[i] === close && --depth === 0) {
          i++;
          break;
        }
        i++;
      }
      value = text.slice(v0, i).replace(/[[\]{},]/g, ' ');
    } else {
      const v0 = i;
      while (i < n && !ws(text[i])) i++;
      value = text.slice(v0, i);
    }
    if (key.length > 0 && !out.has(key)) out.set(key, value);
  }
  return out;
}

interface XyzCols {
  /** per column: 'L' label, 0..5 pos/vel component, 'S' skipped */
  cols: ('L' | 'S' | number)[];
  vel: boolean;
}

/** Columns described by a Properties= value (extended-XYZ convention), or a reason it is invalid. */
export function propertiesColumns(value: string): XyzCols | string {
  const parts = value.split(':');
  if (parts.length === 0 || parts.length % 3 !== 0) return 'not name:type:count triples';
  const cols: XyzCols['cols'] = [];
  let sp = false;
  let pos = false;
  let vel = false;
  for (let k = 0; k < parts.length; k += 3) {
    const name = parts[k]!.toLowerCase();
    const type = parts[k + 1]!.toUpperCase();
    const count = Number(parts[k + 2]);
    if (!/^[SRIL]$/.test(type)) return `type ${type}`;
    if (!Number.isInteger(count) || count < 1 || count > 1000) return `count ${parts[k + 2]}`;
    if (name === 'species' && !sp) {
      if (type !== 'S' || count !== 1) return 'species';
      sp = true;
      cols.push('L');
    } else if (name === 'pos' && !pos) {
      if (type !== 'R' || count !== 3) return 'pos';
      pos = true;
      cols.push(0, 1, 2);
    } else if ((name === 'vel' || name === 'velo' || name === 'velocities') && !vel) {
      if (type !== 'R' || count !== 3) return 'vel';
      vel = true;
      cols.push(3, 4, 5);
    } else for (let j = 0; j < count; j++) cols.push('S');
  }
  if (!sp || !pos) return 'no species or pos';
  return { cols, vel };
}

// ---------------------------------------------------------------------------------------------
// XYZ check

/**
 * Check a successful XYZ read against the text: each frame is exactly what the file holds at
 * the count line the frame names, frames follow each other with only blank lines between, and
 * anything non-blank after the last frame was reported as a truncated frame.
 */
export function checkXyz(text: string, out: Extract<TrajOutcome, { ok: true }>, strict: boolean, p: Problems): void {
  const lines = textLines(text);
  const F = out.frames.length;
  const n = out.atoms;
  p.expect(F > 0, () => 'a successful read yielded no frame');
  p.expect(out.labels.length === n, () => `topology has ${out.labels.length} labels for ${n} atoms`);
  let next = lines.findIndex((l) => !isBlank(l));
  let plain: XyzCols | null = null;
  let firstVel: boolean | null = null;
  let firstCell: boolean | null = null;
  let firstProps: boolean | null = null;
  for (let k = 0; k < F && p.ok; k++) {
    const f = out.frames[k]!;
    const L = f.line - 1;
    p.expect(f.index === k, () => `frame ${k} has index ${f.index}`);
    p.expect(L === next, () => `frame ${k + 1} starts at line ${f.line}, but the first non-blank line after the previous frame is ${next + 1}`);
    const ct = tokens(lines[L] ?? '');
    p.expect(ct.length === 1 && /^\+?\d+$/.test(ct[0]!) && Number(ct[0]) === n, () => `count line ${L + 1} '${lines[L]}' does not say ${n}`);
    const comment = lines[L + 1];
    if (comment === undefined) {
      p.add(`frame ${k + 1} has no comment line`);
      break;
    }
    const pairs = commentPairs(comment);
    const tv = pairs.get('time');
    if (tv !== undefined) p.expect(same(f.time ?? NaN, numberOf(tv)), () => `frame ${k + 1}: time ${f.time}, file says Time=${tv}`);
    else p.expect(f.time === null, () => `frame ${k + 1}: time ${f.time} without Time=`);
    const lat = pairs.get('lattice');
    if (lat !== undefined) {
      const nums = lat.trim().split(/[\s,]+/).filter((s) => s.length > 0).map(numberOf);
      p.expect(f.cell !== null && nums.length === 9 && nums.every((v, i) => same(v, f.cell![i]!)), () => `frame ${k + 1}: cell ${JSON.stringify(f.cell)} but Lattice="${lat}"`);
    } else p.expect(f.cell === null, () => `frame ${k + 1}: a cell without Lattice=`);
    if (firstCell === null) firstCell = lat !== undefined;
    else p.expect(firstCell === (lat !== undefined), () => `frame ${k + 1}: Lattice presence differs from frame 1`);
    const props = pairs.get('properties');
    if (firstProps === null) firstProps = props !== undefined;
    else p.expect(firstProps === (props !== undefined), () => `frame ${k + 1}: Properties presence differs from frame 1`);
    let layout: XyzCols;
    if (props !== undefined) {
      const c = propertiesColumns(props);
      if (typeof c === 'string') {
        p.add(`frame ${k + 1}: Properties="${props}" is invalid (${c}) but was accepted`);
        break;
      }
      layout = c;
    } else {
      if (plain === null) {
        const nc = tokens(lines[L + 2] ?? '').length;
        if (nc !== 4 && nc !== 7) {
          p.add(`plain XYZ first row has ${nc} columns but was accepted`);
          break;
        }
        plain = nc === 4 ? { cols: ['L', 0, 1, 2], vel: false } : { cols: ['L', 0, 1, 2, 3, 4, 5], vel: true };
      }
      layout = plain;
    }
    if (firstVel === null) firstVel = layout.vel;
    else p.expect(firstVel === layout.vel, () => `frame ${k + 1}: velocity presence differs from frame 1`);
    p.expect((f.velocities !== null) === layout.vel, () => `frame ${k + 1}: velocities ${f.velocities ? 'present' : 'absent'} but the layout says ${layout.vel}`);
    for (let i = 0; i < n && p.ok; i++) {
      const row = lines[L + 2 + i];
      if (row === undefined || isBlank(row)) {
        p.add(`frame ${k + 1}: atom row ${i + 1} (line ${L + 3 + i}) is missing`);
        break;
      }
      const t = tokens(row);
      p.expect(t.length === layout.cols.length, () => `line ${L + 3 + i}: ${t.length} columns, layout has ${layout.cols.length}`);
      layout.cols.forEach((c, j) => {
        const tok = t[j];
        if (c === 'L') p.expect(tok !== undefined && utf8Of(tok) === out.labels[i], () => `line ${L + 3 + i}: label '${tok}' but topology says '${out.labels[i]}'`);
        else if (typeof c === 'number') {
          const v = c < 3 ? f.positions[3 * i + c]! : f.velocities ? f.velocities[3 * i + c - 3]! : NaN;
          p.expect(same(v, numberOf(tok)), () => `line ${L + 3 + i} column ${j + 1}: read ${v}, file says '${tok}'`);
        }
      });
    }
    for (const v of f.positions) p.expect(Number.isFinite(v), () => `frame ${k + 1}: non-finite position`);
    next = L + 2 + n;
    while (next < lines.length && isBlank(lines[next]!)) next++;
  }
  // What is left after the last frame must have been reported.
  const rest = next >= 0 && next < lines.length;
  if (rest) p.expect(out.warnings.some((w) => w.includes(`frame ${F + 1} `)), () => `lines from ${next + 1} on were ignored without a warning naming frame ${F + 1}`);
  for (const w of out.warnings) {
    p.expect(w.includes(`frame ${F + 1} `) || w.includes(`frame ${F} `), () => `unexpected warning: ${w}`);
    p.expect(!strict, () => `a warning in strict mode: ${w}`);
  }
}

// ---------------------------------------------------------------------------------------------
// PDB check

interface PdbSegment {
  /** 1-based line that started the frame (MODEL or first ATOM). */
  start: number;
  /** 1-based lines of its ATOM/HETATM records. */
  atoms: number[];
  /** 1-based line that closed it (ENDMDL, END or the next MODEL), or null at the end of the file. */
  close: number | null;
  byModel: boolean;
  /** Index of the start event before this one (for TITLE times). */
  prevStart: number;
}

const rec6 = (l: string) => (l + '      ').slice(0, 6);

/**
 * Frames of a PDB text by wwPDB v3.3 records: MODEL opens a frame, ENDMDL (or END without
 * MODEL) closes it, ATOM/HETATM outside a frame opens one, a frame with no atoms is no frame.
 */
export function pdbSegments(lines: string[]): PdbSegment[] {
  const segs: PdbSegment[] = [];
  let cur: PdbSegment | null = null;
  let lastStart = 0;
  lines.forEach((l, i) => {
    const r = rec6(l);
    if (r === 'ATOM  ' || r === 'HETATM') {
      if (!cur) {
        cur = { start: i + 1, atoms: [], close: null, byModel: false, prevStart: lastStart };
        lastStart = i + 1;
      }
      cur.atoms.push(i + 1);
    } else if (r === 'ENDMDL' || r === 'END   ') {
      if (cur && cur.atoms.length > 0) segs.push({ ...cur, close: i + 1 });
      cur = null;
    } else if (r === 'MODEL ') {
      if (cur && cur.atoms.length > 0) segs.push({ ...cur, close: i + 1 });
      cur = { start: i + 1, atoms: [], close: null, byModel: true, prevStart: lastStart };
      lastStart = i + 1;
    }
  });
  if (cur && (cur as PdbSegment).atoms.length > 0) segs.push(cur);
  return segs;
}

/** Cell lengths and angles (degrees) of a cell matrix given as rows a, b, c. */
export function cellParameters(m: number[]): number[] {
  const a = m.slice(0, 3);
  const b = m.slice(3, 6);
  const c = m.slice(6, 9);
  const len = (v: number[]) => Math.hypot(v[0]!, v[1]!, v[2]!);
  const dot = (u: number[], v: number[]) => u[0]! * v[0]! + u[1]! * v[1]! + u[2]! * v[2]!;
  const ang = (u: number[], v: number[]) => (Math.acos(Math.max(-1, Math.min(1, dot(u, v) / (len(u) * len(v))))) * 180) / Math.PI;
  return [len(a), len(b), len(c), ang(b, c), ang(a, c), ang(a, b)];
}

/**
 * Compare a cell matrix with CRYST1 parameters: lengths to 1e-9 relative and angles to 1e-6°
 * (the matrix is built from the same decimals; only trigonometric round-off separates them),
 * and the PDB orientation (a along x, b in the xy plane, c with positive z; wwPDB v3.3).
 */
export function cellMatches(m: number[], prm: number[]): boolean {
  const got = cellParameters(m);
  for (let i = 0; i < 3; i++) if (!(Math.abs(got[i]! - prm[i]!) <= 1e-9 * prm[i]!)) return false;
  for (let i = 3; i < 6; i++) if (!(Math.abs(got[i]! - prm[i]!) <= 1e-6)) return false;
  return m[1] === 0 && m[2] === 0 && m[5] === 0 && m[8]! > 0;
}

const TITLE_T = /\bt=\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)/;

/**
 * Check a successful PDB read against the text: frame k is segment k (its start line, its
 * ATOM/HETATM records' columns 31–54, the CRYST1 in force when it closed, the TITLE t= before
 * it), and a segment left unread at the end was reported as truncated.
 */
export function checkPdb(text: string, out: Extract<TrajOutcome, { ok: true }>, strict: boolean, p: Problems): void {
  const lines = textLines(text);
  const segs = pdbSegments(lines);
  const F = out.frames.length;
  const n = out.atoms;
  p.expect(F > 0 && F <= segs.length, () => `${F} frames read but the file has ${segs.length} frames`);
  const names0 = segs[0] ? segs[0].atoms.map((l) => (lines[l - 1]! + '    ').slice(12, 16)) : [];
  for (let k = 0; k < Math.min(F, segs.length) && p.ok; k++) {
    const f = out.frames[k]!;
    const s = segs[k]!;
    p.expect(f.line === s.start, () => `frame ${k + 1} starts at line ${f.line}, the file's frame ${k + 1} at line ${s.start}`);
    p.expect(s.atoms.length === n, () => `frame ${k + 1} read with ${n} atoms, the file has ${s.atoms.length}`);
    s.atoms.forEach((ln, i) => {
      const l = lines[ln - 1]!;
      p.expect(l.length >= 54, () => `line ${ln}: an ATOM record of ${l.length} columns was accepted`);
      const name = (l + '    ').slice(12, 16);
      p.expect(name === names0[i], () => `line ${ln}: atom name '${name}' differs from frame 1's '${names0[i]}'`);
      if (k === 0) p.expect(out.labels[i] === utf8Of(name).trim(), () => `label ${out.labels[i]} is not the name '${name}'`);
      for (let d = 0; d < 3; d++) {
        const tok = l.slice(30 + 8 * d, 38 + 8 * d).trim();
        p.expect(same(f.positions[3 * i + d]!, numberOf(tok)), () => `line ${ln} coordinate ${d}: read ${f.positions[3 * i + d]}, columns say '${tok}'`);
      }
    });
    // CRYST1 in force when the frame closed (records before the closing line, or any at EOF)
    const limit = s.close ?? lines.length + 1;
    let cryst: number[] | null = null;
    for (let ln = 1; ln < limit; ln++) {
      const l = lines[ln - 1]!;
      if (rec6(l) !== 'CRYST1') continue;
      const v = [l.slice(6, 15), l.slice(15, 24), l.slice(24, 33), l.slice(33, 40), l.slice(40, 47), l.slice(47, 54)].map((x) => numberOf(x.trim()));
      cryst = v.every((x, i) => x === (i < 3 ? 1 : 90)) ? null : v;
    }
    if (cryst) p.expect(f.cell !== null && cellMatches(f.cell, cryst), () => `frame ${k + 1}: cell ${JSON.stringify(f.cell)} does not match CRYST1 ${cryst!.join(' ')}`);
    else p.expect(f.cell === null, () => `frame ${k + 1}: a cell without a CRYST1`);
    // TITLE t= between the previous start and this start
    let t: number | null = null;
    for (let ln = s.prevStart + 1; ln < s.start; ln++) {
      const l = lines[ln - 1]!;
      if (rec6(l) !== 'TITLE ') continue;
      const m = TITLE_T.exec(l);
      if (m) t = Number(m[1]);
    }
    p.expect(same(f.time ?? NaN, t ?? NaN), () => `frame ${k + 1}: time ${f.time}, TITLE says ${t}`);
  }
  if (F < segs.length) {
    // Only the last segment may be left out, and only as a reported truncated frame.
    p.expect(F === segs.length - 1, () => `${segs.length - F} frames of the file were not read`);
    p.expect(out.warnings.some((w) => w.includes(`frame ${F + 1} `)), () => `frame ${F + 1} was dropped without a warning`);
  }
  for (const w of out.warnings) {
    const placeholder = /placeholder/.test(w);
    p.expect(placeholder || w.includes(`frame ${F + 1} `), () => `unexpected warning: ${w}`);
    p.expect(!strict || placeholder, () => `a warning in strict mode: ${w}`);
  }
}

// ---------------------------------------------------------------------------------------------
// Table check

const TIME_NAME = /^(?:time|t|time_ps|time\s*\(ps\))$/i;

/**
 * Check a successful table read against the text: every non-blank, non-comment line after the
 * header is a row, in order, whose fields are exactly the column values; names are unique;
 * the time column increases strictly.
 */
export function checkTable(text: string, out: Extract<TableOutcome, { ok: true }>, p: Problems): void {
  const lines = textLines(text);
  const isComment = (l: string) => /^[ \t\r]*[#@&]/.test(l);
  const content = lines.map((l, i) => ({ l, i })).filter(({ l }) => !isBlank(l) && !isComment(l));
  if (content.length === 0) {
    p.add('a table without rows was accepted');
    return;
  }
  const first = content[0]!.l;
  const kind = first.includes(',') ? 'csv' : first.includes('\t') ? 'tsv' : 'ws';
  const fields = (l: string) => (kind === 'csv' ? l.split(',').map((x) => x.trim()) : tokens(l));
  const firstFields = (kind === 'csv' ? first.split(',') : kind === 'tsv' ? first.split('\t') : first.trim().split(/[ \t\r]+/)).map((x) => x.trim());
  const header = firstFields.every((x) => !NUM.test(x.replace(/^"(.*)"$/, '$1')));
  const data = header ? content.slice(1) : content;
  const nc = out.names.length;
  p.expect(out.rows === data.length, () => `${out.rows} rows read, the file has ${data.length} data lines`);
  p.expect(out.columns.size === nc, () => `${out.columns.size} columns for ${nc} names ${JSON.stringify(out.names)}`);
  p.expect(new Set(out.names).size === nc, () => `duplicate column names accepted: ${JSON.stringify(out.names)}`);
  if (header) {
    // Names are decoded as UTF-8 before they are split (a lone byte 0xA0 is no blank then).
    const firstText = utf8Of(first);
    const namesFields = (kind === 'csv' ? firstText.split(',') : kind === 'tsv' ? firstText.split('\t') : firstText.trim().split(/[ \t\r]+/)).map((x) => x.trim());
    const hn = namesFields.map((x) => x.replace(/^"(.*)"$/, '$1').replace(/^'(.*)'$/, '$1'));
    p.expect(JSON.stringify(hn) === JSON.stringify(out.names), () => `names ${JSON.stringify(out.names)} but the header says ${JSON.stringify(hn)}`);
  }
  data.forEach(({ l, i }, r) => {
    const fs = fields(l);
    p.expect(fs.length === nc, () => `line ${i + 1}: ${fs.length} fields for ${nc} columns`);
    out.names.forEach((name, c) => {
      const v = out.columns.get(name)?.[r];
      p.expect(v !== undefined && same(v, numberOf(fs[c])), () => `line ${i + 1} column ${name}: read ${v}, file says '${fs[c]}'`);
    });
  });
  const tIdx = out.names.findIndex((x) => TIME_NAME.test(x));
  if (tIdx >= 0) {
    p.expect(out.time !== null, () => 'a time column was not recognised');
    if (out.time) for (let r = 1; r < out.time.length; r++) p.expect(out.time[r]! > out.time[r - 1]!, () => `time not increasing at row ${r + 1}`);
  }
  const lastLine = data.length ? data[data.length - 1]!.i + 1 : -1;
  for (const w of out.warnings) {
    p.expect(/no column names found/.test(w) || w.includes(`${NAME}:${lastLine}:`), () => `unexpected warning: ${w}`);
  }
}
