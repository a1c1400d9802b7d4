/**
 * MSD analysis (analyses/msd.ts) against closed forms: the definition of the all-origins MSD,
 * Einstein's random-walk law, the Ornstein–Uhlenbeck (Langevin) MSD, the Yeh–Hummer formula and
 * exact invariances (wrapping, uniform drift, merging).
 */
import { describe, expect, it } from 'vitest';
import type { Frame, PassContext, Residues, Topology } from '../src/types.js';
import { Random, ornsteinUhlenbeck } from '../src/random.js';
import { CellGeometry, orthorhombicCell } from '../src/cell.js';
import { sampleStandardDeviation } from 'simple-statistics';
import { UsageError } from '../src/errors.js';
import { msdAnalysis } from '../analyses/msd-analysis.js';
import { readOptionValues } from '../src/engine/options.js';
import {
  groupCurves,
  groupMsdComponents,
  msdPass,
  diffusionFromSlope,
  type MsdResult,
  type MsdPassOptions,
} from '../analyses/msd.js';
import { directMsdOfSeries } from '../src/numerics/mean-squared-displacement.js';
import { nonGaussianFromMoments } from '../src/numerics/non-gaussian.js';
import { speciesSpec } from '../src/store/layout.js';
import { storePass, type StorePartial } from '../src/store/store.js';
import { mergeStores } from '../src/store/merge.js';
import { StoreView } from '../src/store/view.js';

/** Topology with given labels and masses (elements = labels). */
function topology(labels: string[], masses?: number[], residues: Residues | null = null): Topology {
  return {
    atoms: labels.length,
    labels,
    elements: labels,
    masses: Float64Array.from(masses ?? labels.map(() => 12)),
    charges: null,
    residues,
  };
}

/** Frames from a list of position arrays; one buffer is reused, as the readers do. */
function* framesOf(topo: Topology, positions: Float64Array[], cell: Float64Array | null, velocities?: Float64Array[]): Generator<Frame> {
  const buf = new Float64Array(3 * topo.atoms);
  const vbuf = new Float64Array(3 * topo.atoms);
  for (let t = 0; t < positions.length; t++) {
    buf.set(positions[t]);
    if (velocities) vbuf.set(velocities[t]);
    yield { index: t, time: null, cell, positions: buf, velocities: velocities ? vbuf : null, line: 1, topology: topo };
  }
}

function context(topo: Topology, dt: number, cell: Float64Array | null): PassContext {
  return { topology: topo, firstCell: cell, frameInterval: dt, warnings: [] };
}

/** Run the MSD pass over frames [from, to) as one stream and return its partial. */
function partialOf(opts: MsdPassOptions, topo: Topology, pos: Float64Array[], cell: Float64Array | null, dt: number, from = 0, to = pos.length): StorePartial {
  const pass = msdPass(opts);
  const acc = pass.create(context(topo, dt, cell));
  for (const f of framesOf(topo, pos.slice(from, to), cell)) acc.frame(f);
  return acc.partial();
}

function runMsd(opts: MsdPassOptions, topo: Topology, pos: Float64Array[], cell: Float64Array | null, dt: number): MsdResult {
  const pass = msdPass(opts);
  const ctx = context(topo, dt, cell);
  return pass.finish(partialOf(opts, topo, pos, cell, dt), ctx);
}

/** Gaussian random walks: N atoms, T frames, step SD `s` per component (Å). */
function randomWalks(n: number, frames: number, s: number, seed: number, start = 10): Float64Array[] {
  const rng = new Random(seed);
  const out: Float64Array[] = [];
  let cur = new Float64Array(3 * n).map(() => rng.uniform() * start);
  for (let t = 0; t < frames; t++) {
    if (t > 0) {
      cur = Float64Array.from(cur);
      for (let k = 0; k < cur.length; k++) cur[k] += s * rng.normal();
    }
    out.push(cur);
  }
  return out;
}

