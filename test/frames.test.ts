/**
 * What sojourn checks about the frames of a trajectory (src/sequence.ts), on one thread and on
 * several (src/engine/threads.ts), and in merged partial files: uneven times, restart overlaps,
 * repeated frames, a cell or velocities that vanish, PDB alternate locations, frozen atoms and
 * a cell that varies (g(r) r-max).
 *
 * Truth: a Brownian walk with steps of variance σ² per coordinate every Δt has
 * MSD(t) = 6Dt with D = σ²/(2Δt) exactly (Einstein 1905), so D from a file is checked against
 * σ²/(2Δt) within 4 of its own standard errors (a seeded walk: the check is deterministic; 4 SE
 * leaves room for the segment estimate of the SE itself, common practice, no source). Where a
 * file is built to equal another one frame for frame (the overlap left out), the two results are
 * compared exactly. Split reads are checked against the one-thread read of the same file: same
 * exit status, same message, same numbers (the rule the engine keeps; common practice, no
 * source). Each case places the change exactly at a chunk boundary: N frames on 2 threads are
 * cut into max(2, min(8, ⌊N/16⌋)) chunks of ⌈N/chunks⌉ frames (src/engine/threads.ts), so 40
 * frames give 2 chunks of 20 and 120 frames 7 chunks of 18.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { ensureBuilt, runCli, runCliBatch, scratch, type CliResult } from './helpers/cli.js';
import { Random } from '../src/random.js';

const tmp = scratch('frames');
beforeAll(() => ensureBuilt());
afterAll(() => tmp.cleanup());

interface WalkFrame {
  time: number;
  pos: Float64Array;
  vel: Float64Array;
}

const ATOMS = 64;
const L = 40;
/** D = σ²/(2Δt) in Å²/ps; 1 Å²/ps = 10⁻⁸ m²/s. */
const D_TRUE = 0.5;

/** A Brownian walk at the given times: each step has variance 2·D·(t_k − t_{k−1}) per coordinate. */
function walk(times: number[], seed = 20261203): WalkFrame[] {
  const rnd = new Random(seed);
  const pos = Float64Array.from({ length: 3 * ATOMS }, () => 5 + rnd.uniform() * (L - 10));
  return times.map((time, k) => {
    if (k > 0) {
      const s = Math.sqrt(2 * D_TRUE * (time - times[k - 1]!));
      for (let i = 0; i < pos.length; i++) pos[i] += s * rnd.normal();
    }
    return { time, pos: pos.slice(), vel: Float64Array.from(pos, () => rnd.normal()) };
  });
}

interface XyzOptions {
  times?: boolean;
  /** Digits of the times (default 4). */
  timeDigits?: number;
  velocities?: boolean;
  /** Frames (0-based, in the written order) from which Lattice= / velocities are missing. */
  noLatticeFrom?: number;
  noVelocitiesFrom?: number;
  /** Cell edge per written frame. */
  edge?: (k: number) => number;
  /** Time written for frame k (default its walk time). */
  timeOf?: (k: number) => number;
  /** Label of atom a (default Cl, Na alternating). */
  label?: (a: number) => string;
}

/** Extended XYZ of the frames; positions printed with 6 decimals (unwrapped). */
function xyz(frames: WalkFrame[], o: XyzOptions = {}): string {
  const out: string[] = [];
  frames.forEach((f, k) => {
    const e = o.edge ? o.edge(k) : L;
    const lattice = o.noLatticeFrom !== undefined && k >= o.noLatticeFrom ? '' : `Lattice="${e} 0 0 0 ${e} 0 0 0 ${e}" `;
    const vel = o.velocities && !(o.noVelocitiesFrom !== undefined && k >= o.noVelocitiesFrom);
    const time = o.times === false ? '' : ` Time=${(o.timeOf ? o.timeOf(k) : f.time).toFixed(o.timeDigits ?? 4)}`;
    out.push(String(ATOMS), `${lattice}Properties=species:S:1:pos:R:3${vel ? ':vel:R:3' : ''}${time}`);
    for (let a = 0; a < ATOMS; a++) {
      const p = [0, 1, 2].map((c) => f.pos[3 * a + c]!.toFixed(6));
      const v = vel ? ' ' + [0, 1, 2].map((c) => f.vel[3 * a + c]!.toFixed(5)).join(' ') : '';
      out.push(`${o.label ? o.label(a) : a % 2 ? 'Na' : 'Cl'} ${p.join(' ')}${v}`);
    }
  });
  return out.join('\n') + '\n';
}

