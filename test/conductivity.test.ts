/**
 * Conductivity analysis (analyses/conductivity.ts) against hand computations and closed forms:
 * independent ions (Einstein–Helfand = Nernst–Einstein), correlated ion pairs (ionicity from the
 * step variances), and Ornstein–Uhlenbeck ions (Green–Kubo).
 */
import { describe, expect, it } from 'vitest';
import type { Frame, PassContext, Topology } from '../src/types.js';
import { Random, ornsteinUhlenbeck } from '../src/random.js';
import { CellGeometry, orthorhombicCell } from '../src/cell.js';
import { UsageError } from '../src/errors.js';
import { BOLTZMANN, ELEMENTARY_CHARGE } from '../src/units.js';
import {
  concentrationMolPerM3,
  conductivityFromIntegral,
  conductivityPass,
  einsteinHelfandFromSlope,
  type ConductivityPassOptions,
  type ConductivityResult,
} from '../analyses/conductivity.js';
import { atomCharges, chargeLayout, parseChargeRules } from '../src/store/charges.js';

const relDiff = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

function ionTopology(nCat: number, nAn: number): Topology {
  const labels = [...Array.from({ length: nCat }, () => 'Na'), ...Array.from({ length: nAn }, () => 'Cl')];
  return {
    atoms: labels.length,
    labels,
    elements: labels,
    masses: Float64Array.from(labels, (l) => (l === 'Na' ? 22.99 : 35.45)),
    charges: null,
    residues: null,
  };
}

function run(opts: ConductivityPassOptions, topo: Topology, pos: Float64Array[], vel: Float64Array[] | null, cell: Float64Array, dt: number): ConductivityResult {
  const pass = conductivityPass(opts);
  const ctx: PassContext = { topology: topo, firstCell: cell, frameInterval: dt, warnings: [] };
  const acc = pass.create(ctx);
  const pb = new Float64Array(3 * topo.atoms);
  const vb = new Float64Array(3 * topo.atoms);
  pos.forEach((p, t) => {
    pb.set(p);
    if (vel) vb.set(vel[t]);
    const f: Frame = { index: t, time: null, cell, positions: pb, velocities: vel ? vb : null, line: 1, topology: topo };
    acc.frame(f);
  });
  return pass.finish(acc.partial(), ctx);
}

/** Walks where atom i takes Gaussian steps of SD steps[i] per axis, plus optional shared steps. */
function walks(steps: number[], frames: number, seed: number, shared?: { partner: Int32Array; sd: number }): Float64Array[] {
  const rng = new Random(seed);
  const n = steps.length;
  const out: Float64Array[] = [];
  let cur = Float64Array.from({ length: 3 * n }, () => 20 * rng.uniform());
  const common = new Float64Array(3 * n);
  for (let t = 0; t < frames; t++) {
    if (t > 0) {
      cur = Float64Array.from(cur);
      if (shared) for (let k = 0; k < 3 * n; k++) common[k] = shared.sd * rng.normal();
      for (let i = 0; i < n; i++) {
        for (let c = 0; c < 3; c++) {
          let d = steps[i] * rng.normal();
          if (shared) d += common[3 * Math.min(i, shared.partner[i]) + c];
          cur[3 * i + c] += d;
        }
      }
    }
    out.push(cur);
  }
  return out;
}

function wrapAll(pos: Float64Array[], cell: Float64Array): Float64Array[] {
  const g = new CellGeometry(cell);
  return pos.map((p) => {
    const w = Float64Array.from(p);
    g.wrapAll(w);
    return w;
  });
}