const relDiff = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('small pure functions', () => {
  it('diffusionFromSlope converts Å²/ps and divides by 2d', () => {
    // Truth: 1 Å²/ps = 1e-20 m² / 1e-12 s = 1e-8 m²/s; D = slope/(2d) (Einstein 1905). 6 Å²/ps in
    // 3-D → 1 Å²/ps → 1e-8 m²/s. Tolerance 1e-15 relative: one product.
    expect(relDiff(diffusionFromSlope(6, 3), 1e-8)).toBeLessThan(1e-15);
    expect(relDiff(diffusionFromSlope(4, 2), 1e-8)).toBeLessThan(1e-15);
  });
});

describe('random walks', () => {
  const n = 100, frames = 2000, s = 0.1, dt = 0.01;
  const walks = randomWalks(n, frames, s, 2024);
  const topo = topology(Array.from({ length: n }, (_, i) => (i < 50 ? 'A' : 'B')));
  const result = runMsd({}, topo, walks, null, dt);

  it('store MSD equals the per-atom direct average to 1e-9 relative', () => {
    // Truth: the definition, averaged over atoms and x, y, z, without drift removal (keepDrift),
    // computed directly; FFT and direct differ by round-off only (Kneller et al. 1995).
    const pass = storePass({ layout: speciesSpec({}), removeDrift: false });
    const ctx = context(topo, dt, null);
    const acc = pass.create(ctx);
    for (const f of framesOf(topo, walks, null)) acc.frame(f);
    const view = new StoreView(acc.partial());
    const sites = Int32Array.from({ length: 10 }, (_, i) => i);
    const maxLag = 300;
    const fft = groupMsdComponents(view, sites, 0, frames, maxLag, false);
    for (const c of [0, 1, 2]) {
      const direct = new Float64Array(maxLag + 1);
      for (const a of sites) {
        const x = Float64Array.from(walks, (p) => p[3 * a + c]);
        const d = directMsdOfSeries(x, maxLag);
        for (let m = 0; m <= maxLag; m++) direct[m] += d[m] / sites.length;
      }
      for (let m = 1; m <= maxLag; m++) expect(relDiff(fft[c][m], direct[m])).toBeLessThan(1e-9);
    }
  });

  it('D = s²/(2Δt) per dimension (Einstein), within a derived statistical tolerance', () => {
    // Truth: a Gaussian walk with per-axis step variance s² every Δt has MSD = 2 d D t with
    // D = s²/(2Δt) (Einstein, Ann. Phys. 17, 549 (1905)): 0.01/(0.02) = 0.5 Å²/ps = 5e-9 m²/s.
    // Tolerance: the window ends at lag K ≤ 199 (segments of 400 frames). The run holds
    // n = 3·N·⌊T/K⌋ ≥ 3·100·10 = 3000 independent displacements of K steps; a variance estimate from
    // n Gaussian samples has relative SD √(2/n) ≤ 0.026 (chi-square statistics), and the fit over
    // all origins and lags only lowers it. 4 SD → 10 %. (Removing the centre of mass of N independent
    // equal-mass walkers lowers each MSD by the factor 1 − 1/N, a 1 % bias inside this bound.)
    const Dtrue = (s * s) / (2 * dt) * 1e-8;
    for (const g of result.groups) {
      expect(g.fit.to).toBeLessThanOrEqual(199 * dt + 1e-12);
      const K = Math.round(g.fit.to / dt);
      const nInd = 3 * g.count * Math.floor(frames / K);
      const tol = 4 * Math.sqrt(2 / nInd);
      expect(relDiff(g.diffusion.value, Dtrue)).toBeLessThan(tol);
      // The reported standard error (5 segments) estimates the same scatter: with a chi-square of
      // 4 degrees of freedom its ratio to the a-priori value √(2/n_seg)/√5 · D lies in [1/3, 3] with
      // probability > 97 % (n_seg = 3·N·⌊400/K⌋ independent displacements per segment).
      const nSeg = 3 * g.count * Math.floor(400 / K);
      const apriori = (Math.sqrt(2 / nSeg) / Math.sqrt(5)) * Dtrue;
      expect(g.diffusion.uncertainty).not.toBeNull();
      expect(g.diffusion.uncertainty! / apriori).toBeGreaterThan(1 / 3);
      expect(g.diffusion.uncertainty! / apriori).toBeLessThan(3);
      expect(g.converged).toBe(true);
    }
  });

  it('the MSD is linear from the first lag: MSD(10Δt) = 6·D·10Δt within tolerance', () => {
    // Truth: MSD(t) = 6 D t exactly for a walk (Einstein 1905): 6·0.5·0.1 = 0.3 Å². Tolerance: at lag
    // 10 the run holds 3·100·200 = 60000 independent displacements → relative SD √(2/60000) = 0.006;
    // 4 SD → 2.4 %. (Drift removal lowers the MSD by the centre-of-mass MSD, a 1/N = 1 % effect for
    // equal masses; so the bound is 3.5 %.)
    for (const g of result.groups) expect(relDiff(g.msd[10], 0.3)).toBeLessThan(0.035);
  });

  it('wrapped and unwrapped input give the same MSD and D (1e-9 relative)', () => {
    // Truth: unwrapping restores the walk up to round-off when steps ≪ half the box (common practice,
    // no source); 1e-9 relative is far above accumulated round-off on 2000 steps of O(10 Å) numbers.
    const cell = orthorhombicCell(15, 15, 15);
    const g = new CellGeometry(cell);
    const wrapped = walks.map((p) => {
      const w = Float64Array.from(p);
      g.wrapAll(w);
      return w;
    });
    const r2 = runMsd({}, topo, wrapped, cell, dt);
    r2.groups.forEach((gr, i) => {
      expect(relDiff(gr.diffusion.value, result.groups[i].diffusion.value)).toBeLessThan(1e-9);
      for (const m of [1, 50, 500, 999]) expect(relDiff(gr.msd[m], result.groups[i].msd[m])).toBeLessThan(1e-9);
    });
  });

  it('a uniform drift of every atom leaves the drift-corrected MSD unchanged', () => {
    // Truth: subtracting the centre of mass removes any common translation exactly (Galilean
    // invariance of relative motion; common practice, no source). 1e-9 relative: round-off only.
    const drifted = walks.map((p, t) => Float64Array.from(p, (x, k) => x + (k % 3 === 0 ? 0.02 * t : 0)));
    const r2 = runMsd({}, topo, drifted, null, dt);
    r2.groups.forEach((gr, i) => {
      for (const m of [1, 100, 999]) expect(relDiff(gr.msd[m], result.groups[i].msd[m])).toBeLessThan(1e-9);
    });
    // Kept drift: the x MSD gains exactly (v t)² on top of the walk's x MSD plus a cross term
    // 2 v t <Δx> that averages to ~0; check the gain at lag 500 against (0.02·500)² = 100 Å², with a
    // tolerance of 5 % (the walk's own x MSD there is 2·0.5·5 = 5 Å², 5 % of the total).
    const kept = runMsd({ keepDrift: true }, topo, drifted, null, dt);
    expect(kept.driftRemoved).toBe(false);
    const gain = kept.groups[0].msdXYZ[0][500] - result.groups[0].msdXYZ[0][500];
    expect(relDiff(gain, 100)).toBeLessThan(0.05);
  });

  it('2-D mode: D from the xy plane equals s²/(2Δt)', () => {
    // Truth: as above with d = 2 (Einstein 1905). Same derived tolerance with 2 axes per atom.
    const r2 = runMsd({ plane: 'xy' }, topo, walks, null, dt);
    const Dtrue = (s * s) / (2 * dt) * 1e-8;
    for (const g of r2.groups) {
      const K = Math.round(g.fit.to / dt);
      const tol = 4 * Math.sqrt(2 / (2 * g.count * Math.floor(frames / K)));
      expect(r2.dimensions).toBe(2);
      expect(relDiff(g.diffusion.value, Dtrue)).toBeLessThan(tol);
    }
  });

  it('reports the bytes held: 3 × 8 × sites × frames (+ 24 per frame for the centre of mass)', () => {
    // Truth: Float64 storage arithmetic: 3·8·100·2000 + 3·8·2000 = 4 848 000 bytes (exact).
    expect(result.bytesHeld).toBe(3 * 8 * 100 * 2000 + 3 * 8 * 2000);
  });
});

