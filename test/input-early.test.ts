/**
 * Fail early and cleanly: tables given to `report` are read and checked before the trajectory;
 * a units line under the column names is read as units and used; a time column rounded to its
 * printed decimals is accepted; rounded Time= values give one warning without binary noise; a
 * line longer than 1 MiB is an error naming file and line; labels are UTF-8 and control
 * characters are shown escaped. Each case runs the built command-line tool on files written here.
 *
 * Unit factors: 1 atm = 101 325 Pa and 1 bar = 10⁵ Pa exactly (BIPM SI Brochure, 9th ed. 2019,
 * Table 8, non-SI units), 1 fs = 10⁻³ ps (SI prefixes).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { ensureBuilt, runCli, scratch } from './helpers/cli.js';
import { Random } from '../src/random.js';

const tmp = scratch('early');
beforeAll(() => ensureBuilt(), 240_000);
afterAll(() => tmp.cleanup());

/** An XYZ trajectory of `atoms` Ar atoms on a lattice in a 20 Å cell, Time= every `dt` ps written with `decimals`. */
function xyz(frames: number, opts: { atoms?: number; dt?: number; decimals?: number; label?: (i: number) => string; tail?: string } = {}): string {
  const n = opts.atoms ?? 27;
  const rng = new Random(5);
  const lines: string[] = [];
  for (let f = 0; f < frames; f++) {
    lines.push(String(n), `Lattice="20 0 0 0 20 0 0 0 20" Properties=species:S:1:pos:R:3 Time=${(f * (opts.dt ?? 0.1)).toFixed(opts.decimals ?? 4)}`);
    for (let i = 0; i < n; i++) {
      const p = [i % 3, Math.floor(i / 3) % 3, Math.floor(i / 9)].map((k) => (k * 6 + 3 + 0.05 * rng.normal()).toFixed(4));
      lines.push(`${opts.label ? opts.label(i) : 'Ar'} ${p.join(' ')}`);
    }
  }
  return lines.join('\n') + '\n' + (opts.tail ?? '');
}

/** Rows of a pressure table: time and three shear components of a seeded N(0, 100²) series. */
function pressureRows(n: number, time: (i: number) => string, scale = 1): string[] {
  const rng = new Random(9);
  return Array.from({ length: n }, (_, i) => `${time(i)}\t${[0, 1, 2].map(() => (100 * rng.normal() * scale).toFixed(6)).join('\t')}`);
}

describe('report: the tables are checked before the trajectory is read', () => {
  it('a 3-line pressure table with a short row fails naming the table, even when the trajectory is bad too; nothing is left', () => {
    // The trajectory's last frame is broken: read first, it would be the error reported.
    const traj = tmp.file('t.xyz', xyz(20, { tail: '27\ncomment\nAr 1 2\n' }));
    const table = tmp.file('bad.tsv', '# time pxy pxz pyz\n0 1 2 3\n0.004 1 2\n');
    const out = join(tmp.dir, 'rep');
    const r = runCli(['report', traj, '--pressure', table, '--temperature', '300K', '--out', out, '--threads', '1']);
    expect(r.status).toBe(1);
    expect(r.stderr).toContain(`${table}:3:10: expected column 4 ('pyz') (a number), found end of line`);
    expect(r.stderr).not.toContain('t.xyz');
    expect(existsSync(out)).toBe(false);
  });
});