describe('pure conversions', () => {
  it('σ = I/(3VkT) in S/m by hand', () => {
    // Hand computation (CODATA 2018 exact e and k_B): I = 3 e²Å²/ps (slope 6 of ⟨ΔM²⟩), V = 1000 Å³,
    // T = 300 K: e² = 2.5669700e-38 C²; I → 3·1e-8 m²/s; 3VkT = 3·1e-27 m³·4.141947e-21 J =
    // 1.2425841e-47; σ = 2.5669700e-38·3e-8/1.2425841e-47 = 61.97496 S/m. Tolerance 1e-6 relative
    // (7 significant figures kept by hand).
    expect(relDiff(conductivityFromIntegral(3, 1000, 300), 61.97496)).toBeLessThan(1e-6);
    expect(relDiff(einsteinHelfandFromSlope(6, 1000, 300), 61.97496)).toBeLessThan(1e-6);
  });

  it('concentration of 100 ions in 27 000 Å³', () => {
    // Hand computation: N_A·V = 6.02214076e23 · 2.7e-26 m³ = 0.016259780; 100/0.016259780 =
    // 6150.145 mol/m³ = 6.150 mol/L. Tolerance 1e-6 relative (7 figures kept).
    expect(relDiff(concentrationMolPerM3(100, 27000), 6150.145)).toBeLessThan(1e-6);
  });

  it('parses charge options, including selections that contain commas', () => {
    // Truth: the option grammar documented in parseChargeRules (number after the last '=').
    expect(parseChargeRules('Na=+1,Cl=-1')).toEqual([
      { selection: 'Na', charge: 1 },
      { selection: 'Cl', charge: -1 },
    ]);
    expect(parseChargeRules('OW,HW*=0.5')).toEqual([{ selection: 'OW,HW*', charge: 0.5 }]);
    expect(() => parseChargeRules('Na')).toThrow(UsageError);
  });
});

describe('independent ions (random walks)', () => {
  // 25 Na⁺ with per-axis step SD 0.1 Å and 25 Cl⁻ with 0.07 Å every 0.01 ps in a 25 Å cube,
  // wrapped; T = 300 K. Truth (Einstein 1905; Nernst–Einstein, e.g. Hansen & McDonald, Theory of
  // Simple Liquids, 4th ed.): D = s²/(2Δt) → 0.5 and 0.245 Å²/ps; independent ions have
  // σ = e²/(VkT) Σ N z² D for both the collective and the Nernst–Einstein expression.
  const nEach = 25, frames = 10000, dt = 0.01, L = 25, T = 300;
  const steps = [...Array.from({ length: nEach }, () => 0.1), ...Array.from({ length: nEach }, () => 0.07)];
  const cell = orthorhombicCell(L, L, L);
  const pos = wrapAll(walks(steps, frames, 31), cell);
  const topo = ionTopology(nEach, nEach);
  const sigmaTrue =
    ((ELEMENTARY_CHARGE ** 2) / (L ** 3 * 1e-30 * BOLTZMANN * T)) * nEach * ((0.01 + 0.0049) / (2 * dt)) * 1e-8;
  const r = run({ charges: parseChargeRules('Na=+1,Cl=-1'), temperature: T, fitFrom: dt, fitTo: 20 * dt }, topo, pos, null, cell, dt);

  it('Nernst–Einstein matches the closed form', () => {
    // Tolerance: each species D rests on n = 3·25·⌊T/20⌋ = 37 500 independent 20-step displacements,
    // relative SD √(2/n) = 0.0073 (chi-square); 4 SD = 2.9 %. Removing the mass-weighted centre of
    // mass of independent walkers scales each MSD by 1 − 2m_i/M + Σ_j m_j² MSD_j/(M² MSD_i)
    // (algebra): 0.982 for Na and 0.979 for Cl here, a 2.1 % bias; total bound 5 %.
    expect(relDiff(r.nernstEinstein.value, sigmaTrue)).toBeLessThan(0.05);
  });

  it('Einstein–Helfand matches the closed form and agrees with Nernst–Einstein within uncertainty', () => {
    // Tolerance vs closed form: ΔM is one random walk; over the window end (20 lags) the run holds
    // n = 3·⌊10000/20⌋ = 1500 independent displacements → relative SD √(2/1500) = 0.037; 4 SD = 15 %.
    expect(relDiff(r.einsteinHelfand.value, sigmaTrue)).toBeLessThan(4 * Math.sqrt(2 / 1500));
    // Agreement within 3 combined standard errors as reported (both from 5 independent segments).
    const u = Math.hypot(r.einsteinHelfand.uncertainty!, r.nernstEinstein.uncertainty!);
    expect(Math.abs(r.einsteinHelfand.value - r.nernstEinstein.value)).toBeLessThan(3 * u);
    // Ionicity 1 and Haven ratio 1 for independent ions, same 15 % bound.
    expect(Math.abs(r.ionicity.value - 1)).toBeLessThan(4 * Math.sqrt(2 / 1500));
    expect(Math.abs(r.havenRatio!.value - 1)).toBeLessThan(4 * Math.sqrt(2 / 1500) * 1.2);
    expect(r.fit.from).toBeCloseTo(dt, 12);
    expect(r.fit.to).toBeCloseTo(20 * dt, 12);
  });

  it('molar conductivity Λ = σ/c with c = cations/(N_A V)', () => {
    // Hand computation: c = 25/(6.02214076e23·15625e-30 m³) = 25/0.0094096 = 2656.9 mol/m³ =
    // 2.6569 mol/L. Λ = σ_EH/c. Tolerance 1e-4 relative (5 figures kept by hand).
    expect(relDiff(r.concentration!.value, 2.6569)).toBeLessThan(1e-4);
    expect(relDiff(r.molarConductivity!.value, r.einsteinHelfand.value / 2656.9)).toBeLessThan(1e-4);
  });

  it('the automatic window also gives a consistent Einstein–Helfand value', () => {
    // Same closed form; the automatic window may end later (fewer independent displacements):
    // with its end lag K the bound is 4·√(2/(3⌊T/K⌋)).
    const auto = run({ charges: parseChargeRules('Na=+1,Cl=-1'), temperature: T }, topo, pos, null, cell, dt);
    const K = Math.round(auto.fit.to / dt);
    expect(relDiff(auto.einsteinHelfand.value, sigmaTrue)).toBeLessThan(4 * Math.sqrt(2 / (3 * Math.floor(frames / K))));
  });
});