const even = (n: number, dt = 0.1) => Array.from({ length: n }, (_, k) => k * dt);

/** Run command lines in one process (cwd: the scratch folder). */
function run(...lines: string[][]): CliResult[] {
  return runCliBatch(lines.map((args) => ({ args, cwd: tmp.dir })));
}

/** The same command on 1 thread, 2 threads (the change at a chunk boundary) must agree exactly. */
function oneAndTwo(args: string[]): [CliResult, CliResult] {
  const [a, b] = run([...args, '--threads', '1'], [...args, '--threads', '2']);
  expect(b!.status, `${args.join(' ')}: ${b!.stderr}`).toBe(a!.status);
  expect(b!.stderr).toBe(a!.stderr);
  return [a!, b!];
}

/** D (Å²/ps) and its standard error of every MSD group in a --json result. */
function diffusion(r: CliResult): Array<{ D: number; se: number }> {
  expect(r.status, r.stderr).toBe(0);
  const groups = JSON.parse(r.stdout).results.groups as Array<{ diffusion: { value: number; uncertainty: number } }>;
  return groups.map((g) => ({ D: g.diffusion.value * 1e8, se: g.diffusion.uncertainty * 1e8 }));
}

function expectTrueD(r: CliResult): void {
  for (const g of diffusion(r)) {
    expect(g.se).toBeGreaterThan(0);
    expect(Math.abs(g.D - D_TRUE)).toBeLessThan(4 * g.se);
  }
}

describe('uneven frame times', () => {
  // 100 frames 0.1 ps apart, then 100 frames 0.5 ps apart, with correct times: a pooled MSD on
  // the first interval would give D several times too large.
  const times = [...even(100), ...Array.from({ length: 100 }, (_, k) => 9.9 + 0.5 * (k + 1))];
  let file = '';
  beforeAll(() => {
    file = tmp.file('uneven.xyz', xyz(walk(times)));
  });

  it('msd refuses, naming the frame, the two intervals and an evenly spaced --frames range (which gives D = σ²/(2Δt) within 4 SE); the same on 2 threads', () => {
    const [r] = oneAndTwo(['msd', file, '--json']);
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(/uneven\.xyz:6601: frame 101 comes 0\.5 ps after frame 100, but frames 1–100 are 0\.1 ps apart: the frame times are not evenly spaced; a constant time between frames is needed by msd\. Use --frames .* --frames 0:100/);
    const [ok] = oneAndTwo(['msd', file, '--frames', '0:100', '--json']);
    expectTrueD(ok);
  });

  it('vacf, conductivity, shell residence and the report refuse it too; the report writes nothing', () => {
    const [v, c, s] = run(
      ['vacf', file, '--threads', '1'],
      ['conductivity', file, '--charges', 'Na=+1,Cl=-1', '--temperature', '300K', '--threads', '1'],
      ['shell', file, '--center', 'Na', '--around', 'Cl', '--cutoff', '3A', '--threads', '1'],
    );
    for (const [r, name] of [[v!, 'vacf'], [c!, 'conductivity'], [s!, 'shell']] as const) {
      expect(r.status, name).toBe(1);
      expect(r.stderr).toMatch(new RegExp(`frame 101 comes 0\\.5 ps after frame 100.*a constant time between frames is needed by ${name}`));
    }
    const out = join(tmp.dir, 'uneven-report');
    const [rep] = run(['report', file, '--temperature', '300K', '--out', out, '--threads', '1']);
    expect(rep!.status).toBe(1);
    expect(rep!.stderr).toMatch(/frame 101 comes 0\.5 ps after frame 100.*needed by the transport analyses \(MSD, VACF, conductivity\)/);
    expect(existsSync(out)).toBe(false);
  });

  it('g(r) proceeds and says so in a warning, the same on 2 threads', () => {
    const [r] = oneAndTwo(['rdf', file, '--pair', 'Na:Cl']);
    expect(r.status).toBe(0);
    expect(r.stderr).toMatch(/warning: .*uneven\.xyz: frame 101 comes 0\.5 ps after frame 100, but frames 1–100 are 0\.1 ps apart: the frame times are not evenly spaced; the results here do not depend on the time between frames/);
  });

  it('times written with 3 decimals (an interval of 1/3 ps) are not uneven, and the interval is the mean, within 10⁻⁵ ps of 1/3', () => {
    // Rounded to 0.001 ps, the intervals read 0.333 or 0.334: the spread is the rounding. The
    // mean over 159 intervals carries the rounding of two times only: |error| ≤ 0.001/159.
    const f = tmp.file('thirds.xyz', xyz(walk(even(160, 1 / 3)), { timeDigits: 3 }));
    const [r] = oneAndTwo(['msd', f, '--json']);
    expect(r.status, r.stderr).toBe(0);
    const res = JSON.parse(r.stdout);
    expect(res.warnings.join(' ')).not.toMatch(/evenly spaced/);
    expect(Math.abs(res.results.frameInterval - 1 / 3)).toBeLessThan(1e-5);
    expectTrueD(r);
  });

  it('with coarser writing (0.1 ps, 1 decimal) a doubled interval is not taken for rounding', () => {
    // A frame missing from a 0.1 ps series: the interval 0.2 differs by a whole written unit,
    // which rounding cannot explain when the unit is not small beside the interval.
    const t = even(60).filter((_, k) => k !== 30);
    const f = tmp.file('missing.xyz', xyz(walk(t), { timeDigits: 1 }));
    const [r] = run(['msd', f, '--threads', '1']);
    expect(r!.status).toBe(1);
    expect(r!.stderr).toMatch(/frame 31 comes 0\.2 ps after frame 30, but frames 1–30 are 0\.1 ps apart/);
  });
});

