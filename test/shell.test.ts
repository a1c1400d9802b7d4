import { describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../src/cli.js';
import { CAUTION } from '../src/caution.js';
import {
  shellPass, mergeShellPartials, bridgeRuns, survivalFunction, addResidenceLagSums,
  survivalWindow, type ShellSpec, type ShellPartial, type Residence,
} from '../analyses/shell.js';
import { orthorhombicCell } from '../src/cell.js';
import { Random } from '../src/random.js';
import { UsageError } from '../src/errors.js';
import type { Frame, PassContext, Topology } from '../src/types.js';

/**
 * Synthetic solvation shells: `centres` Li atoms on a 4×4 grid 12 Å apart in a 48 Å box, each
 * with one O partner that is either "in" (2.0 Å away) or "out" (4.0 Å away) in a fresh random
 * direction every frame; cutoff 2.6 Å. The in/out state of every partner is an independent
 * two-state Markov chain: in → out with probability pOut per frame, out → in with pIn, started
 * from the stationary distribution (in with probability pIn/(pIn + pOut)).
 */
function markovShells(frames: number, pOut: number, pIn: number, seed: number) {
  const centres = 16, L = 48;
  const rng = new Random(seed);
  const labels = [...new Array(centres).fill('Li'), ...new Array(centres).fill('O')];
  const topo: Topology = {
    atoms: 2 * centres, labels, elements: labels.slice(), masses: new Float64Array(2 * centres).fill(10),
    charges: null, residues: null,
  };
  const cell = orthorhombicCell(L, L, L);
  const pos = new Float64Array(6 * centres);
  for (let i = 0; i < centres; i++) {
    pos[3 * i] = 6 + 12 * (i % 4);
    pos[3 * i + 1] = 6 + 12 * Math.floor(i / 4);
    pos[3 * i + 2] = 24;
  }
  const state = Array.from({ length: centres }, () => rng.uniform() < pIn / (pIn + pOut));
  const out: Frame[] = [];
  for (let f = 0; f < frames; f++) {
    if (f > 0) for (let i = 0; i < centres; i++) state[i] = state[i] ? rng.uniform() >= pOut : rng.uniform() < pIn;
    const p = Float64Array.from(pos);
    for (let i = 0; i < centres; i++) {
      // uniform direction: normalised Gaussian vector
      let x = rng.normal(), y = rng.normal(), z = rng.normal();
      const s = (state[i] ? 2.0 : 4.0) / Math.hypot(x, y, z);
      x *= s; y *= s; z *= s;
      const o = 3 * (centres + i);
      p[o] = p[3 * i] + x;
      p[o + 1] = p[3 * i + 1] + y;
      p[o + 2] = p[3 * i + 2] + z;
    }
    out.push({ index: f, time: null, cell, positions: p, velocities: null, line: 1, topology: topo });
  }
  return { frames: out, topo, cell, centres };
}

function ctxOf(topo: Topology, cell: Float64Array, dt: number | null): PassContext {
  return { topology: topo, firstCell: cell, frameInterval: dt, warnings: [] };
}

const spec: ShellSpec = { center: 'Li', around: 'O', cutoff: 2.6, tolerance: 0 };

function partialOf(s: ShellSpec, frames: Frame[], ctx: PassContext): ShellPartial {
  const acc = shellPass(s).create(ctx);
  for (const f of frames) acc.frame(f);
  return acc.partial();
}

describe('two-state Markov exchange: closed-form residence time and mean count', () => {
  // pOut = pIn = 0.02 per 0.1 ps frame, 20 000 frames, 16 centres.
  const dt = 0.1, pOut = 0.02, pIn = 0.02;
  const data = markovShells(20000, pOut, pIn, 2718);
  const ctx = ctxOf(data.topo, data.cell, dt);
  const pass = shellPass(spec);
  const partial = partialOf(spec, data.frames, ctx);
  const res = pass.finish(partial, ctx);

  it('residence time = −Δt/ln(1 − p_out), the mean stay 1/k_out of the "in" state', () => {
    // Given "in" at t0, staying in for n more frames has probability (1 − p)^n (Markov property),
    // so with t* = 0 the survival is C(t) = exp(−t/τ), τ = −Δt/ln(1 − p) = 4.9498 ps; for small
    // p this is the mean residence Δt/p = 1/k_out (geometric distribution; e.g. Feller, An
    // Introduction to Probability Theory, vol. 1, ch. XV). ≈ 3200 stays are observed, so the
    // relative statistical error is ≈ 1/√3200 ≈ 1.8 % (exponential MLE); the log-linear fit is
    // a little less efficient. Accept 8 % (≈ 4 SD), and the reported SE must bracket that scale.
    const tau = -dt / Math.log(1 - pOut);
    expect(res.residenceTime).not.toBeNull();
    expect(Math.abs(res.residenceTime!.value / tau - 1)).toBeLessThan(0.08);
    const se = res.residenceTime!.uncertainty!;
    expect(se / tau).toBeGreaterThan(0.005);
    expect(se / tau).toBeLessThan(0.06);
    expect(Math.abs(res.residenceTime!.value - tau)).toBeLessThan(4 * Math.max(se, 0.018 * tau));
    // C(t) at t = τ must be close to 1/e: its SE is ≈ √(e⁻¹(1 − e⁻¹)/N_origins-ish); 0.02 is generous.
    const k = Math.round(tau / dt);
    expect(Math.abs(res.survival.value[k] - Math.exp(-(k * dt) / tau))).toBeLessThan(0.02);
    expect(res.fitWindow!.from).toBeCloseTo(dt, 12);
    expect(res.converged).toBe(true);
  });

  it('mean count = p_in/(p_in + p_out) with the correlation-aware SE', () => {
    // Stationary occupancy 0.5; the indicator's autocorrelation is λ^k, λ = 1 − p_in − p_out =
    // 0.96 (two-state Markov chain), so the statistical inefficiency is (1 + λ)/(1 − λ) = 49 and
    // the SE of the mean over 16 independent centres is √(0.25/16 · 49/20000) = 6.19e-3.
    // The mean must be within 4 SE; the reported SE within 35 % of the closed form (Sokal's
    // window estimate of g has ≈ 15 % relative error here, SE ∝ √g: ≈ 8 %, so 35 % ≈ 4 SD).
    const seTheory = Math.sqrt((0.25 / 16) * (49 / 20000));
    expect(Math.abs(res.meanCount.value - 0.5)).toBeLessThan(4 * seTheory);
    expect(Math.abs(res.meanCount.uncertainty! / seTheory - 1)).toBeLessThan(0.35);
    // Each centre has 0 or 1 neighbour: the distribution is Bernoulli(0.5), same SE.
    expect(res.counts.values.slice(0, 2)).toEqual([0, 1]);
    expect(Math.abs(res.counts.fractions[1] - 0.5)).toBeLessThan(4 * seTheory);
  });

  it('merging two frame ranges split inside stays gives the single-run result exactly', () => {
    // Runs that cross the split are rejoined (common practice, no source): every number must be
    // identical, so the comparison is exact.
    const a = partialOf(spec, data.frames.slice(0, 7777), ctx);
    const b = partialOf(spec, data.frames.slice(7777), ctx);
    const merged = mergeShellPartials(a, b);
    const r2 = pass.finish(merged, ctx);
    expect(r2.survival.value).toEqual(res.survival.value);
    expect(r2.residenceTime).toEqual(res.residenceTime);
    expect(r2.counts).toEqual(res.counts);
    expect(r2.meanCount).toEqual(res.meanCount);
  });
});

describe('Impey–Madden–McDonald tolerance, counted by hand', () => {
  // One pair present in frames 0–4 and 7–9 of 10 (p = 1111100111), one centre. By the IMM
  // definition (Impey, Madden & McDonald, J. Phys. Chem. 87, 5071 (1983)) P(t, t0) = 1 when
  // present at t0 and t0 + t with no absence longer than t* between. Origins t0 ≤ 9 − t.
  // t = 1: pairs (0,1) (1,2) (2,3) (3,4) (7,8) (8,9) = 6 over Σ_{t0≤8} p = 7.
  // t = 3: (0,3) (1,4) and, only if the 2-frame gap is forgiven, (4,7): 2 or 3 over Σ_{t0≤6} p = 5.
  // Exact rationals, compared to 1e-15.
  const members = [1, 1, 1, 1, 1, 0, 0, 1, 1, 1];
  const runs: Array<[number, number]> = [[0, 4], [7, 9]];
  it('gap of 2 frames forgiven when t* ≥ 2Δt', () => {
    const c = survivalFunction(bridgeRuns(runs, 2), members, 0, 9, 4);
    expect(Math.abs(c[0] - 1)).toBeLessThan(1e-15);
    expect(Math.abs(c[1] - 6 / 7)).toBeLessThan(1e-15);
    expect(Math.abs(c[3] - 3 / 5)).toBeLessThan(1e-15);
  });
  it('gap of 2 frames ends the stay when t* < 2Δt', () => {
    const c = survivalFunction(bridgeRuns(runs, 1), members, 0, 9, 4);
    expect(Math.abs(c[1] - 6 / 7)).toBeLessThan(1e-15);
    expect(Math.abs(c[3] - 2 / 5)).toBeLessThan(1e-15);
  });
});

describe('lagged presence sums', () => {
  it('the FFT path equals the direct count Σ p(t0)p(t0+t) on a long residence with gaps', () => {
    // Definition counted directly (double loop) as the reference; 0/1 products summed: exact
    // integers, so equality is exact after the FFT sums are rounded.
    const rng = new Random(11);
    const runs: Array<[number, number]> = [];
    let t = 0;
    while (t < 1500) {
      const len = 1 + Math.floor(rng.uniform() * 40);
      runs.push([t, Math.min(1499, t + len - 1)]);
      t += len + 1 + Math.floor(rng.uniform() * 3);
    }
    const res: Residence = { start: runs[0][0], end: runs[runs.length - 1][1], runs };
    const maxLag = 400;
    for (const [lo, hi] of [[0, 1499], [300, 1100]]) {
      const got = new Float64Array(maxLag + 1);
      addResidenceLagSums(res, lo, hi, maxLag, got);
      const p = new Uint8Array(1500);
      for (const [s, e] of runs) for (let k = s; k <= e; k++) p[k] = 1;
      const a = Math.max(lo, res.start), b = Math.min(hi, res.end);
      const ref = new Float64Array(maxLag + 1);
      for (let i = a; i <= b; i++) for (let j = i; j <= Math.min(b, i + maxLag); j++) ref[j - i] += p[i] * p[j];
      expect(Array.from(got)).toEqual(Array.from(ref));
    }
  });

  it('the automatic window of an exact exponential ends where it falls below the floor', () => {
    const time = Float64Array.from({ length: 200 }, (_, k) => 0.05 * k);
    const c = time.map((x) => 0.93 * Math.exp(-x / 1.7));
    // The automatic window starts at max(1, t*/Δt) lags and ends before C < 0.05: for
    // 0.93 e^{−t/1.7} that is t < 1.7·ln(18.6) = 4.97 ps, lag 99 (closed form).
    const w = survivalWindow(c, 0);
    expect([w.from, w.to, w.decayed]).toEqual([1, 99, true]);
  });
});

describe('usage checks', () => {
  const data = markovShells(30, 0.1, 0.1, 1);
  it('needs a frame interval and a cutoff inside the minimum-image limit', () => {
    // Half the smallest width of the 48 Å box is 24 Å (src/cell.ts minimumImageLimit).
    const noDt = ctxOf(data.topo, data.cell, null);
    const p = partialOf(spec, data.frames, noDt);
    expect(() => shellPass(spec).finish(p, noDt)).toThrow(/--frame-interval/);
    const acc = shellPass({ ...spec, cutoff: 25 }).create(ctxOf(data.topo, data.cell, 0.1));
    expect(() => acc.frame(data.frames[0])).toThrow(UsageError);
    expect(() => shellPass({ ...spec, cutoff: -1 })).toThrow(UsageError);
  });
});

describe('command line', () => {
  it('sojourn shell reads an extended XYZ with times and reports the mean count', async () => {
    // 400 frames of the Markov shells above (p_in = p_out = 0.02, Δt = 0.1 ps from Time=).
    // Closed-form mean count 0.5 with SE √(0.25/16 · 49/400) = 0.044 (see the Markov test):
    // accept 4 SE. Human mode must end with the project caution.
    const data = markovShells(400, 0.02, 0.02, 99);
    const dir = mkdtempSync(join(tmpdir(), 'sojourn-shell-'));
    try {
      let text = '';
      for (const f of data.frames) {
        text += `${data.topo.atoms}\nLattice="48 0 0 0 48 0 0 0 48" Properties=species:S:1:pos:R:3 Time=${(f.index * 0.1).toFixed(1)}\n`;
        for (let i = 0; i < data.topo.atoms; i++) {
          text += `${data.topo.labels[i]} ${f.positions[3 * i]} ${f.positions[3 * i + 1]} ${f.positions[3 * i + 2]}\n`;
        }
      }
      const file = join(dir, 'li.xyz');
      writeFileSync(file, text);
      const capture = async (args: string[]) => {
        const out: string[] = [];
        const orig = process.stdout.write.bind(process.stdout);
        (process.stdout as unknown as { write: (s: string) => boolean }).write = (s: string) => (out.push(String(s)), true);
        try {
          return { code: await main(['node', 'sojourn', 'shell', file, ...args]), text: out.join('') };
        } finally {
          (process.stdout as unknown as { write: typeof orig }).write = orig;
        }
      };
      const j = await capture(['--center', 'Li', '--around', 'el=O', '--cutoff', '2.6A', '--tolerance', '0ps', '--json', '--quiet', '--threads', '1']);
      expect(j.code).toBe(0);
      const r = JSON.parse(j.text).results;
      expect(Math.abs(r.meanCount.value - 0.5)).toBeLessThan(4 * 0.044);
      expect(r.tolerance).toEqual({ value: 0, uncertainty: null, unit: 'ps' });
      const h = await capture(['--center', 'Li', '--around', 'el=O', '--cutoff', '2.6A', '--quiet', '--threads', '1']);
      expect(h.code).toBe(0);
      expect(h.text.trimEnd().endsWith(CAUTION)).toBe(true);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
