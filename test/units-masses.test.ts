/**
 * Units and masses are never assumed silently: each case runs the built command-line tool on a
 * file written here and checks the exit status, the message (naming the file), and that the
 * number is either right against its closed form or absent.
 *
 * Constants: k_B = 1.380649e-23 J/K and N_A = 6.02214076e23 /mol (CODATA 2018, exact by the
 * 2019 SI definition); standard atomic weights Ar 39.95, S 32.06, C 12.011, Ca 40.078 (CIAAW
 * 2021 abridged values, Prohaska et al., Pure Appl. Chem. 94 (2022) 573). The kinetic
 * temperature is the equipartition value T = Σ m v² / (3 N k_B) (Allen & Tildesley, Computer
 * Simulation of Liquids, 2nd ed. 2017, §2.4). Threads: where a check merges over frames, the
 * run on two threads must print exactly what one thread prints.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ensureBuilt, runCli, scratch } from './helpers/cli.js';
import { Random } from '../src/random.js';
import { readLabel } from '../src/elements.js';

const K_B = 1.380649e-23;
const N_A = 6.02214076e23;
const AR = 39.95;

const tmp = scratch('units');
beforeAll(() => ensureBuilt(), 240_000);
afterAll(() => tmp.cleanup());

/** What `trajectory` writes. */
interface Spec {
  labels: string[];
  frames: number;
  /** Cubic cell edge written in Lattice= (Å), or null for none. */
  cell: number | null;
  /** Edge of the region the atoms are placed in (Å; default the cell). */
  region?: number;
  /** True time between frames (ps). */
  dt: number;
  /** Times are written as t / timeUnit (timeUnit in ps: 1e-3 writes fs, 1e3 writes ns); null: no Time=. */
  timeUnit: number | null;
  timeDecimals?: number;
  /** Velocities written as v / velocityUnit (velocityUnit in Å/ps: 1000 writes Å/fs); null: none. */
  velocityUnit: number | null;
  /** Temperature of the Maxwell–Boltzmann velocities (K) and the mass (g/mol) they are drawn for. */
  temperature: number;
  mass: number;
  /** 'ballistic': x = x0 + v t; 'walk': Gaussian steps of `step` Å per axis per frame. */
  motion: 'ballistic' | 'walk';
  step?: number;
  seed: number;
  /** Overwrite one coordinate: [frame, atom, value]. */
  poke?: [number, number, number];
  /** Write every atom twice at the same place (overlapping atoms). */
  doubled?: boolean;
}

/**
 * Extended XYZ of independent atoms on a simple cubic lattice filling the region (at least 2 Å
 * apart), velocity components N(0, k_B T/m) (Maxwell–Boltzmann), moving ballistically or by a
 * Gaussian random walk; returns the path and the velocities as written (Å/ps after × unit).
 */
function trajectory(name: string, s: Spec): { path: string; velocities: number[][] } {
  const rng = new Random(s.seed);
  const n = s.labels.length;
  const region = s.region ?? s.cell ?? 20;
  const side = Math.ceil(Math.cbrt(n));
  const a = region / side;
  const x0 = Array.from({ length: n }, (_, i) => [i % side, Math.floor(i / side) % side, Math.floor(i / side / side)].map((k) => (k + 0.5) * a));
  const sd = Math.sqrt((K_B * s.temperature) / ((s.mass * 1e-3) / N_A)) / 100; // Å/ps
  const written = (v: number) => Number((v / (s.velocityUnit ?? 1)).toPrecision(9));
  const v = Array.from({ length: n }, () => [0, 1, 2].map(() => written(rng.normal() * sd)));
  const pos = x0.map((p) => [...p]);
  const lines: string[] = [];
  const props = `species:S:1:pos:R:3${s.velocityUnit !== null ? ':vel:R:3' : ''}`;
  const count = s.doubled ? 2 * n : n;
  for (let f = 0; f < s.frames; f++) {
    if (f > 0) {
      for (let i = 0; i < n; i++) {
        for (let c = 0; c < 3; c++) {
          pos[i]![c]! += s.motion === 'ballistic' ? v[i]![c]! * (s.velocityUnit ?? 1) * s.dt : rng.normal() * (s.step ?? 0.5);
        }
      }
    }
    const time = s.timeUnit === null ? '' : ` Time=${((f * s.dt) / s.timeUnit).toFixed(s.timeDecimals ?? 6)}`;
    lines.push(String(count), `${s.cell !== null ? `Lattice="${s.cell} 0 0 0 ${s.cell} 0 0 0 ${s.cell}" ` : ''}Properties=${props}${time}`);
    for (let i = 0; i < n; i++) {
      const p = pos[i]!.map((x) => (s.cell !== null && s.motion === 'ballistic' ? ((x % s.cell) + s.cell) % s.cell : x));
      if (s.poke && s.poke[0] === f && s.poke[1] === i) p[0] = s.poke[2];
      const row = `${s.labels[i]} ${p.map((x) => x.toFixed(6)).join(' ')}${s.velocityUnit !== null ? ' ' + v[i]!.join(' ') : ''}`;
      lines.push(row);
      if (s.doubled) lines.push(row);
    }
  }
  return { path: tmp.file(name, lines.join('\n') + '\n'), velocities: v };
}

