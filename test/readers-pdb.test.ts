import { afterAll, describe, expect, it } from 'vitest';
import { cellParameterProblem, hybrid36 } from '../readers/pdb.js';
import { InputError } from '../src/errors.js';
import { readAll, rejectsWith, tempDir } from './readers-helpers.js';

const tmp = tempDir('pdb');
afterAll(() => tmp.cleanup());

/*
 * Records are written by the column layout of the wwPDB Atomic Coordinate Entry Format
 * Description v3.3 (ATOM/HETATM: name 13–16, resName 18–20, chainID 22, resSeq 23–26,
 * iCode 27, x 31–38, y 39–46, z 47–54 as %8.3f, element 77–78, charge 79–80; CRYST1: a, b, c
 * %9.3f in 7–33, α, β, γ %7.2f in 34–54, space group 56–66, Z 67–70).
 */
const f83 = (x: number) => x.toFixed(3).padStart(8);

interface AtomSpec {
  rec?: 'ATOM' | 'HETATM';
  name: string;
  res: string;
  chain?: string;
  seq: number | string;
  icode?: string;
  x: number;
  y: number;
  z: number;
  el?: string;
  q?: string;
}

function atomLine(serial: number, a: AtomSpec): string {
  const name = a.name.length < 4 ? ' ' + a.name.padEnd(3) : a.name;
  const line =
    (a.rec ?? 'ATOM').padEnd(6) +
    String(serial).padStart(5) +
    ' ' +
    name +
    ' ' +
    a.res.padStart(3) +
    ' ' +
    (a.chain ?? ' ') +
    String(a.seq).padStart(4) +
    (a.icode ?? ' ') +
    '   ' +
    f83(a.x) +
    f83(a.y) +
    f83(a.z) +
    '  1.00' +
    '  0.00' +
    ' '.repeat(10) +
    (a.el ?? '').padStart(2) +
    (a.q ?? '').padEnd(2);
  return line.trimEnd();
}

function cryst1(a: number, b: number, c: number, al: number, be: number, ga: number): string {
  return (
    'CRYST1' +
    a.toFixed(3).padStart(9) +
    b.toFixed(3).padStart(9) +
    c.toFixed(3).padStart(9) +
    al.toFixed(2).padStart(7) +
    be.toFixed(2).padStart(7) +
    ga.toFixed(2).padStart(7) +
    ' ' +
    'P 1'.padEnd(11) +
    '1'.padStart(4)
  );
}

const WATERS: AtomSpec[] = [
  { name: 'OW', res: 'SOL', seq: 1, x: 1.0, y: 2.0, z: 3.0, el: 'O' },
  { name: 'HW1', res: 'SOL', seq: 1, x: 1.5, y: 2.5, z: 3.5, el: 'H' },
  { name: 'HW2', res: 'SOL', seq: 1, x: 0.5, y: 2.5, z: 3.5, el: 'H' },
  { name: 'OW', res: 'SOL', seq: 2, x: -10.125, y: -200.5, z: 300.25, el: 'O' },
  { name: 'HW1', res: 'SOL', seq: 2, x: -999.999, y: -99.999, z: 999.125, el: 'H' },
  { name: 'HW2', res: 'SOL', seq: 2, x: 0, y: 0, z: 0, el: 'H' },
  { rec: 'HETATM', name: 'NA', res: 'NA', chain: 'B', seq: 3, x: 4, y: 5, z: 6, el: 'NA', q: '1+' },
  { rec: 'HETATM', name: 'CL', res: 'CL', chain: 'B', seq: 4, x: 7, y: 8, z: 9, el: 'CL', q: '1-' },
];
const coords = (atoms: AtomSpec[], shift = 0) => atoms.flatMap((a) => [a.x + shift, a.y + shift, a.z + shift]);
const shifted = (atoms: AtomSpec[], s: number) => atoms.map((a) => ({ ...a, x: a.x + s, y: a.y + s, z: a.z + s }));

function models(frames: AtomSpec[][], header: string[] = []): string {
  const out = [...header];
  frames.forEach((atoms, k) => {
    out.push(`MODEL     ${String(k + 1).padStart(4)}`);
    atoms.forEach((a, i) => out.push(atomLine(i + 1, a)));
    out.push('TER');
    out.push('ENDMDL');
  });
  out.push('END');
  return out.join('\n') + '\n';
}

