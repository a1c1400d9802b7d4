/**
 * sojourn as a library: a consumer package that depends on it imports it by name
 * (`import ... from 'sojourn'`, resolved through package.json "exports") and runs the msd
 * analysis on frames it builds in memory: a three-dimensional Gaussian random walk whose steps
 * have variance s² per component every Δt, for which D = s²/(2Δt) exactly (Einstein 1905;
 * common practice, no source needed beyond the definition). Tolerance: four of the standard
 * errors sojourn states (an honest error bar misses by 4σ with probability 6·10⁻⁵), widened by
 * 1/N for the centre-of-mass drift removal, which lowers the MSD by the factor (1 − 1/N).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdirSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { ensureBuilt, ROOT, scratch } from './helpers/cli.js';

const tmp = scratch('library');

const CONSUMER = `
import { analyseFrames, topologyOf, orthorhombicCell, VERSION } from 'sojourn';
const N = 200, F = 400, dt = 0.1, s = 0.2, L = 40;
let seed = 12345;
// mulberry32 (32-bit integer arithmetic throughout): uniform in (0, 1).
const uniform = () => {
  seed = (seed + 0x6d2b79f5) | 0;
  let t = Math.imul(seed ^ (seed >>> 15), 1 | seed);
  t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
  return (((t ^ (t >>> 14)) >>> 0) + 0.5) / 4294967296;
};
const normal = () => Math.sqrt(-2 * Math.log(uniform())) * Math.cos(2 * Math.PI * uniform());
const topology = topologyOf(Array.from({ length: N }, () => 'Ar'));
const cell = orthorhombicCell(L, L, L);
const x = Float64Array.from({ length: 3 * N }, () => uniform() * L);
function* frames() {
  for (let f = 0; f < F; f++) {
    if (f > 0) for (let k = 0; k < x.length; k++) x[k] += s * normal();
    yield { index: f, time: f * dt, cell, positions: x.map((p) => ((p % L) + L) % L), velocities: null, line: 1, topology };
  }
}
const r = await analyseFrames('msd', { segments: '5' }, frames());
const g = r.groups[0];
console.log(JSON.stringify({ version: VERSION, D: g.diffusion.value, se: g.diffusion.uncertainty, unit: g.diffusion.unit, truth: (s * s) / (2 * dt) * 1e-8, N }));
`;

let dir = '';
beforeAll(() => {
  ensureBuilt();
  dir = join(tmp.dir, 'consumer');
  mkdirSync(join(dir, 'node_modules'), { recursive: true });
  writeFileSync(join(dir, 'package.json'), JSON.stringify({ name: 'consumer', private: true, type: 'module' }));
  symlinkSync(ROOT, join(dir, 'node_modules', 'sojourn'), 'dir');
  writeFileSync(join(dir, 'run.mjs'), CONSUMER);
});
afterAll(() => tmp.cleanup());

describe('the package as a library', () => {
  it("import('sojourn') resolves from a consumer package and msd on in-memory frames gives D = s²/(2Δt)", () => {
    const r = spawnSync(process.execPath, ['run.mjs'], { cwd: dir, encoding: 'utf8' });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    const out = JSON.parse(r.stdout) as { D: number; se: number; unit: string; truth: number; N: number; version: string };
    expect(out.unit).toBe('m^2/s');
    expect(out.se).toBeGreaterThan(0);
    expect(Math.abs(out.D - out.truth)).toBeLessThan(4 * out.se + out.truth / out.N);
  });
});
