/**
 * --max-memory for `vacf` and `diffusion`: the sites stored in batches over several reads of the
 * file must give the results of one read. The reference is the same command without the limit
 * (all sites in one store). The VACF and the MSD are sums over sites of FFT correlations; the
 * batched runs add the batches' site sums before dividing by the number of sites, so only the
 * order of the floating-point additions differs. Tolerance 1e-9 (normwise for curves, relative
 * for single numbers; test/helpers/batch-runs.ts `maxDiff`): the round-off of these sums is
 * ~ε·log₂(frames)·sites ≈ 1e-13 relative; values formed as differences of nearly equal sums (the
 * plateau drift check, the MSD−VACF difference) can magnify it by their cancellation ratio, which
 * 1e-9 leaves room for, while any real change (a plateau window or segment moved by one lag, a
 * batch's sites counted twice or missed) changes the numbers by more than 1e-4.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { maxDiff, runJson, runText, writeOuTrajectory } from './helpers/batch-runs.js';

const dir = mkdtempSync(join(tmpdir(), 'sojourn-batch-vacf-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// 40 particles, 1000 frames 0.01 ps apart, τ = 0.1 ps (10 frames), σ_v = 2 Å/ps.
const spec = { atoms: 40, frames: 1000, dt: 0.01, tau: 0.1, sigma: 2, box: 20, seed: 9100 };
const withV = join(dir, 'ou-v.xyz');
const noV = join(dir, 'ou-x.xyz');
writeOuTrajectory(withV, { ...spec, velocities: true });
writeOuTrajectory(noV, { ...spec, velocities: false });
// Store of one read: 40 sites × 1000 frames × 48 B (positions + velocities) + 48 B per frame
// (centre-of-mass position and velocity) = 1.968 MB; 600 kB holds 11 sites → 4 batches of 10.
// Without velocities 24 B per site and frame: 1.008 MB; 300 kB holds 10 sites → 4 batches.
const LIMIT_V = '600kB';
const LIMIT_X = '300kB';
const TOL = 1e-9;
const SKIP = new Set(['bytesHeld', 'reads', 'memoryNote', 'options', 'createdAt', 'startedAt', 'durationSeconds', 'elapsedSeconds', 'version']);

describe('vacf --max-memory: batched reads equal one read', () => {
  it('velocities from the file: same curves, spectra, plateaus, D and uncertainties', async () => {
    const one = await runJson(['vacf', withV]);
    const many = await runJson(['vacf', withV, '--max-memory', LIMIT_V]);
    expect(one.code, one.err).toBe(0);
    expect(many.code, many.err).toBe(0);
    const r1 = one.json.results;
    const rb = many.json.results;
    expect(r1.velocitySource).toBe('file');
    expect(r1.reads).toBe(1);
    expect(r1.memoryNote).toBeNull();
    // The plan above: 4 batches, each store at most the limit.
    expect(rb.reads).toBe(4);
    expect(rb.bytesHeld).toBeLessThanOrEqual(600_000);
    expect(rb.memoryNote).toMatch(/4 batches over 4 reads/);
    expect(maxDiff(r1, rb, SKIP)).toBeLessThan(TOL);
    expect(many.json.warnings).toEqual(one.json.warnings);
  });

  it('central differences (no velocities in the file): same results, planned from positions only', async () => {
    const one = await runJson(['vacf', noV]);
    const many = await runJson(['vacf', noV, '--max-memory', LIMIT_X]);
    expect(one.code, one.err).toBe(0);
    expect(many.code, many.err).toBe(0);
    expect(one.json.results.velocitySource).toBe('central differences');
    expect(many.json.results.reads).toBe(4);
    expect(many.json.results.bytesHeld).toBeLessThanOrEqual(300_000);
    expect(maxDiff(one.json.results, many.json.results, SKIP)).toBeLessThan(TOL);
    expect(many.json.warnings).toEqual(one.json.warnings);
  });

  it('a limit that one read fits: one read, no note', async () => {
    // 1.968 MB (above) fits in 3 MB.
    const r = await runJson(['vacf', withV, '--max-memory', '3MB']);
    expect(r.code, r.err).toBe(0);
    expect(r.json.results.reads).toBe(1);
    expect(r.json.results.memoryNote).toBeNull();
  });

  it('the human text says how many reads and how much was held', async () => {
    const r = await runText(['vacf', withV, '--max-memory', LIMIT_V, '--quiet']);
    expect(r.code, r.err).toBe(0);
    // Sizes from the plan arithmetic at the top: 1.968 MB needed; a batch of 10 holds 10 × 1000 × 48 B + 48 kB = 0.528 MB.
    expect(r.out).toMatch(/memory: --max-memory 0\.6 MB: 40 sites × 1000 frames would need 1\.97 MB, so the sites were processed in 4 batches over 4 reads of the file \(at most 0\.528 MB held at once\)/);
  });

  it('the batched VACF follows the Ornstein–Uhlenbeck closed form', async () => {
    // Truth (Uhlenbeck & Ornstein, Phys. Rev. 36, 823 (1930)): per component ⟨v(0)v(t)⟩ = σ_v² e^{−t/τ},
    // so C(0) = 3σ_v² = 12 Å²/ps² and C(t)/C(0) = e^{−t/τ}. Drift kept: the particles are independent.
    // Tolerances as in test/vacf.test.ts: Bartlett's standard error of an AR(1) autocorrelation,
    // a = e^{−Δt/τ}, n = 3·N·T samples (M. S. Bartlett, J. R. Stat. Soc. Suppl. 8, 27 (1946); form from
    // memory), and for C(0) the relative SD √((2/n)(1+a²)/(1−a²)) of a mean of squares of an AR(1)
    // series (Priestley, Spectral Analysis and Time Series (1981), §5.3, from memory); 4 SD each.
    const r = await runJson(['vacf', withV, '--keep-drift', '--max-memory', LIMIT_V]);
    expect(r.code, r.err).toBe(0);
    expect(r.json.results.reads).toBe(4);
    const a = Math.exp(-spec.dt / spec.tau);
    // Two groups, Na and Cl, of 20 particles each: n = 3 components × 20 × 1000 frames per group.
    const ng = (3 * spec.atoms * spec.frames) / 2;
    expect(r.json.results.groups.map((g: { count: number }) => g.count)).toEqual([20, 20]);
    for (const g of r.json.results.groups) {
      const sd0 = Math.sqrt((2 / ng) * ((1 + a * a) / (1 - a * a)));
      expect(Math.abs(g.vacf[0] / (3 * spec.sigma ** 2) - 1)).toBeLessThan(4 * sd0);
      for (const k of [5, 10, 20]) {
        const v = ((1 + a * a) * (1 - a ** (2 * k))) / (1 - a * a) - 2 * k * a ** (2 * k);
        expect(Math.abs(g.normalized[k] - a ** k)).toBeLessThan(4 * Math.sqrt(v / ng));
      }
    }
  });
});

describe('diffusion --max-memory: batched reads equal one read', () => {
  it('same MSD and VACF results and comparison; the result records the reads', async () => {
    const one = await runJson(['diffusion', withV]);
    const many = await runJson(['diffusion', withV, '--max-memory', LIMIT_V]);
    expect(one.code, one.err).toBe(0);
    expect(many.code, many.err).toBe(0);
    const r1 = one.json.results;
    const rb = many.json.results;
    expect(r1.reads).toBe(1);
    expect(rb.reads).toBe(4);
    expect(rb.msd.reads).toBe(4);
    expect(rb.vacf.reads).toBe(4);
    expect(rb.bytesHeld).toBeLessThanOrEqual(600_000);
    expect(rb.memoryNote).toMatch(/4 batches over 4 reads/);
    expect(maxDiff(r1, rb, SKIP)).toBeLessThan(TOL);
    expect(many.json.warnings).toEqual(one.json.warnings);
    const text = await runText(['diffusion', withV, '--max-memory', LIMIT_V, '--quiet']);
    expect(text.out).toMatch(/memory: .*4 batches over 4 reads/);
  });

  it('without velocities the plan counts positions only and the results still agree', async () => {
    const one = await runJson(['diffusion', noV]);
    const many = await runJson(['diffusion', noV, '--max-memory', LIMIT_X]);
    expect(one.code, one.err).toBe(0);
    expect(many.code, many.err).toBe(0);
    expect(many.json.results.reads).toBe(4);
    expect(many.json.results.bytesHeld).toBeLessThanOrEqual(300_000);
    expect(maxDiff(one.json.results, many.json.results, SKIP)).toBeLessThan(TOL);
  });
});

describe('--max-memory usage errors (exit 2)', () => {
  for (const cmd of ['vacf', 'diffusion']) {
    it(`${cmd}: standard input cannot be read in batches`, async () => {
      const r = await runJson([cmd, '-', '--max-memory', '1MB']);
      expect(r.code).toBe(2);
      expect(r.err).toMatch(/standard input/);
    });

    it(`${cmd}: --partial-out with a batched run is refused and writes nothing`, async () => {
      const out = join(dir, `${cmd}-partial.json`);
      const r = await runJson([cmd, withV, '--max-memory', LIMIT_V, '--partial-out', out]);
      expect(r.code).toBe(2);
      expect(r.err).toMatch(/--partial-out/);
      expect(existsSync(out)).toBe(false);
    });
  }
});

describe('vacf CSV outputs are checked before the input is read', () => {
  // A trajectory that fails to parse: reading it is an input error (exit 1), so exit 2 with the
  // folder named proves the outputs were checked first.
  const bad = join(dir, 'bad.xyz');
  writeFileSync(bad, '2\nProperties=species:S:1:pos:R:3 Time=0\nNa 0 0 zero\nCl 1 1 1\n');

  it('the bad file alone is an input error (exit 1)', async () => {
    const r = await runJson(['vacf', bad]);
    expect(r.code).toBe(1);
  });

  for (const opt of ['--csv', '--spectrum-csv']) {
    it(`${opt} into a missing folder: exit 2 before reading`, async () => {
      const target = join(dir, 'no-such-folder', 'out.csv');
      const r = await runJson(['vacf', bad, opt, target]);
      expect(r.code).toBe(2);
      expect(r.err).toMatch(/does not exist/);
      expect(existsSync(target)).toBe(false);
    });
  }
});

describe('msd and conductivity --max-memory on the same trajectory', () => {
  it('batched reads give the one-read MSD, segment estimates and conductivity (several segment counts)', async () => {
    // Regression: the segment curves of a second segment count were once cut from series that the
    // first count had centred piecewise in place (analyses/msd.ts groupCurveSums), so batched runs
    // — which need every segment count the plateau choice may ask for — disagreed with one read
    // (segment D +5e-9 against −1.5e-9 m²/s). Same tolerance and reason as above.
    for (const args of [['msd', noV], ['conductivity', noV, '--charges', 'Na=+1,Cl=-1', '--temperature', '300K']]) {
      const one = await runJson(args);
      const many = await runJson([...args, '--max-memory', LIMIT_X]);
      expect(one.code, one.err).toBe(0);
      expect(many.code, many.err).toBe(0);
      expect(many.json.results.reads).toBeGreaterThan(1);
      expect(maxDiff(one.json.results, many.json.results, SKIP)).toBeLessThan(TOL);
    }
  });
});