/** Exact kinetic temperature of written velocities (in `unit` Å/ps each) for one mass (g/mol). */
function kineticTemperature(v: number[][], unit: number, mass: number): number {
  let sum = 0;
  for (const r of v) for (const x of r) sum += (x * unit * 100) ** 2;
  return (((mass * 1e-3) / N_A) * sum) / (3 * v.length * K_B);
}

/** Run with --threads 1 and 2; both must exit alike and print the same warnings and errors. */
function bothThreads(args: string[]) {
  const one = runCli([...args, '--threads', '1']);
  const two = runCli([...args, '--threads', '2']);
  expect(two.status).toBe(one.status);
  expect(two.stderr).toBe(one.stderr);
  return one;
}

const base: Spec = { labels: Array(64).fill('Ar'), frames: 40, cell: 20, dt: 0.01, timeUnit: 1, velocityUnit: 1, temperature: 300, mass: AR, motion: 'ballistic', seed: 7 };

describe('masses: the element and mass of every label, and where they came from', () => {
  it('readLabel: exact symbols, guesses, and labels that read two ways (CA, CO, HG, NA)', () => {
    // The rule of src/elements.ts readLabel (its own definition; no outside source decides a label).
    expect(readLabel('Na')).toEqual({ kind: 'symbol', element: 'Na' });
    expect(readLabel('O')).toEqual({ kind: 'symbol', element: 'O' });
    expect(readLabel('CA')).toEqual({ kind: 'ambiguous', element: 'C', readings: ['C', 'Ca'] });
    expect(readLabel('CO')).toMatchObject({ kind: 'ambiguous', readings: ['C', 'Co'] });
    expect(readLabel('HG')).toMatchObject({ kind: 'ambiguous', readings: ['H', 'Hg'] });
    expect(readLabel('NA')).toMatchObject({ kind: 'ambiguous', readings: ['N', 'Na'] });
    expect(readLabel('Sv')).toEqual({ kind: 'inferred', element: 'S' });
    expect(readLabel('DMC')).toEqual({ kind: 'inferred', element: 'D' });
    expect(readLabel('OW')).toEqual({ kind: 'inferred', element: 'O' });
    expect(readLabel('MW')).toEqual({ kind: 'unknown', element: 'X' });
    // ZN: Z alone is no element, so only zinc; MG likewise.
    expect(readLabel('ZN')).toEqual({ kind: 'inferred', element: 'Zn' });
  });

  it('a label that is not an element symbol: the guess is a warning naming label and element; --masses replaces it; the density follows Σm/(N_A V)', () => {
    const { path } = trajectory('sv.xyz', { ...base, labels: Array(64).fill('Sv'), velocityUnit: null });
    const guessed = runCli(['inspect', path, '--json', '--threads', '1']);
    expect(guessed.status).toBe(0);
    const g = JSON.parse(guessed.stdout);
    expect(g.inputs[0].atomKinds).toEqual([{ label: 'Sv', atoms: 64, element: 'S', mass: 32.06, from: 'inferred from the label', elementFrom: 'inferred from the label' }]);
    expect(g.warnings.join('\n')).toMatch(new RegExp(`^${path}: a label is not an element symbol, so its mass was guessed from it: "Sv" → S \\(sulfur, 32.06 g/mol\\)`, 'm'));
    // ρ = N m / (N_A V), V = (20 Å)³ = 8000e-24 cm³; the output is the same arithmetic, so 1e-12.
    expect(g.results.massDensity.value).toBeCloseTo((64 * 32.06) / N_A / 8000e-24, 12);
    const given = runCli(['inspect', path, '--json', '--threads', '1', '--masses', 'Sv=18']);
    const m = JSON.parse(given.stdout);
    expect(m.inputs[0].atomKinds[0]).toMatchObject({ label: 'Sv', mass: 18, from: '--masses' });
    expect(m.warnings.join('\n')).not.toMatch(/guessed/);
    expect(m.results.massDensity.value / ((64 * 18) / N_A / 8000e-24)).toBeCloseTo(1, 12);
    // The human output states it too.
    const text = runCli(['inspect', path, '--threads', '1']);
    expect(text.stdout).toMatch(/mass of Sv\s+32\.06 g\/mol \(inferred from the label\); element S/);
  });

  it('a label that reads two ways is an error where masses are used (asking for --elements), not where they are not', () => {
    const { path } = trajectory('ca.xyz', { ...base, labels: [...Array(32).fill('CA'), ...Array(32).fill('Ar')], velocityUnit: null });
    const r = bothThreads(['msd', path, '--json']);
    expect(r.status).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toContain(`${path}: the atoms' masses are needed (for removing the centre-of-mass drift (--keep-drift keeps it)), but "CA" can be C (carbon) or Ca (calcium): say which with --elements (e.g. --elements CA=C)`);
    // g(r) does not use masses: no error.
    expect(runCli(['rdf', path, '--pair', 'Ar:Ar', '--threads', '1', '--quiet']).status).toBe(0);
    const ok = runCli(['inspect', path, '--json', '--threads', '1', '--elements', 'CA=Ca']);
    expect(ok.status).toBe(0);
    const j = JSON.parse(ok.stdout);
    expect(j.inputs[0].atomKinds[0]).toMatchObject({ label: 'CA', element: 'Ca', mass: 40.078, from: '--elements' });
    expect(j.results.massDensity.value / ((32 * 40.078 + 32 * AR) / N_A / 8000e-24)).toBeCloseTo(1, 12);
    const bad = runCli(['inspect', path, '--elements', 'CA=Qq']);
    expect(bad.status).toBe(2);
    expect(bad.stderr).toMatch(/--elements: expected LABEL=ELEMENT pairs/);
  });
});

