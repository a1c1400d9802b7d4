/**
 * Multi-frame XYZ and extended XYZ.
 *
 * Each frame: a line with the atom count, a comment line, then one row per atom:
 * `label x y z [vx vy vz]` (blank-separated; tabs, CR and trailing blanks are fine).
 *
 * Extended XYZ (the libAtoms/ASE convention) is recognised from `key=value` pairs on the
 * comment line; keys are case-insensitive, values may be bare, "double-quoted",
 * 'single-quoted', {braced} or [bracketed]; unknown keys are ignored:
 * - `Lattice="ax ay az bx by bz cx cy cz"`: the cell, rows = cell vectors a, b, c in Å.
 * - `Properties=name:type:count:...` (types S, R, I, L) describes the columns of the atom rows.
 *   `species:S:1` (the label) and `pos:R:3` are required; `vel:R:3`, `velo:R:3` or
 *   `velocities:R:3` give velocities (taken as Å/ps, no unit conversion: the convention has
 *   no unit for them); every other field is skipped using its count. Rows must then have
 *   exactly the number of columns Properties describes.
 * - `Time=` is the frame time in ps.
 *
 * Velocity rule: a frame has velocities when its Properties declares vel/velo/velocities.
 * Without a Properties key (plain XYZ), the first atom row of the first frame decides: exactly
 * 7 columns (label x y z vx vy vz) → velocities, exactly 4 → positions only, anything else is
 * an error (describe extra columns with Properties=); every row of every frame must then have
 * that same number of columns.
 *
 * Consistency: every frame must have the atom count and labels of the first frame, and the
 * same presence of Lattice, Properties and velocities (Properties may change its other fields); violations are InputErrors naming the frame
 * (1-based) and line. Blank lines between frames and at the end are ignored; a blank line
 * inside a frame's atom rows is an error unless only blank lines follow to the end of the
 * file (then the frame is truncated).
 *
 * Guards: an atom count above maxAtoms() (readers/common.ts: 2^28, or less when the coordinate
 * arrays would fill half the machine's memory) is refused at its line before anything is
 * allocated; below it, the first frame's arrays grow as rows arrive, so a wrong count costs
 * nothing. A last frame completed by a line without '\n' is used with a warning (InputError
 * when strict): a file cut inside the last number of a row would still parse.
 *
 * Frames share their typed arrays (positions, velocities, cell): the next frame overwrites
 * them. The Topology is built once from the first frame.
 */
import { InputError } from '../src/errors.js';
import type { Frame, Topology } from '../src/types.js';
import { buildTopology, frameWanted, tooManyAtoms, truncatedLastFrame, type FrameSelection, type TrajectoryReadOptions } from './common.js';
import { LineCursor, fastFloat, findNewline, latin1, parseNumberString, utf8, type FloatEnd, type LineHandler, type LineState } from './lines.js';

/** Decoder for labels: UTF-8, malformed bytes refused (WHATWG Encoding, TextDecoder fatal mode). */
const STRICT_UTF8 = new TextDecoder('utf-8', { fatal: true });

const ST_COUNT = 0;
const ST_COMMENT = 1;
const ST_ATOMS = 2;
const ST_BLANK = 3;
/** A frame outside the selection: its comment and atom rows are counted, not read. */
const ST_SKIP = 4;
/** The comment line of a skipped frame, read for its Lattice= only (TrajectoryReadOptions.onSkippedCell). */
const ST_SKIP_HEAD = 5;

// Column actions: 0..2 position x,y,z; 3..5 velocity x,y,z; 6 label; 7 skip.
const A_LABEL = 6;
const A_SKIP = 7;
const WHAT = ['x coordinate', 'y coordinate', 'z coordinate', 'x velocity', 'y velocity', 'z velocity'];
/** First-frame arrays start at this many atoms and grow as rows arrive (a wrong count costs nothing). */
const INITIAL_ATOMS = 1 << 16;