describe('table headers: a units line is units, and it is used', () => {
  it('"# time pxy pxz pyz" then "# fs atm atm atm": η equals that of the same numbers given as ps and --pressure-unit atm', () => {
    const n = 3000;
    const inUnits = tmp.file('units.tsv', ['# time pxy pxz pyz', '# fs atm atm atm', ...pressureRows(n, (i) => String(4 * i))].join('\n') + '\n');
    const inPs = tmp.file('ps.tsv', ['# time pxy pxz pyz', ...pressureRows(n, (i) => (0.004 * i).toFixed(3))].join('\n') + '\n');
    const a = runCli(['viscosity', inUnits, '--temperature', '300K', '--volume', '8000A^3', '--json']);
    const b = runCli(['viscosity', inPs, '--temperature', '300K', '--volume', '8000A^3', '--pressure-unit', 'atm', '--json']);
    expect(a.status).toBe(0);
    expect(b.status).toBe(0);
    const ja = JSON.parse(a.stdout);
    const jb = JSON.parse(b.stdout);
    expect(ja.results.pressureUnit).toBe('atm');
    expect(ja.inputs[0].fileUnits.time).toEqual({ unit: 'fs', from: 'file' });
    expect(ja.inputs[0].fileUnits.pressure).toEqual({ unit: 'atm', from: 'file' });
    // Same numbers, same arithmetic after the unit factors: equal to round-off (1e-9).
    expect(ja.results.viscosity.value / jb.results.viscosity.value).toBeCloseTo(1, 9);
    // The same table with bar: η scales with the square of the pressure factor, (10⁵/101325)².
    const inBar = tmp.file('bar.tsv', ['# time pxy pxz pyz', '# ps bar bar bar', ...pressureRows(n, (i) => (0.004 * i).toFixed(3))].join('\n') + '\n');
    const jc = JSON.parse(runCli(['viscosity', inBar, '--temperature', '300K', '--volume', '8000A^3', '--json']).stdout);
    expect(jc.results.viscosity.value / ja.results.viscosity.value).toBeCloseTo((1e5 / 101325) ** 2, 9);
    // A contradicting option names the file.
    const c = runCli(['viscosity', inUnits, '--temperature', '300K', '--volume', '8000A^3', '--pressure-unit', 'bar']);
    expect(c.status).toBe(2);
    expect(c.stderr).toContain(`--pressure-unit bar contradicts ${inUnits}, whose units line gives atm`);
    const d = runCli(['viscosity', inUnits, '--temperature', '300K', '--volume', '8000A^3', '--time-unit', 'ps']);
    expect(d.status).toBe(2);
    expect(d.stderr).toContain(`--time-unit ps contradicts ${inUnits}, whose time column is in fs`);
  });

  it('a CSV header row followed by a units row', () => {
    const csv = tmp.file('u.csv', ['time,pxy,pxz,pyz', 'ps,bar,bar,bar', ...pressureRows(3000, (i) => (0.004 * i).toFixed(3)).map((r) => r.replace(/\t/g, ','))].join('\n') + '\n');
    const r = runCli(['viscosity', csv, '--temperature', '300K', '--volume', '8000A^3', '--json']);
    expect(r.status).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.results.pressureUnit).toBe('bar');
    expect(j.inputs[0].fileUnits.pressure).toEqual({ unit: 'bar', from: 'file' });
  });
});

describe('rounded times', () => {
  it('a time column printed with 4 decimals (0.0108, 0.0107, …) is accepted; spacing beyond the rounding is still refused', () => {
    const rounded = tmp.file('r.tsv', ['# time e', ...Array.from({ length: 500 }, (_, i) => `${(i * 0.010753).toFixed(4)} ${Math.sin(i)}`)].join('\n') + '\n');
    const r = runCli(['converge', rounded, '--json']);
    expect(r.status).toBe(0);
    // The interval is the mean spacing (t_last − t_0)/(n − 1) of the times as written.
    // g = 1 + 2τ_int, τ_int in samples (Sokal; Chodera 2016, the convention analyses/converge.ts uses), so Δt = 2τ_int/(g − 1).
    const s = JSON.parse(r.stdout).results.series[0];
    expect(s.integratedAutocorrelationTime.unit).toBe('ps');
    expect((2 * s.integratedAutocorrelationTime.value) / (s.statisticalInefficiency - 1) / (Number((499 * 0.010753).toFixed(4)) / 499)).toBeCloseTo(1, 9);
    const uneven = tmp.file('u.tsv', ['# time e', ...Array.from({ length: 500 }, (_, i) => `${(i * 0.010753 + (i === 250 ? 0.003 : 0)).toFixed(4)} ${Math.sin(i)}`)].join('\n') + '\n');
    const u = runCli(['converge', uneven]);
    expect(u.status).toBe(1);
    expect(u.stderr).toMatch(new RegExp(`${uneven}: time column is not evenly spaced`));
  });

  it('rounded Time= values: one warning, the same on one and two threads, without binary noise', () => {
    const traj = tmp.file('round.xyz', xyz(80, { dt: 0.010753, decimals: 4 }));
    const one = runCli(['inspect', traj, '--threads', '1']);
    const two = runCli(['inspect', traj, '--threads', '2']);
    expect(one.status).toBe(0);
    expect(two.stderr).toBe(one.stderr);
    const warnings = one.stderr.split('\n').filter((l) => l.includes('frame times'));
    expect(warnings).toEqual([
      // The mean interval (t_79 − t_0)/79 of times 0.010753·f written to 4 decimals: 0.8495/79 (exact decimal arithmetic).
      `sojourn: warning: ${traj}: the frame times are rounded (to 0.0001 ps), so the time between frames varies within that rounding; the mean interval (t_last − t_first)/(n − 1) = ${Number((0.8495 / 79).toPrecision(6))} ps is used`,
    ]);
    expect(one.stderr).not.toMatch(/\d\.\d{9,}/);
  });
});