describe('time unit: frame times taken in ps unless said, checked against the velocities', () => {
  it('times written in ns: the displacement is 1000× what v·Δt allows — an error naming --time-unit ns; with it, the interval is right', () => {
    const { path } = trajectory('ns.xyz', { ...base, timeUnit: 1e3, timeDecimals: 9 });
    const r = bothThreads(['inspect', path]);
    expect(r.status).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(new RegExp(`${path}: between consecutive frames the atoms move 1000 times farther than their velocities allow .*give --time-unit ns`));
    // Units stated explicitly are believed: the mismatch is then a warning, and the number stands.
    const stated = runCli(['inspect', path, '--json', '--threads', '1', '--time-unit', 'ps', '--velocity-unit', 'A/ps']);
    expect(stated.status).toBe(0);
    expect(JSON.parse(stated.stdout).warnings.join('\n')).toMatch(/move 1000 times farther than their velocities \(in A\/ps\) allow/);
    const ok = runCli(['inspect', path, '--json', '--threads', '1', '--time-unit', 'ns']);
    expect(ok.status).toBe(0);
    const j = JSON.parse(ok.stdout);
    // 1e-5 ns = 0.01 ps (the times are written to 9 decimals: exact to 1e-9 relative here).
    expect(j.results.frameInterval.value).toBeCloseTo(0.01, 9);
    expect(j.inputs[0].fileUnits.time).toEqual({ unit: 'ns', from: '--time-unit' });
  });

  it('times written in fs: a warning naming --time-unit fs; with it, no warning and Δt = 0.01 ps', () => {
    const { path } = trajectory('fs.xyz', { ...base, timeUnit: 1e-3, timeDecimals: 3 });
    const r = bothThreads(['inspect', path, '--json']);
    expect(r.status).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.warnings.join('\n')).toMatch(new RegExp(`${path}: between consecutive frames the atoms move only 0.001 of the distance .*--time-unit fs`));
    expect(j.inputs[0].fileUnits.time).toEqual({ unit: 'ps', from: 'assumed' });
    const ok = JSON.parse(runCli(['inspect', path, '--json', '--threads', '1', '--time-unit', 'fs']).stdout);
    expect(ok.warnings).toEqual([]);
    expect(ok.results.frameInterval.value).toBeCloseTo(0.01, 12);
  });

  it('a frame interval that makes D absurd for a liquid is a warning; the right unit gives D = σ²/(2Δt) of the random walk', () => {
    // Gaussian steps of σ = 0.5 Å per axis every 1 ps, written as 0.001 (ns) and read as ps:
    // D = σ²/(2Δt) = 0.125 Å²/ps = 1.25e-9 m²/s, read 1000× larger (1.25e-6, beyond 1e-6).
    const { path } = trajectory('walk.xyz', { ...base, labels: Array(216).fill('Ar'), cell: 40, frames: 200, dt: 1, timeUnit: 1e3, velocityUnit: null, motion: 'walk', step: 0.5, seed: 11 });
    const r = bothThreads(['msd', path, '--json']);
    expect(r.status).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.warnings.join('\n')).toMatch(new RegExp(`${path}: D\\(Ar\\) from the MSD is 1\\.\\d+e-6 m²/s, outside the range of liquids .*--time-unit`));
    const ok = JSON.parse(runCli(['msd', path, '--json', '--threads', '1', '--time-unit', 'ns']).stdout);
    expect(ok.warnings.join('\n')).not.toMatch(/outside the range of liquids/);
    // 216 walkers × ~20 independent segments: the fitted D scatters by a few per cent (10 % bound).
    expect(Math.abs(ok.results.groups[0].diffusion.value / 1.25e-9 - 1)).toBeLessThan(0.1);
  });
});

