/**
 * Writers of small random trajectory and table files for the fuzz tests, and the mutations
 * applied to them. Everything is a Latin-1 string (one char = one byte), so that byte offsets
 * and string offsets agree.
 *
 * The writers follow published layouts, not the readers under test:
 * - XYZ and extended XYZ: the extended-XYZ convention (libAtoms/ASE: a count line, a comment
 *   line with Lattice="ax ay az bx by bz cx cy cz", Properties=name:type:count:..., Time=).
 * - PDB: wwPDB format v3.3 fixed columns (CRYST1, MODEL, ATOM/HETATM, ENDMDL, END).
 * - Tables: a header row or a '#' header comment, columns separated by blanks, tabs or commas.
 * Numbers are printed with Number.prototype.toFixed / toExponential, whose rounding ECMA-262
 * (§21.1.3.3, §21.1.3.2) defines: the printed decimal is within half a unit of its last digit
 * of the exact value. That bound is the round-trip tolerance.
 */
import fc from 'fast-check';

/** A number as printed in a file: the text, and the value before printing. */
export interface Printed {
  text: string;
  /** The value that was printed (before rounding to the printed digits). */
  orig: number;
  /** Half a unit in the last printed decimal place (ECMA-262 rounding bound). */
  half: number;
}

/** How numbers of one file are printed. */
export type NumStyle = { kind: 'fixed'; digits: number } | { kind: 'exp'; digits: number; upper: boolean };

/** Print `x` in a style; see Printed.half for the rounding bound. */
export function printNumber(x: number, style: NumStyle): Printed {
  if (style.kind === 'fixed') {
    return { text: x.toFixed(style.digits), orig: x, half: 0.5 * 10 ** -style.digits };
  }
  let text = x.toExponential(style.digits);
  const exp = Number(text.slice(text.indexOf('e') + 1));
  if (style.upper) text = text.replace('e', 'E');
  return { text, orig: x, half: 0.5 * 10 ** (exp - style.digits) };
}

/** Value the reader must give for a printed token: ECMA-262 StringToNumber of the text. */
export function valueOf(p: Printed): number {
  return Number(p.text);
}

export const numStyleArb: fc.Arbitrary<NumStyle> = fc.oneof(
  fc.record({ kind: fc.constant('fixed' as const), digits: fc.integer({ min: 0, max: 10 }) }),
  fc.record({ kind: fc.constant('exp' as const), digits: fc.integer({ min: 0, max: 14 }), upper: fc.boolean() }),
);

/** Separator runs between tokens (blanks and tabs). */
const sepArb = fc.constantFrom(' ', '  ', '\t', ' \t ', '    ');

export interface TrajFrameModel {
  positions: Printed[];
  velocities: Printed[] | null;
  /** Nine printed lattice components (rows a, b, c) or null. */
  cell: Printed[] | null;
  time: Printed | null;
}

export interface TrajModel {
  labels: string[];
  frames: TrajFrameModel[];
}

/** Where the writer put things (1-based line numbers, 0-based byte offsets). */
export interface TrajLayout {
  text: string;
  /** Per frame: the first line (XYZ count line, PDB MODEL or first ATOM line). */
  startLine: number[];
  /** Per frame: offset just after the '\n' that ends its last atom row. */
  rowsEnd: number[];
  /** Per frame: offset just after the '\n' of the line that closes the frame (PDB ENDMDL/END; XYZ: = rowsEnd). */
  closeEnd: number[];
  /** XYZ: per frame, the comment line; PDB: per frame, the CRYST1 line applying to it (or 0). */
  cellLine: number[];
}

const XYZ_LABELS = ['O', 'H', 'Na', 'Cl', 'C', 'N', 'OW', 'HW1', 'Li', 'X1', 'Ar', 'S'];

