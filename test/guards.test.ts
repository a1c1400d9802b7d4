/**
 * Guard rails: input that would exhaust memory, files with no frame, non-increasing times,
 * possibly cut last lines, outputs that cannot be written — each refused or reported clearly;
 * and a survey of the finished commands on tiny and degenerate inputs (two frames, a
 * correlation that never decays, a constant series): each either fails with a clear message
 * or says "not converged" / "not reliable" with the reason, never a bare number.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdirSync, readdirSync } from 'node:fs';
import { totalmem } from 'node:os';
import { join } from 'node:path';
import { Readable } from 'node:stream';
import { gzipSync } from 'node:zlib';
import { openTrajectory, readTable } from '../readers/index.js';
import { ATOM_CEILING, maxAtoms } from '../readers/common.js';
import { InputError, UsageError } from '../src/errors.js';
import { checkOutputFile, OutputWriteError, refuseOverwritingInputs, writeFileAtomic } from '../src/output.js';
import { parsePositiveTime } from '../src/commands/common.js';
import { runPasses } from '../src/runner.js';
import type { Pass } from '../src/types.js';
import { ensureBuilt, runCliBatch, scratch, type CliResult } from './helpers/cli.js';

const tmp = scratch('guards');
afterAll(() => tmp.cleanup());

/** Read a text given as standard input; frames counted, warnings and the error returned. */
async function read(text: string | Uint8Array, opts: { format?: 'xyz' | 'pdb'; strict?: boolean } = {}) {
  const warnings: string[] = [];
  const raw = typeof text === 'string' ? Buffer.from(text, 'latin1') : text;
  try {
    const input = await openTrajectory('-', { format: opts.format ?? 'xyz', strict: opts.strict ?? false, warnings, stdin: Readable.from([raw]) });
    let frames = 0;
    for await (const _ of input.frames()) frames++;
    return { frames, warnings, error: null as InputError | null };
  } catch (e) {
    if (!(e instanceof InputError)) throw e;
    return { frames: 0, warnings, error: e };
  }
}

async function table(text: string) {
  const warnings: string[] = [];
  try {
    const t = await readTable('-', { warnings, stdin: Readable.from([Buffer.from(text, 'latin1')]) });
    return { table: t, warnings, error: null as InputError | null };
  } catch (e) {
    if (!(e instanceof InputError)) throw e;
    return { table: null, warnings, error: e };
  }
}

/** A pass that only counts frames (to drive the runner). */
function countPass(): Pass {
  return {
    name: 'count',
    create: () => {
      let n = 0;
      return { frame: () => void n++, partial: () => n };
    },
    merge: (a: unknown, b: unknown) => (a as number) + (b as number),
    finish: (p: unknown) => p,
  } as unknown as Pass;
}