describe('restart overlaps and repeated frames', () => {
  // 150 frames, then a run continued from frame 120 that writes frames 120… again: frames
  // 121–150 appear twice. Keeping the later copy must give the 200-frame run itself.
  const base = walk(even(200));
  const overlap = [...base.slice(0, 150), ...base.slice(120)];
  const files: Record<string, string> = {};
  beforeAll(() => {
    files.base = tmp.file('base.xyz', xyz(base));
    files.restart = tmp.file('restart.xyz', xyz(overlap));
    files.baseUntimed = tmp.file('base-untimed.xyz', xyz(base, { times: false }));
    files.restartUntimed = tmp.file('restart-untimed.xyz', xyz(overlap, { times: false }));
    files.twice = tmp.file('twice-untimed.xyz', xyz([...base.slice(0, 100), base[99]!, ...base.slice(100)], { times: false }));
  });

  it('with times: refused as a restart overlap, naming the frames and --keep-later-copy; the same on 2 threads', () => {
    const [r] = oneAndTwo(['msd', files.restart!]);
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(
      /restart\.xyz:9901: frame 151 has time 12 ps, not after the previous frame's 14\.9 ps: the time goes back to that of frame 121, as where a run continued from a restart is appended to output it overlaps \(30 earlier frames, 12 ps to 14\.9 ps, are covered again\); --keep-later-copy keeps the later copy/,
    );
  });

  it('--keep-later-copy gives exactly the run without the overlap, and D = σ²/(2Δt) within 4 SE, on 1 and 2 threads', () => {
    const [single, kept1, kept2] = run(
      ['msd', files.base!, '--json', '--threads', '1'],
      ['msd', files.restart!, '--keep-later-copy', '--json', '--threads', '1'],
      ['msd', files.restart!, '--keep-later-copy', '--json', '--threads', '2'],
    );
    expectTrueD(single!);
    const want = JSON.parse(single!.stdout).results.groups;
    for (const k of [kept1!, kept2!]) {
      expect(k.status, k.stderr).toBe(0);
      const j = JSON.parse(k.stdout);
      expect(j.warnings.join(' ')).toMatch(/--keep-later-copy: left out the earlier copy of repeated frames: 30 frames from 12 ps on, before frame 151/);
      // The kept frames are the base run's, in order: the same curves; summed in another
      // association order on 2 threads, so equal to 1e-12 relative (round-off).
      const got = j.results.groups;
      got.forEach((g: { msd: number[]; diffusion: { value: number } }, i: number) => {
        g.msd.forEach((v, m) => expect(Math.abs(v - want[i].msd[m])).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(v))));
        expect(Math.abs(g.diffusion.value / want[i].diffusion.value - 1)).toBeLessThan(1e-12);
      });
    }
  });

  it('--keep-later-copy on standard input is a usage error (the input would have to be read twice)', () => {
    // A short input: the command stops before reading it.
    const r = runCli(['msd', '-', '--format', 'xyz', '--keep-later-copy'], { input: xyz(base.slice(0, 2)) });
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--keep-later-copy reads the input twice/);
  });

  it('without times: a repeated block and a frame written twice are named (not passed silently); the same on 2 threads', () => {
    const [r] = oneAndTwo(['msd', files.restartUntimed!, '--frame-interval', '0.1ps']);
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(/restart-untimed\.xyz:9901: frame 151 repeats frame 121 exactly .*frames 121–150 appear again/);
    const [t] = oneAndTwo(['msd', files.twice!, '--frame-interval', '0.1ps']);
    expect(t.status).toBe(1);
    expect(t.stderr).toMatch(/twice-untimed\.xyz:6601: frame 101 repeats frame 100 exactly .*a frame written twice/);
  });

  it('without times, --keep-later-copy gives exactly the run without the repeats, D within 4 SE', () => {
    const [single, a, b] = run(
      ['msd', files.baseUntimed!, '--frame-interval', '0.1ps', '--json', '--threads', '1'],
      ['msd', files.restartUntimed!, '--frame-interval', '0.1ps', '--keep-later-copy', '--json', '--threads', '1'],
      ['msd', files.twice!, '--frame-interval', '0.1ps', '--keep-later-copy', '--json', '--threads', '1'],
    );
    expectTrueD(single!);
    const want = JSON.parse(single!.stdout).results.groups.map((g: { diffusion: { value: number } }) => g.diffusion.value);
    for (const r of [a!, b!]) {
      expect(r.status, r.stderr).toBe(0);
      expect(JSON.parse(r.stdout).results.groups.map((g: { diffusion: { value: number } }) => g.diffusion.value)).toEqual(want);
    }
  });
});