/** One key=value of an extended-XYZ comment line. */
export interface CommentValue {
  value: string;
  /** 1-based column of the value's first character on the line. */
  column: number;
}

/**
 * Parse the key=value pairs of an extended-XYZ comment line. Keys are lower-cased; the first
 * occurrence of a key wins. Words without '=' are skipped (so free-text comments such as
 * "i = 0, time = 0.000" define nothing). Quotes, braces and brackets are removed from values.
 */
export function parseCommentPairs(text: string): Map<string, CommentValue> {
  const out = new Map<string, CommentValue>();
  const n = text.length;
  let i = 0;
  const ws = (ch: string) => ch === ' ' || ch === '\t' || ch === '\r';
  while (i < n) {
    while (i < n && ws(text[i]!)) i++;
    if (i >= n) break;
    const k0 = i;
    while (i < n && !ws(text[i]!) && text[i] !== '=') i++;
    const key = text.slice(k0, i).toLowerCase();
    if (i < n && text[i] === '=') {
      i++;
      const ch = text[i];
      let value: string;
      let col: number;
      if (ch === '"' || ch === "'") {
        const q = ch;
        i++;
        col = i + 1;
        let v = '';
        while (i < n && text[i] !== q) {
          if (text[i] === '\\' && i + 1 < n) i++;
          v += text[i];
          i++;
        }
        i++; // closing quote (or past the end)
        value = v;
      } else if (ch === '{' || ch === '[') {
        const close = ch === '{' ? '}' : ']';
        col = i + 1;
        let depth = 0;
        const v0 = i;
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
        col = i + 1;
        const v0 = i;
        while (i < n && !ws(text[i]!)) i++;
        value = text.slice(v0, i);
      }
      if (key.length > 0 && !out.has(key)) out.set(key, { value, column: col });
    }
    // A bare word without '=' (plain comment text, or an extended-XYZ flag) is skipped.
  }
  return out;
}

/**
 * The cell of a comment line's Lattice= (9 numbers, rows a, b, c), or null when it has none or
 * it cannot be read (the full read reports that at its line).
 */
export function latticeOf(comment: string): Float64Array | null {
  if (comment.indexOf('=') < 0) return null;
  const lat = parseCommentPairs(comment).get('lattice');
  if (!lat) return null;
  const nums = lat.value.trim().split(/[\s,]+/).filter((x) => x.length > 0).map(Number);
  return nums.length === 9 && nums.every(Number.isFinite) ? Float64Array.from(nums) : null;
}

/** How the columns of an atom row map to label, positions, velocities or skipped fields. */
export interface XyzLayout {
  /** Action per column. */
  actions: Int8Array;
  velocities: boolean;
}

/** Column layout from a Properties= value. */
export function layoutFromProperties(value: string, file: string, line: number, column: number): XyzLayout {
  const parts = value.split(':');
  const fail = (msg: string) =>
    new InputError(file, line, column, `Properties="${value}": ${msg}`);
  if (parts.length % 3 !== 0 || parts.length === 0) throw fail('expected name:type:count triples');
  const actions: number[] = [];
  let haveSpecies = false;
  let havePos = false;
  let haveVel = false;
  for (let k = 0; k < parts.length; k += 3) {
    const name = parts[k]!.toLowerCase();
    const type = parts[k + 1]!.toUpperCase();
    const count = Number(parts[k + 2]);
    if (!/^[SRIL]$/.test(type)) throw fail(`unknown type '${parts[k + 1]}' for '${parts[k]}' (expected S, R, I or L)`);
    if (!Number.isInteger(count) || count < 1 || count > 1000) throw fail(`bad column count '${parts[k + 2]}' for '${parts[k]}'`);
    if (name === 'species' && !haveSpecies) {
      if (type !== 'S' || count !== 1) throw fail('species must be species:S:1');
      haveSpecies = true;
      actions.push(A_LABEL);
    } else if (name === 'pos' && !havePos) {
      if (type !== 'R' || count !== 3) throw fail('pos must be pos:R:3');
      havePos = true;
      actions.push(0, 1, 2);
    } else if ((name === 'vel' || name === 'velo' || name === 'velocities') && !haveVel) {
      if (type !== 'R' || count !== 3) throw fail(`${parts[k]} must be ${parts[k]}:R:3`);
      haveVel = true;
      actions.push(3, 4, 5);
    } else {
      for (let j = 0; j < count; j++) actions.push(A_SKIP);
    }
  }
  if (!haveSpecies) throw fail('no species:S:1 column');
  if (!havePos) throw fail('no pos:R:3 column');
  return { actions: Int8Array.from(actions), velocities: haveVel };
}

