import { describe, expect, it } from 'vitest';
import {
  structureFactor, lorchWindow, sincShellPrimitive, lorchShellPrimitive, parseLennardJones, ljPotential,
  lennardJonesEnergy, lennardJonesPressure, ljEnergyTail, ljPressureTail, kirkwoodBuffRunning,
  kirkwoodBuffFiniteVolume, kirkwoodBuffExtrapolation, sphereOverlapWeight, structureFactorGrid, KJ_PER_MOL_A3_TO_PA,
} from '../analyses/structure.js';
import { rdfPass } from '../analyses/rdf.js';
import { shellVolumes } from '../analyses/rdf-curves.js';
import { orthorhombicCell } from '../src/cell.js';
import { Random } from '../src/random.js';
import { BOLTZMANN } from '../src/units.js';
import { UsageError } from '../src/errors.js';
import type { Frame, Topology } from '../src/types.js';

/** A step g(r): 0 below r0 (on a bin edge), 1 from r0 on. */
function stepG(nb: number, bw: number, r0: number): Float64Array {
  return Float64Array.from({ length: nb }, (_, k) => (k * bw >= r0 - 1e-9 ? 1 : 0));
}

function topology(n: number, label = 'Ar'): Topology {
  return {
    atoms: n, labels: new Array(n).fill(label), elements: new Array(n).fill(label),
    masses: new Float64Array(n).fill(39.95), charges: null, residues: null,
  };
}