describe('a change at a chunk boundary is found as on one thread', () => {
  // 40 frames on 2 threads: 2 chunks of 20 (the change at frame 21); 120 frames: 7 chunks of 18
  // (the change at frame 55, the start of the fourth chunk).
  const cases = [
    { frames: 40, at: 20 },
    { frames: 120, at: 54 },
  ];

  it('a Lattice= that disappears: refused at the frame, also by inspect', () => {
    for (const c of cases) {
      const f = tmp.file(`nolattice-${c.frames}.xyz`, xyz(walk(even(c.frames)), { noLatticeFrom: c.at }));
      const line = c.at * (ATOMS + 2) + 2;
      for (const cmd of [['msd', f], ['inspect', f]]) {
        const [r] = oneAndTwo(cmd);
        expect(r.status).toBe(1);
        expect(r.stderr).toContain(`nolattice-${c.frames}.xyz:${line}: frame ${c.at + 1} has no Lattice= but the first frame has one`);
      }
    }
  });

  it('a time that jumps back: refused at the frame', () => {
    for (const c of cases) {
      // From the boundary on, every time is 1.05 ps earlier (a restart from between two frames).
      const f = tmp.file(`back-${c.frames}.xyz`, xyz(walk(even(c.frames)), { timeOf: (k) => 0.1 * k - (k >= c.at ? 1.05 : 0) }));
      const [r] = oneAndTwo(['msd', f]);
      expect(r.status).toBe(1);
      expect(r.stderr).toMatch(new RegExp(`back-${c.frames}\\.xyz:${c.at * (ATOMS + 2) + 1}: frame ${c.at + 1} has time [0-9.]+ ps, not after the previous frame's`));
    }
  });

  it('a repeated frame without times: refused at the frame', () => {
    for (const c of cases) {
      const w = walk(even(c.frames - 1));
      const f = tmp.file(`repeat-${c.frames}.xyz`, xyz([...w.slice(0, c.at), w[c.at - 1]!, ...w.slice(c.at)], { times: false }));
      const [r] = oneAndTwo(['msd', f, '--frame-interval', '0.1ps']);
      expect(r.status).toBe(1);
      expect(r.stderr).toContain(`frame ${c.at + 1} repeats frame ${c.at} exactly`);
    }
  });

  it('velocities that vanish: refused at the frame (not a silent fall-back to finite differences)', () => {
    for (const c of cases) {
      const f = tmp.file(`novel-${c.frames}.xyz`, xyz(walk(even(c.frames)), { velocities: true, noVelocitiesFrom: c.at }));
      const [r] = oneAndTwo(['vacf', f]);
      expect(r.status).toBe(1);
      expect(r.stderr).toContain(`novel-${c.frames}.xyz:${c.at * (ATOMS + 2) + 2}: frame ${c.at + 1} has no velocities but the first frame has them`);
    }
  });

  it('an interval change: the error (msd) and the warning (rdf) as on one thread', () => {
    for (const c of cases) {
      const t = even(c.frames).map((x, k) => (k >= c.at ? (c.at - 1) * 0.1 + 0.2 * (k - c.at + 1) : x));
      const f = tmp.file(`interval-${c.frames}.xyz`, xyz(walk(t)));
      const [m] = oneAndTwo(['msd', f]);
      expect(m.status).toBe(1);
      expect(m.stderr).toContain(`frame ${c.at + 1} comes 0.2 ps after frame ${c.at}, but frames 1–${c.at} are 0.1 ps apart`);
      const [g] = oneAndTwo(['rdf', f, '--pair', 'Na:Cl']);
      expect(g.status).toBe(0);
      expect(g.stderr).toContain(`frame ${c.at + 1} comes 0.2 ps after frame ${c.at}, but frames 1–${c.at} are 0.1 ps apart`);
    }
  });

  it('an atom count, a label or a Properties= key that changes: the message, line and column of the reader', () => {
    const w = walk(even(40));
    const text = xyz(w);
    const frame = 66; // lines per frame
    const lines = text.split('\n');
    const variants: Array<[string, (l: string[]) => void, string]> = [
      ['count', (l) => { l[20 * frame] = String(ATOMS + 1); l.splice(20 * frame + 2, 0, 'Na 1 1 1'); }, `count.xyz:${20 * frame + 1}:1: frame 21 has ${ATOMS + 1} atoms, but the first frame has ${ATOMS}`],
      ['label', (l) => { l[20 * frame + 2 + 3] = l[20 * frame + 2 + 3]!.replace(/^Na/, 'K'); }, `label.xyz:${20 * frame + 6}:1: atom 4 of frame 21 is labelled 'K', but 'Na' in the first frame`],
      ['props', (l) => { l[20 * frame + 1] = l[20 * frame + 1]!.replace('Properties=species:S:1:pos:R:3', ''); }, `props.xyz:${20 * frame + 2}: frame 21 has no Properties= but the first frame has one`],
    ];
    for (const [name, change, want] of variants) {
      const l = [...lines];
      change(l);
      const f = tmp.file(`${name}.xyz`, l.join('\n'));
      const [r] = oneAndTwo(['msd', f]);
      expect(r.status).toBe(1);
      expect(r.stderr).toContain(want);
    }
  });

  it('partial files of jobs that meet at the change: merge finds it as one read does', () => {
    const w = walk(even(40));
    const cases2: Array<[string, string, RegExp]> = [
      ['merge-nolattice.xyz', xyz(w, { noLatticeFrom: 20 }), /merge-nolattice\.xyz:1322: frame 21 has no Lattice= but the first frame has one/],
      ['merge-uneven.xyz', xyz(walk([...even(20), ...Array.from({ length: 20 }, (_, k) => 1.9 + 0.5 * (k + 1))])), /merge-uneven\.xyz:1321: frame 21 comes 0\.5 ps after frame 20, but frames 1–20 are 0\.1 ps apart/],
    ];
    for (const [name, text, want] of cases2) {
      const f = tmp.file(name, text);
      const p1 = join(tmp.dir, `${name}-1.json`);
      const p2 = join(tmp.dir, `${name}-2.json`);
      const [a, b, m, one] = run(
        ['msd', f, '--frames', '0:20', '--partial-out', p1, '--threads', '1', '--quiet'],
        ['msd', f, '--frames', '20:', '--partial-out', p2, '--threads', '1', '--quiet'],
        ['merge', p1, p2],
        ['msd', f, '--threads', '1'],
      );
      expect(a!.status, a!.stderr).toBe(0);
      expect(b!.status, b!.stderr).toBe(0);
      expect(m!.status).toBe(1);
      expect(m!.stderr).toMatch(want);
      expect(one!.stderr).toMatch(want);
    }
  });
});