describe('guards on the text itself', () => {
  it('a line longer than 1 MiB is an error naming file and line (table and trajectory)', () => {
    const table = tmp.file('long.tsv', '# time pxy\n0 1\n' + '1'.repeat(3 << 20) + '\n');
    const t = runCli(['converge', table]);
    expect(t.status).toBe(1);
    expect(t.stderr).toContain(`${table}:3: line 3 is longer than 1 MiB without a line break`);
    const traj = tmp.file('long.xyz', '1\n' + 'x'.repeat(2 << 20) + '\nAr 0 0 0\n');
    const x = runCli(['inspect', traj, '--box', '10,10,10']);
    expect(x.status).toBe(1);
    expect(x.stderr).toContain(`${traj}:2: line 2 is longer than 1 MiB without a line break`);
  });

  it('labels are read as UTF-8; bytes that are not UTF-8 are an error at file:line:column', () => {
    const traj = tmp.file('omega.xyz', xyz(3, { label: (i) => (i % 2 ? 'Ω' : 'Ar') }));
    const r = runCli(['rdf', traj, '--pair', 'Ω:Ar', '--json', '--threads', '1']);
    expect(r.status).toBe(0);
    expect(JSON.parse(r.stdout).results.pairs[0]).toBeTruthy();
    const ins = runCli(['inspect', traj, '--json', '--threads', '1', '--masses', 'Ω=16']);
    expect(Object.keys(JSON.parse(ins.stdout).results.species)).toEqual(['Ar', 'Ω']);
    const bad = tmp.file('latin1.xyz', Buffer.concat([Buffer.from('1\n\n'), Buffer.from([0x41, 0x72, 0xe9]), Buffer.from(' 1 1 1\n')]));
    const b = runCli(['inspect', bad, '--box', '10,10,10']);
    expect(b.status).toBe(1);
    expect(b.stderr).toContain(`${bad}:3:1: the atom label is not UTF-8 text (bytes 41 72 e9)`);
  });

  it('control characters from a file are shown escaped in messages and tables, never raw', () => {
    const esc = '\u001b[2J';
    // Frame 2 changes the label of atom 1: the error quotes both labels.
    const text = xyz(1, { label: () => `A${esc}` }) + xyz(1, { label: () => 'B\u0007' });
    const traj = tmp.file('ctl.xyz', text);
    const r = runCli(['inspect', traj, '--masses', `A${esc}=1`]);
    expect(r.status).toBe(1);
    expect(r.stderr).not.toMatch(/[\u0000-\u0009\u000b-\u001f\u007f]/);
    expect(r.stderr).toContain(`is labelled 'B\\x07', but 'A\\x1b[2J' in the first frame`);
    const ok = runCli(['inspect', tmp.file('ctl2.xyz', xyz(2, { label: () => `A${esc}` })), '--masses', `A${esc}=1`, '--threads', '1']);
    expect(ok.status).toBe(0);
    expect(ok.stdout + ok.stderr).not.toMatch(/[\u0000-\u0009\u000b-\u001f\u007f]/);
    expect(ok.stdout).toContain('A\\x1b[2J 27');
  });
});