describe('correlated ion pairs', () => {
  // 20 pairs; each Na⁺ shares a Gaussian step of SD s_c with its Cl⁻ partner and both add
  // independent steps of SD s_e. Per pair ΔM = Δε_Na − Δε_Cl, so σ_EH ∝ 2N s_e² while
  // σ_NE ∝ 2N(s_c² + s_e²): ionicity = s_e²/(s_c² + s_e²) (closed form from the step variances).
  const nPairs = 20, frames = 10000, dt = 0.01, L = 20;
  const cell = orthorhombicCell(L, L, L);
  const partner = Int32Array.from({ length: 2 * nPairs }, (_, i) => (i < nPairs ? i + nPairs : i - nPairs));
  const topo = ionTopology(nPairs, nPairs);
  const opts = { charges: parseChargeRules('Na=+1,Cl=-1'), temperature: 300, fitFrom: dt, fitTo: 20 * dt };

  it('ions moving together exactly: ionicity 0', () => {
    // s_e = 0: M(t) is constant, the collective MSD vanishes identically; only round-off remains
    // (1e-9 absolute on a ratio of order 1).
    const pos = wrapAll(walks(Array.from({ length: 2 * nPairs }, () => 0), frames, 8, { partner, sd: 0.1 }), cell);
    const r = run(opts, topo, pos, null, cell, dt);
    expect(Math.abs(r.ionicity.value)).toBeLessThan(1e-9);
    expect(r.nernstEinstein.value).toBeGreaterThan(0);
  });

  it('half-correlated pairs: ionicity s_e²/(s_c² + s_e²) = 0.5', () => {
    // Tolerance: σ_EH carries relative SD √(2/1500) = 0.037 (window end 20 lags, as above); σ_NE from
    // 40 ions is ~5× tighter; 4 SD of the ratio → 0.5 ± 0.08.
    const pos = wrapAll(walks(Array.from({ length: 2 * nPairs }, () => 0.1), frames, 9, { partner, sd: 0.1 }), cell);
    const r = run(opts, topo, pos, null, cell, dt);
    expect(Math.abs(r.ionicity.value - 0.5)).toBeLessThan(0.08);
  });
});