/** Random but well-conditioned cell rows (Å) printed in `style`; |det| is not tiny. */
function latticeArb(style: NumStyle): fc.Arbitrary<Printed[] | null> {
  return fc
    .record({
      d: fc.tuple(fc.double({ min: 4, max: 60, noNaN: true }), fc.double({ min: 4, max: 60, noNaN: true }), fc.double({ min: 4, max: 60, noNaN: true })),
      off: fc.array(fc.double({ min: -0.3, max: 0.3, noNaN: true }), { minLength: 6, maxLength: 6 }),
    })
    .map(({ d, off }) => {
      const m = [d[0], off[0] * d[0], off[1] * d[0], off[2] * d[1], d[1], off[3] * d[1], off[4] * d[2], off[5] * d[2], d[2]];
      // Fixed styles with 0 decimals could round small components; use at least 3 here.
      const st: NumStyle = style.kind === 'fixed' ? { kind: 'fixed', digits: Math.max(3, style.digits) } : { ...style, digits: Math.max(4, style.digits) };
      return m.map((x) => printNumber(x, st));
    })
    .filter((p) => p !== null && Math.abs(det3(p.map(valueOf))) > 0.1 * rowNorms(p.map(valueOf)));
}

/** Determinant of a 3×3 matrix given row-major (closed form, rule of Sarrus). */
export function det3(m: number[]): number {
  return (
    m[0]! * (m[4]! * m[8]! - m[5]! * m[7]!) - m[1]! * (m[3]! * m[8]! - m[5]! * m[6]!) + m[2]! * (m[3]! * m[7]! - m[4]! * m[6]!)
  );
}

function rowNorms(m: number[]): number {
  return Math.hypot(m[0]!, m[1]!, m[2]!) * Math.hypot(m[3]!, m[4]!, m[5]!) * Math.hypot(m[6]!, m[7]!, m[8]!);
}

export interface XyzStyle {
  extended: boolean;
  crlf: boolean;
  sep: string;
  lead: string;
  trail: string;
  /** Blank lines written between frames. */
  gap: number;
  /** Extended: extra Properties columns (name:type) inserted at these positions. */
  extras: { name: string; type: 'R' | 'I' | 'S' | 'L'; at: number }[];
  velName: string;
  keyCase: 'lower' | 'title' | 'upper';
  keyOrder: number[];
  unknownKey: boolean;
}

export interface XyzCase {
  model: TrajModel;
  style: XyzStyle;
  numStyle: NumStyle;
}

/** A random XYZ (plain or extended) trajectory model and writing style. */
export function xyzCaseArb(extended: boolean): fc.Arbitrary<XyzCase> {
  return fc
    .record({
      nAtoms: fc.integer({ min: 1, max: 4 }),
      nFrames: fc.integer({ min: 1, max: 3 }),
      vel: fc.boolean(),
      hasCell: extended ? fc.boolean() : fc.constant(false),
      hasTime: extended ? fc.boolean() : fc.constant(false),
      numStyle: numStyleArb,
      seed: fc.integer(),
    })
    .chain((g) => {
      const coord = fc.double({ min: -1e4, max: 1e4, noNaN: true });
      const frameArb = fc.record({
        pos: fc.array(coord, { minLength: 3 * g.nAtoms, maxLength: 3 * g.nAtoms }),
        vel: g.vel ? fc.array(fc.double({ min: -50, max: 50, noNaN: true }), { minLength: 3 * g.nAtoms, maxLength: 3 * g.nAtoms }) : fc.constant(null),
        cell: g.hasCell ? latticeArb(g.numStyle) : fc.constant(null),
      });
      return fc.record({
        g: fc.constant(g),
        labels: fc.array(fc.constantFrom(...XYZ_LABELS), { minLength: g.nAtoms, maxLength: g.nAtoms }),
        frames: fc.array(frameArb, { minLength: g.nFrames, maxLength: g.nFrames }),
        t0: fc.integer({ min: 0, max: 100000 }),
        dt: fc.integer({ min: 1, max: 5000 }),
        style: fc.record({
          extended: fc.constant(extended),
          crlf: fc.boolean(),
          sep: sepArb,
          lead: fc.constantFrom('', ' ', '\t'),
          trail: fc.constantFrom('', ' ', '\t', '  '),
          gap: fc.constantFrom(0, 0, 0, 1, 2),
          extras: extended
            ? fc.array(
                fc.record({ name: fc.constantFrom('charge', 'id', 'tag', 'mask', 'forces'), type: fc.constantFrom('R' as const, 'I' as const, 'S' as const, 'L' as const), at: fc.integer({ min: 0, max: 3 }) }),
                { maxLength: 2 },
              )
            : fc.constant([] as XyzStyle['extras']),
          velName: fc.constantFrom('vel', 'velo', 'velocities'),
          keyCase: fc.constantFrom('lower' as const, 'title' as const, 'upper' as const),
          keyOrder: fc.shuffledSubarray([0, 1, 2, 3], { minLength: 4, maxLength: 4 }),
          unknownKey: fc.boolean(),
        }),
      });
    })
    .map(({ g, labels, frames, t0, dt, style }) => {
      const ns = g.numStyle;
      const model: TrajModel = {
        labels,
        frames: frames.map((f, k) => ({
          positions: f.pos.map((x) => printNumber(x, ns)),
          velocities: f.vel ? f.vel.map((x) => printNumber(x, ns)) : null,
          cell: f.cell,
          // times printed with 3 decimals from integers: exact decimal, strictly increasing
          time: g.hasTime ? printNumber((t0 + k * dt) / 1000, { kind: 'fixed', digits: 3 }) : null,
        })),
      };
      // Names of extras must differ from each other and from the reserved ones.
      const seen = new Set<string>();
      style.extras = style.extras.filter((e) => (seen.has(e.name) ? false : (seen.add(e.name), true)));
      return { model, style, numStyle: ns };
    });
}

