/**
 * Helpers of the CLI tests run in-process (test/batching*.test.ts, test/viscosity.test.ts):
 * an Ornstein–Uhlenbeck trajectory written as extended XYZ, the CLI run in-process with --json,
 * and a comparison of two result trees.
 */
import { writeFileSync } from 'node:fs';
import { expect } from 'vitest';
import { main } from '../../src/cli.js';
import { ornsteinUhlenbeck } from '../../src/random.js';

/** What `writeOuTrajectory` writes. */
export interface OuSpec {
  atoms: number;
  frames: number;
  /** Frame interval (ps), velocity correlation time τ (ps), per-component velocity SD σ_v (Å/ps), cubic box edge (Å). */
  dt: number;
  tau: number;
  sigma: number;
  box: number;
  seed: number;
  /** Write the velocities (else positions only: the VACF then uses central differences). */
  velocities: boolean;
}

/**
 * Extended XYZ of independent particles, labels alternating Na, Cl: every velocity component an
 * Ornstein–Uhlenbeck process with ⟨v(0)v(t)⟩ = σ_v² e^{−t/τ} (Uhlenbeck & Ornstein, Phys. Rev. 36,
 * 823 (1930); exact update of src/random.ts), positions integrated by the trapezoid rule and
 * wrapped into the box, Time= on every frame.
 */
export function writeOuTrajectory(path: string, s: OuSpec): void {
  const v = Array.from({ length: 3 * s.atoms }, (_, k) => ornsteinUhlenbeck(s.frames, s.dt, s.tau, s.sigma, s.seed + k));
  const r = Float64Array.from({ length: 3 * s.atoms }, (_, k) => ((k * 0.6180339887 * 7.3) % 1) * s.box);
  const props = s.velocities ? 'species:S:1:pos:R:3:vel:R:3' : 'species:S:1:pos:R:3';
  const lines: string[] = [];
  for (let f = 0; f < s.frames; f++) {
    if (f > 0) for (let k = 0; k < 3 * s.atoms; k++) r[k] += 0.5 * (v[k][f - 1] + v[k][f]) * s.dt;
    lines.push(String(s.atoms), `Lattice="${s.box} 0 0 0 ${s.box} 0 0 0 ${s.box}" Properties=${props} Time=${(s.dt * f).toFixed(4)}`);
    for (let i = 0; i < s.atoms; i++) {
      const w = [0, 1, 2].map((c) => (((r[3 * i + c] % s.box) + s.box) % s.box).toFixed(6));
      const vel = s.velocities ? ' ' + [0, 1, 2].map((c) => v[3 * i + c][f].toFixed(6)).join(' ') : '';
      lines.push(`${i % 2 ? 'Cl' : 'Na'} ${w.join(' ')}${vel}`);
    }
  }
  writeFileSync(path, lines.join('\n') + '\n');
}

/** Run the CLI in-process on `args`, capturing stdout and stderr; the exit status and both texts. */
export async function runCaptured(args: string[]): Promise<{ code: number; out: string; err: string }> {
  const out: string[] = [];
  const err: string[] = [];
  const o = process.stdout.write.bind(process.stdout);
  const e = process.stderr.write.bind(process.stderr);
  (process.stdout as unknown as { write: (s: string) => boolean }).write = (s: string) => (out.push(String(s)), true);
  (process.stderr as unknown as { write: (s: string) => boolean }).write = (s: string) => (err.push(String(s)), true);
  try {
    const code = await main(['node', 'sojourn', ...args]);
    return { code, out: out.join(''), err: err.join('') };
  } finally {
    (process.stdout as unknown as { write: typeof o }).write = o;
    (process.stderr as unknown as { write: typeof e }).write = e;
  }
}

/** Run the CLI in-process with --json --quiet --threads 1; the exit status, parsed stdout (status 0) and stderr. */
export async function runJson(args: string[]): Promise<{ code: number; json: any; out: string; err: string }> {
  const r = await runCaptured([...args, '--json', '--quiet', '--threads', '1']);
  return { ...r, json: r.code === 0 ? JSON.parse(r.out) : null };
}

/** Run the CLI in-process without --json (human text); status, stdout and stderr. */
export async function runText(args: string[]): Promise<{ code: number; out: string; err: string }> {
  return runCaptured([...args, '--threads', '1']);
}

const isNumberArray = (x: unknown): x is number[] => Array.isArray(x) && x.length > 0 && x.every((v) => typeof v === 'number');

/**
 * Largest difference between the numbers found at the same place in two JSON trees: arrays of
 * numbers (curves, spectra) normwise, max_i |a_i − b_i| / max_i |a_i| — floating-point error of
 * sums and FFTs is bounded relative to the norm of the data, not element by element (Higham,
 * Accuracy and Stability of Numerical Algorithms, 2nd ed., §24.1, from memory), so a curve
 * crossing zero is not judged by its value there — and single numbers relatively. Strings,
 * booleans, nulls and the shape must be equal (a different window, segment count or verdict is
 * a failure, not a small difference). Keys in `skip` are not compared.
 */
export function maxDiff(a: unknown, b: unknown, skip: Set<string>, path = ''): number {
  if (typeof a === 'number' && typeof b === 'number') {
    if (a === b) return 0;
    return Math.abs(a - b) / Math.max(Math.abs(a), Math.abs(b), 1e-300);
  }
  if (isNumberArray(a) && isNumberArray(b)) {
    expect(b.length, path).toBe(a.length);
    let norm = 0;
    let d = 0;
    a.forEach((x, i) => {
      norm = Math.max(norm, Math.abs(x), Math.abs(b[i]!));
      d = Math.max(d, Math.abs(x - b[i]!));
    });
    return d === 0 ? 0 : d / norm;
  }
  if (Array.isArray(a) && Array.isArray(b)) {
    expect(b.length, path).toBe(a.length);
    return a.reduce((m: number, x, i) => Math.max(m, maxDiff(x, b[i], skip, `${path}[${i}]`)), 0);
  }
  if (a && b && typeof a === 'object' && typeof b === 'object') {
    expect(Object.keys(b as object).filter((k) => !skip.has(k)).sort(), path).toEqual(Object.keys(a as object).filter((k) => !skip.has(k)).sort());
    let m = 0;
    for (const k of Object.keys(a as object)) {
      if (skip.has(k)) continue;
      m = Math.max(m, maxDiff((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], skip, `${path}.${k}`));
    }
    return m;
  }
  expect(b, path).toEqual(a);
  return 0;
}