describe('velocity unit and temperature: the kinetic temperature is shown and checked', () => {
  it('inspect shows the equipartition temperature Σmv²/(3Nk_B) of the velocities (exact for the written values)', () => {
    const { path, velocities } = trajectory('t.xyz', base);
    const r = bothThreads(['inspect', path, '--json']);
    expect(r.status).toBe(0);
    const j = JSON.parse(r.stdout);
    // The same sum in a different order: 1e-12 relative.
    expect(j.results.kineticTemperature.value / kineticTemperature(velocities, 1, AR)).toBeCloseTo(1, 12);
    expect(j.inputs[0].fileUnits.velocities).toEqual({ unit: 'A/ps', from: 'assumed' });
    expect(runCli(['inspect', path, '--threads', '1']).stdout).toMatch(/kinetic temperature\s+\d+(\.\d+)? K/);
  });

  it('velocities in Å/fs read as Å/ps: T 10⁶× too low against --temperature is an error naming --velocity-unit A/fs; with it, T is right', () => {
    const { path, velocities } = trajectory('afs.xyz', { ...base, velocityUnit: 1000 });
    const r = bothThreads(['rdf', path, '--pair', 'Ar:Ar', '--temperature', '300K']);
    expect(r.status).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toMatch(new RegExp(`${path}: the kinetic temperature from the velocities and masses is .* times below --temperature 300 K: the velocities are probably in A/fs.*--velocity-unit A/fs`));
    // Without --temperature the displacement check names it too.
    const plain = runCli(['inspect', path, '--threads', '1']);
    expect(plain.status).toBe(2);
    expect(plain.stderr).toMatch(/velocities are probably in A\/fs: give --velocity-unit A\/fs/);
    const ok = runCli(['inspect', path, '--json', '--threads', '1', '--velocity-unit', 'A/fs']);
    expect(ok.status).toBe(0);
    const j = JSON.parse(ok.stdout);
    expect(j.results.kineticTemperature.value / kineticTemperature(velocities, 1000, AR)).toBeCloseTo(1, 12);
    expect(j.warnings).toEqual([]);
  });

  it('a reduced temperature given as kelvin: an error where velocities tell, a warning where they cannot', () => {
    const { path } = trajectory('lj.xyz', base);
    const r = bothThreads(['rdf', path, '--pair', 'Ar:Ar', '--temperature', '0.722K']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(new RegExp(`${path}: the kinetic temperature .* times above --temperature 0.722 K: --temperature looks like a reduced temperature`));
    const still = trajectory('lj-novel.xyz', { ...base, velocityUnit: null }).path;
    const w = runCli(['rdf', still, '--pair', 'Ar:Ar', '--temperature', '0.722K', '--threads', '1']);
    expect(w.status).toBe(0);
    expect(w.stderr).toMatch(/--temperature 0\.722 K is below 10 K: it is taken in kelvin; if it is a reduced \(Lennard-Jones\) temperature/);
    const noise = new Random(3);
    const table = tmp.file('p.tsv', '# time pxy pxz pyz\n' + Array.from({ length: 2000 }, (_, i) => `${(i * 0.004).toFixed(3)} ${noise.normal()} ${noise.normal()} ${noise.normal()}`).join('\n') + '\n');
    const v = runCli(['viscosity', table, '--temperature', '0.722', '--volume', '1000A^3']);
    expect(v.status).toBe(0);
    expect(v.stderr).toMatch(/--temperature 0\.722 K is below 10 K/);
  });
});

describe('implausible geometry', () => {
  it('a 4 Å cell with coordinates over 15 Å: density and spread are warnings naming the file (the density is the closed form)', () => {
    const { path } = trajectory('nm.xyz', { ...base, cell: 4, region: 15, velocityUnit: null, motion: 'walk', step: 0.01 });
    const r = bothThreads(['inspect', path, '--json']);
    expect(r.status).toBe(0);
    const j = JSON.parse(r.stdout);
    const rho = (64 * AR) / N_A / 64e-24;
    expect(j.results.massDensity.value / rho).toBeCloseTo(1, 12);
    const w = j.warnings.join('\n');
    expect(w).toContain(`${path}: the mass density is ${Number(rho.toPrecision(3))} g/cm³, outside 0.01–25 g/cm³`);
    expect(w).toMatch(new RegExp(`${path}:1: the atoms of frame 1 spread over 1\\d\\.?\\d* Å along cell vector a, but the cell is 4 Å wide there`));
  });

  it('a coordinate of 1e20 Å is an error naming file, line, frame and atom; nothing is printed', () => {
    const { path } = trajectory('far.xyz', { ...base, velocityUnit: null, motion: 'walk', step: 0.01, poke: [5, 3, 1e20] });
    const r = bothThreads(['inspect', path]);
    expect(r.status).toBe(1);
    expect(r.stdout).toBe('');
    // Frame 6 starts at line 5·(64 + 2) + 1 = 331.
    expect(r.stderr).toContain(`${path}:331: frame 6: atom 4 ('Ar') has x = 100000000000000000000 Å, more than 10⁴ cell lengths from the cell`);
  });

  it('atoms closer than 0.5 Å in most frames are a warning', () => {
    // Frames 0, 64 and 128 are checked (every 64th by index).
    const { path } = trajectory('dup.xyz', { ...base, frames: 130, velocityUnit: null, motion: 'walk', step: 0.01, doubled: true });
    const r = bothThreads(['inspect', path, '--json']);
    expect(r.status).toBe(0);
    expect(JSON.parse(r.stdout).warnings.join('\n')).toMatch(new RegExp(`${path}: atoms closer than 0.5 Å in 3 of the 3 frames checked \\(e.g. frame 1: atoms 1 'Ar' and 2 'Ar' at 0 Å\\)`));
  });
});