function keyName(k: string, c: XyzStyle['keyCase']): string {
  return c === 'lower' ? k.toLowerCase() : c === 'upper' ? k.toUpperCase() : k;
}

/** Deterministic filler text for extra columns (depends only on position). */
function extraToken(type: 'R' | 'I' | 'S' | 'L', i: number, k: number): string {
  switch (type) {
    case 'R':
      return ((i * 7 + k * 3) % 19 - 9 + 0.25).toFixed(2);
    case 'I':
      return String((i * 13 + k) % 97);
    case 'S':
      return ['a', 'bb', 'Tag', 'x_1'][(i + k) % 4]!;
    case 'L':
      return (i + k) % 2 ? 'T' : 'F';
  }
}

/** Write an XYZ file (plain: 4 or 7 columns; extended: Properties, optional Lattice and Time). */
export function writeXyz(c: XyzCase): TrajLayout {
  const { model, style } = c;
  const nl = style.crlf ? '\r\n' : '\n';
  const n = model.labels.length;
  let text = '';
  let line = 0;
  const startLine: number[] = [];
  const rowsEnd: number[] = [];
  const cellLine: number[] = [];
  const add = (s: string) => {
    text += s + nl;
    line++;
  };
  const hasVel = model.frames[0]!.velocities !== null;
  // Properties columns, with extras at their positions among species/pos/vel.
  const base: string[] = ['species:S:1', 'pos:R:3'];
  if (hasVel) base.push(`${style.velName}:R:3`);
  const cols: { kind: 'species' | 'pos' | 'vel' | 'extra'; type?: 'R' | 'I' | 'S' | 'L' }[] = [{ kind: 'species' }, { kind: 'pos' }];
  if (hasVel) cols.push({ kind: 'vel' });
  const props = [...base];
  for (const e of style.extras) {
    const at = Math.min(e.at, props.length);
    props.splice(at, 0, `${e.name}:${e.type}:1`);
    cols.splice(at, 0, { kind: 'extra', type: e.type });
  }
  model.frames.forEach((f, k) => {
    if (k > 0) for (let g = 0; g < style.gap; g++) add('');
    startLine.push(line + 1);
    add(`${style.lead}${n}${style.trail}`);
    cellLine.push(line + 1);
    if (style.extended) {
      const parts: string[] = [];
      const kinds = style.keyOrder.map((o) => ['Lattice', 'Properties', 'Time', 'unknown'][o]!);
      for (const kind of kinds) {
        if (kind === 'Lattice' && f.cell) parts.push(`${keyName('Lattice', style.keyCase)}="${f.cell.map((p) => p.text).join(' ')}"`);
        if (kind === 'Properties') parts.push(`${keyName('Properties', style.keyCase)}=${props.join(':')}`);
        if (kind === 'Time' && f.time) parts.push(`${keyName('Time', style.keyCase)}=${f.time.text}`);
        if (kind === 'unknown' && style.unknownKey) parts.push(`pbc="T T T" energy=-12.5 free_word`);
      }
      add(parts.join(' '));
    } else {
      add(`frame ${k + 1} of ${model.frames.length} written for a test`);
    }
    for (let i = 0; i < n; i++) {
      const toks: string[] = [];
      let extraNo = 0;
      for (const col of cols) {
        if (col.kind === 'species') toks.push(model.labels[i]!);
        else if (col.kind === 'pos') toks.push(...f.positions.slice(3 * i, 3 * i + 3).map((p) => p.text));
        else if (col.kind === 'vel') toks.push(...f.velocities!.slice(3 * i, 3 * i + 3).map((p) => p.text));
        else toks.push(extraToken(col.type!, i, k + extraNo++));
      }
      add(style.lead + toks.join(style.sep) + style.trail);
    }
    rowsEnd.push(text.length);
  });
  return { text, startLine, rowsEnd, closeEnd: [...rowsEnd], cellLine };
}