describe('atom counts beyond what the machine can hold', () => {
  it('the bound is min(2^28, os.totalmem()/2 / 48 bytes per atom)', () => {
    // 48 bytes per atom: positions and velocities, 3 doubles each (IEEE 754 binary64 = 8 bytes).
    expect(ATOM_CEILING).toBe(268435456);
    expect(maxAtoms()).toBe(Math.min(2 ** 28, Math.floor(totalmem() / 2 / 48)));
  });

  it('a count above the bound is refused at its line before anything is allocated', async () => {
    const n = maxAtoms() + 1;
    const before = process.memoryUsage().arrayBuffers;
    const r = await read(`${n}\ncomment\nNa 0 0 0\n`);
    const grown = process.memoryUsage().arrayBuffers - before;
    expect(r.error?.message).toMatch(new RegExp(`^<stdin>:1:1: frame 1: ${n} atoms are more than this reader accepts`));
    // 24·n bytes of positions would be gigabytes; allow 64 MiB of unrelated buffers.
    expect(grown).toBeLessThan(64 * 2 ** 20);
  });

  it('a large count within the bound costs memory only as rows arrive (the frame is then truncated)', async () => {
    const n = maxAtoms();
    const before = process.memoryUsage().arrayBuffers;
    const r = await read(`${n}\ncomment\nNa 0 0 0\nCl 1 1 1\n`);
    const grown = process.memoryUsage().arrayBuffers - before;
    expect(r.error?.message).toMatch(new RegExp(`^<stdin>:1: no complete frame: frame 1 is truncated \\(2 of ${n} atom rows\\)`));
    expect(grown).toBeLessThan(64 * 2 ** 20);
  });

  it('counts beyond 2^31 − 1 and a later frame claiming a huge count name their line', async () => {
    expect((await read('99999999999\nc\nNa 0 0 0\n')).error?.message).toMatch(/^<stdin>:1:1: the atom count of frame 1 99999999999 is too large/);
    expect((await read('1\nc\nNa 0 0 0\n2000000000\nc\nNa 0 0 0\n')).error?.message).toMatch(/^<stdin>:4:1: frame 2 has 2000000000 atoms, but the first frame has 1/);
  });

  it('many atoms arriving row by row read correctly across the growth steps (2^16 + 3 atoms)', async () => {
    // Arrays start at 2^16 atoms and double; one more than that exercises the growth path.
    const n = 2 ** 16 + 3;
    let s = `${n}\nProperties=species:S:1:pos:R:3:vel:R:3\n`;
    for (let i = 0; i < n; i++) s += `A${i % 7} ${i} ${-i} ${i * 0.5} ${i % 3} 0 1\n`;
    const input = await openTrajectory('-', { format: 'xyz', warnings: [], stdin: Readable.from([Buffer.from(s + s)]) });
    let k = 0;
    for await (const f of input.frames()) {
      expect(f.positions.length).toBe(3 * n);
      expect(f.velocities!.length).toBe(3 * n);
      // values are the integers and halves printed above (exact in binary64)
      for (const i of [0, 65535, 65536, n - 1]) {
        expect([f.positions[3 * i], f.positions[3 * i + 1], f.positions[3 * i + 2], f.velocities![3 * i]]).toEqual([i, i === 0 ? 0 : -i, i * 0.5, i % 3]);
      }
      expect(f.topology.labels[n - 1]).toBe(`A${(n - 1) % 7}`);
      k++;
    }
    expect(k).toBe(2);
  });
});

