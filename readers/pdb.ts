/**
 * PDB trajectories (wwPDB format v3.3 fixed columns; columns below are 1-based, inclusive).
 *
 * Records used (all others — REMARK, TER, CONECT, ANISOU, … — are ignored):
 * - CRYST1: a (7–15), b (16–24), c (25–33) in Å, α (34–40), β (41–47), γ (48–54) in degrees.
 *   Converted to a cell matrix by src/cell.ts cellFromParameters, the PDB convention (a along
 *   x, b in the xy plane):
 *     a = (a, 0, 0)
 *     b = (b cosγ, b sinγ, 0)
 *     c = (c cosβ, c (cosα − cosβ cosγ)/sinγ, c √(1 − cos²β − ((cosα − cosβ cosγ)/sinγ)²))
 *   Round-off of right angles is snapped to 0 there (orthorhombic boxes are exactly diagonal).
 *   Zero or negative lengths, angles outside (0, 180), and angles that make no cell (the
 *   square root's argument ≤ 0) are InputErrors. The placeholder cell that the PDB format
 *   prescribes for structures without one (a = b = c = 1, α = β = γ = 90) is read as "no
 *   cell" (null), with a warning. A CRYST1 applies to the frame it appears in or precedes,
 *   and stays in force for later frames until the next CRYST1.
 * - MODEL / ENDMDL delimit frames; without MODEL records, END ends a frame; a file with
 *   neither is one frame.
 * - ATOM / HETATM: atom name (13–16, trimmed, is the label), residue name (18–20; column 21 is
 *   read too, for the 4-character names some MD programs write), chain (22), residue number
 *   (23–26, decimal or hybrid-36), insertion code (27), x y z (31–38, 39–46, 47–54), element
 *   (77–78), formal charge (79–80, "1+", "2-"; "+1"/"-1" also accepted).
 *   Element: the element columns when filled (any capitalisation), else derived from the atom
 *   name with elementFromLabel() (see src/elements.ts for that rule).
 *   Charges: a Float64Array when at least one atom of the first frame has a charge field
 *   (atoms without one get 0), else null.
 *   Residues: molecule index = runs of consecutive atoms sharing chain, residue number,
 *   insertion code and residue name.
 * - TITLE containing "t= <number>" (a convention of several MD writers) gives the time in ps of
 *   the next frame.
 *
 * Every frame must have the atom count and atom names of the first. A last frame that ends
 * (end of file, no ENDMDL/END) with fewer atoms than the first frame is truncated (warning,
 * or InputError when strict), and so is a first frame opened by MODEL that the file ends
 * inside (no ENDMDL). A single-frame file without MODEL records cut short cannot be
 * recognised as such. An ATOM/HETATM record must reach column 54 (the end of z): a shorter
 * one has lost coordinates and is an InputError (a truncated frame when it is the last line).
 * Frames share their typed arrays; the Topology comes from the first frame.
 */
import { InputError } from '../src/errors.js';
import type { Frame, Residues, Topology } from '../src/types.js';
import { cellFromParameters } from '../src/cell.js';
import { buildTopology, frameWanted, tooManyAtoms, truncatedLastFrame, type FrameSelection, type TrajectoryReadOptions } from './common.js';
import { LineCursor, latin1, utf8, type LineHandler, type LineState } from './lines.js';

const DEG = Math.PI / 180;

function cosDeg(x: number): number {
  return Math.cos(x * DEG);
}
function sinDeg(x: number): number {
  return Math.sin(x * DEG);
}

/**
 * Why CRYST1 parameters make no cell, or null when they do: lengths must be positive, angles
 * inside (0, 180) degrees, and the squared z component of c divided by c²,
 * 1 − cos²β − ((cosα − cosβ cosγ)/sinγ)², must be positive (it is V²/(abc sinγ)², so it is
 * the volume condition; wwPDB format v3.3, CRYST1, with the PDB orientation convention).
 */
export function cellParameterProblem(a: number, b: number, c: number, alpha: number, beta: number, gamma: number): string | null {
  if (!(a > 0) || !(b > 0) || !(c > 0)) return `cell lengths must be positive (a=${a}, b=${b}, c=${c})`;
  for (const [name, v] of [
    ['alpha', alpha],
    ['beta', beta],
    ['gamma', gamma],
  ] as const) {
    if (!(v > 0 && v < 180)) return `cell angle ${name}=${v} is outside (0, 180) degrees`;
  }
  const ca = cosDeg(alpha);
  const cb = cosDeg(beta);
  const cg = cosDeg(gamma);
  const sg = sinDeg(gamma);
  const cy = (ca - cb * cg) / sg;
  const zz = 1 - cb * cb - cy * cy;
  if (!(zz > 1e-12)) return `angles alpha=${alpha}, beta=${beta}, gamma=${gamma} do not make a cell (zero or imaginary volume)`;
  if (!Number.isFinite(a * b * c)) return `cell lengths a=${a}, b=${b}, c=${c} are too large (the volume is not a finite number)`;
  return null;
}