// ---------------------------------------------------------------------------------------------
// PDB

/** Atom names (columns 13–16, wwPDB alignment: one-letter elements start in column 14) and elements. */
const PDB_ATOMS: [string, string][] = [
  [' O  ', ' O'],
  [' H1 ', ' H'],
  [' H2 ', ' H'],
  ['NA  ', 'NA'],
  ['CL  ', 'CL'],
  [' C1 ', ' C'],
  [' N  ', ' N'],
  ['LI  ', 'LI'],
];

export interface PdbCellParams {
  a: Printed;
  b: Printed;
  c: Printed;
  alpha: Printed;
  beta: Printed;
  gamma: Printed;
}

export interface PdbCase {
  atoms: number[]; // indices into PDB_ATOMS
  frames: { positions: Printed[]; cell: PdbCellParams | null; time: Printed | null }[];
  style: 'model' | 'end';
  /** CRYST1 once before the first frame, or before every frame. */
  cellEvery: boolean;
  hasCell: boolean;
  hasTime: boolean;
  crlf: boolean;
  extraRecords: boolean;
  hetatm: boolean[];
}

/**
 * V/(abc) of a cell from its lengths and angles (closed form, e.g. International Tables for
 * Crystallography Vol. B, §1.1): sqrt(1 − cos²α − cos²β − cos²γ + 2 cosα cosβ cosγ); NaN when
 * the argument is negative (no cell).
 */
export function volumeFactor(alpha: number, beta: number, gamma: number): number {
  const r = Math.PI / 180;
  const ca = Math.cos(alpha * r);
  const cb = Math.cos(beta * r);
  const cg = Math.cos(gamma * r);
  return Math.sqrt(1 - ca * ca - cb * cb - cg * cg + 2 * ca * cb * cg);
}

function pdbCellArb(): fc.Arbitrary<PdbCellParams> {
  const len = fc.double({ min: 5, max: 150, noNaN: true }).map((x) => printNumber(x, { kind: 'fixed', digits: 3 }));
  const ang = fc.oneof(fc.constant(90), fc.double({ min: 60, max: 120, noNaN: true })).map((x) => printNumber(x, { kind: 'fixed', digits: 2 }));
  return fc
    .record({ a: len, b: len, c: len, alpha: ang, beta: ang, gamma: ang })
    .filter((p) => volumeFactor(valueOf(p.alpha), valueOf(p.beta), valueOf(p.gamma)) > 0.2)
    .filter((p) => !(valueOf(p.a) === 1 && valueOf(p.b) === 1 && valueOf(p.c) === 1));
}