const PLAIN4: XyzLayout = { actions: Int8Array.from([A_LABEL, 0, 1, 2]), velocities: false };
const PLAIN7: XyzLayout = { actions: Int8Array.from([A_LABEL, 0, 1, 2, 3, 4, 5]), velocities: true };

/** The XYZ line state machine. Create one per file. */
export class XyzParser implements LineHandler<Frame> {
  readonly file: string;
  private readonly opts: TrajectoryReadOptions;
  private readonly cur: LineCursor;
  private state = ST_COUNT;
  /** 0-based index of the frame being read. */
  private frameIndex = 0;
  private frameLine = 0;
  /** Atom count of the first frame (-1 before it is known). */
  private nAtoms = -1;
  private count = 0;
  private atom = 0;
  private blankLine = 0;
  private positions: Float64Array = new Float64Array(0);
  /** Atoms the arrays can hold (grows during the first frame up to its count). */
  private cap = 0;
  /** Line of the atom row that completed the last frame. */
  private lastRowLine = 0;
  private velocities: Float64Array | null = null;
  private cell: Float64Array | null = null;
  private hasCell = false;
  private firstHasCell = false;
  private time: number | null = null;
  private layout: XyzLayout | null = null;
  private plain = true;
  private firstHadProperties = false;
  private propertiesKey: string | null = null;
  private firstVelocities = false;
  // first-frame labels
  private labels: string[] = [];
  private labelBytes = new Uint8Array(1024);
  private labelOff: Int32Array = new Int32Array(1);
  private labelLen = 0;
  private topology: Topology | null = null;
  private readonly fend: FloatEnd = { pos: 0 };
  private readonly select: FrameSelection | undefined;
  /** ST_SKIP: lines of the skipped frame still to count (comment and atom rows). */
  private skipLeft = 0;
  /** Complete frames seen (produced or skipped). */
  complete = 0;

  constructor(file: string, opts: TrajectoryReadOptions) {
    this.file = file;
    this.opts = opts;
    this.cur = new LineCursor(file);
    this.select = opts.select;
    this.frameIndex = opts.firstIndex ?? 0;
    // Frames before a frame offset are complete frames of the file (for counts in messages).
    this.complete = this.frameIndex;
  }

  line(buf: Uint8Array, start: number, end: number, lineNo: number, st?: LineState<Frame>): Frame | null {
    const state = this.state;
    if (state === ST_SKIP) {
      if (--this.skipLeft === 0) this.endSkipped();
      return null;
    }
    if (state === ST_SKIP_HEAD) {
      this.opts.onSkippedCell!(this.frameIndex, this.frameLine, latticeOf(latin1(buf, start, end)));
      this.skipLeft--;
      this.state = ST_SKIP;
      return null;
    }
    if (state === ST_ATOMS) {
      if (start === end || LineCursor.isBlankLine(buf, start, end)) {
        this.state = ST_BLANK;
        this.blankLine = lineNo;
        return null;
      }
      this.row(buf, start, end, lineNo);
      if (++this.atom === this.count) {
        this.lastRowLine = lineNo;
        return this.finishFrame();
      }
      return null;
    }
    if (state === ST_COUNT) {
      if (LineCursor.isBlankLine(buf, start, end)) return null;
      this.countLine(buf, start, end, lineNo, st === undefined ? -1 : st.base + start);
      return null;
    }
    if (state === ST_COMMENT) {
      this.commentLine(buf, start, end, lineNo);
      this.atom = 0;
      this.state = ST_ATOMS;
      return null;
    }
    // ST_BLANK
    if (LineCursor.isBlankLine(buf, start, end)) return null;
    throw new InputError(
      this.file,
      this.blankLine,
      null,
      `blank line where atom row ${this.atom + 1} of ${this.count} of frame ${this.frameIndex + 1} (starting at line ${this.frameLine}) was expected`,
    );
  }