describe('structure factor', () => {
  it('bin primitives are antiderivatives of r² sinc(qr) and r² sinc(qr) sinc(πr/R)', () => {
    // Independent check by composite Simpson quadrature (error ∝ h⁴, 2000 panels over 0.7 Å:
    // < 1e-10 here), including the small-qr series branch (q = 0.01).
    const simpson = (f: (r: number) => number, a: number, b: number, m = 2000) => {
      const h = (b - a) / m;
      let s = f(a) + f(b);
      for (let i = 1; i < m; i++) s += (i % 2 ? 4 : 2) * f(a + i * h);
      return (s * h) / 3;
    };
    const sinc = (x: number) => (x === 0 ? 1 : Math.sin(x) / x);
    for (const q of [0.01, 1.3, 7.9]) {
      const R = 9, a = Math.PI / R;
      const e1 = simpson((r) => r * r * sinc(q * r), 2.1, 2.8);
      expect(Math.abs(sincShellPrimitive(q, 2.8) - sincShellPrimitive(q, 2.1) - e1)).toBeLessThan(1e-9);
      const e2 = simpson((r) => r * r * sinc(q * r) * sinc(a * r), 2.1, 2.8);
      expect(Math.abs(lorchShellPrimitive(q, a, 2.8) - lorchShellPrimitive(q, a, 2.1) - e2)).toBeLessThan(1e-9);
    }
  });

  it('Lorch window: W(0) = 1, W(R/2) = 2/π, W(R) = 0', () => {
    // sin(x)/x at x = 0, π/2, π (Lorch, J. Phys. C 2, 229 (1969)); 1e-15: exact up to round-off.
    expect(lorchWindow(0, 10)).toBe(1);
    expect(Math.abs(lorchWindow(5, 10) - 2 / Math.PI)).toBeLessThan(1e-15);
    expect(Math.abs(lorchWindow(10, 10))).toBeLessThan(1e-15);
  });

  it('step g(r) without a window gives S(q) = 1 − 4πρ[sin qσ − qσ cos qσ]/q³', () => {
    // g = 0 for r < σ, 1 beyond: S(q) − 1 = −4πρ ∫_0^σ r² sin(qr)/(qr) dr (closed-form integral;
    // truncation at R does not matter since g − 1 = 0 beyond σ). Exact bin-wise integration:
    // only round-off remains, 1e-10.
    const bw = 0.05, nb = 200, sigma = 3.4, rho = 0.021;
    const q = Float64Array.from({ length: 400 }, (_, i) => 0.05 * (i + 1));
    const s = structureFactor(stepG(nb, bw, sigma), bw, rho, q, 'none');
    q.forEach((qi, i) => {
      const exact = 1 - (4 * Math.PI * rho * (Math.sin(qi * sigma) - qi * sigma * Math.cos(qi * sigma))) / qi ** 3;
      expect(Math.abs(s[i] - exact)).toBeLessThan(1e-10);
    });
  });

  it('the q grid starts at 2π/r_max, on multiples of the q step', () => {
    // A transform of g cut at R resolves q no finer than 2π/R (Fourier resolution; Lorch, J. Phys.
    // C 2, 229 (1969)): the grid must not go below it. Arithmetic: 2π/10.9 = 0.57644; the first
    // multiple of 0.05 at or above it is 0.60 (k = 12); up to 20 → 389 points.
    const { q, qMin } = structureFactorGrid(20, 0.05, 10.9);
    expect(Math.abs(qMin - (2 * Math.PI) / 10.9)).toBeLessThan(1e-15);
    expect(q[0]).toBeCloseTo(0.6, 12);
    expect(q.length).toBe(389);
    expect(q[q.length - 1]).toBeCloseTo(20, 12);
    // A range entirely below 2π/r_max gives no points.
    expect(structureFactorGrid(0.5, 0.05, 10.9).q.length).toBe(0);
  });

  it('ideal gas: S(q) = 1 within the propagated binomial noise of g', () => {
    // g_k − 1 has SD √((1 − p_k)/(M p_k)) (binomial, pairwise-independent distances of uniform
    // points; M = F·N(N−1)/2 trials, p_k = V_k/V), and S(q) − 1 = 4πρ Σ_k (g_k − 1) I_k(q) with
    // I_k the Lorch bin integral, so SD(S) = 4πρ √(Σ I_k² SD_k²) (bins nearly uncorrelated; the
    // multinomial covariances are negative and only shrink it). Max |z| over 100 q values < 4.5.
    const rng = new Random(31337);
    const n = 300, L = 18, F = 30;
    const topo = topology(n);
    const cell = orthorhombicCell(L, L, L);
    const pass = rdfPass({
      pairs: [{ a: 'all', b: 'all' }], rMax: null, binWidth: 0.05, skipSameMolecule: false, blocks: null,
      structureFactor: { qMax: 20, qStep: 0.2, window: 'lorch' }, kirkwoodBuff: true,
    });
    const ctx = { topology: topo, firstCell: cell, frameInterval: null, warnings: [] as string[] };
    const acc = pass.create(ctx);
    for (let f = 0; f < F; f++) {
      const pos = new Float64Array(3 * n);
      for (let i = 0; i < 3 * n; i++) pos[i] = L * rng.uniform();
      const frame: Frame = { index: f, time: null, cell, positions: pos, velocities: null, line: 1, topology: topo };
      acc.frame(frame);
    }
    const res = pass.finish(acc.partial(), ctx).pairs[0];
    const bw = 0.05, nb = res.g.length, R = nb * bw, rho = res.density.value;
    // The pass's own S(q) (with --structure-factor) starts at 2π/r_max = 2π/9 = 0.698 1/Å: first
    // multiple of 0.2 at or above it is 0.8 (arithmetic).
    expect(R).toBeCloseTo(9, 9);
    const sq = res.structureFactor!;
    expect(sq.q[0]).toBeCloseTo(0.8, 12);
    expect(sq.qMin.value).toBeCloseTo((2 * Math.PI) / 9, 12);
    // Ideal gas: g = 1 in expectation (pairs normalised by N(N − 1)), so every Kirkwood–Buff
    // integral is 0 (closed form); the extrapolated G∞ must lie within 4 of its stated
    // uncertainties (block standard error with the fit error), over the stated range 4.5–9 Å.
    const kb = res.kirkwoodBuff!;
    expect(kb.extrapolation.from.value).toBeCloseTo(4.5, 9);
    expect(kb.infinite.uncertainty).not.toBeNull();
    expect(Math.abs(kb.infinite.value)).toBeLessThan(4 * kb.infinite.uncertainty!);
    const q = Float64Array.from({ length: 100 }, (_, i) => 0.2 * (i + 1));
    const s = structureFactor(res.g, bw, rho, q, 'lorch');
    const M = (F * n * (n - 1)) / 2;
    const v = shellVolumes(nb, bw);
    let zmax = 0;
    q.forEach((qi, i) => {
      let varSum = 0;
      for (let k = 0; k < nb; k++) {
        const pk = v[k] / L ** 3;
        const I = lorchShellPrimitive(qi, Math.PI / R, (k + 1) * bw) - lorchShellPrimitive(qi, Math.PI / R, k * bw);
        varSum += (I * I * (1 - pk)) / (M * pk);
      }
      zmax = Math.max(zmax, Math.abs(s[i] - 1) / (4 * Math.PI * rho * Math.sqrt(varSum)));
    });
    expect(zmax).toBeLessThan(4.5);
  });
});