/** A random multi-frame PDB model. */
export function pdbCaseArb(): fc.Arbitrary<PdbCase> {
  return fc
    .record({
      nAtoms: fc.integer({ min: 1, max: 4 }),
      nFrames: fc.integer({ min: 1, max: 3 }),
    })
    .chain(({ nAtoms, nFrames }) => {
      // Real(8.3): values from -999.999 to 9999.999 fit the 8 columns.
      const coord = fc.double({ min: -999.4, max: 9999.4, noNaN: true }).map((x) => printNumber(x, { kind: 'fixed', digits: 3 }));
      return fc.record({
        atoms: fc.array(fc.integer({ min: 0, max: PDB_ATOMS.length - 1 }), { minLength: nAtoms, maxLength: nAtoms }),
        frames: fc.array(
          fc.record({
            positions: fc.array(coord, { minLength: 3 * nAtoms, maxLength: 3 * nAtoms }),
            cell: pdbCellArb(),
            time: fc.integer({ min: 0, max: 1000000 }).map((t) => printNumber(t / 1000, { kind: 'fixed', digits: 3 })),
          }),
          { minLength: nFrames, maxLength: nFrames },
        ),
        style: fc.constantFrom('model' as const, 'end' as const),
        cellEvery: fc.boolean(),
        hasCell: fc.boolean(),
        hasTime: fc.boolean(),
        crlf: fc.boolean(),
        extraRecords: fc.boolean(),
        hetatm: fc.array(fc.boolean(), { minLength: nAtoms, maxLength: nAtoms }),
      });
    })
    .map((c) => {
      // Times must increase from frame to frame; cells: one for all unless cellEvery.
      let t = 0;
      const frames = c.frames.map((f, k) => {
        t += 1 + (valueOf(f.time!) % 7);
        return {
          positions: f.positions,
          cell: c.hasCell ? (c.cellEvery ? f.cell : c.frames[0]!.cell) : null,
          time: c.hasTime ? printNumber(t, { kind: 'fixed', digits: 3 }) : null,
        };
      });
      return { ...c, frames };
    });
}


/** CRYST1 record, wwPDB v3.3: a, b, c (9.3) in 7–33, α, β, γ (7.2) in 34–54, space group 56–66, Z 67–70. */
export function cryst1Line(p: { a: string; b: string; c: string; alpha: string; beta: string; gamma: string }): string {
  return `CRYST1${p.a.padStart(9)}${p.b.padStart(9)}${p.c.padStart(9)}${p.alpha.padStart(7)}${p.beta.padStart(7)}${p.gamma.padStart(7)} P 1           1`;
}

/** ATOM/HETATM record in wwPDB v3.3 columns. */
export function atomLine(het: boolean, serial: number, name: string, resName: string, chain: string, resSeq: number, x: string, y: string, z: string, element: string): string {
  const rec = het ? 'HETATM' : 'ATOM  ';
  return (
    rec +
    String(serial).padStart(5) + // 7-11
    ' ' + // 12
    name + // 13-16
    ' ' + // 17 altLoc
    resName.padEnd(3).slice(0, 3) + // 18-20
    ' ' + // 21
    chain + // 22
    String(resSeq).padStart(4) + // 23-26
    ' ' + // 27 iCode
    '   ' + // 28-30
    x.padStart(8) +
    y.padStart(8) +
    z.padStart(8) + // 31-54
    '  1.00' + // 55-60 occupancy
    '  0.00' + // 61-66 tempFactor
    '          ' + // 67-76
    element.padStart(2) + // 77-78
    '  ' // 79-80 charge (none)
  );
}

/** Write a PDB file for a case. */
export function writePdb(c: PdbCase): TrajLayout {
  const nl = c.crlf ? '\r\n' : '\n';
  let text = '';
  let line = 0;
  const add = (s: string) => {
    text += s + nl;
    line++;
  };
  const startLine: number[] = [];
  const rowsEnd: number[] = [];
  const closeEnd: number[] = [];
  const cellLine: number[] = [];
  if (c.extraRecords) {
    add('HEADER    TEST STRUCTURE WRITTEN FOR A FUZZ TEST');
    add('REMARK   1 RANDOM COORDINATES');
  }
  let lastCell = 0;
  c.frames.forEach((f, k) => {
    if (f.time) add(`TITLE     random frames t= ${f.time.text}`);
    if (f.cell && (c.cellEvery || k === 0)) {
      add(cryst1Line({ a: f.cell.a.text, b: f.cell.b.text, c: f.cell.c.text, alpha: f.cell.alpha.text, beta: f.cell.beta.text, gamma: f.cell.gamma.text }));
      lastCell = line;
    }
    cellLine.push(f.cell ? lastCell : 0);
    if (c.style === 'model') {
      add(`MODEL     ${String(k + 1).padStart(4)}`);
      startLine.push(line);
    } else startLine.push(line + 1);
    c.atoms.forEach((a, i) => {
      const [name, el] = PDB_ATOMS[a]!;
      const p = f.positions;
      add(atomLine(c.hetatm[i]!, i + 1, name, name.trim().slice(0, 3), 'A', i + 1, p[3 * i]!.text, p[3 * i + 1]!.text, p[3 * i + 2]!.text, el.trim()));
    });
    rowsEnd.push(text.length);
    if (c.extraRecords) add('TER');
    add(c.style === 'model' ? 'ENDMDL' : 'END');
    closeEnd.push(text.length);
  });
  if (c.style === 'model') add('END');
  return { text, startLine, rowsEnd, closeEnd, cellLine };
}

