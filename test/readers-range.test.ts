/**
 * Frame ranges without parsing, and reading a share of a file from a frame's byte offset.
 *
 * References outside the project: the expected coordinates are Number() of the very strings
 * written (ECMAScript StringToNumber); frame indices, line numbers and byte offsets are worked
 * out from the text the test builds (closed form: every frame of the generated files has the
 * same number of lines, and the offsets are sums of the lengths of the strings written); the
 * digests come from node:crypto (OpenSSL SHA-256, FIPS 180-4); the compressed files from
 * node:zlib (zlib, RFC 1952), not from the pako decoder under test.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { createHash } from 'node:crypto';
import { gzipSync } from 'node:zlib';
import { openTrajectory, type FrameSelection } from '../readers/index.js';
import { indexFrames } from '../readers/scan.js';
import { InputError } from '../src/errors.js';
import { copyFrame, rejectsWith, tempDir, type FrameCopy, generator } from './readers-helpers.js';

const tmp = tempDir('range');
afterAll(() => tmp.cleanup());


interface Built {
  text: string;
  /** Per frame: the coordinate strings in file order, the 1-based first line, the byte offset. */
  frames: { coords: string[]; line: number; offset: number; time: number }[];
}

/** An extended-XYZ trajectory; every frame has atoms + 2 lines. `bad` replaces one token. */
function buildXyz(nFrames: number, atoms: number, seed = 7, bad?: { frame: number; atom: number; token: string }): Built {
  const rnd = generator(seed);
  const parts: string[] = [];
  const frames: Built['frames'] = [];
  let offset = 0;
  let line = 1;
  for (let f = 0; f < nFrames; f++) {
    const coords: string[] = [];
    let s = `${atoms}\nLattice="12.5 0 0 0 12.5 0 0 0 12.5" Properties=species:S:1:pos:R:3 Time=${f * 0.5}\n`;
    for (let i = 0; i < atoms; i++) {
      const c = [0, 1, 2].map(() => ((rnd() - 0.5) * 25).toFixed(f % 3 === 0 ? 6 : 4));
      if (bad && bad.frame === f && bad.atom === i) c[0] = bad.token;
      coords.push(...c);
      s += `${i % 3 === 0 ? 'O' : 'H'} ${c.join('  ')}\n`;
    }
    frames.push({ coords, line, offset, time: f * 0.5 });
    parts.push(s);
    offset += s.length;
    line += atoms + 2;
  }
  return { text: parts.join(''), frames };
}

/** Frames a selection keeps, by the definition "from, from + stride, … below to". */
function selected(n: number, sel: FrameSelection): number[] {
  const out: number[] = [];
  for (let i = sel.from; i < Math.min(n, sel.to); i += sel.stride) out.push(i);
  return out;
}

async function read(path: string, opts: Parameters<typeof openTrajectory>[1]) {
  const input = await openTrajectory(path, opts);
  const frames: FrameCopy[] = [];
  for await (const f of input.frames()) frames.push(copyFrame(f));
  return { input, frames };
}

const XYZ = buildXyz(23, 7);
const xyzPath = tmp.file('range.xyz', XYZ.text);
const xyzGzPath = tmp.file('range.xyz.gz', gzipSync(Buffer.from(XYZ.text)));
const sha = (s: string | Buffer) => createHash('sha256').update(s).digest('hex');