/**
 * Decode a hybrid-36 (or plain decimal) field of width w; NaN when neither. Hybrid-36
 * (R. W. Grosse-Kunstleve, cctbx iotbx.pdb.hybrid_36, the scheme PDB writers use past 9999
 * residues / 99999 atoms): decimal up to 10^w − 1, then upper-case base-36 "A000…" counting
 * from 10^w, then lower-case "a000…" counting from 10^w + 26·36^(w−1).
 */
export function hybrid36(text: string, w: number): number {
  const s = text.trim();
  if (s.length === 0) return NaN;
  if (/^[+-]?\d+$/.test(s)) return Number(s);
  if (s.length !== w) return NaN;
  const digits = '0123456789ABCDEFGHIJKLMNOPQRSTUVWXYZ';
  const upper = /^[A-Z][0-9A-Z]*$/.test(s);
  const lower = /^[a-z][0-9a-z]*$/.test(s);
  if (!upper && !lower) return NaN;
  let v = 0;
  for (const ch of s.toUpperCase()) v = v * 36 + digits.indexOf(ch);
  // upper: 'A000' = 10^(w) ; lower: 'a000' = 10^w + 26·36^(w-1)
  const base = 10 ** w - 10 * 36 ** (w - 1);
  return upper ? v + base : v + base + 26 * 36 ** (w - 1);
}

function recordIs(buf: Uint8Array, s: number, e: number, name: string): boolean {
  // A line may end early ("END"): missing characters count as blanks.
  const n = name.length;
  for (let i = 0; i < n; i++) {
    const b = s + i < e ? buf[s + i]! : 32;
    if (b !== name.charCodeAt(i)) return false;
  }
  return true;
}

/** Text (UTF-8) of 0-based byte columns [from, to) of the line, '' past its end. */
function field(buf: Uint8Array, s: number, e: number, from: number, to: number): string {
  const a = s + from;
  const b = Math.min(s + to, e);
  return a < b ? utf8(buf, a, b) : '';
}

/** The PDB line state machine. Create one per file. */
export class PdbParser implements LineHandler<Frame> {
  readonly file: string;
  private readonly opts: TrajectoryReadOptions;
  private readonly cur: LineCursor;
  private inFrame = false;
  /** The current frame was opened by a MODEL record (so it must be closed by ENDMDL). */
  private frameByModel = false;
  private frameIndex = 0;
  private frameLine = 0;
  private atom = 0;
  private nAtoms = -1;
  private positions: Float64Array = new Float64Array(3 * 1024);
  private cell: Float64Array | null = null;
  private hasCell = false;
  private pendingTime: number | null = null;
  private time: number | null = null;
  private warnedPlaceholder = false;
  // first-frame data
  private labels: string[] = [];
  private names: Uint8Array = new Uint8Array(4 * 1024); // raw columns 13-16 per atom
  private elementCol: (string | null)[] = [];
  private chargeVals: number[] = [];
  private anyCharge = false;
  private resNames: string[] = [];
  private resNums: number[] = [];
  private chains: string[] = [];
  private resKeys: string[] = [];
  private topology: Topology | null = null;
  private readonly select: FrameSelection | undefined;
  /** The current frame is outside the selection: its atom records are counted, not read. */
  private skipping = false;
  /** Atom count of the first skipped frame (the reference while no frame was read). */
  private refAtoms = -1;
  /** Complete frames seen (produced or skipped). */
  complete = 0;
  /** Atoms of the current frame already given with an alternate location (name and residue columns). */
  private readonly altSeen = new Set<string>();
  private warnedAlt = false;

  constructor(file: string, opts: TrajectoryReadOptions) {
    this.file = file;
    this.opts = opts;
    this.cur = new LineCursor(file);
    this.select = opts.select;
    this.frameIndex = opts.firstIndex ?? 0;
    // Frames before a frame offset are complete frames of the file (for counts in messages).
    this.complete = this.frameIndex;
    const seed = opts.seed;
    if (seed) {
      if (seed.cell !== null) {
        this.cell = Float64Array.from(seed.cell);
        this.hasCell = true;
      }
      this.pendingTime = seed.time;
      this.warnedPlaceholder = seed.placeholderWarned;
    }
  }