describe('Yeh–Hummer correction in the MSD result', () => {
  it('adds k_B T ξ/(6πηL) to D', () => {
    // Hand computation (Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004), ξ = 2.837297;
    // k_B = 1.380649e-23 J/K, CODATA 2018): T = 300 K, η = 0.89 mPa s, L = 30 Å:
    //   k_B T = 4.141947e-21 J; × ξ = 1.175193e-20; 6π = 18.849556; × η = 0.016776105;
    //   × L (3e-9 m) = 5.032831e-11; ΔD = 1.175193e-20 / 5.032831e-11 = 2.33505e-10 m²/s.
    // Tolerance 1e-5 relative: the hand arithmetic was rounded to 6 significant figures.
    const n = 20, frames = 200, dt = 0.01;
    const walks = randomWalks(n, frames, 0.1, 5);
    const cell = orthorhombicCell(30, 30, 30);
    const topo = topology(Array.from({ length: n }, () => 'A'));
    const r = runMsd({ viscosity: 0.89e-3, temperature: 300, nonGaussian: false }, topo, walks, cell, dt);
    const g = r.groups[0];
    expect(relDiff(g.diffusionCorrected!.value - g.diffusion.value, 2.33505e-10)).toBeLessThan(1e-5);
  });
});

describe('Yeh–Hummer correction and in-plane diffusion', () => {
  it('refuses the 3-D periodic correction for --plane (usage error), in the analysis and the options', () => {
    // Truth: the correction k_B T ξ/(6πηL) is derived for 3-D diffusion in a cubic periodic cell
    // (Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004)); in-plane diffusion in a slab has a
    // different, geometry-dependent correction (e.g. Simonnin et al., J. Chem. Theory Comput. 13,
    // 2881 (2017); from memory), so applying it there would be a wrong number.
    const n = 10, frames = 100, dt = 0.01;
    const walks = randomWalks(n, frames, 0.1, 6);
    const cell = orthorhombicCell(30, 30, 30);
    const topo = topology(Array.from({ length: n }, () => 'A'));
    expect(() => runMsd({ plane: 'xy', viscosity: 0.89e-3, temperature: 300, nonGaussian: false }, topo, walks, cell, dt)).toThrow(UsageError);
    expect(() => msdAnalysis.configure(readOptionValues(msdAnalysis.options, { plane: 'xy', viscosity: '0.89mPa.s', temperature: '300K' }))).toThrow(/--plane/);
    // Without the plane the same inputs are accepted.
    expect(runMsd({ viscosity: 0.89e-3, temperature: 300, nonGaussian: false }, topo, walks, cell, dt).yehHummer).not.toBeNull();
  });
});

