/**
 * --max-memory: sites processed in batches over several reads must give the results of one
 * read. The reference is the same command without the limit (one read of all sites); the
 * quantities are sums over sites of FFT correlations, so batching changes only the order of
 * floating-point additions: agreement to round-off is required (1e-9 relative, far above
 * ε·log₂(frames)·sites ≈ 1e-12 and far below any real change of window or segment).
 */
import { describe, expect, it } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { maxDiff, runJson } from './helpers/batch-runs.js';
import { Random } from '../src/random.js';
import { parseByteSize } from '../src/engine/batches.js';
import { UsageError } from '../src/errors.js';

/** Extended XYZ of random walks in a 20 Å cube (wrapped), with velocities; 2 species. */
function writeWalks(path: string, atoms: number, frames: number, seed: number): void {
  const rng = new Random(seed);
  const box = 20;
  const r = Float64Array.from({ length: 3 * atoms }, () => box * rng.uniform());
  const lines: string[] = [];
  for (let f = 0; f < frames; f++) {
    lines.push(String(atoms), `Lattice="${box} 0 0 0 ${box} 0 0 0 ${box}" Properties=species:S:1:pos:R:3:vel:R:3 Time=${(0.1 * f).toFixed(3)}`);
    for (let i = 0; i < atoms; i++) {
      const v = [rng.normal(), rng.normal(), rng.normal()];
      for (let c = 0; c < 3; c++) r[3 * i + c] += 0.05 * v[c];
      const w = [0, 1, 2].map((c) => (((r[3 * i + c] % box) + box) % box).toFixed(6));
      lines.push(`${i % 2 ? 'Cl' : 'Na'} ${w.join(' ')} ${v.map((x) => x.toFixed(6)).join(' ')}`);
    }
  }
  writeFileSync(path, lines.join('\n') + '\n');
}


describe('--max-memory: batched reads equal one read', () => {
  const dir = mkdtempSync(join(tmpdir(), 'sojourn-batch-'));
  const file = join(dir, 'walks.xyz');
  const atoms = 40;
  const frames = 400;
  writeWalks(file, atoms, frames, 77);
  // 40 sites × 400 frames × 24 B = 384 000 B for positions: 100 kB forces 4+ batches.
  const limit = '100kB';
  const skip = new Set(['bytesHeld', 'reads', 'memoryNote', 'options', 'argv', 'durationSeconds', 'elapsedSeconds', 'tool', 'version', 'createdAt', 'startedAt']);

  it('msd: same curves, D and uncertainties; reports the reads and bytes held', async () => {
    const one = await runJson(['msd', file]);
    const many = await runJson(['msd', file, '--max-memory', limit]);
    expect(one.code).toBe(0);
    expect(many.code).toBe(0);
    const r1 = one.json.results;
    const rb = many.json.results;
    expect(r1.reads).toBe(1);
    expect(rb.reads).toBeGreaterThanOrEqual(4);
    expect(rb.bytesHeld).toBeLessThanOrEqual(100_000);
    expect(rb.memoryNote).toMatch(/batches/);
    expect(maxDiff(r1, rb, skip)).toBeLessThan(1e-9);
  });

  it('conductivity: same Nernst–Einstein, Einstein–Helfand and Green–Kubo values', async () => {
    const args = ['conductivity', file, '--charges', 'Na=+1,Cl=-1', '--temperature', '300K'];
    const one = await runJson(args);
    const many = await runJson([...args, '--max-memory', limit]);
    expect(one.code).toBe(0);
    expect(many.code).toBe(0);
    expect(many.json.results.reads).toBeGreaterThanOrEqual(4);
    expect(many.json.results.greenKubo).not.toBeNull();
    expect(maxDiff(one.json.results, many.json.results, skip)).toBeLessThan(1e-9);
    rmSync(dir, { recursive: true, force: true });
  });
});

describe('memory sizes', () => {
  it('parses SI and IEC units', () => {
    // SI prefixes (10³ⁿ) and IEC 80000-13 binary prefixes (2¹⁰ⁿ): definitions.
    expect(parseByteSize('512MB')).toBe(512e6);
    expect(parseByteSize('2GB')).toBe(2e9);
    expect(parseByteSize('1.5GiB')).toBe(1.5 * 2 ** 30);
    expect(parseByteSize('800M')).toBe(800e6);
    expect(parseByteSize('4096')).toBe(4096);
    expect(() => parseByteSize('lots')).toThrow(UsageError);
    expect(() => parseByteSize('0MB')).toThrow(UsageError);
  });
});

describe('--max-memory keeps the unwrapping warning of one read', () => {
  it('conductivity --keep-drift: each long step is counted once, not once per read', async () => {
    // 40 ions, each making exactly one 8 Å step (> a third of the 20 Å cell: the unwrapping warning
    // threshold of analyses/msd.ts) at a known frame, so the true count is 40 (by construction).
    // The first batched read unwraps every ion for the collective sums; later reads unwrap their
    // own batch again and must not add those steps a second time.
    const dir = mkdtempSync(join(tmpdir(), 'sojourn-jump-'));
    const file = join(dir, 'jump.xyz');
    const rnd = new Random(11);
    const atoms = 40, L = 20;
    const pos = Array.from({ length: atoms }, () => [L * rnd.uniform(), L * rnd.uniform(), L * rnd.uniform()]);
    const lines: string[] = [];
    for (let f = 0; f < 200; f++) {
      lines.push(String(atoms), `Lattice="${L} 0 0 0 ${L} 0 0 0 ${L}" Properties=species:S:1:pos:R:3 Time=${(f * 0.5).toFixed(1)}`);
      for (let i = 0; i < atoms; i++) {
        for (let d = 0; d < 3; d++) pos[i]![d]! += (rnd.uniform() - 0.5) * 0.6;
        if (f === 100 + (i % 50)) pos[i]![0]! += 8;
        lines.push(`${i % 2 ? 'Cl' : 'Na'} ${pos[i]!.map((x) => (((x % L) + L) % L).toFixed(4)).join(' ')}`);
      }
    }
    writeFileSync(file, lines.join('\n') + '\n');
    const args = ['conductivity', file, '--charges', 'Na=+1,Cl=-1', '--temperature', '300K', '--keep-drift', '--no-green-kubo'];
    const one = await runJson(args);
    const many = await runJson([...args, '--max-memory', '60kB']);
    expect(one.code, one.err).toBe(0);
    expect(many.code, many.err).toBe(0);
    expect(many.json.results.reads).toBeGreaterThan(1);
    const steps = (w: string[]) => w.map((x) => /(\d+) step\(s\) between consecutive frames/.exec(x)?.[1]).find(Boolean);
    expect(steps(one.json.warnings)).toBe('40');
    expect(steps(many.json.warnings)).toBe('40');
    rmSync(dir, { recursive: true, force: true });
  });
});
