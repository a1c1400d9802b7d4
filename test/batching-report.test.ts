/**
 * --max-memory for `report`: the streaming analyses (overview, per-frame observables, g(r),
 * shells) run on the first read, the coordinate store in batches of atoms over several reads;
 * the MSD, VACF and conductivity finish from the batches' site sums and the first read's
 * collective charge sums. The reference is the same report without the limit (one read, one
 * store). Only the order of floating-point additions differs, so agreement to round-off is
 * required: 1e-9, normwise for curves and relative for single numbers (test/helpers/batch-runs.ts
 * `maxDiff`; the reasoning of test/batching-vacf.test.ts: round-off ~1e-13, magnified only by
 * cancellations, while a moved window or a lost batch changes numbers by more than 1e-4).
 */
import { afterAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { maxDiff, runJson, runText, writeOuTrajectory } from './helpers/batch-runs.js';

const dir = mkdtempSync(join(tmpdir(), 'sojourn-batch-report-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const spec = { atoms: 40, frames: 1000, dt: 0.01, tau: 0.1, sigma: 2, box: 20, seed: 4400, velocities: true };
const traj = join(dir, 'ou.xyz');
writeOuTrajectory(traj, spec);
// One read: 40 atoms × 1000 frames × 48 B (positions + velocities) + 96 B per frame (centre of
// mass, its velocity, Σq r, Σq v) = 2.016 MB; 600 kB holds 10 atoms → 4 batches of 10.
const LIMIT = '600kB';
const TOL = 1e-9;
const SKIP = new Set(['bytesHeld', 'reads', 'memoryNote']);
let outs = 0;
const outDir = () => join(dir, `report-${++outs}`);

async function pair(extra: string[]) {
  const base = ['report', traj, '--temperature', '300K', ...extra];
  const one = await runJson([...base, '--out', outDir()]);
  const many = await runJson([...base, '--out', outDir(), '--max-memory', LIMIT]);
  expect(one.code, one.err).toBe(0);
  expect(many.code, many.err).toBe(0);
  return { one: one.json, many: many.json };
}

describe('report --max-memory: batched reads equal one read', () => {
  it('species charges: structure, MSD, VACF and conductivity agree; the results record the reads', async () => {
    const { one, many } = await pair(['--charges', 'Na=+1,Cl=-1']);
    const d1 = one.results.diffusion;
    const db = many.results.diffusion;
    // Every analysis ran in both (so the comparison below covers them).
    expect(d1.msd).not.toBeNull();
    expect(d1.vacf).not.toBeNull();
    expect(one.results.conductivity.greenKubo).not.toBeNull();
    expect(one.results.skipped).toEqual({});
    expect(d1.msd.reads).toBe(1);
    for (const r of [db.msd, db.vacf, many.results.conductivity]) {
      expect(r.reads).toBe(4);
      expect(r.bytesHeld).toBeLessThanOrEqual(600_000);
      expect(r.memoryNote).toMatch(/4 batches over 4 reads/);
    }
    expect(maxDiff(one.results, many.results, SKIP)).toBeLessThan(TOL);
    expect(many.warnings).toEqual(one.warnings);
  });

  it('charges that split a species into charge groups: the conductivity MSD is summed per charge group', async () => {
    // Atoms 0 (Na) and 1 (Cl) are made neutral, so Na and Cl each become a charge group smaller than
    // the species (src/report/choose.ts chargeLayoutOnStore): the conductivity needs MSD sums of its own groups.
    const { one, many } = await pair(['--charges', 'Na=+1,Cl=-1,idx=0-1=0']);
    const species = one.results.conductivity.species.map((s: { label: string; count: number }) => `${s.label}:${s.count}`);
    expect(species.sort()).toEqual(['Cl(-1):19', 'Na(+1):19']);
    expect(many.results.conductivity.reads).toBe(4);
    expect(maxDiff(one.results, many.results, SKIP)).toBeLessThan(TOL);
  });

  it('no frame times (no transport): one read suffices and the structure results are those of one read', async () => {
    // Without Time= the report computes no MSD, VACF or conductivity; the batched run stops after
    // its first read (which carries the streaming passes) and says nothing about batches.
    const untimed = join(dir, 'untimed.xyz');
    writeFileSync(untimed, readFileSync(traj, 'utf8').replace(/ Time=[0-9.]+/g, ''));
    const base = ['report', untimed, '--temperature', '300K'];
    const one = await runJson([...base, '--out', outDir()]);
    const many = await runJson([...base, '--out', outDir(), '--max-memory', LIMIT]);
    expect(one.code, one.err).toBe(0);
    expect(many.code, many.err).toBe(0);
    expect(many.json.results.skipped.transport).toMatch(/no frame times/);
    expect(maxDiff(one.json.results, many.json.results, SKIP)).toBeLessThan(TOL);
    const text = await runText([...base, '--out', outDir(), '--max-memory', LIMIT, '--quiet']);
    expect(text.code, text.err).toBe(0);
    expect(text.out).not.toMatch(/memory:/);
  });

  it('the terminal summary and report.html say how many reads and how much was held', async () => {
    const out = outDir();
    const r = await runText(['report', traj, '--temperature', '300K', '--out', out, '--max-memory', LIMIT, '--quiet']);
    expect(r.code, r.err).toBe(0);
    expect(readFileSync(join(out, 'report.html'), 'utf8')).toMatch(/Memory: --max-memory 0\.6 MB: 40 sites × 1000 frames would need 2\.02 MB, so the sites were processed in 4 batches/);
    // Sizes from the plan arithmetic at the top: 2.016 MB needed; a batch of 10 holds 10 × 1000 × 48 B + 96 kB = 0.576 MB.
    expect(r.out).toMatch(/memory: --max-memory 0\.6 MB: 40 sites × 1000 frames would need 2\.02 MB, so the sites were processed in 4 batches over 4 reads of the file \(at most 0\.576 MB held at once\)/);
  });
});

describe('report --max-memory usage errors (exit 2, no report directory)', () => {
  it('standard input', async () => {
    const out = outDir();
    const r = await runJson(['report', '-', '--temperature', '300K', '--out', out, '--max-memory', '1MB']);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/standard input/);
    expect(existsSync(out)).toBe(false);
  });

  it('--partial-out with a batched run', async () => {
    const out = outDir();
    const partial = join(dir, 'report-partial.json');
    const r = await runJson(['report', traj, '--temperature', '300K', '--out', out, '--max-memory', LIMIT, '--partial-out', partial]);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/--partial-out/);
    expect(existsSync(out)).toBe(false);
    expect(existsSync(partial)).toBe(false);
  });
});