describe('PDB alternate locations', () => {
  it('atoms given at two locations (altLoc A/B, column 17) are read once, at the first, with a warning', () => {
    // 60 water oxygens, 10 of them written twice (A at the lattice site, B 0.5 Å away): 60 atoms,
    // and the kept positions are the A ones (the lattice, so the nearest-neighbour distance of
    // the 4 Å simple cubic lattice, 4 Å, is the first g(r) peak; B copies would add 0.5 Å pairs).
    const atom = (serial: number, alt: string, x: number, y: number, z: number) =>
      `ATOM  ${String(serial).padStart(5)}  O  ${alt}WAT A${String(serial).padStart(4)}    ${x.toFixed(3).padStart(8)}${y.toFixed(3).padStart(8)}${z.toFixed(3).padStart(8)}  ${alt === ' ' ? '1.00' : '0.50'}  0.00           O  `;
    const lines = ['CRYST1   16.000   16.000   20.000  90.00  90.00  90.00 P 1           1'];
    for (let f = 0; f < 3; f++) {
      lines.push(`MODEL     ${f + 1}`);
      let n = 0;
      for (let i = 0; i < 4; i++) for (let j = 0; j < 3; j++) for (let k = 0; k < 5; k++) {
        n++;
        const [x, y, z] = [4 * i + 0.1 * f, 4 * j, 4 * k];
        if (n % 6 === 0) {
          lines.push(atom(n, 'A', x, y, z), atom(n, 'B', x + 0.5, y, z));
        } else lines.push(atom(n, ' ', x, y, z));
      }
      lines.push('ENDMDL');
    }
    const f = tmp.file('alt.pdb', lines.join('\n') + '\n');
    const [ins] = oneAndTwo(['inspect', f, '--json']);
    expect(ins.status, ins.stderr).toBe(0);
    const j = JSON.parse(ins.stdout);
    expect(j.results.atoms).toBe(60);
    expect(j.results.frames).toBe(3);
    expect(j.warnings.join(' ')).toMatch(/alternate locations \(altLoc, column 17\): the first location of each atom is used/);
    const [rdf] = run(['rdf', f, '--pair', 'O:O', '--r-max', '6A', '--bin-width', '0.1A', '--json', '--threads', '1']);
    expect(rdf!.status, rdf!.stderr).toBe(0);
    const g = JSON.parse(rdf!.stdout).results.pairs[0];
    // No pair closer than the lattice spacing: bins below 3.9 Å hold nothing.
    const r = g.r as number[];
    (g.g as number[]).forEach((v, k) => {
      if (r[k]! < 3.9) expect(v).toBe(0);
    });
  });
});