describe('few segments: Student-t widening', () => {
  it('with M = 3 segments the uncertainty is SD/√3 of the segment values times t(0.8413, 2)', () => {
    // Truth: the standard error over M independent values is s/√M (Frenkel & Smit §4.4.1; s from
    // simple-statistics' sampleStandardDeviation); for M − 1 = 2 degrees of freedom the one-sigma
    // (68.27 %) Student-t quantile has the closed form u·√(2/(1 − u²)), u = 2Φ(1) − 1 = 0.682689
    // (Student 1908; the ν = 2 CDF 1/2 + t/(2√(2 + t²)) inverted): 1.3213. Tolerance 1e-9 relative.
    const n = 20, frames = 600, dt = 0.01;
    const walks = randomWalks(n, frames, 0.1, 77);
    const topo = topology(Array.from({ length: n }, () => 'A'));
    const r = runMsd({ segments: 3, nonGaussian: false }, topo, walks, null, dt);
    const g = r.groups[0];
    expect(g.segments).toBe(3);
    const u = 0.6826894921370859;
    const t = u * Math.sqrt(2 / (1 - u * u));
    const se = sampleStandardDeviation(g.segmentDiffusion) / Math.sqrt(3);
    expect(relDiff(g.diffusion.uncertainty!, se * t)).toBeLessThan(1e-9);
    expect(g.notes.join(' ')).toMatch(/only 3 independent segments/);
    // A caution, not a failure: coded, and the verdict stays ok.
    expect(g.reasons.map((x) => x.code)).toContain('segments.student-t');
    expect(g.diffusion.verdict).toBe(g.converged ? 'ok' : 'not-converged');
    // The rule text names the count actually used.
    expect(r.rules.uncertainty).toMatch(/M = 3 independent segments/);
  });
});