  /**
   * Fast path for atom rows: parses well-formed rows directly from the bytes (labels recorded
   * in the first frame, compared with the first frame's later) and declines at the first line
   * that is unusual in any way, which then goes through line() and its error reporting.
   * Nothing is recorded for a line until it is known to be complete and well formed.
   */
  bulk(buf: Uint8Array, pos: number, limit: number, st: LineState<Frame>): number {
    if (this.state !== ST_ATOMS || this.layout === null) return this.state === ST_SKIP ? this.skipLines(buf, pos, limit, st) : pos;
    const first = this.nAtoms < 0;
    const actions = this.layout.actions;
    const nc = actions.length;
    if (!first && nc === 4 && actions[0] === A_LABEL && actions[1] === 0 && actions[2] === 1 && actions[3] === 2) {
      return this.bulkLabelXyz(buf, pos, limit, st);
    }
    const P = this.positions;
    const V = this.velocities;
    const lb = this.labelBytes;
    const lo = this.labelOff;
    const fend = this.fend;
    const count = this.count;
    const cap = this.cap;
    let atom = this.atom;
    let lineNo = st.lineNo;
    let labS = 0;
    let labE = 0;
    rows: while (pos < limit) {
      if (atom >= cap) break; // first frame: the arrays must grow (row() does it)
      let p = pos;
      const i3 = atom * 3;
      for (let c = 0; c < nc; c++) {
        const a = actions[c]!;
        if (a < 6) {
          const v = fastFloat(buf, p, fend);
          p = fend.pos;
          if (p < 0) break rows;
          if (a < 3) P[i3 + a] = v;
          else V![i3 + a - 3] = v;
        } else {
          let ch = buf[p]!;
          while (ch === 32 || ch === 9) ch = buf[++p]!;
          const s = p;
          while (ch > 32) ch = buf[++p]!;
          if (p === s) break rows;
          if (a === A_LABEL) {
            if (first) {
              labS = s;
              labE = p;
            } else {
              const o = lo[atom]!;
              if (lo[atom + 1]! - o !== p - s) break rows;
              for (let k = s; k < p; k++) if (buf[k] !== lb[o + k - s]) break rows;
            }
          }
        }
      }
      let ch = buf[p]!;
      while (ch === 32 || ch === 9 || ch === 13) ch = buf[++p]!;
      if (ch !== 10) break;
      if (first) {
        this.atom = atom;
        this.recordLabel(buf, labS, labE, lineNo + 1, labS - pos + 1);
      }
      pos = p + 1;
      lineNo++;
      atom++;
      if (atom === count) {
        this.atom = atom;
        st.lineNo = lineNo;
        st.item = this.finishFrame();
        return pos;
      }
    }
    this.atom = atom;
    st.lineNo = lineNo;
    return pos;
  }