describe('atoms that do not move', () => {
  // Half the atoms (Cl, even indices) never move; Na walk. With the drift kept, the Cl MSD is
  // exactly 0 and its fitted slope round-off; with it removed, the Cl seem to move with the
  // others' centre of mass. In the second file the ions (Na and Cl, 16 each) are still and a
  // neutral solvent (O, 32) walks.
  let file = '';
  let withVelocities = '';
  let allFrozen = '';
  beforeAll(() => {
    const w = walk(even(120));
    const first = w[0]!.pos;
    const still = (keep: (a: number) => boolean) => w.map((f) => ({ ...f, pos: Float64Array.from(f.pos, (v, i) => (keep(Math.floor(i / 3)) ? first[i]! : v)) }));
    file = tmp.file('frozen.xyz', xyz(still((a) => a % 2 === 0)));
    withVelocities = tmp.file('frozen-v.xyz', xyz(still((a) => a % 2 === 0), { velocities: true }));
    const label = (a: number) => (a % 4 === 0 ? 'Na' : a % 4 === 2 ? 'Cl' : 'O');
    allFrozen = tmp.file('frozen-ions.xyz', xyz(still((a) => a % 2 === 0), { label }));
  });

  it('msd: the still selection does not move, D = 0 exactly with its coded reason, with or without the drift', () => {
    for (const extra of [[], ['--keep-drift']]) {
      const [r] = oneAndTwo(['msd', file, '--json', ...extra]);
      expect(r.status, r.stderr).toBe(0);
      const groups = JSON.parse(r.stdout).results.groups as Array<{ label: string; diffusion: { value: number; uncertainty: number; verdict: string; reasons: { code: string }[] } }>;
      const cl = groups.find((g) => g.label === 'Cl')!;
      expect(cl.diffusion.value).toBe(0);
      expect(cl.diffusion.reasons.map((x) => x.code)).toContain('msd.does-not-move');
      expect(cl.diffusion.verdict).toBe('not-determined');
      const na = groups.find((g) => g.label === 'Na')!;
      expect(na.diffusion.reasons.map((x) => x.code)).not.toContain('msd.does-not-move');
    }
    const [text] = run(['msd', file, '--threads', '1']);
    expect(text!.stdout).toMatch(/Cl .* does not move/);
    // The VACF of the same sites (velocities as written, positions still): D = 0 too.
    const [v] = oneAndTwo(['vacf', withVelocities, '--json']);
    expect(v.status, v.stderr).toBe(0);
    const vcl = (JSON.parse(v.stdout).results.groups as Array<{ label: string; diffusion: { value: number; reasons: { code: string }[] } }>).find((g) => g.label === 'Cl')!;
    expect(vcl.diffusion.value).toBe(0);
    expect(vcl.diffusion.reasons.map((x) => x.code)).toContain('vacf.does-not-move');
  });

  it('conductivity with every charged site still: σ = 0, no ionicity, Haven ratio or molar conductivity', () => {
    const [r] = oneAndTwo(['conductivity', allFrozen, '--charges', 'Na=+1,Cl=-1', '--temperature', '300K', '--json']);
    expect(r.status, r.stderr).toBe(0);
    const k = JSON.parse(r.stdout).results;
    expect(k.einsteinHelfand.value).toBe(0);
    expect(k.einsteinHelfand.reasons.map((x: { code: string }) => x.code)).toContain('conductivity.does-not-move');
    expect(k.havenRatio).toBeNull();
    expect(k.molarConductivity).toBeNull();
    expect(Number.isFinite(k.ionicity.value)).toBe(false);
  });
});

