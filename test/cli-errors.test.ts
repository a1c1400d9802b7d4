/**
 * The command-line tool as a child process (`node dist/src/cli.js ...`): bad input exits 1 with
 * file:line on stderr and nothing on stdout; usage errors exit 2; outputs are refused when they
 * are inputs, never left half-written, and input files are never modified.
 *
 * Exit statuses: 0 success, 1 bad input / no defensible result, 2 usage (sojourn's contract,
 * DEVELOPERS.md; 2 for command-line misuse is common practice, no source). File contents are
 * compared by SHA-256 (FIPS 180-4, node:crypto).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, readFileSync, symlinkSync, linkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { Random } from '../src/random.js';
import { ensureBuilt, runCli, runCliBatch, scratch, sha256File, startCli, type CliResult } from './helpers/cli.js';

const tmp = scratch('cli');
beforeAll(() => ensureBuilt(), 240_000);
afterAll(() => tmp.cleanup());

/** XYZ text: frames of `atoms` atoms on a line (x = 1.5·i + 0.01·frame), a 20 Å cell. */
function xyz(frames: number, atoms = 2, cell = true): string {
  let s = '';
  for (let f = 0; f < frames; f++) {
    s += `${atoms}\n${cell ? 'Lattice="20 0 0 0 20 0 0 0 20" Properties=species:S:1:pos:R:3 ' : ''}Time=${(f * 0.5).toFixed(1)}\n`;
    for (let i = 0; i < atoms; i++) s += `${i % 2 ? 'Cl' : 'Na'} ${(1.5 * i + 0.01 * f).toFixed(3)} 1.000 2.000\n`;
  }
  return s;
}

/** wwPDB v3.3 ATOM record (columns 1–80). */
function atom(serial: number, name: string, x: string, y: string, z: string, el: string): string {
  return `ATOM  ${String(serial).padStart(5)} ${name.padEnd(4)} WAT A${String(serial).padStart(4)}    ${x.padStart(8)}${y.padStart(8)}${z.padStart(8)}  1.00  0.00          ${el.padStart(2)}  `;
}

/** Hashes of files before a run; `same()` says whether they are unchanged. */
function hashes(files: string[]) {
  const before = files.map(sha256File);
  return { same: () => files.map(sha256File).every((h, i) => h === before[i]) };
}

/** Check the common promises of a failing run: status, nothing on stdout, no internal error. */
function expectFailure(r: CliResult, args: string[], status: 1 | 2): void {
  expect(r.status, `status for ${args.join(' ')}; stderr: ${r.stderr}`).toBe(status);
  expect(r.stdout, `stdout for ${args.join(' ')}`).toBe('');
  expect(r.stderr).not.toMatch(/internal error/);
}

/** Run in a child process and check a failing run; the inputs must be unchanged. */
function runFailing(args: string[], inputs: string[], status: 1 | 2): CliResult {
  const h = hashes(inputs.filter((f) => existsSync(f)));
  const r = runCli(args, { cwd: tmp.dir });
  expectFailure(r, args, status);
  expect(h.same(), 'input files unchanged').toBe(true);
  return r;
}

/**
 * Many failing command lines, run together in one child process (helpers/cli-batch.mjs) in
 * beforeAll; each case's test then checks its own result and that its inputs are unchanged.
 */
function batch(cases: { name: string; args: string[]; inputs: () => string[] }[]) {
  const results = new Map<string, { r: CliResult; same: () => boolean }>();
  beforeAll(() => {
    const prepared = cases.map((c) => ({ c, h: hashes(c.inputs()) }));
    const out = runCliBatch(cases.map((c) => ({ args: c.args, cwd: tmp.dir })));
    prepared.forEach(({ c, h }, i) => results.set(c.name, { r: out[i]!, same: h.same }));
  }, 240_000);
  return (name: string) => {
    const x = results.get(name);
    if (!x) throw new Error(`no batch result for ${name}`);
    expect(x.same(), 'input files unchanged').toBe(true);
    return x.r;
  };
}