// ---------------------------------------------------------------------------------------------
// Tables

export interface TableCase {
  names: string[];
  /** Column index of the time column, or -1. */
  timeCol: number;
  /** rows[r][c] */
  rows: Printed[][];
  kind: 'ws' | 'tsv' | 'csv';
  header: 'row' | 'comment' | 'quoted';
  crlf: boolean;
  sep: string;
  leadComments: boolean;
  blankLines: boolean;
}

const TABLE_NAMES = ['pxy', 'pxz', 'pyz', 'epot', 'ekin', 'temp', 'press', 'volume', 'Pxy', 'dens'];

/** A random table model (names unique, time strictly increasing). */
export function tableCaseArb(): fc.Arbitrary<TableCase> {
  return fc
    .record({
      nCols: fc.integer({ min: 1, max: 4 }),
      nRows: fc.integer({ min: 1, max: 6 }),
      withTime: fc.boolean(),
      timeName: fc.constantFrom('time', 't', 'Time', 'time_ps', 'TIME'),
      numStyle: numStyleArb,
    })
    .chain((g) =>
      fc.record({
        g: fc.constant(g),
        names: fc.shuffledSubarray(TABLE_NAMES, { minLength: g.nCols, maxLength: g.nCols }),
        values: fc.array(fc.array(fc.double({ min: -1e5, max: 1e5, noNaN: true }), { minLength: g.nCols, maxLength: g.nCols }), { minLength: g.nRows, maxLength: g.nRows }),
        steps: fc.array(fc.integer({ min: 1, max: 1000 }), { minLength: g.nRows, maxLength: g.nRows }),
        timeAt: fc.integer({ min: 0, max: g.nCols }),
        kind: fc.constantFrom('ws' as const, 'tsv' as const, 'csv' as const),
        header: fc.constantFrom('row' as const, 'comment' as const, 'quoted' as const),
        crlf: fc.boolean(),
        sep: fc.constantFrom(' ', '  ', '   '),
        leadComments: fc.boolean(),
        blankLines: fc.boolean(),
      }),
    )
    .map(({ g, names, values, steps, timeAt, kind, header, crlf, sep, leadComments, blankLines }) => {
      const rows: Printed[][] = values.map((r) => r.map((x) => printNumber(x, g.numStyle)));
      let timeCol = -1;
      const outNames = [...names];
      if (g.withTime) {
        timeCol = timeAt;
        outNames.splice(timeAt, 0, g.timeName);
        let t = 0;
        rows.forEach((r, i) => {
          t += steps[i]!;
          r.splice(timeAt, 0, printNumber(t / 100, { kind: 'fixed', digits: 2 }));
        });
      }
      return { names: outNames, timeCol, rows, kind, header: kind === 'csv' ? header : header === 'quoted' ? 'row' : header, crlf, sep, leadComments, blankLines };
    });
}

export interface TableLayout {
  text: string;
  /** Per data row: its line number and the offset after its '\n'. */
  rowLine: number[];
  rowEnd: number[];
  headerLine: number;
}

