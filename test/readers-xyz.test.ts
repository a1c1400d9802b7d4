import { afterAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { readFileSync, statSync } from 'node:fs';
import { Readable } from 'node:stream';
import { openTrajectory } from '../readers/index.js';
import { InputError } from '../src/errors.js';
import { readAll, rejectsWith, tempDir } from './readers-helpers.js';

const tmp = tempDir('xyz');
afterAll(() => tmp.cleanup());

/**
 * Build an XYZ text from rows of strings. Expected values in the tests are Number() of the very
 * strings written (ECMAScript StringToNumber is the reference for decimal → double).
 */
function xyz(frames: { comment: string; rows: string[][] }[], eol = '\n'): string {
  return frames.map((f) => [String(f.rows.length), f.comment, ...f.rows.map((r) => r.join(' '))].join(eol) + eol).join('');
}

const W1 = [
  ['O', '0.000000', '0.000000', '0.117300'],
  ['H', '0.000000', '0.757200', '-0.469200'],
  ['H', '0.000000', '-0.757200', '-0.469200'],
];
const W2 = [
  ['O', '1.5', '-2.25', '3.125'],
  ['H', '1.5e-1', '7.572D-01', '-4.692E-1'],
  ['H', '-.5', '5.', '+12.75'],
];
const nums = (rows: string[][], from = 1, to = 4) => rows.flatMap((r) => r.slice(from, to).map((s) => Number(s.replace(/[dD]/, 'e'))));

describe('plain XYZ', () => {
  const text = xyz([
    { comment: 'water frame 1', rows: W1 },
    { comment: 'water frame 2', rows: W2 },
  ]);
  const path = tmp.file('water.xyz', text);

  it('reads positions, labels, elements and masses of every frame', async () => {
    const r = await readAll(path);
    expect(r.frames.length).toBe(2);
    expect(r.frames[0]!.positions).toEqual(nums(W1));
    expect(r.frames[1]!.positions).toEqual(nums(W2));
    expect(r.frames.map((f) => f.index)).toEqual([0, 1]);
    expect(r.frames.map((f) => f.line)).toEqual([1, 6]); // 1-based line of each atom-count line
    expect(r.frames[0]!.time).toBeNull();
    expect(r.frames[0]!.cell).toBeNull();
    expect(r.frames[0]!.velocities).toBeNull();
    const t = r.topology!;
    expect(t.atoms).toBe(3);
    expect(t.labels).toEqual(['O', 'H', 'H']);
    expect(t.elements).toEqual(['O', 'H', 'H']);
    // CIAAW 2021 conventional values: O 15.999, H 1.008
    expect(Array.from(t.masses)).toEqual([15.999, 1.008, 1.008]);
    expect(t.charges).toBeNull();
    expect(t.residues).toBeNull();
    expect(r.warnings).toEqual([]);
    expect(r.input.framesRead()).toBe(2);
    expect(r.input.format).toBe('xyz');
  });

  it('reuses the typed arrays between frames and shares one Topology object', async () => {
    const r = await readAll(path);
    expect(r.raw[0]!.positions).toBe(r.raw[1]!.positions);
    expect(r.raw[0]!.topology).toBe(r.raw[1]!.topology);
    // after the read, the shared array holds the last frame
    expect(Array.from(r.raw[0]!.positions)).toEqual(nums(W2));
  });

  it('hashes the raw bytes (SHA-256 as computed by node:crypto) and counts them', async () => {
    const r = await readAll(path);
    expect(r.input.sha256()).toBe(createHash('sha256').update(readFileSync(path)).digest('hex'));
    expect(r.input.rawBytes()).toBe(statSync(path).size);
  });

  it('still hashes the whole file when the consumer stops after the first frame', async () => {
    const input = await openTrajectory(path, { warnings: [], highWaterMark: 8 });
    for await (const f of input.frames()) {
      expect(f.index).toBe(0);
      break;
    }
    expect(input.sha256()).toBe(createHash('sha256').update(readFileSync(path)).digest('hex'));
    expect(input.rawBytes()).toBe(statSync(path).size);
    expect(input.framesRead()).toBe(1);
  });

  it('gives identical frames whatever the chunk size (chunk-boundary independence)', async () => {
    const ref = await readAll(path);
    for (const hwm of [1, 2, 3, 7, 13, 64]) {
      const r = await readAll(path, { highWaterMark: hwm });
      expect(r.frames).toEqual(ref.frames);
    }
  });

  it('reads a CRLF file exactly like the LF file', async () => {
    const crlf = tmp.file('water-crlf.xyz', text.replace(/\n/g, '\r\n'));
    const a = await readAll(path);
    const b = await readAll(crlf);
    expect(b.frames).toEqual(a.frames);
    expect(b.topology!.labels).toEqual(a.topology!.labels);
    const c = await readAll(crlf, { highWaterMark: 5 });
    expect(c.frames).toEqual(a.frames);
  });

  it('accepts tabs, leading and trailing blanks, blank lines between frames and at the end', async () => {
    const messy =
      '  3  \nwater\nO\t0.000000\t0.000000  0.117300   \n  H 0.000000 0.757200 -0.469200\t\nH 0.000000 -0.757200 -0.469200\n\n\n' +
      '3\n\nO 1.5 -2.25 3.125\nH 1.5e-1 7.572D-01 -4.692E-1\nH -.5 5. +12.75\n\n  \n';
    const r = await readAll(tmp.file('messy.xyz', messy));
    expect(r.frames.map((f) => f.positions)).toEqual([nums(W1), nums(W2)]);
    expect(r.frames[1]!.line).toBe(8);
  });

  it('sniffs the format from the content when the name does not tell, and reads stdin', async () => {
    const noext = tmp.file('water.traj', text);
    const a = await readAll(noext);
    expect(a.input.format).toBe('xyz');
    expect(a.frames.length).toBe(2);
    const stdin = Readable.from([Buffer.from(text.slice(0, 10)), Buffer.from(text.slice(10))]);
    const b = await readAll('-', { stdin });
    expect(b.input.format).toBe('xyz');
    expect(b.frames).toEqual(a.frames);
    expect(b.input.sha256()).toBe(createHash('sha256').update(text).digest('hex'));
  });

  it('parses long mantissas and exponents in later frames (bulk path) exactly like Number()', async () => {
    const rows = [
      ['C', '1.234567890123456789', '-9.87654321e+02', '6.02214076E23'],
      ['C', '0.1e-30', '123456789012345678901234567890', '1.0000000000000002'],
    ];
    const t = xyz([
      { comment: 'a', rows },
      { comment: 'b', rows },
      { comment: 'c', rows },
    ]);
    const r = await readAll(tmp.file('digits.xyz', t));
    for (const f of r.frames) expect(f.positions).toEqual(nums(rows));
  });
});

describe('velocities and extended XYZ', () => {
  it('plain XYZ with exactly 7 columns has velocities (label x y z vx vy vz)', async () => {
    const rows = [
      ['Na', '1', '2', '3', '0.1', '0.2', '0.3'],
      ['Cl', '4', '5', '6', '-0.1', '-0.2', '-0.3'],
    ];
    const r = await readAll(tmp.file('vel7.xyz', xyz([{ comment: '', rows }, { comment: '', rows }])));
    expect(r.frames[1]!.positions).toEqual(nums(rows));
    expect(r.frames[1]!.velocities).toEqual(nums(rows, 4, 7));
    expect(r.topology!.elements).toEqual(['Na', 'Cl']);
  });

  it('plain XYZ rows must all have 4 or all have 7 columns', async () => {
    const bad = '2\n\nO 0 0 0\nH 1 0 0 0.5 0.5 0.5\n';
    await rejectsWith(readAll(tmp.file('mixed.xyz', bad)), InputError, /mixed\.xyz:4:\d+: atom row has more than 4 columns/);
    const five = '1\n\nO 0 0 0 1\n';
    await rejectsWith(readAll(tmp.file('five.xyz', five)), InputError, 'five.xyz:3:1', 'atom row has 5 columns', 'Properties=');
  });

  it('reads Lattice (rows a, b, c), Time, and Properties with extra fields skipped by their counts', async () => {
    const comment = (t: number) =>
      `Lattice="10.0 0.0 0.0 2.0 11.0 0.0 -1.0 0.5 12.0" Properties=species:S:1:pos:R:3:forces:R:3:vel:R:3:Z:I:1 Time=${t} pbc="T T T" energy=-12.5`;
    const rows = [
      ['O', '1', '2', '3', '9', '9', '9', '0.5', '0.25', '0.125', '8'],
      ['H', '4', '5', '6', '9', '9', '9', '-0.5', '-0.25', '-0.125', '1'],
    ];
    const r = await readAll(tmp.file('ext.xyz', xyz([{ comment: comment(0), rows }, { comment: comment(0.5), rows }])));
    expect(r.frames[0]!.cell).toEqual([10, 0, 0, 2, 11, 0, -1, 0.5, 12]);
    expect(r.frames.map((f) => f.time)).toEqual([0, 0.5]);
    expect(r.frames[1]!.positions).toEqual(nums(rows));
    expect(r.frames[1]!.velocities).toEqual(nums(rows, 7, 10));
  });

  it('keys are case-insensitive, values may be quoted or bracketed, velo is accepted', async () => {
    const comment = `lattice=[[5,0,0],[0,6,0],[0,0,7]] properties='species:S:1:pos:R:3:velo:R:3' TIME=2.5 note="a b=c"`;
    const rows = [['Ar', '1', '1', '1', '0', '0', '1']];
    const r = await readAll(tmp.file('ext2.xyz', xyz([{ comment, rows }])));
    expect(r.frames[0]!.cell).toEqual([5, 0, 0, 0, 6, 0, 0, 0, 7]);
    expect(r.frames[0]!.time).toBe(2.5);
    expect(r.frames[0]!.velocities).toEqual([0, 0, 1]);
  });

  it('rows must have exactly the columns Properties describes', async () => {
    const t = xyz([{ comment: 'Properties=species:S:1:pos:R:3', rows: [['O', '1', '2', '3', '4']] }]);
    await rejectsWith(readAll(tmp.file('extra.xyz', t)), InputError, 'extra.xyz:3:', 'more than 4 columns', 'Properties=');
  });

  it('rejects a Lattice without 9 numbers, a degenerate Lattice and Properties without pos', async () => {
    await rejectsWith(readAll(tmp.file('lat8.xyz', xyz([{ comment: 'Lattice="1 0 0 0 1 0 0 0"', rows: W1 }]))), InputError, 'lat8.xyz:2:', 'Lattice= needs 9 numbers');
    await rejectsWith(
      readAll(tmp.file('latflat.xyz', xyz([{ comment: 'Lattice="1 0 0 0 1 0 1 1 0"', rows: W1 }]))),
      InputError,
      'latflat.xyz:2:',
      'degenerate',
    );
    await rejectsWith(readAll(tmp.file('nopos.xyz', xyz([{ comment: 'Properties=species:S:1', rows: W1 }]))), InputError, 'no pos:R:3');
  });
});

describe('XYZ errors and truncation', () => {
  const good = xyz([
    { comment: 'f1', rows: W1 },
    { comment: 'f2', rows: W2 },
  ]);

  it('truncated last frame: a warning naming file and frame, the complete frames are read', async () => {
    const path = tmp.file('trunc.xyz', good + '3\nf3\nO 1 2 3\nH 4 5');
    const r = await readAll(path);
    expect(r.frames.length).toBe(2);
    expect(r.warnings.length).toBe(1);
    expect(r.warnings[0]).toContain(path);
    expect(r.warnings[0]).toMatch(/frame 3 is truncated \(it starts at line 11; 1 of 3 atom rows; the last line is incomplete/);
    expect(r.warnings[0]).toContain('the 2 complete frames are analysed');
  });

  it('truncated last frame: strict mode throws InputError', async () => {
    const path = tmp.file('trunc2.xyz', good + '3\nf3\nO 1 2 3\n');
    await rejectsWith(readAll(path, { strict: true }), InputError, `${path}:11`, 'frame 3 is truncated', 'strict');
  });

  it('a file with no complete frame is an InputError', async () => {
    await rejectsWith(readAll(tmp.file('none.xyz', '3\nc\nO 1 2 3\n')), InputError, 'no complete frame');
    await rejectsWith(readAll(tmp.file('empty.xyz', '')), InputError, 'no frame found');
    await rejectsWith(readAll(tmp.file('empty.dat', '')), InputError, 'empty');
  });

  it('atom-count mismatch names the frame and the line', async () => {
    const path = tmp.file('count.xyz', good + '2\nf3\nO 1 2 3\nH 4 5 6\n');
    const e = await rejectsWith(readAll(path), InputError, 'frame 3 has 2 atoms, but the first frame has 3');
    expect((e as InputError).line).toBe(11);
  });

  it('a frame with fewer rows than its count is reported at the next count line', async () => {
    const path = tmp.file('fewer.xyz', '3\nf1\nO 0 0 0\nH 1 0 0\n3\nf2\nO 0 0 0\nH 1 0 0\nH 0 1 0\n');
    await rejectsWith(readAll(path), InputError, 'fewer.xyz:5:1', 'looks like an atom count');
  });

  it('labels must match the first frame', async () => {
    const path = tmp.file('labels.xyz', good + xyz([{ comment: 'f3', rows: [W1[0]!, ['N', '0', '0', '0'], W1[2]!] }]));
    const e = await rejectsWith(readAll(path), InputError, "atom 2 of frame 3 is labelled 'N', but 'H' in the first frame");
    expect((e as InputError).line).toBe(14);
  });

  it('NaN coordinate: InputError with file:line:column', async () => {
    const path = tmp.file('nan.xyz', good + '3\nf3\nO 1 2 3\nH 4 NaN 6\nH 7 8 9\n');
    const e = await rejectsWith(readAll(path), InputError, `${path}:14:5: expected y coordinate (a finite number), found 'NaN'`);
    expect((e as InputError).column).toBe(5);
    // the same in the first frame (line path rather than bulk path)
    await rejectsWith(readAll(tmp.file('nan1.xyz', '1\nc\nO 1 2 nan\n')), InputError, 'nan1.xyz:3:7: expected z coordinate (a finite number)');
  });

  it('malformed numbers and missing columns name what was expected', async () => {
    await rejectsWith(readAll(tmp.file('bad.xyz', good + '3\nf3\nO 1 2 3\nH 4 5.5.5 6\nH 7 8 9\n')), InputError, "bad.xyz:14:5: expected y coordinate (a number), found '5.5.5'");
    await rejectsWith(readAll(tmp.file('short.xyz', good + '3\nf3\nO 1 2 3\nH 4 5\nH 7 8 9\n')), InputError, 'short.xyz:14:6: expected z coordinate (a number), found end of line');
    await rejectsWith(readAll(tmp.file('cnt.xyz', 'three\nc\n')), InputError, "cnt.xyz:1:1: expected the atom count of frame 1 (a non-negative integer), found 'three'");
  });

  it('a blank line inside the atom rows is an error unless only blank lines follow', async () => {
    await rejectsWith(readAll(tmp.file('blank.xyz', good + '3\nf3\nO 1 2 3\n\nH 4 5 6\nH 7 8 9\n')), InputError, 'blank.xyz:14', 'blank line where atom row 2 of 3 of frame 3');
    const r = await readAll(tmp.file('blank-end.xyz', good + '3\nf3\nO 1 2 3\n\n\n'));
    expect(r.frames.length).toBe(2);
    expect(r.warnings[0]).toMatch(/frame 3 is truncated \(it starts at line 11; 1 of 3 atom rows\)/);
  });

  it('Lattice and velocities must be present in every frame when the first frame has them', async () => {
    const a = xyz([
      { comment: 'Lattice="5 0 0 0 5 0 0 0 5"', rows: W1 },
      { comment: 'no cell', rows: W1 },
    ]);
    await rejectsWith(readAll(tmp.file('cellgone.xyz', a)), InputError, 'cellgone.xyz:7', 'frame 2 has no Lattice= but the first frame has one');
  });

  it('a missing file is an InputError', async () => {
    await rejectsWith(openTrajectory(tmp.dir + '/nope.xyz', { warnings: [] }), InputError, 'nope.xyz: no such file');
  });
});

describe('comment lines that are not extended XYZ', () => {
  it('free text with spaced "=" defines no keys (no time, no cell)', async () => {
    const t = '1\n i =        0, time =        0.000, E =      -17.1234\nAr 1 2 3\n';
    const r = await readAll(tmp.file('freetext.xyz', t));
    expect(r.frames[0]!.time).toBeNull();
    expect(r.frames[0]!.cell).toBeNull();
    expect(r.frames[0]!.positions).toEqual([1, 2, 3]);
  });
});