/** Closed form of the PDB convention (wwPDB v3.3, CRYST1), written out independently here. */
function closedForm(a: number, b: number, c: number, al: number, be: number, ga: number): number[] {
  const r = Math.PI / 180;
  const [ca, cb, cg, sg] = [Math.cos(al * r), Math.cos(be * r), Math.cos(ga * r), Math.sin(ga * r)];
  const cy = (ca - cb * cg) / sg;
  return [a, 0, 0, b * cg, b * sg, 0, c * cb, c * cy, c * Math.sqrt(1 - cb * cb - cy * cy)];
}

describe('PDB columns', () => {
  it('the test writer puts fields in the wwPDB v3.3 columns', () => {
    const l = atomLine(7, { name: 'HW1', res: 'SOL', chain: 'A', seq: 12, icode: 'B', x: -1.5, y: 22.25, z: 333.125, el: 'H', q: '1-' });
    expect(l.length).toBe(80);
    expect(l.slice(12, 16)).toBe(' HW1');
    expect(l.slice(17, 20)).toBe('SOL');
    expect(l[21]).toBe('A');
    expect(l.slice(22, 26)).toBe('  12');
    expect(l[26]).toBe('B');
    expect(l.slice(30, 38)).toBe('  -1.500');
    expect(l.slice(38, 46)).toBe('  22.250');
    expect(l.slice(46, 54)).toBe(' 333.125');
    expect(l.slice(76, 78)).toBe(' H');
    expect(l.slice(78, 80)).toBe('1-');
    const c = cryst1(10, 20, 30, 80, 90, 100);
    expect(c.slice(6, 15)).toBe('   10.000');
    expect(c.slice(33, 40)).toBe('  80.00');
    expect(c.slice(47, 54)).toBe(' 100.00');
  });
});