describe('Lennard-Jones energy and pressure routes', () => {
  const eps = 0.996, sigma = 3.405;

  it('the 12-6 potential has its minimum −ε at 2^(1/6)σ and crosses zero at σ', () => {
    // Closed-form properties of u(r) = 4ε[(σ/r)¹² − (σ/r)⁶] (Allen & Tildesley 2017 §1.3);
    // round-off only: 1e-12.
    expect(Math.abs(ljPotential(2 ** (1 / 6) * sigma, eps, sigma) + eps)).toBeLessThan(1e-12);
    expect(Math.abs(ljPotential(sigma, eps, sigma))).toBeLessThan(1e-12);
  });

  it('parses ε in kJ/mol, K, kcal/mol and eV', () => {
    // ε/k_B = 119.8 K → 119.8 × R = 0.99607 kJ/mol (R = 8.314462618 J/(mol K), CODATA 2018 exact);
    // 1 kcal/mol = 4.184 kJ/mol (thermochemical calorie, NIST SP 811 B.8); 1 eV per particle =
    // 96.485332 kJ/mol (F/1000, CODATA 2018 Faraday constant 96485.33212 C/mol). Relative 1e-9:
    // the references are given to that precision.
    expect(Math.abs(parseLennardJones('119.8K,3.405A').epsilon / (119.8 * 8.314462618e-3) - 1)).toBeLessThan(1e-9);
    expect(Math.abs(parseLennardJones('1kcal/mol,3.4A,9A').epsilon - 4.184)).toBeLessThan(1e-12);
    expect(Math.abs(parseLennardJones('1eV,0.34nm').epsilon / 96.48533212 - 1)).toBeLessThan(1e-9);
    const lj = parseLennardJones('0.996kJ/mol,0.3405nm,8.5A');
    expect(lj.sigma).toBeCloseTo(3.405, 12);
    expect(lj.cutoff).toBe(8.5);
    expect(() => parseLennardJones('0.996,3.405A')).toThrow(UsageError);
    expect(() => parseLennardJones('0.996kJ/mol')).toThrow(UsageError);
  });

  it('step g(r) at σ: U/N = −(16/9)πρεσ³ and P = ρk_BT − (16/9)πρ²εσ³, whatever r_c', () => {
    // With g = 1 for r ≥ σ the integral up to r_c plus the tail correction is the integral to
    // infinity: 2πρ∫_σ^∞ u r² dr = 8πρεσ³(1/9 − 1/3) and −(2π/3)ρ²∫_σ^∞ r³u' dr = −(2π/3)ρ²·(8/3)εσ³
    // (closed-form integrals of the 12-6 potential). This checks the bin integrals and both tail
    // formulas of Allen & Tildesley 2017 §2.8 together. σ on a bin edge: exact up to round-off, 1e-9.
    const bw = 0.001, rho = 0.021, T = 120;
    for (const rc of [7.5, 8.5, 10]) {
      const nb = Math.round(rc / bw);
      const g = stepG(nb, bw, sigma);
      const e = lennardJonesEnergy(g, bw, rho, { epsilon: eps, sigma, cutoff: rc });
      expect(Math.abs(e.total - (-(16 / 9) * Math.PI * rho * eps * sigma ** 3))).toBeLessThan(1e-9);
      const p = lennardJonesPressure(g, bw, rho, rho, T, { epsilon: eps, sigma, cutoff: rc });
      const exact = rho * 1e30 * BOLTZMANN * T - (16 / 9) * Math.PI * rho * rho * eps * sigma ** 3 * KJ_PER_MOL_A3_TO_PA;
      expect(Math.abs(p.total - exact) / Math.abs(exact)).toBeLessThan(1e-9);
      expect(Math.abs(e.tail - ljEnergyTail(rho, eps, sigma, rc))).toBe(0);
    }
  });

  it('tail corrections in reduced units: ρ* = 0.8, r_c = 2.5σ', () => {
    // (8/3)πρ*[(1/3)(1/2.5)⁹ − (1/2.5)³] = −0.42835 and (16/3)πρ*²[(2/3)(1/2.5)⁹ − (1/2.5)³] =
    // −0.68442 (hand evaluation of the Allen & Tildesley 2017 §2.8 formulas with ε = σ = 1).
    // Relative 1e-4: the reference values are rounded to five digits.
    expect(Math.abs(ljEnergyTail(0.8, 1, 1, 2.5) / -0.42835 - 1)).toBeLessThan(1e-4);
    expect(Math.abs(ljPressureTail(0.64, 1, 1, 2.5) / -0.68442 - 1)).toBeLessThan(1e-4);
  });

  it('energy and virial routes on an FCC crystal equal its lattice sums', () => {
    // FCC, a = 5.26 Å, 4×4×4 cells (256 atoms, 21.04 Å box), r_c = 8 Å: shells 12 at a/√2, 6 at a,
    // 24 at a√1.5, 12 at a√2 (crystallography, Kittel ch. 1). Lattice sums U/N = ½Σ z u(r_s),
    // W/N = −(1/6)Σ z r_s u'(r_s) (per-particle virial). The routes replace u(r_s) by its
    // shell-volume average over the bin holding r_s, an error ≤ max|f'|·Δr per pair (Taylor),
    // f = u or r u'; that bound, summed over the shells, is the tolerance.
    const a = 5.26, m = 4, L = a * m, bw = 0.002, rc = 8;
    const basis = [[0, 0, 0], [0.5, 0.5, 0], [0.5, 0, 0.5], [0, 0.5, 0.5]];
    const pos: number[] = [];
    for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) for (let k = 0; k < m; k++) {
      for (const b of basis) pos.push((i + b[0]) * a, (j + b[1]) * a, (k + b[2]) * a);
    }
    const n = pos.length / 3;
    const topo = topology(n);
    const cell = orthorhombicCell(L, L, L);
    const lj = { epsilon: eps, sigma, cutoff: rc };
    const pass = rdfPass({ pairs: [{ a: 'Ar', b: 'Ar' }], rMax: rc, binWidth: bw, skipSameMolecule: false, blocks: 2, lennardJones: lj, temperature: 0.001 });
    const ctx = { topology: topo, firstCell: cell, frameInterval: null, warnings: [] as string[] };
    const acc = pass.create(ctx);
    const P = Float64Array.from(pos);
    for (let f = 0; f < 2; f++) acc.frame({ index: f, time: null, cell, positions: P, velocities: null, line: 1, topology: topo });
    const res = pass.finish(acc.partial(), ctx).pairs[0];
    const shells: Array<[number, number]> = [[12, a / Math.SQRT2], [6, a], [24, a * Math.sqrt(1.5)], [12, a * Math.SQRT2]];
    // 12-6 potential and its derivative written out here (Allen & Tildesley 2017 §1.3), not taken
    // from the module under test.
    const u = (r: number) => 4 * eps * ((sigma / r) ** 12 - (sigma / r) ** 6);
    const du = (r: number) => (24 * eps / r) * ((sigma / r) ** 6 - 2 * (sigma / r) ** 12);
    const ru = (r: number) => r * du(r);
    const maxSlope = (f: (r: number) => number, r: number) => {
      let s = 0;
      for (let t = -1; t <= 1; t += 0.05) s = Math.max(s, Math.abs((f(r + t * bw + 1e-6) - f(r + t * bw - 1e-6)) / 2e-6));
      return s;
    };
    let uSum = 0, wSum = 0, uTol = 0, wTol = 0;
    for (const [z, r] of shells) {
      uSum += 0.5 * z * u(r);
      wSum += (-1 / 6) * z * ru(r);
      uTol += 0.5 * z * maxSlope(u, r) * bw;
      wTol += (1 / 6) * z * maxSlope(ru, r) * bw;
    }
    const ljr = res.lennardJones!;
    const integral = ljr.energy.value - ljr.energyTail.value;
    expect(Math.abs(integral - uSum)).toBeLessThan(uTol);
    const rho = n / L ** 3;
    const virialPa = ljr.pressure!.value - ljr.pressureTail!.value - rho * 1e30 * BOLTZMANN * 0.001;
    expect(Math.abs(virialPa - rho * wSum * KJ_PER_MOL_A3_TO_PA)).toBeLessThan(rho * wTol * KJ_PER_MOL_A3_TO_PA);
    expect(uTol / Math.abs(uSum)).toBeLessThan(2e-3); // the bound is tight enough to mean something
  });
});