describe('no frames, no rows', () => {
  it('an empty input, a blank XYZ file, a PDB without atoms and a table without rows are errors', async () => {
    expect((await read('')).error?.message).toMatch(/no frame found|empty/);
    expect((await read('\n  \n\t\n')).error?.message).toMatch(/no frame found/);
    expect((await read('REMARK nothing here\nEND\n', { format: 'pdb' })).error?.message).toMatch(/no ATOM\/HETATM records/);
    expect((await table('# time pxy\n')).error?.message).toMatch(/no data rows/);
    expect((await table('time pxy\n')).error?.message).toMatch(/header but no data rows/);
  });

  it('a frame range beyond the end of the file is an error, not an empty result', async () => {
    const input = await openTrajectory('-', { format: 'xyz', warnings: [], stdin: Readable.from([Buffer.from('1\nc\nNa 0 0 0\n1\nc\nNa 1 1 1\n')]) });
    const pass = countPass();
    await expect(runPasses(input, [pass], { frameInterval: null, cell: null, range: { from: 5, to: Infinity, stride: 1 }, warnings: [] })).rejects.toThrow(/no frames in the range 5:/);
  });

  it('a PDB MODEL that the file ends inside, without ENDMDL, is no complete frame (wwPDB v3.3 pairs MODEL with ENDMDL)', async () => {
    const atom = 'ATOM      1  O   WAT A   1       1.000   2.000   3.000  1.00  0.00           O  ';
    const r = await read(`MODEL        1\n${atom}\n`, { format: 'pdb' });
    expect(r.error?.message).toMatch(/^<stdin>:1: no complete frame: frame 1 is truncated \(its MODEL record has no ENDMDL/);
  });
});

describe('times that do not increase', () => {
  it('a table time column equal to or below the previous row is refused at that row', async () => {
    expect((await table('time pxy\n0 1\n0.5 2\n0.5 3\n')).error?.message).toMatch(/^<stdin>:4:1: time 0\.5 is not greater than the previous row's time 0\.5 \(line 3\)/);
    expect((await table('# t pxy\n0 1\n\n0.5 2\n0.25 3\n')).error?.message).toMatch(/^<stdin>:5:1: time 0\.25 is not greater/);
    expect((await table('x,time,pxy\n1,0,1\n2,-1,2\n')).error?.message).toMatch(/^<stdin>:3:3: time -1 is not greater/);
  });

  it('trajectory frame times that do not increase are refused at the frame', async () => {
    const text = '1\nTime=0.5\nNa 0 0 0\n1\nTime=0.5\nNa 1 1 1\n';
    const input = await openTrajectory('-', { format: 'xyz', warnings: [], stdin: Readable.from([Buffer.from(text)]) });
    const pass = countPass();
    await expect(runPasses(input, [pass], { frameInterval: null, cell: null, warnings: [] })).rejects.toThrow(/^<stdin>:4: frame 2 has time 0\.5 ps, not after the previous frame's 0\.5 ps/);
  });

  it('--frame-interval must be a positive finite time (usage error)', () => {
    for (const bad of ['0ps', '-1fs', '0', '1e-400ps', 'NaNps', '1e999ps']) expect(() => parsePositiveTime(bad, '--frame-interval')).toThrow(UsageError);
    expect(parsePositiveTime('50fs', '--frame-interval')).toBeCloseTo(0.05, 15); // 1 fs = 10^-3 ps (SI prefixes)
  });
});

describe('values a reader must not pass on', () => {
  it('a PDB TITLE time or CRYST1 lengths that overflow binary64 are refused at their line', async () => {
    const atom = 'ATOM      1  O   WAT A   1       1.000   2.000   3.000  1.00  0.00           O  ';
    expect((await read(`TITLE     run t= 1e999\n${atom}\nEND\n`, { format: 'pdb' })).error?.message).toMatch(/^<stdin>:1:\d+: TITLE time t=1e999 is out of range/);
    const cryst = 'CRYST1    1e300    1e300    1e300  90.00  90.00  90.00 P 1           1';
    expect((await read(`${cryst}\n${atom}\nEND\n`, { format: 'pdb' })).error?.message).toMatch(/^<stdin>:1:7: CRYST1: cell lengths .* are too large/);
  });

  it('an extended-XYZ Lattice whose volume overflows is refused at its line', async () => {
    const r = await read('1\nLattice="1e200 0 0 0 1e200 0 0 0 1e200"\nNa 0 0 0\n');
    expect(r.error?.message).toMatch(/^<stdin>:2:\d+: Lattice= vectors are too long/);
  });

  it('a PDB ATOM record that stops before column 54 has lost coordinates (wwPDB v3.3 Real(8.3) fields end there)', async () => {
    const atom = 'ATOM      1  O   WAT A   1       1.000   2.000   3.000  1.00  0.00           O  ';
    const r = await read(`${atom}\n${atom.slice(0, 53)}\nEND\n`, { format: 'pdb' });
    expect(r.error?.message).toMatch(/^<stdin>:2:54: ATOM record ends at column 53/);
  });

  it('a table whose header names two columns alike is refused at the header line', async () => {
    expect((await table('# some words\ntime a b a\n0 1 2 3\n')).error?.message).toMatch(/^<stdin>:2: column name 'a' appears more than once in the header \(columns 2 and 4\)/);
    expect((await table('# time a a\n0 1 2\n')).error?.message).toMatch(/^<stdin>:1: column name 'a'/);
  });
});

describe('a last line without a newline may have been cut', () => {
  it('XYZ: the frame it completes is used with a warning naming frame and line; strict refuses it', async () => {
    const text = '1\nc\nNa 0 0 0\n1\nc\nNa 1 1 1.25';
    const r = await read(text);
    expect(r.frames).toBe(2);
    expect(r.warnings).toEqual([expect.stringMatching(/^<stdin>:6: frame 2 may be truncated: the file ends without a newline in its last atom row/)]);
    expect((await read(text, { strict: true })).error?.message).toMatch(/^<stdin>:6: frame 2 may be truncated/);
    expect((await read(text + '\n')).warnings).toEqual([]);
  });

  it('tables: the last row is used with a warning naming its line', async () => {
    const r = await table('time pxy\n0 1\n1 2.5');
    expect(r.table?.rows).toBe(2);
    expect(r.warnings).toEqual([expect.stringMatching(/^<stdin>:3: the file ends without a newline after its last row/)]);
    expect((await table('time pxy\n0 1\n1 2.5\n')).warnings).toEqual([]);
  });

  it('a gzip stream cut where the partial text would not parse is still named a cut gzip stream (RFC 1952 trailer missing)', async () => {
    const gz = gzipSync(Buffer.from('2\nc\nNa 0.000 0.000 0.000\nCl 1.000 1.000 1.000\n'.repeat(50)));
    for (const k of [12, Math.floor(gz.length / 2), gz.length - 1]) {
      expect((await read(gz.subarray(0, k))).error?.message).toMatch(/^<stdin>: gzip stream truncated/);
    }
  });
});

describe('outputs', () => {
  it('writeFileAtomic into a missing folder or onto a folder fails with a named error and leaves no temporary file', async () => {
    const dir = join(tmp.dir, 'out');
    mkdirSync(dir);
    mkdirSync(join(dir, 'sub'));
    await expect(writeFileAtomic(join(dir, 'missing', 'x.json'), 'data')).rejects.toThrow(OutputWriteError);
    await expect(writeFileAtomic(join(dir, 'sub'), 'data')).rejects.toThrow(/cannot write .*sub: it is a folder/);
    expect(readdirSync(dir)).toEqual(['sub']);
    expect(readdirSync(join(dir, 'sub'))).toEqual([]);
  });

  it('checkOutputFile refuses inputs, folders and missing folders', () => {
    const f = tmp.file('in.xyz', '1\nc\nNa 0 0 0\n');
    expect(() => checkOutputFile(f, [f], '--partial-out')).toThrow(/is also an input/);
    expect(() => checkOutputFile(tmp.dir, [f], '--partial-out')).toThrow(/is a folder/);
    expect(() => checkOutputFile(join(tmp.dir, 'nope', 'p.json'), [f], '--partial-out')).toThrow(/does not exist/);
    expect(() => checkOutputFile(join(tmp.dir, 'p.json'), [f], '--partial-out')).not.toThrow();
    expect(() => refuseOverwritingInputs(join(tmp.dir, 'p.json'), ['-'])).not.toThrow();
    expect(existsSync(join(tmp.dir, 'p.json'))).toBe(false);
  });
});

// ---------------------------------------------------------------------------------------------
// Survey of the finished commands on tiny and degenerate inputs (child process through the
// built CLI). msd, vacf, diffusion, conductivity and viscosity are still being written by
// others and are surveyed by hand (see the hand-over notes), not here.

/** Extended XYZ: `frames` frames, 32 atoms on a 4×4×2 grid in a 20 Å box, moved by `move`. */
function grid(frames: number, move: (f: number, i: number) => number): string {
  let s = '';
  for (let f = 0; f < frames; f++) {
    s += `32\nLattice="20 0 0 0 20 0 0 0 20" Properties=species:S:1:pos:R:3 Time=${(0.1 * f).toFixed(1)}\n`;
    for (let i = 0; i < 32; i++) {
      const x = ((i % 4) * 5 + 1 + move(f, i)) % 20;
      s += `${i % 2 ? 'Cl' : 'Na'} ${x.toFixed(4)} ${((i >> 2) % 4) * 5 + 1}.0000 ${(i >> 4) * 5 + 1}.0000\n`;
    }
  }
  return s;
}

describe('numerical guards of the finished commands on degenerate input', () => {
  let results: Map<string, CliResult>;
  const runs: [string, string[]][] = [
    ['rdf two frames', ['rdf', 'two.xyz', '--pair', 'Na:Cl', '--json', '--threads', '1']],
    ['shell two frames', ['shell', 'two.xyz', '--center', 'Na', '--around', 'Cl', '--cutoff', '6A', '--json', '--threads', '1']],
    ['shell never decays', ['shell', 'frozen.xyz', '--center', 'Na', '--around', 'Cl', '--cutoff', '6A', '--json', '--threads', '1']],
    ['converge two rows', ['converge', 'two.tsv']],
    ['converge constant', ['converge', 'constant.tsv', '--json']],
    ['converge drifting', ['converge', 'drift.tsv', '--json']],
    ['converge trajectory two frames', ['converge', 'two.xyz', '--json', '--threads', '1']],
    ['inspect two frames', ['inspect', 'two.xyz', '--json', '--threads', '1']],
  ];
  beforeAll(() => {
    ensureBuilt();
    tmp.file('two.xyz', grid(2, (f) => 0.01 * f));
    tmp.file('frozen.xyz', grid(120, () => 0));
    tmp.file('two.tsv', 'time epot\n0 -5.1\n0.002 -5.0\n');
    tmp.file('constant.tsv', 'time epot\n' + Array.from({ length: 500 }, (_, i) => `${(i * 0.002).toFixed(3)} -5.25\n`).join(''));
    tmp.file('drift.tsv', 'time epot\n' + Array.from({ length: 500 }, (_, i) => `${(i * 0.002).toFixed(3)} ${(-5 + 0.01 * i).toFixed(3)}\n`).join(''));
    const out = runCliBatch(runs.map(([, args]) => ({ args, cwd: tmp.dir })));
    results = new Map(runs.map(([name], i) => [name, out[i]!]));
  }, 240_000);
  /** The JSON envelope a run printed (its results typed by the caller). */
  const json = <T,>(name: string): { results: T; warnings: string[] } => {
    const r = results.get(name)!;
    expect(r.status, r.stderr).toBe(0);
    return JSON.parse(r.stdout) as { results: T; warnings: string[] };
  };

  it('rdf on two frames says its error bars rest on two frames', () => {
    const d = json<{ pairs: { notes: string[]; converged: boolean }[] }>('rdf two frames');
    const p = d.results.pairs[0]!;
    expect(p.converged === false || p.notes.some((n) => /only 2 frames/.test(n))).toBe(true);
  });

  it('shell on two frames, and on neighbours that never leave (no decay), gives no residence time and says why', () => {
    for (const name of ['shell two frames', 'shell never decays']) {
      const d = json<{ converged: boolean; notes: string[]; residenceTime: unknown }>(name);
      expect(d.results.converged).toBe(false);
      expect(d.results.notes.length).toBeGreaterThan(0);
      expect(d.results.residenceTime).toBeNull();
    }
    const never = json<{ notes: string[] }>('shell never decays');
    expect(never.results.notes.join(' ')).toMatch(/decay/);
  });

  it('converge: two rows are an error; a constant series is called constant; a drifting one is not reliable, with reasons', () => {
    const two = results.get('converge two rows')!;
    expect(two.status).toBe(1);
    expect(two.stdout).toBe('');
    expect(two.stderr).toMatch(/too short/);
    const c = json<{ series: { verdict: string; standardError: number }[] }>('converge constant');
    expect(c.results.series[0]!.verdict).toMatch(/constant/);
    expect(c.results.series[0]!.standardError).toBe(0);
    const d = json<{ series: { reliable: boolean; verdict: string }[] }>('converge drifting');
    expect(d.results.series[0]!.reliable).toBe(false);
    expect(d.results.series[0]!.verdict).toMatch(/not reliable: .+/);
  });

  it('converge on a two-frame trajectory and inspect on it: an error or flagged numbers, nothing bare', () => {
    const r = results.get('converge trajectory two frames')!;
    if (r.status === 0) {
      const d = JSON.parse(r.stdout) as { results: { series: { reliable: boolean }[] } };
      expect(d.results.series.every((s) => s.reliable === false)).toBe(true);
    } else {
      expect(r.status).toBe(1);
      expect(r.stdout).toBe('');
      expect(r.stderr).toMatch(/sojourn: error: .+/);
    }
    const i = json<{ frames: number }>('inspect two frames');
    expect(i.results.frames).toBe(2);
  });
});