describe('PDB reader', () => {
  it('reads MODEL/ENDMDL frames with coordinates, labels, elements, masses, charges, residues', async () => {
    const text = models([WATERS, shifted(WATERS, 0.5)], ['TITLE     two frames', cryst1(30, 31, 32, 90, 90, 90)]);
    const r = await readAll(tmp.file('two.pdb', text));
    expect(r.frames.length).toBe(2);
    expect(r.frames[0]!.positions).toEqual(coords(WATERS));
    // the file stores 3 decimals: compare with the values as written (toFixed(3)), exactly
    expect(r.frames[1]!.positions).toEqual(coords(shifted(WATERS, 0.5)).map((v) => Number(v.toFixed(3))));
    expect(r.frames.map((f) => f.line)).toEqual([3, 14]);
    expect(r.frames[0]!.velocities).toBeNull();
    expect(r.frames[0]!.cell).toEqual([30, 0, 0, 0, 31, 0, 0, 0, 32]); // 90°: exactly diagonal
    expect(r.frames[1]!.cell).toEqual([30, 0, 0, 0, 31, 0, 0, 0, 32]); // CRYST1 stays in force
    const t = r.topology!;
    expect(t.labels).toEqual(['OW', 'HW1', 'HW2', 'OW', 'HW1', 'HW2', 'NA', 'CL']);
    expect(t.elements).toEqual(['O', 'H', 'H', 'O', 'H', 'H', 'Na', 'Cl']);
    // CIAAW 2021: O 15.999, H 1.008, Na 22.990, Cl 35.45
    expect(Array.from(t.masses)).toEqual([15.999, 1.008, 1.008, 15.999, 1.008, 1.008, 22.99, 35.45]);
    expect(Array.from(t.charges!)).toEqual([0, 0, 0, 0, 0, 0, 1, -1]);
    const res = t.residues!;
    expect(res.names).toEqual(['SOL', 'SOL', 'SOL', 'SOL', 'SOL', 'SOL', 'NA', 'CL']);
    expect(Array.from(res.numbers)).toEqual([1, 1, 1, 2, 2, 2, 3, 4]);
    expect(res.chains).toEqual(['', '', '', '', '', '', 'B', 'B']);
    expect(Array.from(res.molecule)).toEqual([0, 0, 0, 1, 1, 1, 2, 3]);
    expect(res.count).toBe(4);
    expect(r.raw[0]!.topology).toBe(r.raw[1]!.topology);
    expect(r.raw[0]!.positions).toBe(r.raw[1]!.positions);
  });

  it('CRYST1 → cell matrix equals the closed-form PDB conversion (wwPDB v3.3 CRYST1)', async () => {
    const p = [10.5, 12.25, 14.75, 80.5, 95.25, 105.75] as const;
    const text = [cryst1(...p), ...WATERS.slice(0, 3).map((a, i) => atomLine(i + 1, a)), 'END'].join('\n');
    const r = await readAll(tmp.file('tric.pdb', text));
    const cell = r.frames[0]!.cell!;
    const ref = closedForm(...p);
    // Same formula evaluated in a different order: agreement to ~1e-14 relative; 1e-12 Å allowed.
    for (let k = 0; k < 9; k++) expect(Math.abs(cell[k]! - ref[k]!)).toBeLessThan(1e-12);
    // Independent check of the meaning: vector lengths and the angles between them.
    const v = (i: number) => cell.slice(3 * i, 3 * i + 3);
    const dot = (x: number[], y: number[]) => x[0]! * y[0]! + x[1]! * y[1]! + x[2]! * y[2]!;
    const len = (x: number[]) => Math.sqrt(dot(x, x));
    const ang = (x: number[], y: number[]) => (Math.acos(dot(x, y) / (len(x) * len(y))) * 180) / Math.PI;
    expect(len(v(0))).toBeCloseTo(p[0], 12);
    expect(len(v(1))).toBeCloseTo(p[1], 12);
    expect(len(v(2))).toBeCloseTo(p[2], 12);
    expect(ang(v(1), v(2))).toBeCloseTo(p[3], 10); // α = ∠(b, c)
    expect(ang(v(0), v(2))).toBeCloseTo(p[4], 10); // β = ∠(a, c)
    expect(ang(v(0), v(1))).toBeCloseTo(p[5], 10); // γ = ∠(a, b)
  });

  it('rejects CRYST1 with zero/negative lengths or angles that make no cell', async () => {
    const body = WATERS.slice(0, 3).map((a, i) => atomLine(i + 1, a));
    await rejectsWith(readAll(tmp.file('neg.pdb', [cryst1(-5, 10, 10, 90, 90, 90), ...body].join('\n'))), InputError, 'neg.pdb:1:7', 'CRYST1', 'positive');
    await rejectsWith(readAll(tmp.file('zero.pdb', [cryst1(10, 0, 10, 90, 90, 90), ...body].join('\n'))), InputError, 'zero.pdb:1:7', 'positive');
    // α + β < γ: the three vectors cannot close a cell (1 − cos²β − cy² < 0)
    await rejectsWith(readAll(tmp.file('flat.pdb', [cryst1(10, 10, 10, 30, 40, 120), ...body].join('\n'))), InputError, 'flat.pdb:1:7', 'do not make a cell');
    await rejectsWith(readAll(tmp.file('ang.pdb', [cryst1(10, 10, 10, 0, 90, 90), ...body].join('\n'))), InputError, 'outside (0, 180)');
    expect(cellParameterProblem(10, 10, 10, 60, 60, 60)).toBeNull();
    expect(cellParameterProblem(10, 10, 10, 100, 100, 100)).toBeNull();
    // α + β + γ = 360°: the vectors are coplanar, volume 0
    expect(cellParameterProblem(10, 10, 10, 120, 120, 120)).toContain('do not make a cell');
  });

  it('reads the PDB placeholder CRYST1 (1 1 1 90 90 90) as no cell, with a warning', async () => {
    const text = [cryst1(1, 1, 1, 90, 90, 90), ...WATERS.slice(0, 3).map((a, i) => atomLine(i + 1, a)), 'END'].join('\n');
    const r = await readAll(tmp.file('placeholder.pdb', text));
    expect(r.frames[0]!.cell).toBeNull();
    expect(r.warnings[0]).toContain('placeholder');
  });

  it('frames separated by END alone, and a single frame without END', async () => {
    const w = WATERS.slice(0, 3);
    const endSep = [...w.map((a, i) => atomLine(i + 1, a)), 'END', ...shifted(w, 1).map((a, i) => atomLine(i + 1, a)), 'END'].join('\n');
    const r = await readAll(tmp.file('endsep.pdb', endSep));
    expect(r.frames.length).toBe(2);
    expect(r.frames[1]!.positions).toEqual(coords(w, 1));
    expect(r.frames[1]!.line).toBe(5);
    const single = w.map((a, i) => atomLine(i + 1, a)).join('\n');
    const s = await readAll(tmp.file('single.pdb', single));
    expect(s.frames.length).toBe(1);
    expect(s.warnings).toEqual([]);
  });

  it('element: columns 77–78 win; blank → derived from the atom name; charges null without charge fields', async () => {
    const atoms: AtomSpec[] = [
      { name: 'CA', res: 'ALA', seq: 1, x: 0, y: 0, z: 0 }, // blank element: alpha carbon → C
      { name: 'CA', res: 'CA', seq: 2, x: 1, y: 1, z: 1, el: 'CA' }, // element column says calcium
      { name: 'OW', res: 'SOL', seq: 3, x: 2, y: 2, z: 2 },
      { name: 'NA', res: 'NA', seq: 4, x: 3, y: 3, z: 3 },
    ];
    const r = await readAll(tmp.file('elem.pdb', atoms.map((a, i) => atomLine(i + 1, a)).join('\n')));
    expect(r.topology!.elements).toEqual(['C', 'Ca', 'O', 'Na']);
    expect(r.topology!.masses[1]).toBe(40.078); // CIAAW 2021 Ca
    expect(r.topology!.charges).toBeNull();
  });

  it('molecules are runs of atoms sharing chain, residue number, insertion code and name; hybrid-36 numbers', async () => {
    const atoms: AtomSpec[] = [
      { name: 'OW', res: 'SOL', chain: 'A', seq: 9999, x: 0, y: 0, z: 0 },
      { name: 'OW', res: 'SOL', chain: 'A', seq: 'A000', x: 0, y: 0, z: 0 },
      { name: 'OW', res: 'SOL', chain: 'B', seq: 'A000', x: 0, y: 0, z: 0 },
      { name: 'OW', res: 'SOL', chain: 'B', seq: 'A000', icode: 'A', x: 0, y: 0, z: 0 },
      { name: 'OW', res: 'HOH', chain: 'B', seq: 'A000', icode: 'A', x: 0, y: 0, z: 0 },
      { name: 'HW1', res: 'HOH', chain: 'B', seq: 'A000', icode: 'A', x: 0, y: 0, z: 0 },
    ];
    const r = await readAll(tmp.file('res.pdb', atoms.map((a, i) => atomLine(i + 1, a)).join('\n')));
    const res = r.topology!.residues!;
    expect(Array.from(res.numbers)).toEqual([9999, 10000, 10000, 10000, 10000, 10000]);
    expect(Array.from(res.molecule)).toEqual([0, 1, 2, 3, 4, 4]);
    expect(res.count).toBe(5);
    // hybrid-36 (wwPDB/cctbx convention): A000 = 10000, ZZZZ = 10000 + 26·36³ − 1, a000 = 10000 + 26·36³
    expect(hybrid36('A000', 4)).toBe(10000);
    expect(hybrid36('ZZZZ', 4)).toBe(10000 + 26 * 36 ** 3 - 1);
    expect(hybrid36('a000', 4)).toBe(10000 + 26 * 36 ** 3);
    expect(hybrid36(' -12', 4)).toBe(-12);
  });

  it('TITLE "t= …" gives the frame time in ps (a convention of several MD writers)', async () => {
    const w = WATERS.slice(0, 3);
    const text = ['TITLE     water t=   2.50000 step= 1250', ...models([w]).split('\n').filter((l) => l !== 'END'), 'TITLE     water t=   5.00000', ...models([w]).split('\n')].join('\n');
    const r = await readAll(tmp.file('time.pdb', text));
    expect(r.frames.map((f) => f.time)).toEqual([2.5, 5]);
  });

  it('CRLF file and tiny chunks give the same frames', async () => {
    const text = models([WATERS, shifted(WATERS, 0.5)], [cryst1(30, 31, 32, 80, 85, 95)]);
    const a = await readAll(tmp.file('lf.pdb', text));
    const b = await readAll(tmp.file('crlf.pdb', text.replace(/\n/g, '\r\n')));
    expect(b.frames).toEqual(a.frames);
    for (const hwm of [1, 5, 33]) expect((await readAll(tmp.file('lf2.pdb', text), { highWaterMark: hwm })).frames).toEqual(a.frames);
  });
});

