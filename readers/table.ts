/**
 * Column tables for time series (pressure tensor components, energies, …).
 *
 * Format detection, from the first data (or header) line: a ',' → CSV; else a tab → TSV;
 * else blank-separated columns. gzip is handled below (ByteSource).
 *
 * Lines starting with '#' are comments, as are xmgrace/GROMACS .xvg lines starting with '@'
 * or '&'. Blank lines are skipped.
 *
 * Column names, first rule that applies:
 * 1. a first non-comment row made only of non-numbers is a header row of names;
 * 2. else the last '#' comment line before the first data row that has exactly as many names
 *    as the data has columns (e.g. "# time pxy pxz pyz", LAMMPS "# TimeStep c_p[4] …");
 * 3. else .xvg legends: `@ sN legend "…"` lines naming every column but the first, which is
 *    then named "time" when the `@ xaxis label` mentions time, else "x";
 * 4. else col1, col2, … (with a warning).
 * Names in CSV headers may be "quoted". Requested names match exactly, else
 * case-insensitively when that is unambiguous.
 *
 * The time column (ps) is the first column named time, t, time_ps or "time (ps)"
 * (case-insensitive). Its values must be strictly increasing.
 *
 * Every data row must have exactly as many numbers as there are columns; non-numbers, NaN,
 * infinities and ragged rows are InputErrors naming file:line:column. Zero data rows is an
 * InputError. An unknown requested column is a UsageError that lists the available names.
 */
import { InputError, UsageError } from '../src/errors.js';
import { ByteSource, type ByteSourceOptions } from './bytes.js';
import { LineCursor, latin1, splitLines, type LineHandler } from './lines.js';

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
}

export interface ReadTableOptions {
  /** Names of the columns to keep (besides time); all columns when omitted. */
  columns?: string[];
  warnings: string[];
  /** Raw read size (tests). */
  highWaterMark?: number;
}

const NUMBER_RE = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eEdD][+-]?\d+)?$/;
const TIME_RE = /^(?:time|t|time_ps|time\s*\(ps\))$/i;

type Kind = 'csv' | 'tsv' | 'ws';

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
  private store: Float64Array[] = [];
  private storeNames: string[] = [];
  private timeCol = -1;
  private timeSlot = -1;
  private prevTime = -Infinity;
  private prevTimeLine = 0;
  private cap = 0;
  rows = 0;

  constructor(file: string, requested: string[] | undefined, warnings: string[]) {
    this.file = file;
    this.cur = new LineCursor(file);
    this.requested = requested;
    this.warnings = warnings;
  }

  line(buf: Uint8Array, s: number, e: number, lineNo: number): null {
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
    }
    this.dataRow(buf, s, e, lineNo);
    return null;
  }

  finish(_lines: number, broken: InputError | null): null {
    if (broken) throw broken;
    if (this.rows === 0) {
      throw new InputError(this.file, null, null, this.started ? 'the table has a header but no data rows' : 'no data rows (the file is empty or only comments)');
    }
    return null;
  }

  private commentLine(buf: Uint8Array, p: number, e: number, lineNo: number, c: number): void {
    const text = latin1(buf, p, e);
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
    const text = latin1(buf, s, e);
    this.kind = text.includes(',') ? 'csv' : text.includes('\t') ? 'tsv' : 'ws';
    const tokens = splitNames(text, this.kind);
    const numeric = tokens.filter((t) => NUMBER_RE.test(t)).length;
    if (numeric === 0) {
      this.setNames(tokens, lineNo);
      return true;
    }
    // Count the data columns of this row.
    const n = tokens.length;
    let names: string[] | null = null;
    for (let k = this.comments.length - 1; k >= 0; k--) {
      // A comment header may be written with spaces even when the data are tab- or comma-separated.
      const text = this.comments[k]!.text;
      const cands = [splitNames(text, this.kind), splitNames(text, 'ws')];
      const cand = cands.find((c) => c.length === n && c.every((x) => x.length > 0));
      if (cand) {
        names = cand;
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
    this.setNames(names, lineNo);
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
    this.slotOf = new Int32Array(n).fill(-1);
    this.cap = 1024;
    for (const i of keep) {
      if (this.slotOf[i]! >= 0) continue;
      this.slotOf[i] = this.store.length;
      this.store.push(new Float64Array(this.cap));
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

  private dataRow(buf: Uint8Array, s: number, e: number, lineNo: number): void {
    const cur = this.cur;
    cur.reset(buf, s, e, lineNo);
    const n = this.ncols;
    const row = this.rows;
    if (row === this.cap) this.grow();
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
      if (slot >= 0) store[slot]![row] = v;
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
  }

  private grow(): void {
    this.cap *= 2;
    for (let k = 0; k < this.store.length; k++) {
      const a = new Float64Array(this.cap);
      a.set(this.store[k]!);
      this.store[k] = a;
    }
  }

  result(): { columns: Map<string, Float64Array>; time: Float64Array | null } {
    const columns = new Map<string, Float64Array>();
    let time: Float64Array | null = null;
    for (let k = 0; k < this.store.length; k++) {
      const a = this.store[k]!.slice(0, this.rows);
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
  const source = new ByteSource(path, srcOpts);
  const parser = new TableParser(source.name, opts.columns, opts.warnings);
  const it = source.chunks();
  for await (const _ of splitLines(it, parser, (e) => (e instanceof InputError ? source.checkRest(it) : Promise.resolve()))) {
    // no items: the parser accumulates
  }
  const { columns, time } = parser.result();
  return {
    path,
    format: 'table',
    sha256: source.sha256(),
    bytes: source.rawBytes,
    names: parser.names,
    columns,
    rows: parser.rows,
    time,
  };
}