describe('frame selection (skipped frames are counted, not parsed)', () => {
  const cases: FrameSelection[] = [
    { from: 0, to: Infinity, stride: 1 },
    { from: 5, to: 12, stride: 1 },
    { from: 3, to: Infinity, stride: 4 },
    { from: 0, to: 23, stride: 7 },
    { from: 22, to: 23, stride: 1 },
    { from: 30, to: Infinity, stride: 1 },
  ];
  for (const path of [xyzPath, xyzGzPath]) {
    for (const sel of cases) {
      it(`${path.endsWith('.gz') ? 'gzip' : 'plain'} ${sel.from}:${sel.to}:${sel.stride} gives exactly the selected frames, with their lines`, async () => {
        const { input, frames } = await read(path, { warnings: [], select: sel });
        const want = selected(XYZ.frames.length, sel);
        expect(frames.map((f) => f.index)).toEqual(want);
        for (const [k, i] of want.entries()) {
          // Number() of the strings written, compared bit for bit (toEqual on numbers uses Object.is).
          expect(frames[k]!.positions).toEqual(XYZ.frames[i]!.coords.map(Number));
          expect(frames[k]!.line).toBe(XYZ.frames[i]!.line);
          expect(frames[k]!.time).toBe(XYZ.frames[i]!.time);
          expect(frames[k]!.cell).toEqual([12.5, 0, 0, 0, 12.5, 0, 0, 0, 12.5]);
        }
        // Reading stopped early or not, the digest covers the whole raw file (node:crypto).
        expect(input.sha256()).toBe(sha(path.endsWith('.gz') ? gzipSync(Buffer.from(XYZ.text)) : XYZ.text));
      });
    }
  }

  it('frames(select) takes the selection at iteration time, as runPasses passes it', async () => {
    const input = await openTrajectory(xyzPath, { warnings: [] });
    const got: number[] = [];
    for await (const f of input.frames({ from: 2, to: 9, stride: 3 })) got.push(f.index);
    expect(got).toEqual([2, 5, 8]);
    // frames up to the last one used were seen (2 … 8), reading stopped there
    expect(input.framesComplete()).toBe(9);
  });

  it('a malformed number in a skipped frame is not parsed; in a selected frame it is an error', async () => {
    const p = tmp.file('bad-number.xyz', buildXyz(23, 7, 7, { frame: 4, atom: 1, token: '1.2.3' }).text);
    const { frames } = await read(p, { warnings: [], select: { from: 5, to: Infinity, stride: 1 } });
    expect(frames.map((f) => f.index)).toEqual(selected(23, { from: 5, to: Infinity, stride: 1 }));
    // atom 2 (second row) of frame 5 (index 4): line = first line + 2 (count, comment) + 1
    await rejectsWith(read(p, { warnings: [], select: { from: 4, to: 6, stride: 1 } }), InputError, `:${XYZ.frames[4]!.line + 3}:`, "'1.2.3'");
  });

  it('a truncated last frame is still reported when the selection reaches the end of the file', async () => {
    const cut = XYZ.text.slice(0, XYZ.frames[22]!.offset + 40);
    const p = tmp.file('cut.xyz', cut);
    const warnings: string[] = [];
    const { frames } = await read(p, { warnings, select: { from: 20, to: Infinity, stride: 1 } });
    expect(frames.map((f) => f.index)).toEqual([20, 21]);
    expect(warnings.join('\n')).toMatch(/frame 23 is truncated/);
    await rejectsWith(read(p, { warnings: [], strict: true, select: { from: 3, to: Infinity, stride: 5 } }), InputError, 'frame 23 is truncated');
    // A selection that ends before it never reaches the cut frame: no warning.
    const w2: string[] = [];
    await read(p, { warnings: w2, select: { from: 0, to: 10, stride: 1 } });
    expect(w2).toEqual([]);
  });
});

/** A PDB trajectory with one CRYST1 at the top (in force for every frame) and a TITLE time per frame. */
function buildPdb(nFrames: number, atoms: number): Built {
  const rnd = generator(99);
  const f83 = (x: number) => x.toFixed(3).padStart(8);
  const parts: string[] = ['CRYST1   18.000   19.000   20.000  90.00  90.00  90.00 P 1           1\n'];
  let offset = parts[0]!.length;
  let line = 2;
  const frames: Built['frames'] = [];
  for (let f = 0; f < nFrames; f++) {
    const coords: string[] = [];
    let s = `TITLE     sample t= ${(f * 2).toFixed(5)}\nMODEL     ${String(f + 1).padStart(4)}\n`;
    for (let i = 0; i < atoms; i++) {
      const c = [rnd() * 18, rnd() * 19, rnd() * 20].map(f83);
      coords.push(...c.map((x) => x.trim()));
      s += `ATOM  ${String(i + 1).padStart(5)} ${i % 2 ? ' O  ' : ' NA '} SOL  ${String(i + 1).padStart(4)}    ${c.join('')}  1.00  0.00          ${i % 2 ? ' O' : 'NA'}\n`;
    }
    s += 'ENDMDL\n';
    // the frame starts at its MODEL record (the TITLE line before it carries its time)
    frames.push({ coords, line: line + 1, offset: offset + s.indexOf('MODEL'), time: f * 2 });
    parts.push(s);
    offset += s.length;
    line += atoms + 3;
  }
  return { text: parts.join(''), frames };
}

const PDB = buildPdb(11, 5);
const pdbPath = tmp.file('range.pdb', PDB.text);

describe('PDB frame selection carries CRYST1 and TITLE across skipped frames', () => {
  it('selected frames have the cell of the CRYST1 at the top and the time of their TITLE', async () => {
    const sel = { from: 4, to: 10, stride: 2 };
    const { frames } = await read(pdbPath, { warnings: [], select: sel });
    expect(frames.map((f) => f.index)).toEqual([4, 6, 8]);
    for (const f of frames) {
      expect(f.positions).toEqual(PDB.frames[f.index]!.coords.map(Number));
      expect(f.line).toBe(PDB.frames[f.index]!.line);
      expect(f.time).toBe(f.index * 2);
      // wwPDB v3.3 CRYST1 with 90° angles: a = (a,0,0), b = (0,b,0), c = (0,0,c)
      expect(f.cell).toEqual([18, 0, 0, 0, 19, 0, 0, 0, 20]);
    }
  });
});

