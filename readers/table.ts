/**
 * Column tables for time series (pressure tensor components, energies, …).
 *
 * Format detection, from the first data (or header) line: a ',' → CSV; else a tab → TSV;
 * else blank-separated columns. gzip is handled below (ByteSource).
 *
 * Lines starting with '#' are comments, as are lines starting with '@' or '&' (plot-program
 * directives some writers put in tables). Blank lines are skipped.
 *
 * Column names, first rule that applies:
 * 1. a first non-comment row made only of non-numbers is a header row of names;
 * 2. else the last '#' comment line before the first data row that has exactly as many names
 *    as the data has columns (e.g. "# time pxy pxz pyz", "# step c_p[4] …");
 * 3. else plot-directive legends: `@ sN legend "…"` lines naming every column but the first, which is
 *    then named "time" when the `@ xaxis label` mentions time, else "x";
 * 4. else col1, col2, … (with a warning).
 * Names in CSV headers may be "quoted". Requested names match exactly, else
 * case-insensitively when that is unambiguous.
 *
 * Units: a line of units right after the names — a '#' comment after a '#' names line
 * ("# time pxy pxz" then "# ps bar bar"), or a row after a header row — is read as the columns'
 * units, not as names: every token of it must be a unit sojourn knows (UNIT_WORDS, optionally in
 * parentheses or brackets; "-" for none), at least one of them a unit.
 *
 * The time column is the first column named time or t, optionally with its unit: time_ps,
 * "time (fs)", t[ns] (case-insensitive). Its values must be strictly increasing. Its unit comes
 * from its name, else from the units line, else from the caller (`timeUnit`, e.g. --time-unit),
 * else it is taken as ps (and `timeUnit.from` says 'assumed'); a caller's unit that contradicts
 * the file is a UsageError. The time column is returned in ps.
 *
 * Every data row must have exactly as many numbers as there are columns; non-numbers, NaN,
 * infinities and ragged rows are InputErrors naming file:line:column. Zero data rows is an
 * InputError. An unknown requested column is a UsageError that lists the available names.
 * Two kept columns with one name are an InputError at the line that gives the names (columns
 * are returned by name). A last row without '\n' is used with a warning naming its line (a
 * row cut inside its last number would still parse).
 */
import { statSync } from 'node:fs';
import type { Readable } from 'node:stream';
import { InputError, UsageError } from '../src/errors.js';
import { ByteSource, type ByteSourceOptions } from './bytes.js';
import { LineCursor, fastFloat, latin1, splitLines, utf8, type FloatEnd, type LineHandler, type LineState } from './lines.js';
import { UNIT_FACTORS } from '../src/units.js';
import { columnDecimals } from '../src/precision.js';

export interface TableData {
  path: string;
  format: 'table';
  /** Hex SHA-256 of the raw file bytes. */
  sha256: string;
  /** Raw (possibly compressed) size in bytes. */
  bytes: number;
  /** All column names, in file order. */
  names: string[];
  /** The requested columns (all when none were requested) plus the time column, by name. */
  columns: Map<string, Float64Array>;
  rows: number;
  /** The time column (ps), or null when the table has none. */
  time: Float64Array | null;
  /** Units by column name, as the file gives them (units line, or the time column's name). */
  units: Map<string, string>;
  /** The time column's unit and where it came from ('file', the caller's option name, or 'assumed'); null without a time column. */
  timeUnit: { unit: string; from: string } | null;
  /** The step (ps) to which the time column is rounded as written (10^-decimals), or 0. */
  timeQuantum: number;
}

export interface ReadTableOptions {
  /** Names of the columns to keep (besides time); all columns when omitted. */
  columns?: string[];
  warnings: string[];
  /** Raw read size (tests). */
  highWaterMark?: number;
  /** Size of decompressed gzip output chunks (tests; default 1 MiB). */
  outputChunk?: number;
  /** Stream read for path '-' (default process.stdin). */
  stdin?: Readable;
  /** Use the reading thread (see readers/bytes.ts; default 'auto'). */
  thread?: boolean | 'auto';
  /** The reading thread's script (tests). */
  threadScript?: string | URL;
  /** Unit of the time column when the file does not say (fs, ps, ns), and the option that gave it. */
  timeUnit?: { unit: string; option: string };
}