const line = (file: string, n: number) => new RegExp(`${file.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}:${n}(:\\d+)?: `);

describe('bad input: exit 1, file:line on stderr, nothing on stdout', () => {
  const cases: { name: string; file: string; content: string | Uint8Array; line: number | null; message: RegExp; args?: string[] }[] = [
    { name: 'XYZ coordinate that is not a number', file: 'num.xyz', content: '2\nc\nNa 0 0 0\nCl 1 x 1\n', line: 4, message: /y coordinate/ },
    { name: 'XYZ NaN coordinate', file: 'nan.xyz', content: '1\nc\nNa nan 0 0\n', line: 3, message: /finite number/ },
    { name: 'XYZ atom count changes between frames', file: 'count.xyz', content: '1\nc\nNa 0 0 0\n2\nc\nNa 0 0 0\nCl 1 1 1\n', line: 4, message: /first frame has 1/ },
    { name: 'XYZ labels change between frames', file: 'label.xyz', content: '1\nc\nNa 0 0 0\n1\nc\nCl 0 0 0\n', line: 6, message: /labelled 'Cl'/ },
    { name: 'XYZ atom count beyond the memory bound', file: 'huge.xyz', content: '2000000000\nc\nNa 0 0 0\n', line: 1, message: /more than this reader accepts/ },
    { name: 'XYZ blank line inside a frame', file: 'blank.xyz', content: '2\nc\nNa 0 0 0\n\nCl 1 1 1\n', line: 4, message: /blank line/ },
    { name: 'extended XYZ degenerate Lattice', file: 'lat.xyz', content: '1\nLattice="10 0 0 20 0 0 0 0 10"\nNa 0 0 0\n', line: 2, message: /degenerate/ },
    { name: 'extended XYZ bad Properties', file: 'props.xyz', content: '1\nProperties=species:S:1:pos:R:2\nNa 0 0\n', line: 2, message: /pos must be pos:R:3/ },
    { name: 'single frame cut short (no complete frame)', file: 'cut.xyz', content: '3\nc\nNa 0 0 0\n', line: 1, message: /no complete frame/ },
    { name: 'non-UTF-8 bytes where a number belongs', file: 'bytes.xyz', content: Buffer.from('1\nc\nNa 0 \xff\xfe 0\n', 'latin1'), line: 3, message: /z coordinate|y coordinate/ },
    {
      name: 'PDB coordinate that is not a number',
      file: 'coord.pdb',
      content: [atom(1, ' O', '1.000', '2.000', '3.000', 'O'), atom(2, ' H1', '1.000', 'abc', '3.000', 'H'), 'END', ''].join('\n'),
      line: 2,
      message: /y coordinate in columns 39-46/,
    },
    {
      name: 'PDB CRYST1 angles that make no cell',
      file: 'cryst.pdb',
      content: ['CRYST1   10.000   10.000   10.000 150.00  30.00  60.00 P 1           1', atom(1, ' O', '1.000', '2.000', '3.000', 'O'), 'END', ''].join('\n'),
      line: 1,
      message: /do not make a cell/,
    },
    {
      name: 'PDB ATOM record cut inside the coordinates',
      file: 'short.pdb',
      content: [atom(1, ' O', '1.000', '2.000', '3.000', 'O'), atom(2, ' H1', '1.000', '2.000', '3.000', 'H').slice(0, 50), 'END', ''].join('\n'),
      line: 2,
      message: /record ends at column 50/,
    },
    {
      name: 'PDB atom count changes between models',
      file: 'models.pdb',
      content: ['MODEL        1', atom(1, ' O', '1.000', '2.000', '3.000', 'O'), 'ENDMDL', 'MODEL        2', atom(1, ' O', '1.000', '2.000', '3.000', 'O'), atom(2, ' H1', '1.000', '2.000', '3.000', 'H'), 'ENDMDL', ''].join('\n'),
      line: 6,
      message: /more atoms than the first frame/,
    },
    { name: 'empty file', file: 'empty.xyz', content: '', line: null, message: /no frame found|empty/ },
    { name: 'gzip stream cut short', file: 'cut.xyz.gz', content: gzipSync(xyz(3)).subarray(0, 40), line: null, message: /gzip stream truncated/ },
    {
      name: 'gzip stream with a corrupted byte',
      file: 'bad.xyz.gz',
      content: (() => {
        const g = Uint8Array.from(gzipSync(xyz(3)));
        g[g.length - 6] ^= 0x5a; // inside the CRC-32 (RFC 1952 §2.3)
        return g;
      })(),
      line: null,
      message: /gzip data corrupted/,
    },
  ];
  const workersText = xyz(12).replace(/Cl 1\.510 1\.000 2\.000/, 'Cl 1.510 1.000 2.0.0');
  const workersBad = workersText.split('\n').findIndex((l) => l.includes('2.0.0')) + 1;
  // The same fault in the last frame: with 2 threads frame 1 is in this thread's share, frame 11
  // in the worker's, so both error paths are exercised.
  const lateText = xyz(12).replace(/Cl 1\.610 1\.000 2\.000/, 'Cl 1.610 1.000 2.0.0');
  const lateBad = lateText.split('\n').findIndex((l) => l.includes('2.0.0')) + 1;
  const tables: { name: string; content: string; line: number | null; message: RegExp }[] = [
    { name: 'table time column that does not increase', content: 'time pxy\n0.0 1.5\n1.0 2.5\n1.0 3.5\n', line: 4, message: /not greater than the previous row's time/ },
    { name: 'table row with a missing column', content: 'time pxy\n0.0 1.5\n1.0\n', line: 3, message: /expected column 2/ },
    { name: 'table value that is not a number', content: 'time,pxy\n0.0,1.5\n1.0,abc\n', line: 3, message: /expected column 2 \('pxy'\)/ },
    { name: 'table with two columns of one name', content: 'time pxy pxy\n0 1 2\n1 2 3\n', line: 1, message: /appears more than once/ },
    { name: 'table with a header and no rows', content: 'time pxy\n', line: null, message: /no data rows/ },
  ];
  const result = batch([
    ...cases.map((c) => ({ name: c.name, args: ['inspect', c.file, '--threads', '1'], inputs: () => [tmp.file(c.file, c.content)] })),
    ...tables.map((t, i) => ({ name: t.name, args: ['converge', `series${i}.tsv`], inputs: () => [tmp.file(`series${i}.tsv`, t.content)] })),
    { name: 'missing file', args: ['inspect', 'nowhere.xyz'], inputs: () => [] },
    { name: 'folder', args: ['inspect', tmp.dir, '--format', 'xyz'], inputs: () => [] },
    { name: 'workers', args: ['inspect', 'workers.xyz', '--threads', '2'], inputs: () => [tmp.file('workers.xyz', workersText)] },
    { name: 'workers-late', args: ['inspect', 'late.xyz', '--threads', '2'], inputs: () => [tmp.file('late.xyz', lateText)] },
  ]);
  for (const c of cases) {
    it(c.name, () => {
      const r = result(c.name);
      expectFailure(r, [c.file], 1);
      expect(r.stderr).toMatch(c.message);
      if (c.line !== null) expect(r.stderr).toMatch(line(c.file, c.line));
      else expect(r.stderr).toContain(`${c.file}: `);
    });
  }
  tables.forEach((t, i) => {
    it(t.name, () => {
      const r = result(t.name);
      expectFailure(r, [`series${i}.tsv`], 1);
      expect(r.stderr).toMatch(t.message);
      if (t.line !== null) expect(r.stderr).toMatch(line(`series${i}.tsv`, t.line));
      else expect(r.stderr).toContain(`series${i}.tsv: `);
    });
  });

  it('a missing file and a folder are named', () => {
    const a = result('missing file');
    expectFailure(a, ['missing'], 1);
    expect(a.stderr).toMatch(/nowhere\.xyz: no such file/);
    const b = result('folder');
    expectFailure(b, ['folder'], 1);
    expect(b.stderr).toMatch(/is a directory/);
  });

  it('an error deep in a file read by worker threads still names file:line', () => {
    const r = result('workers');
    expectFailure(r, ['workers'], 1);
    expect(r.stderr).toMatch(line('workers.xyz', workersBad));
    expect(lateBad).toBeGreaterThan(11 * 4); // frame 11 (lines 45–48): the worker's share
    const late = result('workers-late');
    expectFailure(late, ['late.xyz'], 1);
    expect(late.stderr).toMatch(line('late.xyz', lateBad));
  });

  it('the process exit status is the one main() returns (separate processes: 0, 1, 2)', () => {
    tmp.file('exit-ok.xyz', xyz(2));
    tmp.file('exit-bad.xyz', '1\nc\nNa 0 0 q\n');
    const ok = runCli(['inspect', 'exit-ok.xyz', '--threads', '1'], { cwd: tmp.dir });
    expect(ok.status).toBe(0);
    expect(ok.stdout).toMatch(/frames\s+2/);
    runFailing(['inspect', 'exit-bad.xyz'], [join(tmp.dir, 'exit-bad.xyz')], 1);
    runFailing(['inspect', 'exit-ok.xyz', '--frame-interval', '0fs'], [join(tmp.dir, 'exit-ok.xyz')], 2);
  });
});

describe('usage errors: exit 2, nothing on stdout', () => {
  const cases: [string, string[], RegExp][] = [
    ['unknown option', ['inspect', 'good.xyz', '--colour'], /unknown option/],
    ['unknown command', ['inspekt', 'good.xyz'], /unknown command/],
    ['missing argument', ['inspect'], /missing required argument/],
    ['unknown unit', ['inspect', 'good.xyz', '--frame-interval', '5parsec'], /unknown unit "parsec"/],
    ['frame interval zero', ['inspect', 'good.xyz', '--frame-interval', '0ps'], /must be positive/],
    ['frame interval negative', ['inspect', 'good.xyz', '--frame-interval', '-2fs'], /must be positive/],
    ['frame interval not finite', ['inspect', 'good.xyz', '--frame-interval', '1e999ps'], /not a finite number/],
    ['bad frame range', ['inspect', 'good.xyz', '--frames', '5:2'], /empty range/],
    ['bad thread count', ['inspect', 'good.xyz', '--threads', '0'], /--threads/],
    ['format not offered', ['inspect', 'good.xyz', '--format', 'binary'], /argument 'binary' is invalid/],
    ['bad selection (empty value)', ['rdf', 'good.xyz', '--pair', 'el=:Cl'], /needs a value/],
    ['bad selection (unknown key)', ['rdf', 'good.xyz', '--pair', 'colour=red:Cl'], /unknown key/],
    ['selection that picks no atoms', ['rdf', 'good.xyz', '--pair', 'Ar:Cl'], /picks no atoms/],
    ['missing required option (rdf --pair)', ['rdf', 'good.xyz'], /needs at least one --pair/],
    ['missing required options (shell)', ['shell', 'good.xyz', '--center', 'Na'], /needs --center, --around and --cutoff/],
    ['unknown unit in a length', ['shell', 'good.xyz', '--center', 'Na', '--around', 'Cl', '--cutoff', '3furlong'], /unknown unit/],
  ];
  const result = batch(cases.map(([name, args]) => ({ name, args, inputs: () => [tmp.file('good.xyz', xyz(3))] })));
  for (const [name, args, msg] of cases) {
    it(name, () => {
      const r = result(name);
      expectFailure(r, args, 2);
      expect(r.stderr).toMatch(msg);
    });
  }
});

describe('outputs and inputs', () => {
  it('--partial-out naming the input (also through a symbolic or hard link) is refused; the input is unchanged', () => {
    const f = tmp.file('input.xyz', xyz(3));
    symlinkSync('input.xyz', join(tmp.dir, 'sym.xyz'));
    linkSync(f, join(tmp.dir, 'hard.xyz'));
    for (const target of ['input.xyz', join(tmp.dir, 'input.xyz'), 'sym.xyz', 'hard.xyz']) {
      const r = runFailing(['inspect', 'input.xyz', '--partial-out', target], [f], 2);
      expect(r.stderr).toMatch(/is also an input; refusing to overwrite it/);
    }
  });

  it('--partial-out into a missing folder or onto a folder is refused before any work', () => {
    tmp.file('in2.xyz', xyz(2));
    expect(runFailing(['inspect', 'in2.xyz', '--partial-out', 'no/such/folder/p.json'], [], 2).stderr).toMatch(/does not exist/);
    expect(runFailing(['inspect', 'in2.xyz', '--partial-out', tmp.dir], [], 2).stderr).toMatch(/is a folder/);
  });

  it('a CSV output into a missing folder is refused before the input is read', () => {
    // The input is broken too: a check made before reading reports the folder (exit 2); one made
    // after reading would report the input instead (exit 1). Exit statuses are sojourn's contract.
    const bad = tmp.file('broken-csv.xyz', '2\nc\nNa 0 0 0\nCl 1 1 x\n');
    const cases: string[][] = [
      ['rdf', 'broken-csv.xyz', '--pair', 'Na:Cl', '--box', '10,10,10', '--csv', 'no/such/dir/g'],
      ['shell', 'broken-csv.xyz', '--center', 'Na', '--around', 'Cl', '--cutoff', '3A', '--box', '10,10,10', '--csv', 'no/such/dir/s'],
      ['msd', 'broken-csv.xyz', '--csv', 'no/such/dir/m.csv'],
      ['conductivity', 'broken-csv.xyz', '--charges', 'Na=+1,Cl=-1', '--temperature', '300K', '--csv', 'no/such/dir/c.csv'],
    ];
    for (const args of cases) expect(runFailing(args, [bad], 2).stderr).toMatch(/no\/such\/dir.*does not exist|does not exist/);
    const table = tmp.file('p-csv.tsv', 'time pxy\n0 1\n1 2\n');
    expect(runFailing(['viscosity', 'p-csv.tsv', '--volume', '1000A3', '--temperature', '300K', '--csv', 'no/such/dir/v.csv'], [table], 2).stderr).toMatch(/does not exist/);
  });

  it('a failing run leaves an existing --partial-out file byte-identical, creates none, and leaves no temporary files', () => {
    const bad = tmp.file('broken.xyz', '2\nc\nNa 0 0 0\nCl 1 1 x\n');
    const old = tmp.file('old-partial.json', '{"left":"alone"}\n');
    const before = tmp.list();
    const h = hashes([old, bad]);
    runFailing(['inspect', 'broken.xyz', '--partial-out', 'old-partial.json'], [bad], 1);
    runFailing(['inspect', 'broken.xyz', '--partial-out', 'new-partial.json'], [bad], 1);
    expect(h.same()).toBe(true);
    expect(tmp.list()).toEqual(before);
  });

  it('a run that reads well but cannot give its own result writes no --partial-out and no temporary file', () => {
    // 3 frames: msd refuses (it needs at least 16 frames) after the partial results exist; the
    // partial file is staged and must not appear, as with any failing run (sojourn's contract).
    const f = tmp.file('three.xyz', xyz(3));
    const before = tmp.list();
    const r = runFailing(['msd', 'three.xyz', '--threads', '1', '--partial-out', 'three-part.json'], [f], 1);
    expect(r.stderr).toMatch(/needs at least/);
    expect(tmp.list()).toEqual(before);
  });

  it('a successful run replaces --partial-out whole and leaves no temporary files', () => {
    const f = tmp.file('ok.xyz', xyz(3));
    tmp.file('part.json', 'old content');
    const before = tmp.list();
    const h = hashes([f]);
    const r = runCli(['inspect', 'ok.xyz', '--partial-out', 'part.json', '--threads', '1'], { cwd: tmp.dir });
    expect(r.status).toBe(0);
    const doc = JSON.parse(readFileSync(join(tmp.dir, 'part.json'), 'utf8'));
    expect(doc.kind).toBe('partial');
    expect(doc.input.sha256).toBe(sha256File(f));
    expect(h.same()).toBe(true);
    expect(tmp.list()).toEqual(before);
  });

  it('killing a run at any moment leaves --partial-out either as it was or complete, never part-written', async () => {
    // Large enough that the run takes a noticeable time; kills are spread over its duration.
    const big = tmp.file('big.xyz', xyz(3000, 16));
    const target = join(tmp.dir, 'kill-partial.json');
    const args = ['inspect', 'big.xyz', '--partial-out', 'kill-partial.json', '--threads', '1', '--quiet'];
    const t0 = Date.now();
    expect(runCli(args, { cwd: tmp.dir }).status).toBe(0);
    const full = Date.now() - t0;
    const complete = readFileSync(target, 'utf8');
    const h = hashes([big]);
    for (const frac of [0.3, 0.7, 0.9, 0.97, 1.03]) {
      writeFileSync(target, 'previous content');
      const child = startCli(args, tmp.dir);
      const closed = new Promise((res) => child.once('close', res));
      await new Promise((res) => setTimeout(res, frac * full));
      child.kill('SIGKILL'); // no effect when it has already finished
      await closed;
      const now = readFileSync(target, 'utf8');
      expect(now === 'previous content' || now === complete, `after a kill at ${Math.round(frac * 100)}% the file holds ${now.length} bytes`).toBe(true);
    }
    expect(h.same()).toBe(true);
  });

  it('inspect on a file whose last frame is cut short warns and exits 0; --strict exits 1', () => {
    const text = xyz(3) + '2\nLattice="20 0 0 0 20 0 0 0 20" Properties=species:S:1:pos:R:3 Time=1.5\nNa 0.030 1.000 2.000\nCl 1.5';
    const f = tmp.file('short-last.xyz', text);
    const h = hashes([f]);
    const ok = runCli(['inspect', 'short-last.xyz', '--threads', '1'], { cwd: tmp.dir });
    expect(ok.status).toBe(0);
    expect(ok.stderr).toMatch(/warning: short-last\.xyz: frame 4 is truncated/);
    expect(ok.stdout).toMatch(/frames\s+3/);
    const strict = runFailing(['inspect', 'short-last.xyz', '--strict', '--threads', '1'], [f], 1);
    expect(strict.stderr).toMatch(/short-last\.xyz:13: frame 4 is truncated/);
    expect(h.same()).toBe(true);
  });

  it('the same through worker threads (the default with 2 or more cores): the cut last frame is still reported', () => {
    const many = tmp.file('short-many.xyz', xyz(10) + '2\nLattice="20 0 0 0 20 0 0 0 20" Properties=species:S:1:pos:R:3 Time=9\nNa 0');
    const ok = runCli(['inspect', 'short-many.xyz', '--threads', '2'], { cwd: tmp.dir });
    expect(ok.status).toBe(0);
    expect(ok.stderr).toMatch(/warning: short-many\.xyz: frame 11 is truncated/);
    const strict = runFailing(['inspect', 'short-many.xyz', '--strict', '--threads', '2'], [many], 1);
    expect(strict.stderr).toMatch(/short-many\.xyz:\d+: frame 11 is truncated/);
  });

  it('a file without a final newline whose last row may be cut is read with a warning; --strict refuses it', () => {
    const f = tmp.file('no-newline.xyz', xyz(2).replace(/\n$/, ''));
    const ok = runCli(['inspect', 'no-newline.xyz', '--threads', '1'], { cwd: tmp.dir });
    expect(ok.status).toBe(0);
    expect(ok.stderr).toMatch(/no-newline\.xyz:8: frame 2 may be truncated/);
    runFailing(['inspect', 'no-newline.xyz', '--strict', '--threads', '1'], [f], 1);
  });

  it('standard input: a cut gzip stream is named as such', () => {
    const r = runCli(['inspect', '-', '--format', 'xyz'], { cwd: tmp.dir, input: gzipSync(xyz(4)).subarray(0, 50) });
    expect(r.status).toBe(1);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(/<stdin>: gzip stream truncated/);
  });
});

describe('bad input met by a worker while this thread is still reading', () => {
  it('is reported like a one-thread read: the earliest bad frame, file:line, exit 1', () => {
    // 128 frames of 4000 atoms → 8 chunks of 16 frames (src/commands/parallel.ts). Faults in frame
    // 17 (second chunk: a worker's, taken while this thread reads the first) and frame 100: the
    // report must be the one-thread report of the earliest fault (sojourn's contract), whichever
    // thread meets its fault first, and never an unhandled rejection.
    const rnd = new Random(3);
    const lines: string[] = [];
    const faults = new Map<number, number>();
    for (let f = 0; f < 128; f++) {
      lines.push('4000', `Lattice="40 0 0 0 40 0 0 0 40" Properties=species:S:1:pos:R:3 Time=${(0.5 * f).toFixed(1)}`);
      for (let i = 0; i < 4000; i++) {
        const bad = (f === 17 || f === 100) && i === 7;
        if (bad) faults.set(f, lines.length + 1);
        lines.push(`${i % 2 ? 'Cl' : 'Na'} ${(40 * rnd.uniform()).toFixed(3)} ${(40 * rnd.uniform()).toFixed(3)} ${bad ? '2.0.0' : (40 * rnd.uniform()).toFixed(3)}`);
      }
    }
    const f = tmp.file('late-fault.xyz', lines.join('\n') + '\n');
    const one = runFailing(['rdf', 'late-fault.xyz', '--pair', 'Na:Cl', '--r-max', '10A', '--threads', '1'], [f], 1);
    const two = runFailing(['rdf', 'late-fault.xyz', '--pair', 'Na:Cl', '--r-max', '10A', '--threads', '2'], [f], 1);
    expect(one.stderr).toMatch(line('late-fault.xyz', faults.get(17)!));
    expect(two.stderr).toMatch(line('late-fault.xyz', faults.get(17)!));
    expect(two.stderr).not.toMatch(/Node\.js v|at .*parallel/);
  });
});

describe('degenerate but valid input', () => {
  it('msd of atoms that never move: D = 0 exactly, flagged not converged, α2 reported as undefined', () => {
    // Closed form: no displacement gives MSD(t) = 0 at every lag, so D = 0; α2 = 3⟨Δr⁴⟩/(5⟨Δr²⟩²) − 1
    // (Rahman 1964) is 0/0 and must be named undefined rather than printed as NaN.
    let s = '';
    for (let f = 0; f < 60; f++) {
      s += `3\nLattice="20 0 0 0 20 0 0 0 20" Properties=species:S:1:pos:R:3 Time=${(f * 0.1).toFixed(1)}\n`;
      for (let i = 0; i < 3; i++) s += `Ar ${3 * i + 1} 2 3\n`;
    }
    tmp.file('frozen.xyz', s);
    const text = runCli(['msd', 'frozen.xyz', '--threads', '1'], { cwd: tmp.dir });
    expect(text.status).toBe(0);
    expect(text.stdout).toMatch(/α2 undefined: the atoms did not move/);
    expect(text.stdout).not.toMatch(/NaN/);
    const json = runCli(['msd', 'frozen.xyz', '--threads', '1', '--json'], { cwd: tmp.dir });
    const g = JSON.parse(json.stdout).results.groups[0];
    expect(g.diffusion.value).toBe(0);
    expect(g.converged).toBe(false);
  });
});