describe('frame index (readers/scan.ts) and reading a share from its byte offset', () => {
  it('records every frame start: byte offset and line as built, digest and size of the file', async () => {
    const idx = await indexFrames(xyzPath);
    expect(idx.frames).toBe(23);
    expect(idx.compressed).toBe(false);
    expect(idx.sha256).toBe(sha(XYZ.text));
    expect(idx.bytes).toBe(XYZ.text.length);
    for (let i = 0; i < 23; i++) {
      const s = idx.start(i)!;
      expect([s.offset, s.line, s.index]).toEqual([XYZ.frames[i]!.offset, XYZ.frames[i]!.line, i]);
    }
    expect(idx.start(23)).toBeNull();
    // Chunk boundaries anywhere (inside count lines, rows, CR-less ends) change nothing.
    for (const highWaterMark of [5, 64, 1000]) {
      const small = await indexFrames(xyzPath, { highWaterMark });
      expect(Array.from({ length: 23 }, (_, i) => small.start(i)!.offset)).toEqual(XYZ.frames.map((f) => f.offset));
    }
    const pdbIdx = await indexFrames(pdbPath, { highWaterMark: 33 });
    expect(Array.from({ length: PDB.frames.length }, (_, i) => pdbIdx.start(i)!.offset)).toEqual(PDB.frames.map((f) => f.offset));
    const part = await indexFrames(xyzPath, { upTo: 10 });
    expect([part.frames, part.starts, part.start(10)!.offset]).toEqual([10, 11, XYZ.frames[10]!.offset]);
    expect(part.sha256).toBe(sha(XYZ.text)); // the rest was still hashed
  });

  it('gzip input is indexed too (offsets in the text) and flagged as not seekable', async () => {
    const idx = await indexFrames(xyzGzPath);
    expect([idx.frames, idx.compressed, idx.start(7)!.line]).toEqual([23, true, XYZ.frames[7]!.line]);
    expect(idx.sha256).toBe(sha(gzipSync(Buffer.from(XYZ.text))));
  });

  for (const [name, path, built, fmt] of [
    ['XYZ', xyzPath, XYZ, 'xyz'],
    ['PDB', pdbPath, PDB, 'pdb'],
  ] as const) {
    it(`${name}: two shares read from their offsets give exactly the frames of one read`, async () => {
      const idx = await indexFrames(path);
      const n = built.frames.length;
      expect(idx.frames).toBe(n);
      for (const stride of [1, 2]) {
        const sel = { from: 1, to: n, stride };
        const used = selected(n, sel);
        const half = used[Math.ceil(used.length / 2)]!; // first frame of the second share
        const shares = [
          { a: sel.from, b: half },
          { a: half, b: n },
        ];
        const got: FrameCopy[] = [];
        for (const { a, b } of shares) {
          const start = a > 0 ? idx.start(a)! : undefined;
          const end = idx.start(b)?.offset;
          const { input, frames } = await read(path, {
            warnings: [],
            format: fmt,
            hash: false,
            select: { from: a, to: b, stride },
            ...(start ? { start } : {}),
            ...(end !== undefined ? { end } : {}),
          });
          got.push(...frames);
          expect(() => input.sha256()).toThrow(/not computed/);
        }
        expect(got.map((f) => f.index)).toEqual(used);
        for (const f of got) {
          expect(f.positions).toEqual(built.frames[f.index]!.coords.map(Number));
          expect(f.line).toBe(built.frames[f.index]!.line);
          expect(f.time).toBe(built.frames[f.index]!.time);
        }
        if (fmt === 'pdb') for (const f of got) expect(f.cell).toEqual([18, 0, 0, 0, 19, 0, 0, 0, 20]);
      }
    });
  }

  it('an error in a share read from an offset names the line of the whole file', async () => {
    const p = tmp.file('bad-share.xyz', buildXyz(23, 7, 7, { frame: 15, atom: 0, token: 'NaN' }).text);
    const idx = await indexFrames(p);
    const start = idx.start(12)!;
    // the first row of frame 16 (index 15): its first line + 2
    await rejectsWith(read(p, { warnings: [], format: 'xyz', hash: false, start }), InputError, `${p}:${XYZ.frames[15]!.line + 2}:`, 'NaN');
  });

  it('a share read from an offset warns about a truncated last frame in the words of one read', async () => {
    const cut = tmp.file('cut-share.xyz', XYZ.text.slice(0, XYZ.frames[22]!.offset + 50));
    const whole: string[] = [];
    await read(cut, { warnings: whole });
    const idx = await indexFrames(cut);
    expect(idx.frames).toBe(22);
    const share: string[] = [];
    const { frames } = await read(cut, { warnings: share, format: 'xyz', hash: false, start: idx.start(12)! });
    expect(frames.map((f) => f.index)).toEqual(Array.from({ length: 10 }, (_, i) => 12 + i));
    expect(whole.length).toBe(1);
    expect(share).toEqual(whole);
  });

  it('bad input makes the scan fail with the reader\'s error', async () => {
    const o = XYZ.frames[1]!.offset;
    expect(XYZ.text.slice(o, o + 2)).toBe('7\n');
    const p = tmp.file('bad-count.xyz', XYZ.text.slice(0, o) + 'seven' + XYZ.text.slice(o + 1));
    await rejectsWith(indexFrames(p), InputError, `${p}:${XYZ.frames[1]!.line}:`, 'atom count of frame 2');
  });
});