const NUMBER_RE = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eEdD][+-]?\d+)?$/;
/** A time column's name, with the unit it may carry ("time", "t", "time_ps", "time (fs)", "t[ns]"). */
const TIME_RE = /^(?:time|t)(?:_(fs|ps|ns)|\s*[([]\s*(fs|ps|ns)\s*[)\]])?$/i;

/** Unit words a units line may hold (besides "-" for none), optionally in parentheses or brackets. */
export const UNIT_WORDS: ReadonlySet<string> = new Set([
  'fs', 'ps', 'ns',
  'Pa', 'kPa', 'MPa', 'GPa', 'bar', 'atm',
  'K',
  'J/mol', 'kJ/mol', 'kcal/mol', 'eV', 'kJ', 'kcal', 'J',
  'A', 'Å', 'nm', 'A^3', 'Å^3', 'nm^3', 'A3', 'nm3', 'Å³', 'nm³',
  'g/cm^3', 'g/cm3', 'kg/m^3', 'kg/m3', 'g/cm³', 'kg/m³',
  '-',
]);

/** The unit a units-line token names (brackets removed), or null when it is not one. */
export function unitWord(token: string): string | null {
  const t = token.replace(/^[([](.*)[)\]]$/, '$1').trim();
  return UNIT_WORDS.has(t) ? t : null;
}

/** True when every token is a unit word or "-", and at least one is a unit (a units line; a row of "-" is not one). */
function isUnitsLine(tokens: string[]): boolean {
  return tokens.length > 0 && tokens.every((t) => unitWord(t) !== null) && tokens.some((t) => unitWord(t) !== '-');
}

type Kind = 'csv' | 'tsv' | 'ws';

/**
 * Rows per storage block. Columns are never copied while they grow (doubling arrays copy every
 * value about twice and hold 1.5–2× the data at the peak). When the size of the text is known
 * (a plain file), the first block's bytes per row give an estimate of the rows to come, and
 * each column gets one array of that size (+5 %) with the first block copied in: the values
 * are written once, into memory touched once. Otherwise (gzip, standard input, or past the
 * estimate) columns are lists of fixed blocks, joined once at the end (the data plus one column
 * at the peak). First use of fresh memory is costly (on virtual machines especially), so
 * touching it once matters for tables of 10^7 rows.
 */
const BLOCK = 1 << 16;

function splitNames(text: string, kind: Kind): string[] {
  const parts = kind === 'csv' ? text.split(',') : kind === 'tsv' ? text.split('\t') : text.trim().split(/[ \t\r]+/);
  return parts.map((p) => p.trim().replace(/^"(.*)"$/, '$1').replace(/^'(.*)'$/, '$1')).filter((p, i, a) => p.length > 0 || a.length > 1);
}

class TableParser implements LineHandler<never> {
  readonly file: string;
  private readonly cur: LineCursor;
  private readonly requested: string[] | undefined;
  private readonly warnings: string[];
  private comments: { text: string; line: number }[] = [];
  private legends: string[] = [];
  private xLabel = '';
  private started = false;
  private kind: Kind = 'ws';
  names: string[] = [];
  private ncols = 0;
  private slotOf: Int32Array = new Int32Array(0);
  private what: string[] = [];
  /** Per kept column: the array being filled (the next row goes to index `fill`). */
  private store: Float64Array[] = [];
  /** Per kept column: the full arrays before it. */
  private full: Float64Array[][] = [];
  /** Rows in the arrays being filled, and their length. */
  private fill = 0;
  private cap = BLOCK;
  /** Bytes of the whole text when known (plain files), for the size estimate. */
  private readonly textBytes: () => number | null;
  /** Byte offset of the first data row; the estimate was made. */
  private dataStart = -1;
  private sized = false;
  private readonly fend: FloatEnd = { pos: 0 };
  private storeNames: string[] = [];
  private timeCol = -1;
  private timeSlot = -1;
  private prevTime = -Infinity;
  private prevTimeLine = 0;
  /** Line of the last data row. */
  private lastDataLine = 0;
  rows = 0;
  /** Units by column index (from a units line), and the line that gave them. */
  units: (string | null)[] = [];
  unitsLine = 0;
  /** A header row was read: the next row may be a units row. */
  private unitsRowPossible = false;

  constructor(file: string, requested: string[] | undefined, warnings: string[], textBytes: () => number | null = () => null) {
    this.file = file;
    this.textBytes = textBytes;
    this.cur = new LineCursor(file);
    this.requested = requested;
    this.warnings = warnings;
  }