  line(buf: Uint8Array, s: number, e: number, lineNo: number, st?: LineState<Frame>): Frame | null {
    const c0 = e > s ? buf[s]! : 32;
    if (c0 === 65 /* A */ || c0 === 72 /* H */) {
      if (recordIs(buf, s, e, 'ATOM  ') || recordIs(buf, s, e, 'HETATM')) {
        if (!this.inFrame) this.startFrame(lineNo, st === undefined ? -1 : st.base + s);
        // An alternate location (column 17) of an atom already read in this frame is no atom.
        if (e - s > 16 && buf[s + 16] !== 32 && this.alternate(buf, s, e)) return null;
        if (this.skipping) {
          this.atom++;
          return null;
        }
        this.atomLine(buf, s, e, lineNo);
        return null;
      }
    } else if (c0 === 69 /* E */) {
      if (recordIs(buf, s, e, 'ENDMDL') || recordIs(buf, s, e, 'END   ')) {
        if (this.inFrame && this.atom > 0) return this.finishFrame(lineNo);
        this.inFrame = false;
        return null;
      }
    } else if (c0 === 77 /* M */) {
      if (recordIs(buf, s, e, 'MODEL ')) {
        let out: Frame | null = null;
        if (this.inFrame && this.atom > 0) out = this.finishFrame(lineNo);
        this.startFrame(lineNo, st === undefined ? -1 : st.base + s);
        this.frameByModel = true;
        return out;
      }
    } else if (c0 === 67 /* C */) {
      if (recordIs(buf, s, e, 'CRYST1')) this.cryst1(buf, s, e, lineNo);
    } else if (c0 === 84 /* T */) {
      if (recordIs(buf, s, e, 'TITLE ')) {
        const m = /\bt=\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)/.exec(latin1(buf, s, e));
        if (m) {
          const t = Number(m[1]);
          if (!Number.isFinite(t)) throw new InputError(this.file, lineNo, m.index + 1, `TITLE time t=${m[1]} is out of range (overflows to infinity)`);
          this.pendingTime = t;
        }
      }
    }
    return null;
  }

  finish(_lines: number, broken: InputError | null, _unterminated: boolean): Frame | null {
    // An unterminated last line needs no check here: an ATOM record must reach column 54, so
    // a cut one fails (and arrives as `broken`); later columns are read in frame 1 only.
    if (this.inFrame && (this.atom > 0 || broken)) {
      // While no frame was read, a skipped frame's atom count is the reference.
      const nAtoms = this.nAtoms >= 0 ? this.nAtoms : this.refAtoms;
      if (broken) {
        truncatedLastFrame(
          this.file,
          this.opts,
          this.frameIndex + 1,
          this.frameLine,
          `${this.atom} atom records before the cut-off last line; ${broken.message}`,
          this.complete,
        );
        return null;
      }
      if (nAtoms < 0) {
        // The first frame ends at the end of the file. Opened by MODEL, it lacks the ENDMDL
        // that wwPDB v3.3 pairs with every MODEL: the file was cut short, and its atom count
        // is known from nothing else, so it is a truncated frame.
        if (this.frameByModel) {
          truncatedLastFrame(
            this.file,
            this.opts,
            this.frameIndex + 1,
            this.frameLine,
            `its MODEL record has no ENDMDL; the file ends after ${this.atom} atom records`,
            this.complete,
          );
          return null;
        }
        // Without MODEL records a file with no END is one frame (see the module comment), so
        // a single-frame file cut short cannot be recognised.
        return this.finishFrame(null);
      }
      if (this.atom === nAtoms) return this.finishFrame(null);
      truncatedLastFrame(
        this.file,
        this.opts,
        this.frameIndex + 1,
        this.frameLine,
        `${this.atom} of ${nAtoms} atom records, no ENDMDL/END`,
        this.complete,
      );
      return null;
    }
    if (this.complete === 0) throw new InputError(this.file, null, null, 'no ATOM/HETATM records found: no frame to read');
    return null;
  }

  /**
   * True for a record that gives another location (altLoc, column 17, wwPDB v3.3) of an atom
   * already given with one in this frame — same name (columns 13-16), residue name, chain,
   * residue number and insertion code (18-27): the first location given is kept, as in a read
   * of a crystal structure that takes conformer A, and the others are left out with a warning
   * (words independent of where a read starts, so that split reads give the same one).
   */
  private alternate(buf: Uint8Array, s: number, e: number): boolean {
    const key = latin1(buf, s + 12, s + 16) + latin1(buf, s + 17, Math.min(e, s + 27));
    if (!this.altSeen.has(key)) {
      this.altSeen.add(key);
      return false;
    }
    if (!this.warnedAlt) {
      this.warnedAlt = true;
      this.opts.warnings.push(
        `${this.file}: some atoms are given at alternate locations (altLoc, column 17): the first location of each atom is used and the others are left out`,
      );
    }
    return true;
  }

  private startFrame(lineNo: number, offset = -1): void {
    this.altSeen.clear();
    const onStart = this.opts.onFrameStart;
    if (onStart) {
      const seed = {
        cell: this.hasCell && this.cell !== null ? Array.from(this.cell) : null,
        time: this.pendingTime,
        placeholderWarned: this.warnedPlaceholder,
      };
      onStart({ index: this.frameIndex, line: lineNo, offset, seed });
    }
    this.skipping = !frameWanted(this.select, this.frameIndex);
    this.inFrame = true;
    this.frameByModel = false;
    this.atom = 0;
    this.frameLine = lineNo;
    this.time = this.pendingTime;
    this.pendingTime = null;
  }

  private atomLine(buf: Uint8Array, s: number, e: number, lineNo: number): void {
    if (!this.inFrame) this.startFrame(lineNo);
    if (e - s < 54) {
      // wwPDB v3.3: x, y, z are Real(8.3) in columns 31-38, 39-46, 47-54 (right-justified), so
      // a record that stops before column 54 has lost part of its coordinates.
      throw new InputError(
        this.file,
        lineNo,
        e - s + 1,
        `${latin1(buf, s, Math.min(e, s + 6)).trim()} record ends at column ${e - s}, before the end of the z coordinate (columns 47-54): the line is cut short`,
      );
    }
    const i = this.atom;
    const first = this.nAtoms < 0;
    const cur = this.cur;
    cur.reset(buf, s, e, lineNo);
    if (!first && i >= this.nAtoms) {
      throw new InputError(
        this.file,
        lineNo,
        null,
        `frame ${this.frameIndex + 1} (starting at line ${this.frameLine}) has more atoms than the first frame (${this.nAtoms})`,
      );
    }
    // name, columns 13-16
    if (first) {
      if (4 * (i + 1) > this.names.length) {
        const nb = new Uint8Array(this.names.length * 2);
        nb.set(this.names);
        this.names = nb;
      }
      for (let k = 0; k < 4; k++) this.names[4 * i + k] = s + 12 + k < e ? buf[s + 12 + k]! : 32;
    } else {
      const names = this.names;
      for (let k = 0; k < 4; k++) {
        const b = s + 12 + k < e ? buf[s + 12 + k]! : 32;
        if (b !== names[4 * i + k]) {
          throw new InputError(
            this.file,
            lineNo,
            13,
            `atom ${i + 1} of frame ${this.frameIndex + 1} is named '${field(buf, s, e, 12, 16).trim()}', but '${this.labels[i]}' in the first frame (every frame must list the same atoms in the same order)`,
          );
        }
      }
    }
    // coordinates
    if (3 * (i + 1) > this.positions.length) {
      const tooMany = tooManyAtoms(i + 1);
      if (tooMany !== null) throw new InputError(this.file, lineNo, null, `frame ${this.frameIndex + 1}: ${tooMany}`);
      const np = new Float64Array(this.positions.length * 2);
      np.set(this.positions);
      this.positions = np;
    }
    const p = this.positions;
    p[3 * i] = cur.fieldFloat(30, 38, 'x coordinate');
    p[3 * i + 1] = cur.fieldFloat(38, 46, 'y coordinate');
    p[3 * i + 2] = cur.fieldFloat(46, 54, 'z coordinate');
    if (first) this.firstFrameFields(buf, s, e, lineNo, i);
    this.atom = i + 1;
  }

  private firstFrameFields(buf: Uint8Array, s: number, e: number, lineNo: number, i: number): void {
    const name = field(buf, s, e, 12, 16).trim();
    if (name.length === 0) throw new InputError(this.file, lineNo, 13, 'blank atom name (columns 13-16)');
    this.labels.push(name);
    const resName = field(buf, s, e, 17, 21).trim();
    const chain = field(buf, s, e, 21, 22).trim();
    const resText = field(buf, s, e, 22, 26);
    const iCode = field(buf, s, e, 26, 27).trim();
    let resNum = 0;
    if (resText.trim().length > 0) {
      resNum = hybrid36(resText, 4);
      if (!Number.isFinite(resNum)) {
        throw new InputError(this.file, lineNo, 23, `expected a residue number in columns 23-26, found '${resText}'`);
      }
    }
    this.resNames.push(resName);
    this.chains.push(chain);
    this.resNums.push(resNum);
    this.resKeys.push(`${chain}\u0000${resText}\u0000${iCode}\u0000${resName}`);
    const el = field(buf, s, e, 76, 78).trim();
    this.elementCol.push(el.length > 0 ? el : null);
    const ch = field(buf, s, e, 78, 80).trim();
    let q = 0;
    if (ch.length > 0) {
      const m = /^(?:(\d)([+-])|([+-])(\d))$/.exec(ch);
      if (!m) throw new InputError(this.file, lineNo, 79, `expected a formal charge like '1+' or '2-' in columns 79-80, found '${ch}'`);
      const mag = Number(m[1] ?? m[4]);
      q = (m[2] ?? m[3]) === '-' ? -mag : mag;
      this.anyCharge = true;
    }
    this.chargeVals.push(q);
    if (el.length > 0 && !/^[A-Za-z]{1,2}$/.test(el)) {
      throw new InputError(this.file, lineNo, 77, `expected an element symbol in columns 77-78, found '${el}'`);
    }
  }

  private cryst1(buf: Uint8Array, s: number, e: number, lineNo: number): void {
    const cur = this.cur;
    cur.reset(buf, s, e, lineNo);
    const a = cur.fieldFloat(6, 15, 'cell length a');
    const b = cur.fieldFloat(15, 24, 'cell length b');
    const c = cur.fieldFloat(24, 33, 'cell length c');
    const al = cur.fieldFloat(33, 40, 'cell angle alpha');
    const be = cur.fieldFloat(40, 47, 'cell angle beta');
    const ga = cur.fieldFloat(47, 54, 'cell angle gamma');
    if (a === 1 && b === 1 && c === 1 && al === 90 && be === 90 && ga === 90) {
      if (!this.warnedPlaceholder) {
        this.opts.warnings.push(
          `${this.file}:${lineNo}: CRYST1 is the PDB placeholder for "no cell" (1 1 1 90 90 90); read as no cell`,
        );
        this.warnedPlaceholder = true;
      }
      this.hasCell = false;
      return;
    }
    const problem = cellParameterProblem(a, b, c, al, be, ga);
    if (problem !== null) throw new InputError(this.file, lineNo, 7, `CRYST1: ${problem}`);
    const m = cellFromParameters(a, b, c, al, be, ga);
    if (m === null) throw new InputError(this.file, lineNo, 7, `CRYST1: lengths ${a}, ${b}, ${c} and angles ${al}, ${be}, ${ga} do not make a cell`);
    (this.cell ??= new Float64Array(9)).set(m);
    this.hasCell = true;
  }

  private finishFrame(endLine: number | null): Frame | null {
    if (this.skipping) {
      this.opts.onSkippedCell?.(this.frameIndex, this.frameLine, this.hasCell ? this.cell : null);
      if (this.nAtoms < 0 && this.refAtoms < 0) this.refAtoms = this.atom;
      this.frameIndex++;
      this.complete++;
      this.inFrame = false;
      this.atom = 0;
      return null;
    }
    if (this.nAtoms < 0) {
      this.nAtoms = this.atom;
      this.positions = this.positions.slice(0, 3 * this.atom);
      this.topology = this.buildTopology();
    } else if (this.atom !== this.nAtoms) {
      throw new InputError(
        this.file,
        endLine,
        null,
        `frame ${this.frameIndex + 1} (starting at line ${this.frameLine}) has ${this.atom} atoms, but the first frame has ${this.nAtoms} (every frame must have the same atoms)`,
      );
    }
    const frame: Frame = {
      index: this.frameIndex,
      time: this.time,
      cell: this.hasCell ? this.cell : null,
      positions: this.positions,
      velocities: null,
      line: this.frameLine,
      topology: this.topology!,
    };
    this.frameIndex++;
    this.complete++;
    this.inFrame = false;
    this.atom = 0;
    return frame;
  }

  private buildTopology(): Topology {
    const n = this.atom;
    const molecule = new Int32Array(n);
    let m = -1;
    for (let i = 0; i < n; i++) {
      if (i === 0 || this.resKeys[i] !== this.resKeys[i - 1]) m++;
      molecule[i] = m;
    }
    const residues: Residues = {
      names: this.resNames,
      numbers: Int32Array.from(this.resNums),
      chains: this.chains,
      molecule,
      count: m + 1,
    };
    const charges = this.anyCharge ? Float64Array.from(this.chargeVals) : null;
    const topo = buildTopology(this.labels, this.elementCol, charges, residues);
    this.resKeys = [];
    return topo;
  }
}
