/**
 * Splitting one analysis over frame ranges (--frames, --partial-out, then `sojourn merge`) and
 * over worker threads (--threads 2) must give the single run's result: integer histograms
 * bit-identical, correlation functions equal to round-off. The truth here is the single run of
 * the same build on the same file, so the check is that splitting changes nothing (common
 * practice, no source).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { ensureBuilt, runCli, scratch } from './helpers/cli.js';
import { Random } from '../src/random.js';

const tmp = scratch('merge');
let traj = '';

/** A random walk of 40 labelled atoms in a 15 Å cube, 120 frames 0.1 ps apart, wrapped. */
function walkXyz(): string {
  const rnd = new Random(20261202);
  const n = 40, frames = 120, L = 15;
  const pos = Float64Array.from({ length: 3 * n }, () => rnd.uniform() * L);
  const lines: string[] = [];
  for (let f = 0; f < frames; f++) {
    if (f > 0) for (let k = 0; k < pos.length; k++) pos[k] += 0.3 * rnd.normal();
    lines.push(String(n), `Lattice="${L} 0 0 0 ${L} 0 0 0 ${L}" Properties=species:S:1:pos:R:3 Time=${(0.1 * f).toFixed(1)}`);
    for (let i = 0; i < n; i++) {
      const w = [0, 1, 2].map((c) => (((pos[3 * i + c] % L) + L) % L).toFixed(6));
      lines.push(`${i % 4 === 0 ? 'Na' : 'O'} ${w.join(' ')}`);
    }
  }
  return lines.join('\n') + '\n';
}

function json(args: string[]): { results: Record<string, unknown> } {
  const r = runCli([...args, '--json', '--quiet']);
  if (r.status !== 0) throw new Error(`sojourn ${args.join(' ')} failed (${r.status}): ${r.stderr}`);
  return JSON.parse(r.stdout);
}

beforeAll(() => {
  ensureBuilt();
  traj = tmp.file('walk.xyz', walkXyz());
});
afterAll(() => tmp.cleanup());

describe('frame-range jobs merged equal the single run', () => {
  it('rdf: g(r) and coordination identical after merging three ranges', () => {
    const base = ['rdf', traj, '--pair', 'Na:O', '--blocks', '4'];
    const single = json([...base, '--threads', '1']);
    const parts = ['0:40', '40:90', '90:'].map((r, i) => {
      const p = join(tmp.dir, `rdf-${i}.json`);
      json([...base, '--threads', '1', '--frames', r, '--partial-out', p]);
      return p;
    });
    const merged = json(['merge', parts[2], parts[0], parts[1]]);
    const a = (single.results as { pairs: { g: number[]; n: number[] }[] }).pairs[0];
    const b = (merged.results as { pairs: { g: number[]; n: number[] }[] }).pairs[0];
    // Histograms are integer counts summed in a different order: bit-identical.
    expect(b.g).toEqual(a.g);
    expect(b.n).toEqual(a.n);
  });

  it('msd: curves equal to round-off after merging two ranges (unwrapping continues across the cut)', () => {
    const base = ['msd', traj, '--fit-from', '1ps', '--fit-to', '3ps'];
    const single = json([...base, '--threads', '1']);
    const parts = ['0:57', '57:'].map((r, i) => {
      const p = join(tmp.dir, `msd-${i}.json`);
      json([...base, '--threads', '1', '--frames', r, '--partial-out', p]);
      return p;
    });
    const merged = json(['merge', ...parts]);
    const a = (single.results as { groups: { msd: number[]; diffusion: { value: number } }[] }).groups;
    const b = (merged.results as { groups: { msd: number[]; diffusion: { value: number } }[] }).groups;
    expect(b.length).toBe(a.length);
    for (let g = 0; g < a.length; g++) {
      expect(b[g].msd.length).toBe(a[g].msd.length);
      // Same sums in a different association order: 1e-9 relative is far above round-off.
      a[g].msd.forEach((v, k) => expect(Math.abs(b[g].msd[k] - v)).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(v))));
      expect(Math.abs(b[g].diffusion.value / a[g].diffusion.value - 1)).toBeLessThan(1e-9);
    }
  });

  it('rdf on two worker threads equals one thread', () => {
    const base = ['rdf', traj, '--pair', 'Na:O', '--blocks', '4'];
    const one = json([...base, '--threads', '1']);
    const two = json([...base, '--threads', '2']);
    expect((two.results as { pairs: { g: number[] }[] }).pairs[0].g).toEqual((one.results as { pairs: { g: number[] }[] }).pairs[0].g);
  });

  it('msd, shell and conductivity on two threads (the 120 frames cut into 7 chunks handed out on demand) equal one thread', () => {
    // 120 frames → 7 chunks of ≥ 16 frames (src/commands/parallel.ts), so 6 cuts that unwrapping,
    // residence bookkeeping and the collective displacement must carry across. Tolerances as above:
    // stored series are concatenated, so curves agree to round-off (1e-9 relative); counts exactly.
    const cases: Array<[string[], (r: Record<string, unknown>) => number[]]> = [
      [['msd', traj], (r) => (r as { groups: { msd: number[] }[] }).groups.flatMap((g) => g.msd)],
      [['shell', traj, '--center', 'Na', '--around', 'O', '--cutoff', '3A'], (r) => {
        const x = r as { survival: { value: number[] }; counts: { fractions: number[] } };
        return [...x.survival.value, ...x.counts.fractions];
      }],
      [['conductivity', traj, '--charges', 'Na=+3,O=-1', '--temperature', '300K'], (r) => {
        const c = (r as { curves: { collectiveMsd: number[] } }).curves;
        return c.collectiveMsd;
      }],
    ];
    for (const [base, pick] of cases) {
      const a = pick(json([...base, '--threads', '1']).results);
      const b = pick(json([...base, '--threads', '2']).results);
      expect(a.length).toBeGreaterThan(10);
      expect(b.length).toBe(a.length);
      a.forEach((v, k) => expect(Math.abs(b[k] - v), `${base[0]} entry ${k}`).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(v))));
    }
  });

  it('refuses to merge partial files from different commands', () => {
    const p1 = join(tmp.dir, 'x-rdf.json');
    const p2 = join(tmp.dir, 'x-msd.json');
    json(['rdf', traj, '--pair', 'Na:O', '--threads', '1', '--frames', '0:50', '--partial-out', p1]);
    json(['msd', traj, '--threads', '1', '--frames', '50:', '--partial-out', p2]);
    const r = runCli(['merge', p1, p2]);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/not the same command and options/);
  });
});