  line(buf: Uint8Array, s: number, e: number, lineNo: number, st?: LineState<never>): null {
    let p = s;
    while (p < e && (buf[p] === 32 || buf[p] === 9 || buf[p] === 13)) p++;
    if (p >= e) return null;
    const c = buf[p]!;
    if (c === 35 /* # */ || c === 64 /* @ */ || c === 38 /* & */) {
      if (!this.started) this.commentLine(buf, p, e, lineNo, c);
      return null;
    }
    if (!this.started) {
      if (this.startData(buf, s, e, lineNo)) return null; // header row
    } else if (this.unitsRowPossible) {
      this.unitsRowPossible = false;
      const tokens = splitNames(utf8(buf, s, e), this.kind);
      if (tokens.length === this.ncols && isUnitsLine(tokens)) {
        this.units = tokens.map((t) => (unitWord(t) === '-' ? null : unitWord(t)));
        this.unitsLine = lineNo;
        return null;
      }
    }
    const offset = st === undefined ? -1 : st.base + s;
    if (this.dataStart < 0) this.dataStart = offset;
    this.dataRow(buf, s, e, lineNo, offset);
    return null;
  }

  finish(lines: number, broken: InputError | null, unterminated: boolean): null {
    if (broken) throw broken;
    if (this.rows === 0) {
      throw new InputError(this.file, null, null, this.started ? 'the table has a header but no data rows' : 'no data rows (the file is empty or only comments)');
    }
    if (unterminated && this.lastDataLine === lines) {
      // A row cut inside its last number still parses ("1.2345" → "1.2"): say so.
      this.warnings.push(
        `${this.file}:${lines}: the file ends without a newline after its last row; if the file was cut short, that row's last value is incomplete (it was used as read)`,
      );
    }
    return null;
  }