describe('non-Gaussian parameter', () => {
  it('hops of fixed length: α2 = −2/5 at one step (exact) and −1/5 at two steps', () => {
    // Truth: every one-step displacement has length ℓ, so <r⁴>/<r²>² = 1 and α2 = 3/5 − 1 = −2/5
    // (Rahman 1964 definition). For n isotropic hops, <r²> = nℓ², <r⁴> = nℓ⁴ + n(n−1)(5/3)ℓ⁴
    // (independent directions, <(u_i·u_j)²> = ℓ⁴/3), so α2 = −2/(5n): −0.2 at n = 2.
    // Tolerances: lag 1 is exact up to round-off (1e-9). Lag 2: with N·T/2 = 200000 independent
    // pairs, r² ≤ 4ℓ² and r⁴ ≤ 16ℓ⁴ bound the relative variances of the two means by 2 and 3, so
    // the SDs are ≤ 0.0032 and ≤ 0.0039; δα2 ≤ (α2+1)(δ4 + 2δ2) ≈ 0.8·0.0103 = 0.008; 5 SD → 0.04.
    const n = 200, frames = 2000, ell = 0.5, dt = 0.01;
    const rng = new Random(77);
    const pos: Float64Array[] = [];
    let cur = new Float64Array(3 * n);
    for (let t = 0; t < frames; t++) {
      if (t > 0) {
        cur = Float64Array.from(cur);
        for (let a = 0; a < n; a++) {
          const z = 2 * rng.uniform() - 1;
          const phi = 2 * Math.PI * rng.uniform();
          const rxy = Math.sqrt(1 - z * z);
          cur[3 * a] += ell * rxy * Math.cos(phi);
          cur[3 * a + 1] += ell * rxy * Math.sin(phi);
          cur[3 * a + 2] += ell * z;
        }
      }
      pos.push(cur);
    }
    const r = runMsd({ keepDrift: true }, topology(Array.from({ length: n }, () => 'A')), pos, null, dt);
    const ng = r.groups[0].nonGaussian;
    expect(Math.abs(ng[0].value - -0.4)).toBeLessThan(1e-9);
    const two = ng.find((p) => Math.abs(p.time - 2 * dt) < 1e-12)!;
    expect(Math.abs(two.value - -0.2)).toBeLessThan(0.04);
  });
});

describe('Ornstein–Uhlenbeck (Langevin) free particles', () => {
  it('MSD = 6D[t − (1 − e^{−γt})/γ] and D = k_BT/(mγ)', () => {
    // Truth: Uhlenbeck & Ornstein, Phys. Rev. 36, 823 (1930): velocity autocorrelation
    // (k_BT/m) e^{−γt}, MSD = 6D[t − (1 − e^{−γt})/γ], D = k_BT/(mγ). Here σ_v² = k_BT/m = 4 Å²/ps²
    // and γ = 10/ps, so D = 0.4 Å²/ps = 4e-9 m²/s. Positions integrate the sampled velocities by the
    // trapezoid rule; for a sampled OU process this gives D·coth(γΔt/2)·γΔt/2 = D(1 + (γΔt)²/12 + …),
    // a 3e-5 relative bias at γΔt = 0.02, negligible here.
    // Tolerance for D: the window ends at t_K ≤ 2 ps (segments of 4 ps); the run holds n = 3·N·⌊T/t_K⌋
    // ≥ 3·64·10 = 1920 independent displacements; √(2/n) = 0.032 (chi-square); 4 SD → 13 %.
    const n = 64, frames = 10000, dt = 0.002, gamma = 10, sv = 2;
    const vel: Float64Array[] = Array.from({ length: frames }, () => new Float64Array(3 * n));
    for (let k = 0; k < 3 * n; k++) {
      const v = ornsteinUhlenbeck(frames, dt, 1 / gamma, sv, 1000 + k);
      for (let t = 0; t < frames; t++) vel[t][k] = v[t];
    }
    const pos: Float64Array[] = [new Float64Array(3 * n)];
    for (let t = 1; t < frames; t++) pos.push(Float64Array.from(pos[t - 1], (x, k) => x + 0.5 * (vel[t - 1][k] + vel[t][k]) * dt));
    const r = runMsd({ keepDrift: true }, topology(Array.from({ length: n }, () => 'P')), pos, null, dt);
    const g = r.groups[0];
    const D = (sv * sv) / gamma; // Å²/ps
    const K = Math.round(g.fit.to / dt);
    const tol = 4 * Math.sqrt(2 / (3 * n * Math.floor(frames / K)));
    expect(relDiff(g.diffusion.value, D * 1e-8)).toBeLessThan(tol);
    // Window starts where d ln MSD/d ln t ≤ 1.1: for the exact curve, β(t) = γt(1−e^{−γt})/(γt − 1 + e^{−γt})
    // crosses 1.1 at γt ≈ 11 (solve numerically); allow ±30 % for noise in the local slope.
    expect(g.fit.from).toBeGreaterThan(0.7 * 1.1);
    expect(g.fit.from).toBeLessThan(1.3 * 1.1);
    // Ballistic-to-diffusive crossover at t = 1/γ = 0.1 ps (lag 50): exact 6D·(0.1·e^{−1}) =
    // 2.4·0.1·0.36788 = 0.08829 Å². Tolerance: 3·N·T/(2/γ) ≈ 19 000 nearly independent displacement
    // samples → √(2/19000) = 0.010; 4 SD → 4 %.
    const exact = 6 * D * (0.1 - (1 - Math.exp(-1)) / gamma);
    expect(relDiff(g.msd[50], exact)).toBeLessThan(0.04);
  });
});