  finish(lines: number, broken: InputError | null, unterminated: boolean): Frame | null {
    const st = this.state;
    if (st === ST_COUNT && broken === null) {
      if (this.complete === 0) throw new InputError(this.file, null, null, 'no frame found (the file is empty or blank)');
      if (unterminated && this.lastRowLine === lines) {
        // The last frame was completed by a line without '\n': if the file was cut short, that
        // row may have lost the end of its last number and still parsed.
        if (this.opts.strict) {
          throw new InputError(
            this.file,
            lines,
            null,
            `frame ${this.complete} may be truncated: the file ends without a newline in its last atom row, which may have been cut short; strict mode rejects a possibly truncated last frame`,
          );
        }
        this.opts.warnings.push(
          `${this.file}:${lines}: frame ${this.complete} may be truncated: the file ends without a newline in its last atom row; if the file was cut short, that row's last value is incomplete (it was used as read)`,
        );
      }
      return null;
    }
    let detail: string;
    if (st === ST_COUNT) detail = `its atom-count line is cut off: ${broken!.message}`;
    else if (st === ST_COMMENT || st === ST_SKIP_HEAD || (st === ST_SKIP && this.skipLeft === this.count + 1)) {
      detail = `it ends after the atom count, before the comment line`;
    } else if (st === ST_SKIP) detail = `${this.count - this.skipLeft} of ${this.count} atom rows`;
    else {
      detail = `${this.atom} of ${this.count} atom rows`;
      if (broken) detail += `; the last line is incomplete: ${broken.message}`;
    }
    // A cut-off count line starts the truncated frame itself (frameLine is still the previous frame's).
    const startLine = st === ST_COUNT ? (broken!.line ?? lines) : this.frameLine;
    truncatedLastFrame(this.file, this.opts, this.frameIndex + 1, startLine, detail, this.complete);
    return null;
  }

  /**
   * bulk() for the most common rows, `label x y z` after the first frame, as straight-line code
   * (no per-column dispatch): the label is compared with the first frame's and must be followed
   * by a blank; the three numbers go through fastFloat. It accepts and declines exactly the rows
   * the general loop does (a label of other length or bytes, or any unusual byte, declines).
   */
  private bulkLabelXyz(buf: Uint8Array, pos: number, limit: number, st: LineState<Frame>): number {
    const P = this.positions;
    const lb = this.labelBytes;
    const lo = this.labelOff;
    const fend = this.fend;
    const count = this.count;
    let atom = this.atom;
    let lineNo = st.lineNo;
    while (pos < limit) {
      let p = pos;
      let ch = buf[p]!;
      while (ch === 32 || ch === 9) ch = buf[++p]!;
      const o = lo[atom]!;
      const len = lo[atom + 1]! - o;
      let k = 0;
      while (k < len && buf[p + k] === lb[o + k]) k++;
      if (k !== len) break;
      p += len;
      ch = buf[p]!;
      if (ch !== 32 && ch !== 9) break;
      // One call site in a loop, so that V8 inlines fastFloat (three sites exceed its budget).
      // A row declined after this is parsed again by line(), which writes all three values.
      const i3 = atom * 3;
      for (let c = 0; c < 3; c++) {
        P[i3 + c] = fastFloat(buf, p, fend);
        p = fend.pos;
        if (p < 0) break;
      }
      if (p < 0) break;
      ch = buf[p]!;
      if (ch !== 10) {
        while (ch === 32 || ch === 9 || ch === 13) ch = buf[++p]!;
        if (ch !== 10) break;
      }
      pos = p + 1;
      lineNo++;
      atom++;
      if (atom === count) {
        this.atom = atom;
        st.lineNo = lineNo;
        st.item = this.finishFrame();
        return pos;
      }
    }
    this.atom = atom;
    st.lineNo = lineNo;
    return pos;
  }

  /** Bulk path of a skipped frame: count its lines with the native newline search, parse nothing. */
  private skipLines(buf: Uint8Array, pos: number, limit: number, st: LineState<Frame>): number {
    let left = this.skipLeft;
    let p = pos;
    while (left > 0 && p < limit) {
      p = findNewline(buf, p) + 1;
      left--;
    }
    st.lineNo += this.skipLeft - left;
    this.skipLeft = left;
    if (left === 0) this.endSkipped();
    return p;
  }