  private commentLine(buf: Uint8Array, p: number, e: number, lineNo: number, c: number): void {
    const text = utf8(buf, p, e);
    if (c === 35) {
      this.comments.push({ text: text.replace(/^#+/, ''), line: lineNo });
    } else if (c === 64) {
      const lg = /^@\s*s(\d+)\s+legend\s+"(.*)"\s*$/.exec(text);
      if (lg) this.legends[Number(lg[1])] = lg[2]!;
      const xl = /^@\s*xaxis\s+label\s+"(.*)"\s*$/.exec(text);
      if (xl) this.xLabel = xl[1]!;
    }
  }

  /** First non-comment line: detect the format and the names. Returns true for a header row. */
  private startData(buf: Uint8Array, s: number, e: number, lineNo: number): boolean {
    this.started = true;
    const text = utf8(buf, s, e);
    this.kind = text.includes(',') ? 'csv' : text.includes('\t') ? 'tsv' : 'ws';
    const tokens = splitNames(text, this.kind);
    const numeric = tokens.filter((t) => NUMBER_RE.test(t)).length;
    if (numeric === 0) {
      this.setNames(tokens, lineNo);
      this.unitsRowPossible = true;
      return true;
    }
    // Count the data columns of this row.
    const n = tokens.length;
    let names: string[] | null = null;
    let namesLine = lineNo;
    for (let k = this.comments.length - 1; k >= 0; k--) {
      // A comment header may be written with spaces even when the data are tab- or comma-separated.
      const text = this.comments[k]!.text;
      const cands = [splitNames(text, this.kind), splitNames(text, 'ws')];
      const cand = cands.find((c) => c.length === n && c.every((x) => x.length > 0));
      if (cand) {
        // A units line right after the names line ("# time pxy" then "# ps bar") gives units, not names.
        const before = k > 0 ? this.comments[k - 1]! : null;
        const namesBefore = before && before.line === this.comments[k]!.line - 1
          ? [splitNames(before.text, this.kind), splitNames(before.text, 'ws')].find((c) => c.length === n && c.every((x) => x.length > 0))
          : undefined;
        if (isUnitsLine(cand) && namesBefore && !isUnitsLine(namesBefore)) {
          this.units = cand.map((t) => (unitWord(t) === '-' ? null : unitWord(t)));
          this.unitsLine = this.comments[k]!.line;
          names = namesBefore;
          namesLine = before!.line;
        } else {
          names = cand;
          namesLine = this.comments[k]!.line;
        }
        break;
      }
    }
    if (names === null && this.legends.length === n - 1 && this.legends.every((x) => x !== undefined)) {
      names = [/time/i.test(this.xLabel) ? 'time' : 'x', ...this.legends];
    }
    if (names === null) {
      names = Array.from({ length: n }, (_, i) => `col${i + 1}`);
      this.warnings.push(`${this.file}: no column names found; the ${n} columns are named col1..col${n}`);
    }
    this.setNames(names, namesLine);
    return false;
  }

  private setNames(names: string[], lineNo: number): void {
    if (names.some((x) => x.length === 0)) throw new InputError(this.file, lineNo, null, 'empty column name in the header');
    this.names = names;
    const n = (this.ncols = names.length);
    this.cur.delimiter = this.kind === 'csv' ? 44 : -1;
    this.timeCol = names.findIndex((x) => TIME_RE.test(x));
    // which columns to keep
    const keep: number[] = [];
    if (this.requested === undefined) {
      for (let i = 0; i < n; i++) keep.push(i);
    } else {
      for (const want of this.requested) keep.push(this.resolve(want, lineNo));
    }
    if (this.timeCol >= 0 && !keep.includes(this.timeCol)) keep.push(this.timeCol);
    // Columns are returned by name: two kept columns with one name would lose one silently.
    const byName = new Map<string, number>();
    for (const i of keep) {
      const j = byName.get(names[i]!);
      if (j !== undefined && j !== i) {
        throw new InputError(this.file, lineNo, null, `column name '${names[i]}' appears more than once in the header (columns ${j + 1} and ${i + 1}); column names must be unique`);
      }
      byName.set(names[i]!, i);
    }
    this.slotOf = new Int32Array(n).fill(-1);
    for (const i of keep) {
      if (this.slotOf[i]! >= 0) continue;
      this.slotOf[i] = this.store.length;
      this.store.push(new Float64Array(BLOCK));
      this.full.push([]);
      this.storeNames.push(names[i]!);
    }
    this.timeSlot = this.timeCol >= 0 ? this.slotOf[this.timeCol]! : -1;
    this.what = names.map((x, i) => `column ${i + 1} ('${x}')`);
  }

  private resolve(want: string, lineNo: number): number {
    const names = this.names;
    const exact = names.reduce<number[]>((acc, x, i) => (x === want ? [...acc, i] : acc), []);
    if (exact.length === 1) return exact[0]!;
    if (exact.length > 1) {
      throw new InputError(this.file, lineNo, null, `column name '${want}' appears ${exact.length} times in the header (columns ${exact.map((i) => i + 1).join(', ')})`);
    }
    const lw = want.toLowerCase();
    const ci = names.reduce<number[]>((acc, x, i) => (x.toLowerCase() === lw ? [...acc, i] : acc), []);
    if (ci.length === 1) return ci[0]!;
    if (ci.length > 1) {
      throw new UsageError(`${this.file}: column name '${want}' is ambiguous: it matches ${ci.map((i) => `'${names[i]}'`).join(', ')} ignoring case`);
    }
    throw new UsageError(`${this.file}: no column named '${want}'; available columns: ${names.join(', ')}`);
  }

  private dataRow(buf: Uint8Array, s: number, e: number, lineNo: number, offset: number): void {
    const cur = this.cur;
    cur.reset(buf, s, e, lineNo);
    const n = this.ncols;
    const row = this.rows;
    if (this.fill === this.cap) this.nextBlock(offset);
    const at = this.fill;
    const slotOf = this.slotOf;
    const store = this.store;
    const csv = this.kind === 'csv';
    for (let c = 0; c < n; c++) {
      if (csv && c > 0) {
        cur.skipBlanks();
        if (cur.pos >= e || buf[cur.pos] !== 44) {
          throw cur.error(cur.pos, `expected ',' and ${this.what[c]}, found ${cur.pos >= e ? 'end of line' : `'${latin1(buf, cur.pos, cur.tokenEnd(cur.pos))}'`} (the header has ${n} columns)`);
        }
        cur.pos++;
      }
      const start = cur.pos;
      const v = cur.float(this.what[c]!);
      const slot = slotOf[c]!;
      if (slot >= 0) store[slot]![at] = v;
      if (c === this.timeCol) {
        if (!(v > this.prevTime)) {
          cur.pos = start;
          cur.skipBlanks();
          throw cur.error(
            cur.pos,
            `time ${v} is not greater than the previous row's time ${this.prevTime} (line ${this.prevTimeLine}); the time column must be strictly increasing`,
          );
        }
        this.prevTime = v;
        this.prevTimeLine = lineNo;
      }
    }
    cur.skipBlanks();
    if (cur.pos < e) {
      const p = cur.pos;
      throw cur.error(p, `unexpected '${latin1(buf, p, cur.tokenEnd(p + (buf[p] === 44 ? 1 : 0)))}' after the last column: the row has more columns than the header (${n})`);
    }
    this.rows = row + 1;
    this.fill = at + 1;
    this.lastDataLine = lineNo;
  }

  /**
   * Fast path for data rows, fused with the line search like the XYZ one (readers/lines.ts):
   * parses well-formed rows straight from the bytes and declines (returns at that line) on
   * anything else — blank or comment lines, a malformed or missing number, extra columns, a
   * time that does not increase — which then goes through line() and its checks and messages.
   * A row is stored only once it is known to be complete and well formed.
   */
  bulk(buf: Uint8Array, pos: number, limit: number, st: LineState<never>): number {
    const n = this.ncols;
    if (n === 0) return pos; // the names are not known yet
    const csv = this.kind === 'csv';
    const delim = csv ? 44 : -1;
    const slotOf = this.slotOf;
    const timeCol = this.timeCol;
    const fend = this.fend;
    let store = this.store;
    let at = this.fill;
    let cap = this.cap;
    let rows = this.rows;
    let lineNo = st.lineNo;
    let prevTime = this.prevTime;
    rows: while (pos < limit) {
      if (at === cap) {
        this.fill = at;
        this.rows = rows;
        this.nextBlock(st.base + pos);
        store = this.store;
        at = this.fill;
        cap = this.cap;
      }
      let p = pos;
      let t = prevTime;
      for (let c = 0; c < n; c++) {
        if (csv && c > 0) {
          let ch = buf[p]!;
          while (ch === 32 || ch === 9 || ch === 13) ch = buf[++p]!;
          if (ch !== 44) break rows;
          p++;
        }
        const v = fastFloat(buf, p, fend, delim);
        p = fend.pos;
        if (p < 0) break rows;
        const slot = slotOf[c]!;
        if (slot >= 0) store[slot]![at] = v;
        if (c === timeCol) {
          if (!(v > prevTime)) break rows;
          t = v;
        }
      }
      let ch = buf[p]!;
      while (ch === 32 || ch === 9 || ch === 13) ch = buf[++p]!;
      if (ch !== 10) break;
      pos = p + 1;
      lineNo++;
      rows++;
      at++;
      prevTime = t;
      if (timeCol >= 0) this.prevTimeLine = lineNo;
    }
    if (rows > this.rows) this.lastDataLine = lineNo;
    this.rows = rows;
    this.fill = at;
    this.prevTime = prevTime;
    st.lineNo = lineNo;
    return pos;
  }

  /**
   * The arrays being filled are full (`offset`: byte offset of the next row, -1 if unknown).
   * After the first block, when the text size is known, they become arrays of the estimated
   * final size; otherwise they are kept and new blocks started (see BLOCK).
   */
  private nextBlock(offset: number): void {
    const total = this.sized ? null : this.textBytes();
    this.sized = true;
    if (total !== null && this.dataStart >= 0 && offset > this.dataStart && this.rows > 0) {
      const perRow = (offset - this.dataStart) / this.rows;
      const est = this.rows + Math.ceil(((total - offset) / perRow) * 1.05) + 1024;
      if (est > 2 * this.cap) {
        for (let k = 0; k < this.store.length; k++) {
          const a = new Float64Array(est);
          a.set(this.store[k]!.subarray(0, this.fill));
          this.store[k] = a;
        }
        this.cap = est;
        return;
      }
    }
    for (let k = 0; k < this.store.length; k++) {
      this.full[k]!.push(this.store[k]!);
      this.store[k] = new Float64Array(BLOCK);
    }
    this.cap = BLOCK;
    this.fill = 0;
  }

  /** Name of the time column, or null. */
  timeName(): string | null {
    return this.timeCol >= 0 ? this.names[this.timeCol]! : null;
  }

  /**
   * The kept columns as arrays of exactly `rows` values: an estimated array is handed out as a
   * view of its first `rows` values when at most 1/8 of it is unused (else copied), blocks are
   * joined into a new array.
   */
  result(): { columns: Map<string, Float64Array>; time: Float64Array | null } {
    const columns = new Map<string, Float64Array>();
    let time: Float64Array | null = null;
    for (let k = 0; k < this.store.length; k++) {
      const last = this.store[k]!;
      let a: Float64Array;
      if (this.full[k]!.length === 0) {
        a = this.fill === last.length ? last : 8 * (last.length - this.fill) <= last.length ? last.subarray(0, this.fill) : last.slice(0, this.fill);
      } else {
        a = new Float64Array(this.rows);
        let o = 0;
        for (const b of this.full[k]!) {
          a.set(b, o);
          o += b.length;
        }
        a.set(last.subarray(0, this.fill), o);
      }
      // Let the blocks go as soon as their column is joined (the peak is the data plus one column).
      this.full[k] = [];
      this.store[k] = new Float64Array(0);
      columns.set(this.storeNames[k]!, a);
      if (k === this.timeSlot) time = a;
    }
    return { columns, time };
  }
}

/** Read a whole column table (plain or gzip). */
export async function readTable(path: string, opts: ReadTableOptions): Promise<TableData> {
  const srcOpts: ByteSourceOptions = {};
  if (opts.highWaterMark !== undefined) srcOpts.highWaterMark = opts.highWaterMark;
  if (opts.outputChunk !== undefined) srcOpts.outputChunk = opts.outputChunk;
  if (opts.stdin !== undefined) srcOpts.stdin = opts.stdin;
  if (opts.thread !== undefined) srcOpts.thread = opts.thread;
  if (opts.threadScript !== undefined) srcOpts.threadScript = opts.threadScript;
  const source = new ByteSource(path, srcOpts);
  let size: number | null = null;
  if (path !== '-') {
    try {
      const st = statSync(path);
      if (st.isFile()) size = st.size;
    } catch {
      // the read reports it
    }
  }
  const parser = new TableParser(source.name, opts.columns, opts.warnings, () => (size !== null && !source.compressed ? size : null));
  const it = source.chunks();
  const onError = (e: unknown): Promise<void> => (e instanceof InputError ? source.checkRest(it) : Promise.resolve());
  for await (const _ of splitLines(it, parser, onError, { release: (c) => source.release(c) })) {
    // no items: the parser accumulates
  }
  const { columns, time } = parser.result();
  const units = new Map<string, string>();
  parser.names.forEach((name, i) => {
    const u = parser.units[i];
    if (u) units.set(name, u);
  });
  let timeUnit: TableData['timeUnit'] = null;
  let timeQuantum = 0;
  const timeName = time ? parser.timeName() : null;
  if (time && timeName !== null) {
    const m = TIME_RE.exec(timeName);
    const inName = (m?.[1] ?? m?.[2])?.toLowerCase() ?? null;
    const inLine = units.get(timeName) ?? null;
    if (inName && inLine && inName !== inLine) {
      throw new InputError(source.name, parser.unitsLine, null, `the time column '${timeName}' is named in ${inName} but the units line gives ${inLine}`);
    }
    const fromFile = inName ?? inLine;
    if (fromFile !== null && !(fromFile in UNIT_FACTORS.time)) {
      throw new InputError(source.name, parser.unitsLine, null, `the time column's unit '${fromFile}' is not a time unit (${Object.keys(UNIT_FACTORS.time).join(', ')})`);
    }
    const given = opts.timeUnit;
    if (fromFile !== null && given && given.unit !== fromFile) {
      throw new UsageError(`${given.option} ${given.unit} contradicts ${source.name}, whose time column is in ${fromFile}`);
    }
    timeUnit = fromFile !== null ? { unit: fromFile, from: 'file' } : given ? { unit: given.unit, from: given.option } : { unit: 'ps', from: 'assumed' };
    units.set(timeName, timeUnit.unit);
    const factor = UNIT_FACTORS.time[timeUnit.unit]!;
    timeQuantum = 10 ** -columnDecimals(time) * factor;
    if (factor !== 1) for (let i = 0; i < time.length; i++) time[i] *= factor;
  }
  return {
    path,
    format: 'table',
    sha256: source.sha256(),
    bytes: source.rawBytes,
    names: parser.names,
    columns,
    rows: parser.rows,
    time,
    units,
    timeUnit,
    timeQuantum,
  };
}