describe('merging partials', () => {
  it('two partials of a wrapped run merge into the single run (1e-9 relative), molecules included', () => {
    // Truth: a single uninterrupted run over the same frames; the merge's boundary step is the same
    // minimum-image step the unwrapper takes, so only round-off differs (1e-9 relative).
    // Molecules: rigid diatomics (second atom at a fixed offset) translate like their atoms, so the
    // centre-of-mass MSD equals the atom MSD (exact kinematics).
    const nMol = 30, frames = 600, dt = 0.01;
    const walks = randomWalks(nMol, frames, 0.15, 99);
    const cell = orthorhombicCell(9, 9, 9);
    const geo = new CellGeometry(cell);
    const labels: string[] = [];
    const molecule = new Int32Array(2 * nMol);
    for (let i = 0; i < nMol; i++) {
      labels.push('O', 'H');
      molecule[2 * i] = molecule[2 * i + 1] = i;
    }
    const residues: Residues = {
      names: labels.map(() => 'MOL'),
      numbers: Int32Array.from(molecule, (m) => m + 1),
      chains: labels.map(() => ''),
      molecule,
      count: nMol,
    };
    const topo = topology(labels, labels.map((l) => (l === 'O' ? 16 : 1)), residues);
    const pos = walks.map((w) => {
      const p = new Float64Array(6 * nMol);
      for (let i = 0; i < nMol; i++) {
        p.set([w[3 * i], w[3 * i + 1], w[3 * i + 2]], 6 * i);
        p.set([w[3 * i] + 1.2, w[3 * i + 1] + 0.4, w[3 * i + 2] - 0.3], 6 * i + 3);
      }
      geo.wrapAll(p); // atoms of one molecule may land on opposite faces
      return p;
    });
    for (const opts of [{}, { molecules: true }] as MsdPassOptions[]) {
      const pass = msdPass({ ...opts, nonGaussian: false });
      const ctx = context(topo, dt, cell);
      const single = pass.finish(partialOf(opts, topo, pos, cell, dt), ctx);
      const a = partialOf(opts, topo, pos, cell, dt, 0, 223);
      const b = partialOf(opts, topo, pos, cell, dt, 223, 401);
      const c = partialOf(opts, topo, pos, cell, dt, 401, 600);
      const merged = pass.finish(mergeStores(mergeStores(a, b), c), ctx);
      single.groups.forEach((g, i) => {
        for (const m of [1, 37, 299]) expect(relDiff(merged.groups[i].msd[m], g.msd[m])).toBeLessThan(1e-9);
        expect(relDiff(merged.groups[i].diffusion.value, g.diffusion.value)).toBeLessThan(1e-9);
      });
      if (opts.molecules) {
        const atoms = runMsd({ nonGaussian: false }, topo, pos, cell, dt);
        expect(single.molecules).toBe(true);
        expect(single.groups[0].count).toBe(nMol);
        // The atom-level "O" group and the molecule group see the same rigid translations.
        for (const m of [1, 100, 299]) expect(relDiff(single.groups[0].msd[m], atoms.groups[0].msd[m])).toBeLessThan(1e-9);
      }
    }
  });
});