  /** A skipped frame's lines are all counted: it is complete. */
  private endSkipped(): void {
    this.frameIndex++;
    this.complete++;
    this.state = ST_COUNT;
  }

  private countLine(buf: Uint8Array, start: number, end: number, lineNo: number, offset: number): void {
    const cur = this.cur;
    cur.reset(buf, start, end, lineNo);
    const n = cur.uint(`the atom count of frame ${this.frameIndex + 1}`);
    cur.expectEnd('the atom count');
    if (n === 0) throw cur.error(cur.lineStart, `frame ${this.frameIndex + 1} has an atom count of 0`);
    if (this.nAtoms < 0) {
      // Refuse a count this machine cannot hold before allocating anything for it.
      const tooMany = tooManyAtoms(n);
      if (tooMany !== null) throw cur.error(cur.lineStart, `frame ${this.frameIndex + 1}: ${tooMany}`);
    }
    if (this.nAtoms >= 0 && n !== this.nAtoms) {
      throw new InputError(
        this.file,
        lineNo,
        1,
        `frame ${this.frameIndex + 1} has ${n} atoms, but the first frame has ${this.nAtoms} (every frame must have the same atoms)`,
      );
    }
    this.opts.onFrameStart?.({ index: this.frameIndex, line: lineNo, offset, seed: null });
    if (!frameWanted(this.select, this.frameIndex)) {
      this.count = n;
      this.frameLine = lineNo;
      this.skipLeft = n + 1;
      this.state = this.opts.onSkippedCell ? ST_SKIP_HEAD : ST_SKIP;
      return;
    }
    if (this.nAtoms < 0) {
      this.cap = Math.min(n, INITIAL_ATOMS);
      this.positions = new Float64Array(3 * this.cap);
      this.labelOff = new Int32Array(this.cap + 1);
    }
    this.count = n;
    this.frameLine = lineNo;
    this.state = ST_COMMENT;
  }

  private commentLine(buf: Uint8Array, start: number, end: number, lineNo: number): void {
    const first = this.nAtoms < 0;
    let pairs: Map<string, CommentValue> | null = null;
    if (buf.subarray(start, end).indexOf(61) >= 0) pairs = parseCommentPairs(utf8(buf, start, end));
    // Time
    const t = pairs?.get('time');
    this.time = t ? parseNumberString(t.value, 'Time= value (ps)', this.file, lineNo, t.column) : null;
    // Lattice
    const lat = pairs?.get('lattice');
    if (lat) {
      const nums = lat.value.trim().split(/[\s,]+/).filter((s) => s.length > 0);
      if (nums.length !== 9) {
        throw new InputError(this.file, lineNo, lat.column, `Lattice= needs 9 numbers (cell vectors a, b, c), found ${nums.length}`);
      }
      const cell = this.cell ?? (this.cell = new Float64Array(9));
      for (let k = 0; k < 9; k++) cell[k] = parseNumberString(nums[k]!, 'Lattice= component', this.file, lineNo, lat.column);
      const det =
        cell[0]! * (cell[4]! * cell[8]! - cell[5]! * cell[7]!) -
        cell[1]! * (cell[3]! * cell[8]! - cell[5]! * cell[6]!) +
        cell[2]! * (cell[3]! * cell[7]! - cell[4]! * cell[6]!);
      const na = Math.hypot(cell[0]!, cell[1]!, cell[2]!);
      const nb = Math.hypot(cell[3]!, cell[4]!, cell[5]!);
      const nc = Math.hypot(cell[6]!, cell[7]!, cell[8]!);
      if (!Number.isFinite(det) || !Number.isFinite(na * nb * nc)) {
        throw new InputError(this.file, lineNo, lat.column, `Lattice= vectors are too long: the cell volume is not a finite number`);
      }
      if (!(Math.abs(det) > 1e-10 * na * nb * nc)) {
        throw new InputError(this.file, lineNo, lat.column, `Lattice= vectors are degenerate (cell volume ${det})`);
      }
    }
    this.hasCell = lat !== undefined;
    if (first) this.firstHasCell = this.hasCell;
    else if (this.hasCell !== this.firstHasCell) {
      throw new InputError(
        this.file,
        lineNo,
        null,
        this.hasCell
          ? `frame ${this.frameIndex + 1} has a Lattice= but the first frame has none`
          : `frame ${this.frameIndex + 1} has no Lattice= but the first frame has one`,
      );
    }
    // Properties
    const props = pairs?.get('properties');
    if (first) this.firstHadProperties = props !== undefined;
    else if ((props !== undefined) !== this.firstHadProperties) {
      throw new InputError(
        this.file,
        lineNo,
        null,
        props
          ? `frame ${this.frameIndex + 1} has a Properties= but the first frame has none`
          : `frame ${this.frameIndex + 1} has no Properties= but the first frame has one`,
      );
    }
    if (props) {
      if (props.value !== this.propertiesKey) {
        this.layout = layoutFromProperties(props.value, this.file, lineNo, props.column);
        this.propertiesKey = props.value;
      }
      this.plain = false;
    } else {
      this.plain = true;
      if (!first) this.layout = this.firstVelocities ? PLAIN7 : PLAIN4;
      else this.layout = null; // decided by the first atom row
    }
    if (this.layout !== null) this.checkVelocities(lineNo, first);
  }