describe('a cell that varies (NPT)', () => {
  // A cubic cell whose edge follows 15 Å × (1 + 0.03 sin(k/5)), and one frame (57) 2 % smaller:
  // half the smallest width over the run is that frame's edge/2.
  const edge = (k: number) => Number((15 * (1 + 0.03 * Math.sin(k / 5) - (k === 57 ? 0.02 : 0))).toFixed(5));
  let file = '';
  let smallest = Infinity;
  beforeAll(() => {
    const w = walk(even(80)).map((f, k) => ({ ...f, pos: Float64Array.from(f.pos, (v) => ((v % edge(k)) + edge(k)) % edge(k)) }));
    file = tmp.file('npt.xyz', xyz(w, { edge }));
    for (let k = 0; k < 80; k++) smallest = Math.min(smallest, edge(k) / 2);
  });

  it('rdf and report run with the default r-max: the smallest half-width over the run in whole bins, equal to that r-max given, on 1 and 2 threads', () => {
    const want = Math.floor(smallest / 0.05 + 1e-9) * 0.05;
    const [one, two] = oneAndTwo(['rdf', file, '--pair', 'Na:Cl', '--json']);
    expect(one.status, one.stderr).toBe(0);
    const a = JSON.parse(one.stdout).results;
    expect(Math.abs(a.rMax.value - want)).toBeLessThan(1e-9);
    expect(JSON.parse(two.stdout).results.pairs[0].g).toEqual(a.pairs[0].g);
    const [given] = run(['rdf', file, '--pair', 'Na:Cl', '--json', '--threads', '1', '--r-max', `${want}A`]);
    expect(JSON.parse(given!.stdout).results.pairs[0].g).toEqual(a.pairs[0].g);
    const out = join(tmp.dir, 'npt-report');
    const [rep] = run(['report', file, '--temperature', '300K', '--out', out, '--quiet', '--threads', '1']);
    expect(rep!.status, rep!.stderr).toBe(0);
  });

  it('a user r-max that frame 58 does not allow is refused before the read, naming it; no output appears', () => {
    const csv = join(tmp.dir, 'npt-gr.csv');
    const [r] = oneAndTwo(['rdf', file, '--pair', 'Na:Cl', '--r-max', '7.2A', '--csv', csv]);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/--r-max 7\.2 A exceeds half the smallest perpendicular width of the cell of frame 58 \(.*npt\.xyz:3763: 7\.1\d* A\)/);
    expect(existsSync(csv)).toBe(false);
    const out = join(tmp.dir, 'npt-report-2');
    const [rep] = run(['report', file, '--temperature', '300K', '--out', out, '--rdf-r-max', '7.2A', '--threads', '1']);
    expect(rep!.status).toBe(2);
    expect(rep!.stderr).toMatch(/--rdf-r-max 7\.2 A exceeds .* frame 58/);
    expect(existsSync(out)).toBe(false);
  });
});