describe('too little data', () => {
  it('a window that fits in no 3 segments gives no uncertainty and is flagged not converged', () => {
    // Truth: the segment rule of src/fit.ts: T = 40 frames → with M = 5, 4, 3 segments of 8, 10, 13
    // frames the longest allowed lag is ⌊0.5·(L−1)⌋ = 3, 4, 6, fewer than the 8 lags a window
    // needs, so no segment plan exists (arithmetic).
    const walks = randomWalks(10, 40, 0.1, 4);
    const r = runMsd({ nonGaussian: false }, topology(Array.from({ length: 10 }, () => 'A')), walks, null, 0.01);
    const g = r.groups[0];
    expect(g.converged).toBe(false);
    expect(g.diffusion.uncertainty).toBeNull();
    expect(g.notes.join(' ')).toMatch(/not converged: the fit window .* does not fit in 3 independent segments/);
    // The same, coded (src/estimate.ts), on the Estimate of D.
    expect(g.diffusion.verdict).toBe('not-converged');
    expect(g.diffusion.reasons.map((x) => x.code)).toContain('segments.window-too-long');
  });
});

describe('curves from one gather', () => {
  it('segment MSDs and α2 sums from the shared gather equal the definition', () => {
    // Truth: the all-origins MSD of each segment [kL, (k+1)L) of each atom's series, computed
    // directly from the definition (Kneller et al. 1995), averaged over atoms; and α2 from directly
    // summed moments (Rahman 1964). Only round-off differs: 1e-9 relative.
    const n = 6, frames = 300, dt = 0.01;
    const walks = randomWalks(n, frames, 0.2, 21);
    const topo = topology(Array.from({ length: n }, () => 'A'));
    const pass = storePass({ layout: speciesSpec({}), removeDrift: false });
    const acc = pass.create(context(topo, dt, null));
    for (const f of framesOf(topo, walks, null)) acc.frame(f);
    const view = new StoreView(acc.partial());
    const sites = Int32Array.from({ length: n }, (_, i) => i);
    const c = groupCurves(view, sites, 149, false, { segments: 3, ngLags: [1, 7, 40], ngComps: [0, 1, 2], segmentMaxLag: 49 });
    expect(c.segmentFrames).toBe(100);
    for (let k = 0; k < 3; k++) {
      for (const comp of [0, 1, 2]) {
        const direct = new Float64Array(50);
        for (let a = 0; a < n; a++) {
          const x = Float64Array.from(walks.slice(100 * k, 100 * (k + 1)), (p) => p[3 * a + comp]);
          const d = directMsdOfSeries(x, 49);
          for (let m = 0; m < 50; m++) direct[m] += d[m] / n;
        }
        for (const m of [1, 10, 49]) expect(relDiff(c.segments[k][comp][m], direct[m])).toBeLessThan(1e-9);
      }
    }
    for (const [i, m] of [1, 7, 40].entries()) {
      let s2 = 0, s4 = 0;
      for (let a = 0; a < n; a++) {
        for (let t = 0; t + m < frames; t++) {
          let r2 = 0;
          for (const comp of [0, 1, 2]) r2 += (walks[t + m][3 * a + comp] - walks[t][3 * a + comp]) ** 2;
          s2 += r2;
          s4 += r2 * r2;
        }
      }
      const pairs = n * (frames - m);
      expect(relDiff(c.nonGaussian[i].value + 1, nonGaussianFromMoments(s2 / pairs, s4 / pairs, 3) + 1)).toBeLessThan(1e-9);
    }
  });
});