  private checkVelocities(lineNo: number, first: boolean): void {
    const v = this.layout!.velocities;
    if (first) {
      this.firstVelocities = v;
      if (v && this.velocities === null) this.velocities = new Float64Array(3 * this.cap);
    } else if (v !== this.firstVelocities) {
      throw new InputError(
        this.file,
        lineNo,
        null,
        v
          ? `frame ${this.frameIndex + 1} has velocities but the first frame has none`
          : `frame ${this.frameIndex + 1} has no velocities but the first frame has them`,
      );
    }
  }

  private row(buf: Uint8Array, start: number, end: number, lineNo: number): void {
    if (this.atom >= this.cap) this.grow();
    const cur = this.cur;
    cur.reset(buf, start, end, lineNo);
    let layout = this.layout;
    if (layout === null) {
      // plain XYZ, first row of the first frame: 4 or 7 columns
      const nc = cur.countTokens();
      if (nc === 4) layout = PLAIN4;
      else if (nc === 7) layout = PLAIN7;
      else {
        throw cur.error(
          start,
          `atom row has ${nc} columns; plain XYZ rows must be 'label x y z' (4) or 'label x y z vx vy vz' (7) — describe other columns with an extended-XYZ Properties= key`,
        );
      }
      this.layout = layout;
      this.checkVelocities(lineNo, true);
    }
    const actions = layout.actions;
    const nc = actions.length;
    const i3 = this.atom * 3;
    const pos = this.positions;
    const vel = this.velocities;
    try {
      for (let c = 0; c < nc; c++) {
        const a = actions[c]!;
        if (a < 3) pos[i3 + a] = cur.float(WHAT[a]!);
        else if (a < 6) vel![i3 + a - 3] = cur.float(WHAT[a]!);
        else if (a === A_LABEL) this.label(cur);
        else cur.token(`column ${c + 1}`);
      }
      if (cur.pos < end) {
        cur.skipBlanks();
        if (cur.pos < end) {
          const s = cur.pos;
          throw cur.error(
            s,
            `atom row has more than ${nc} columns ('${latin1(buf, s, cur.tokenEnd(s))}' is extra)${this.plain ? '; plain XYZ rows have 4 or 7 columns, use Properties= to describe others' : ' for its Properties='}`,
          );
        }
      }
    } catch (e) {
      // A lone integer where an atom row was expected: the frame has fewer rows than declared.
      if (e instanceof InputError) {
        cur.reset(buf, start, end, lineNo);
        if (cur.countTokens() === 1 && /^\s*\d+\s*$/.test(latin1(buf, start, end))) {
          throw new InputError(
            this.file,
            lineNo,
            1,
            `expected atom row ${this.atom + 1} of ${this.count} of frame ${this.frameIndex + 1} (starting at line ${this.frameLine}), found what looks like an atom count: the frame has fewer atom rows than its count says`,
          );
        }
      }
      throw e;
    }
  }