/** Write a table. */
export function writeTable(c: TableCase): TableLayout {
  const nl = c.crlf ? '\r\n' : '\n';
  const join = (xs: string[]) => (c.kind === 'csv' ? xs.join(',' + (c.sep === ' ' ? '' : ' ')) : c.kind === 'tsv' ? xs.join('\t') : xs.join(c.sep));
  let text = '';
  let line = 0;
  const add = (s: string) => {
    text += s + nl;
    line++;
  };
  if (c.leadComments) {
    add('# a table written for a fuzz test: 1 2 3');
    add('@ title "random"');
  }
  if (c.header === 'comment') add('# ' + c.names.join(' '));
  else if (c.header === 'quoted') add(c.names.map((n) => `"${n}"`).join(','));
  else add(join(c.names));
  const headerLine = line;
  const rowLine: number[] = [];
  const rowEnd: number[] = [];
  c.rows.forEach((r, i) => {
    if (c.blankLines && i % 2 === 1) add('');
    add(join(r.map((p) => p.text)));
    rowLine.push(line);
    rowEnd.push(text.length);
  });
  return { text, rowLine, rowEnd, headerLine };
}

// ---------------------------------------------------------------------------------------------
// Mutations

/** Lines of a text with their start offsets (the last line may lack '\n'). */
export function lineSpans(text: string): { start: number; end: number }[] {
  const out: { start: number; end: number }[] = [];
  let s = 0;
  while (s < text.length) {
    const nl = text.indexOf('\n', s);
    const e = nl < 0 ? text.length : nl + 1;
    out.push({ start: s, end: e });
    s = e;
  }
  return out;
}

/** A random mutation of a text, described for the counters. */
export interface Mutation {
  kind: string;
  text: string;
}

const NON_UTF8 = ['\xff', '\xfe', '\xc3\x28', '\xa0\xa1', '\xe2\x28\xa1', '\xf0\x28\x8c\xbc', '\x80', '\xc0\xaf', '\xed\xa0\x80'];

/**
 * Apply one random damaging mutation chosen by `r` (uniform numbers in [0, 1)): delete or
 * duplicate a line, swap two lines, swap two tokens of a line, replace a byte, insert
 * non-UTF-8 bytes, or cut bytes out of the middle.
 */
export function randomMutation(text: string, r: () => number): Mutation {
  const spans = lineSpans(text);
  const pick = <T>(xs: T[]): T => xs[Math.floor(r() * xs.length)]!;
  const k = Math.floor(r() * 8);
  if (spans.length === 0) return { kind: 'insert-bytes', text: pick(NON_UTF8) };
  const sp = pick(spans);
  switch (k) {
    case 0:
      return { kind: 'delete-line', text: text.slice(0, sp.start) + text.slice(sp.end) };
    case 1:
      return { kind: 'duplicate-line', text: text.slice(0, sp.end) + text.slice(sp.start, sp.end) + text.slice(sp.end) };
    case 2: {
      const i = spans.indexOf(sp);
      if (i + 1 >= spans.length) return { kind: 'delete-line', text: text.slice(0, sp.start) };
      const nx = spans[i + 1]!;
      let a = text.slice(sp.start, sp.end);
      let b = text.slice(nx.start, nx.end);
      if (!b.endsWith('\n')) {
        b += '\n';
        a = a.replace(/\r?\n$/, '');
      }
      return { kind: 'swap-lines', text: text.slice(0, sp.start) + b + a + text.slice(nx.end) };
    }
    case 3: {
      const body = text.slice(sp.start, sp.end);
      const toks = [...body.matchAll(/[^ \t\r\n,]+/g)];
      if (toks.length < 2) return { kind: 'swap-tokens', text };
      const i = Math.floor(r() * toks.length);
      let j = Math.floor(r() * (toks.length - 1));
      if (j >= i) j++;
      const [p, q] = i < j ? [toks[i]!, toks[j]!] : [toks[j]!, toks[i]!];
      const nb = body.slice(0, p.index) + q[0] + body.slice(p.index! + p[0].length, q.index) + p[0] + body.slice(q.index! + q[0].length);
      return { kind: 'swap-tokens', text: text.slice(0, sp.start) + nb + text.slice(sp.end) };
    }
    case 4: {
      const pos = Math.floor(r() * text.length);
      const b = String.fromCharCode(Math.floor(r() * 256));
      return { kind: 'replace-byte', text: text.slice(0, pos) + b + text.slice(pos + 1) };
    }
    case 5: {
      const pos = Math.floor(r() * (text.length + 1));
      return { kind: 'insert-non-utf8', text: text.slice(0, pos) + pick(NON_UTF8) + text.slice(pos) };
    }
    case 6: {
      const a = Math.floor(r() * text.length);
      const b = Math.min(text.length, a + 1 + Math.floor(r() * 12));
      return { kind: 'cut-bytes', text: text.slice(0, a) + text.slice(b) };
    }
    default: {
      // swap two fixed-width fields of equal width (PDB x/y/z), or two tokens elsewhere
      const body = text.slice(sp.start, sp.end);
      if (/^(ATOM  |HETATM)/.test(body) && body.length >= 54) {
        const f = [30, 38, 46];
        const i = Math.floor(r() * 3);
        const j = (i + 1 + Math.floor(r() * 2)) % 3;
        const [a, b] = [Math.min(f[i]!, f[j]!), Math.max(f[i]!, f[j]!)];
        const nb = body.slice(0, a) + body.slice(b, b + 8) + body.slice(a + 8, b) + body.slice(a, a + 8) + body.slice(b + 8);
        return { kind: 'swap-columns', text: text.slice(0, sp.start) + nb + text.slice(sp.end) };
      }
      const toks = [...body.matchAll(/[^ \t\r\n,]+/g)];
      if (toks.length < 3) return { kind: 'swap-columns', text };
      const i = 1 + Math.floor(r() * (toks.length - 2));
      const p = toks[i]!;
      const q = toks[i + 1]!;
      const nb = body.slice(0, p.index) + q[0] + body.slice(p.index! + p[0].length, q.index) + p[0] + body.slice(q.index! + q[0].length);
      return { kind: 'swap-columns', text: text.slice(0, sp.start) + nb + text.slice(sp.end) };
    }
  }
}