describe('Green–Kubo with Ornstein–Uhlenbeck ions', () => {
  it('σ_GK = e²/(VkT)(D₊ + D₋) with D = σ_v²/γ', () => {
    // Truth: for independent OU ions ⟨J(0)·J(t)⟩ = Σ q² 3σ_v² e^{−γt} (Uhlenbeck & Ornstein 1930),
    // so σ = e²/(3VkT)·Σ 3σ_v²/γ = e²/(VkT)(σ₊² + σ₋²)/γ. One Na⁺ (σ_v = 2 Å/ps) and one Cl⁻ (1.5 Å/ps),
    // γ = 50/ps, Δt = 0.004 ps (trapezoid bias (γΔt)²/12 = 0.3 %), 100 000 frames (400 ps = 20 000/γ).
    // Tolerance: the collective running integral to t has relative SD √(4t/(3·T_run)) (same
    // Isserlis argument as the VACF test, N = 1 collective process); at the plateau end t_b this is
    // the statistical bound; the rule can stop early by at most its tolerance (3 %).
    // Tolerance = 0.03 + 0.003 + 4·√(4 t_b/(3 T_run)).
    const frames = 100000, dt = 0.004, gamma = 50, L = 20, T = 300;
    const sv = [2, 1.5];
    const vel: Float64Array[] = Array.from({ length: frames }, () => new Float64Array(6));
    for (let k = 0; k < 6; k++) {
      const v = ornsteinUhlenbeck(frames, dt, 1 / gamma, sv[Math.floor(k / 3)], 4242 + k);
      for (let t = 0; t < frames; t++) vel[t][k] = v[t];
    }
    const pos: Float64Array[] = [Float64Array.from([1, 2, 3, 10, 11, 12])];
    for (let t = 1; t < frames; t++) pos.push(Float64Array.from(pos[t - 1], (x, k) => x + 0.5 * (vel[t - 1][k] + vel[t][k]) * dt));
    const cell = orthorhombicCell(L, L, L);
    const r = run(
      { charges: parseChargeRules('Na=+1,Cl=-1'), temperature: T, plateauSpan: 0.002, plateauTolerance: 0.03 },
      ionTopology(1, 1),
      pos,
      vel,
      cell,
      dt,
    );
    const sigmaTrue = ((ELEMENTARY_CHARGE ** 2) / (L ** 3 * 1e-30 * BOLTZMANN * T)) * ((4 + 2.25) / gamma) * 1e-8;
    expect(r.greenKubo).not.toBeNull();
    expect(r.greenKuboPlateau!.found).toBe(true);
    const tb = r.greenKuboPlateau!.to;
    const tol = 0.033 + 4 * Math.sqrt((4 * tb) / (3 * frames * dt));
    expect(relDiff(r.greenKubo!.value, sigmaTrue)).toBeLessThan(tol);
  });
});

describe('charge layouts', () => {
  it('molecular ions: net charge per molecule, grouped by residue name', () => {
    // Truth: a molecule's charge is the sum of its atoms' charges (−0.5 − 0.5 = −1 for each
    // diatomic "NO" residue, +1 for each "K" residue); neutral molecules ("W", 0.4 − 0.4) drop out.
    const labels = ['K', 'N', 'O', 'K', 'N', 'O', 'H', 'O'];
    const names = ['K', 'NO', 'NO', 'K', 'NO', 'NO', 'W', 'W'];
    const molecule = Int32Array.from([0, 1, 1, 2, 3, 3, 4, 4]);
    const topo: Topology = {
      atoms: 8,
      labels,
      elements: labels,
      masses: Float64Array.from([39.1, 14.0, 16.0, 39.1, 14.0, 16.0, 1.0, 16.0]),
      charges: Float64Array.from([1, -0.5, -0.5, 1, -0.5, -0.5, 0.4, -0.4]),
      residues: { names, numbers: Int32Array.from(molecule, (m) => m + 1), chains: names.map(() => ''), molecule, count: 5 },
    };
    const q = atomCharges(topo, null);
    const layout = chargeLayout(topo, q, true);
    expect(layout.groups.map((g) => [g.label, g.sites.length, g.charge])).toEqual([
      ['K', 2, 1],
      ['NO', 2, -1],
    ]);
    expect(Array.from(layout.siteCharges)).toEqual([1, -1, 1, -1]);
    // Atom mode with rules: later rules override earlier ones for the atoms they pick.
    const q2 = atomCharges(topo, parseChargeRules('all=0,K=+1,N=-1'));
    expect(Array.from(q2)).toEqual([1, -1, 0, 1, -1, 0, 0, 0]);
  });
});