  private label(cur: LineCursor): void {
    const s = cur.token('atom label');
    const e = cur.pos;
    const buf = cur.buf;
    const len = e - s;
    const atom = this.atom;
    if (this.nAtoms < 0) {
      this.recordLabel(buf, s, e, cur.lineNo, cur.column(s));
      return;
    }
    const o = this.labelOff[atom]!;
    const lb = this.labelBytes;
    let same = this.labelOff[atom + 1]! - o === len;
    for (let k = 0; same && k < len; k++) if (buf[s + k] !== lb[o + k]) same = false;
    if (!same) {
      throw cur.error(
        s,
        `atom ${atom + 1} of frame ${this.frameIndex + 1} is labelled '${utf8(buf, s, e)}', but '${this.labels[atom]}' in the first frame (every frame must list the same atoms in the same order)`,
      );
    }
  }

  /**
   * First frame: enlarge the arrays (positions, velocities, label offsets) to the next size,
   * doubling up to the frame's atom count, so that they end exactly 3 × count long.
   */
  private grow(): void {
    const cap = Math.min(this.count, Math.max(2 * this.cap, INITIAL_ATOMS));
    const p = new Float64Array(3 * cap);
    p.set(this.positions);
    this.positions = p;
    if (this.velocities !== null) {
      const v = new Float64Array(3 * cap);
      v.set(this.velocities);
      this.velocities = v;
    }
    const o = new Int32Array(cap + 1);
    o.set(this.labelOff);
    this.labelOff = o;
    this.cap = cap;
  }

  /**
   * First frame: remember the label of atom this.atom (bytes for comparisons, and text). Labels
   * are UTF-8; bytes that are not UTF-8 text are an error at their line and column.
   */
  private recordLabel(buf: Uint8Array, s: number, e: number, lineNo: number, column: number): void {
    let text: string;
    try {
      text = STRICT_UTF8.decode(buf.subarray(s, e));
    } catch {
      const hex = Array.from(buf.subarray(s, Math.min(e, s + 16)), (b) => b.toString(16).padStart(2, '0')).join(' ');
      throw new InputError(this.file, lineNo, column, `the atom label is not UTF-8 text (bytes ${hex}${e - s > 16 ? ' …' : ''}); labels are read as UTF-8`);
    }
    const len = e - s;
    if (this.labelLen + len > this.labelBytes.length) {
      const nb = new Uint8Array(Math.max(this.labelBytes.length * 2, this.labelLen + len));
      nb.set(this.labelBytes.subarray(0, this.labelLen));
      this.labelBytes = nb;
    }
    this.labelBytes.set(buf.subarray(s, e), this.labelLen);
    this.labelLen += len;
    this.labelOff[this.atom + 1] = this.labelLen;
    this.labels.push(text);
  }

  private finishFrame(): Frame {
    if (this.topology === null) {
      this.nAtoms = this.count;
      this.topology = buildTopology(this.labels, null, null, null);
    }
    const frame: Frame = {
      index: this.frameIndex,
      time: this.time,
      cell: this.hasCell ? this.cell : null,
      positions: this.positions,
      velocities: this.velocities,
      line: this.frameLine,
      topology: this.topology,
    };
    this.frameIndex++;
    this.complete++;
    this.state = ST_COUNT;
    return frame;
  }
}