describe('Kirkwood–Buff integrals', () => {
  it('running integral of a step g(r) is −(4π/3)r0³ beyond r0', () => {
    // 4π∫_0^R (g − 1) r² dr = −4π r0³/3 for R ≥ r0 (closed form, excluded volume). 1e-9 Å³.
    const bw = 0.05, r0 = 3;
    const G = kirkwoodBuffRunning(stepG(200, bw, r0), bw);
    for (let k = 60; k < 200; k++) expect(Math.abs(G[k] + (4 * Math.PI / 3) * 27)).toBeLessThan(1e-9);
  });

  it('finite-volume integral of a step g(r): −4π[r0³/3 − 3r0⁴/(8L) + r0⁶/(12L³)]', () => {
    // Krüger et al. (2013) weight integrated in closed form over [0, r0]; L = upper bin edge. 1e-9 Å³.
    const bw = 0.05, r0 = 3;
    const G = kirkwoodBuffFiniteVolume(stepG(200, bw, r0), bw);
    for (let k = 60; k < 200; k++) {
      const L = (k + 1) * bw;
      const exact = -4 * Math.PI * (r0 ** 3 / 3 - (3 * r0 ** 4) / (8 * L) + r0 ** 6 / (12 * L ** 3));
      expect(Math.abs(G[k] - exact)).toBeLessThan(1e-9);
    }
  });

  it('the 1/L extrapolation of the finite-volume integrals recovers the infinite-system G of a step g(r)', () => {
    // Closed form for g = 0 below σ, 1 beyond (excluded volume): G∞ = −4πσ³/3, and the
    // finite-volume integral above gives L·G_V(L) = L·G∞ + 3πσ⁴/2 − πσ⁶/(3L²): linear in L (the
    // scaling of Krüger et al., J. Phys. Chem. Lett. 4, 235 (2013)) up to f(L) = −c/L², c = πσ⁶/3.
    // The least-squares slope is a weighted mean of secant slopes, each f'(ξ) + G∞ for some ξ in
    // the range (mean-value theorem), so |slope − G∞| ≤ max f' = 2c/L_min³ (0.45 Å³ for σ = 3 Å,
    // L_min = 15 Å). The intercept F = 3πσ⁴/2 is off by at most max|f| + 0.45·L_max.
    const bw = 0.05, sigma = 3, nb = 600; // r_max = 30 Å, range 15–30 Å
    const g = stepG(nb, bw, sigma);
    const ex = kirkwoodBuffExtrapolation(g, bw);
    const gInf = (-4 * Math.PI * sigma ** 3) / 3;
    const c = (Math.PI * sigma ** 6) / 3;
    expect(ex.from).toBeCloseTo(15, 9);
    expect(ex.to).toBeCloseTo(30, 9);
    const bound = (2 * c) / ex.from ** 3;
    expect(Math.abs(ex.infinite - gInf)).toBeLessThan(bound);
    expect(Math.abs(ex.surface - 1.5 * Math.PI * sigma ** 4)).toBeLessThan(c / ex.from ** 2 + bound * ex.to);
    // The finite-volume value at r_max is not the infinite-system one: it misses F/L ≈ 12.7 Å³,
    // far more than the extrapolation's bound.
    const gv = kirkwoodBuffFiniteVolume(g, bw);
    expect(Math.abs(gv[nb - 1] - gInf)).toBeGreaterThan(20 * bound);
  });

  it('the weight w(x) is the overlap of two spheres of diameter L at distance xL', () => {
    // Lens volume of two spheres of radius ρ at centre distance d: π(4ρ + d)(2ρ − d)²/12
    // (solid geometry, e.g. Weisstein, MathWorld "Sphere-Sphere Intersection"; from memory), over
    // the sphere volume 4πρ³/3, with x = d/(2ρ). Exact algebra: 1e-14.
    for (const x of [0, 0.1, 0.37, 0.5, 0.8, 1]) {
      const rad = 1.7, d = 2 * rad * x;
      const lens = (Math.PI * (4 * rad + d) * (2 * rad - d) ** 2) / 12;
      expect(Math.abs(sphereOverlapWeight(x) - lens / ((4 * Math.PI / 3) * rad ** 3))).toBeLessThan(1e-14);
    }
  });
});