describe('ions among partially charged solvent', () => {
  // 12 Na⁺ and 12 Cl⁻ random walks (step SD 0.1 and 0.07 Å per axis every 0.01 ps) plus 12 rigid
  // "water" molecules (O −0.8476, two H +0.4238: neutral) whose centres walk with SD 0.08 Å, in a
  // 25 Å cube. Truth: Nernst–Einstein counts independent ions only, σ_NE = e²/(VkT) Σ N z² D
  // (e.g. Hansen & McDonald, Theory of Simple Liquids, 4th ed.), and c = N(cations)/(N_A V); the
  // water's partial charges carry no net charge and must change neither. The atoms, masses and
  // paths are identical in both runs (only the charges differ), so both numbers must agree to
  // round-off (1e-12 relative).
  const nIon = 12, nW = 12, frames = 3000, dt = 0.01, L = 25, T = 300;
  const labels = [...Array.from({ length: nIon }, () => 'Na'), ...Array.from({ length: nIon }, () => 'Cl')];
  for (let w = 0; w < nW; w++) labels.push('O', 'H', 'H');
  const masses = Float64Array.from(labels, (l) => ({ Na: 22.99, Cl: 35.45, O: 16.0, H: 1.008 })[l]!);
  const steps = [...Array.from({ length: nIon }, () => 0.1), ...Array.from({ length: nIon }, () => 0.07), ...Array.from({ length: nW }, () => 0.08)];
  const centres = walks(steps, frames, 404);
  const offsets = [[0, 0, 0], [0.757, 0.586, 0], [-0.757, 0.586, 0]];
  const pos = centres.map((c) => {
    const p = new Float64Array(3 * labels.length);
    p.set(c.subarray(0, 3 * 2 * nIon));
    for (let w = 0; w < nW; w++) {
      const o = 3 * (2 * nIon + w);
      for (let j = 0; j < 3; j++) for (let k = 0; k < 3; k++) p[3 * (2 * nIon + 3 * w + j) + k] = c[o + k] + offsets[j][k];
    }
    return p;
  });
  const cell = orthorhombicCell(L, L, L);
  const wrapped = wrapAll(pos, cell);
  const topo: Topology = { atoms: labels.length, labels, elements: labels, masses, charges: null, residues: null };
  const base = { temperature: T, fitFrom: dt, fitTo: 20 * dt };
  const ionsOnly = run({ ...base, charges: parseChargeRules('Na=+1,Cl=-1') }, topo, wrapped, null, cell, dt);
  const withWater = run({ ...base, charges: parseChargeRules('Na=+1,Cl=-1,O=-0.8476,H=+0.4238') }, topo, wrapped, null, cell, dt);

  it('Nernst–Einstein and the concentration are unchanged by the water partial charges', () => {
    expect(relDiff(withWater.nernstEinstein.value, ionsOnly.nernstEinstein.value)).toBeLessThan(1e-12);
    expect(relDiff(withWater.nernstEinstein.uncertainty!, ionsOnly.nernstEinstein.uncertainty!)).toBeLessThan(1e-12);
    expect(relDiff(withWater.concentration!.value, ionsOnly.concentration!.value)).toBeLessThan(1e-12);
    // c = 12/(6.02214076e23 · 15625e-30 m³) = 1275.3 mol/m³ = 1.2753 mol/L (hand; 5 figures).
    expect(relDiff(withWater.concentration!.value, 1.2753)).toBeLessThan(1e-4);
    // The ions are the species; the water sites are listed as current-only, and the output says so.
    expect(withWater.species.map((x) => x.label)).toEqual(['Na', 'Cl']);
    expect(withWater.otherCharged.map((x) => [x.label, x.count, x.ion])).toEqual([['O', 12, false], ['H', 24, false]]);
    expect(withWater.notes.join(' ')).toMatch(/36 charged site\(s\) are not ions/);
  });

  it('Nernst–Einstein still matches the closed form with D = s²/(2Δt)', () => {
    // Tolerance: each ion species' D rests on n = 3·12·⌊3000/20⌋ = 5400 independent 20-step
    // displacements → relative SD √(2/n) = 0.019; the NE sum is dominated by Na (0.01 vs 0.0049):
    // 4 SD = 7.7 %, plus the centre-of-mass removal (mass-weighted over all 60 atoms, < 2 %): 10 %.
    const sigmaTrue = ((ELEMENTARY_CHARGE ** 2) / (L ** 3 * 1e-30 * BOLTZMANN * T)) * nIon * ((0.01 + 0.0049) / (2 * dt)) * 1e-8;
    expect(relDiff(withWater.nernstEinstein.value, sigmaTrue)).toBeLessThan(0.1);
  });

  it('the water charges do enter the collective current', () => {
    // Truth: M = Σ q_i r_i over all charged sites; rigid neutral molecules add q·(offset) dipoles
    // that are constant here (no rotation), so ΔM and the Einstein–Helfand value are unchanged too
    // (algebra: a constant drops out of every displacement); agreement to 1e-9 relative.
    expect(relDiff(withWater.einsteinHelfand.value, ionsOnly.einsteinHelfand.value)).toBeLessThan(1e-9);
  });

  it('scaled ion charges count as ions only when named with --ions', () => {
    // ±0.8 e is not a whole charge: by the rule nothing is an ion and no Nernst–Einstein value is
    // given; naming the ions restores it with z = 0.8, i.e. 0.64 × the unit-charge value (z² scaling
    // of Nernst–Einstein; algebra), to round-off.
    const scaled = parseChargeRules('Na=+0.8,Cl=-0.8,O=-0.8476,H=+0.4238');
    const none = run({ ...base, charges: scaled }, topo, wrapped, null, cell, dt);
    expect(Number.isNaN(none.nernstEinstein.value)).toBe(true);
    expect(none.converged).toBe(false);
    expect(none.notes.join(' ')).toMatch(/--ions/);
    const named = run({ ...base, charges: scaled, ions: 'Na,Cl' }, topo, wrapped, null, cell, dt);
    expect(relDiff(named.nernstEinstein.value, 0.64 * ionsOnly.nernstEinstein.value)).toBeLessThan(1e-12);
    expect(relDiff(named.concentration!.value, ionsOnly.concentration!.value)).toBeLessThan(1e-12);
  });

  it('with residues, a single-atom residue with a whole charge is an ion; atoms of a neutral molecule are not', () => {
    // Same rule on a residue topology: NA and CL residues of one atom each, SOL residues of three.
    const names = labels.map((l) => (l === 'Na' ? 'NA' : l === 'Cl' ? 'CL' : 'SOL'));
    const molecule = Int32Array.from(labels, (_, a) => (a < 2 * nIon ? a : 2 * nIon + Math.floor((a - 2 * nIon) / 3)));
    const res: Topology = { ...topo, residues: { names, numbers: Int32Array.from(molecule, (m) => m + 1), chains: names.map(() => ''), molecule, count: 2 * nIon + nW } };
    const layout = chargeLayout(res, atomCharges(res, parseChargeRules('Na=+1,Cl=-1,O=-0.8476,H=+0.4238')), false);
    expect(layout.groups.map((g) => [g.label, g.ion])).toEqual([['Na', true], ['Cl', true], ['O', false], ['H', false]]);
    const r = run({ ...base, charges: parseChargeRules('Na=+1,Cl=-1,O=-0.8476,H=+0.4238') }, res, wrapped, null, cell, dt);
    expect(relDiff(r.nernstEinstein.value, ionsOnly.nernstEinstein.value)).toBeLessThan(1e-12);
  });
});