describe('PDB errors and truncation', () => {
  const w = WATERS.slice(0, 3);

  it('truncated last MODEL: warning by default, InputError when strict', async () => {
    const text = models([w, w]).replace(/\nEND\n$/, '\n') + 'MODEL        3\n' + atomLine(1, w[0]!) + '\n' + atomLine(2, w[1]!) + '\n';
    const path = tmp.file('trunc.pdb', text);
    const r = await readAll(path);
    expect(r.frames.length).toBe(2);
    expect(r.warnings[0]).toContain(path);
    expect(r.warnings[0]).toContain('frame 3');
    expect(r.warnings[0]).toContain('2 of 3 atom records');
    expect(r.warnings[0]).toContain('the 2 complete frames are analysed');
    await rejectsWith(readAll(path, { strict: true }), InputError, 'frame 3 is truncated', 'strict');
  });

  it('an ATOM line cut in the middle at the end of the file is a truncated frame', async () => {
    const text = models([w]).replace(/END\n$/, '') + 'MODEL        2\n' + atomLine(1, w[0]!) + '\n' + atomLine(2, w[1]!).slice(0, 35);
    const r = await readAll(tmp.file('cut.pdb', text));
    expect(r.frames.length).toBe(1);
    expect(r.warnings[0]).toContain('frame 2');
  });

  it('atom-count mismatch names the frame and the line', async () => {
    const text = models([w, w.slice(0, 2)]);
    const e = await rejectsWith(readAll(tmp.file('count.pdb', text)), InputError, 'frame 2 (starting at line 7) has 2 atoms, but the first frame has 3');
    expect((e as InputError).line).toBe(11); // the ENDMDL that closed it
    const more = models([w.slice(0, 2), w]);
    await rejectsWith(readAll(tmp.file('more.pdb', more)), InputError, 'more.pdb:9', 'frame 2 (starting at line 6) has more atoms than the first frame (2)');
  });

  it('atom names must match the first frame', async () => {
    const other = [w[0]!, { ...w[1]!, name: 'HW3' }, w[2]!];
    await rejectsWith(readAll(tmp.file('names.pdb', models([w, other]))), InputError, 'names.pdb:9:13', "atom 2 of frame 2 is named 'HW3', but 'HW1'");
  });

  it('bad coordinates name file:line:column and the columns', async () => {
    const line = atomLine(1, w[0]!);
    const bad = line.slice(0, 38) + '   abc  ' + line.slice(46);
    await rejectsWith(readAll(tmp.file('badxyz.pdb', bad + '\n')), InputError, "badxyz.pdb:1:42: expected y coordinate in columns 39-46 (a number), found 'abc'");
    const nan = line.slice(0, 30) + '     NaN' + line.slice(38);
    await rejectsWith(readAll(tmp.file('nan.pdb', nan + '\n')), InputError, 'nan.pdb:1:36', 'finite');
    await rejectsWith(readAll(tmp.file('charge.pdb', line.slice(0, 78) + 'x+\n')), InputError, 'charge.pdb:1:79', 'formal charge');
  });

  it('a PDB file without atoms is an InputError', async () => {
    await rejectsWith(readAll(tmp.file('noatoms.pdb', 'REMARK nothing\nEND\n')), InputError, 'no ATOM/HETATM records');
  });

  it('sniffs PDB content in a file without a known extension', async () => {
    const r = await readAll(tmp.file('frames.txt', models([w])));
    expect(r.input.format).toBe('pdb');
  });
});