/** Mutations that must not change what a file means (for XYZ, PDB and tables alike). */
export function harmlessMutation(text: string, r: () => number, format: 'xyz' | 'pdb' | 'table', frameEnds: number[]): Mutation {
  const k = Math.floor(r() * 4);
  if (k === 0) {
    // CRLF ↔ LF (lines read the same; a '\r' before '\n' is dropped: common practice, no source)
    const t = text.includes('\r\n') ? text.replace(/\r\n/g, '\n') : text.replace(/\n/g, '\r\n');
    return { kind: 'harmless-line-endings', text: t };
  }
  if (k === 1) {
    // trailing blanks on every line (PDB: after column 80, which no record uses; tables:
    // spaces only, since a tab separates fields in tab-separated text, IANA text/tab-separated-values)
    return { kind: 'harmless-trailing-blanks', text: text.replace(/(\r?\n)/g, (m) => (format === 'xyz' ? ' \t' : '   ') + m) };
  }
  if (k === 2) {
    // blank lines where the format allows them: between frames (XYZ), anywhere between records (PDB), between rows (tables)
    const at = frameEnds.length > 0 ? frameEnds[Math.floor(r() * frameEnds.length)]! : text.length;
    const nl = text.includes('\r\n') ? '\r\n' : '\n';
    return { kind: 'harmless-blank-lines', text: text.slice(0, at) + nl + '  ' + nl + text.slice(at) };
  }
  // the file no longer ends with a blank line → append blank lines at the end
  return { kind: 'harmless-blank-tail', text: text + '\n\n \t\n' };
}

/** Huge atom counts for the first line of an XYZ frame (all must be refused or be a mismatch). */
export function hugeCounts(limit: number): string[] {
  return ['2147483647', '2147483648', '4294967296', '99999999999999999999', '1000000000', String(2 ** 28 + 1), String(limit + 1), '50000000', '+300000000'];
}

/** Small deterministic PRNG for mutation choices inside a property (xorshift32; common practice). */
export function xorshift(seed: number): () => number {
  let s = seed >>> 0 || 0x9e3779b9;
  return () => {
    s ^= s << 13;
    s >>>= 0;
    s ^= s >>> 17;
    s ^= s << 5;
    s >>>= 0;
    return s / 4294967296;
  };
}
