/**
 * Checks of the demo engine (fixtures/demo-engine.ts) against external truths only: published
 * erfc values, calculus (force = −dU/dr by finite differences), the virial theorem for a uniform
 * dilation, the second-order energy error of velocity Verlet, and equipartition under a Langevin
 * thermostat. The demo output itself is never used as truth.
 */
import { describe, expect, it } from 'vitest';
import { Random } from '../src/random.js';
import {
  KB_KJ_PER_MOL,
  MVV_TO_KJ_PER_MOL,
  COULOMB_KJ_PER_MOL_A,
  KJ_PER_MOL_A3_TO_BAR,
  Species,
  buildNeighbourList,
  computeForces,
  createNeighbourList,
  createState,
  dsfCoulomb,
  erfc,
  kineticEnergy,
  latticeStart,
  ljPair,
  makePairTable,
  maxwellBoltzmann,
  step,
  temperature,
  MDState,
  PairTable,
} from '../fixtures/demo-engine.js';

const SPECIES: Species[] = [
  { name: 'Sv', mass: 18.0, charge: 0, sigma: 3.0, epsilonK: 120 },
  { name: 'Na', mass: 22.99, charge: +1, sigma: 2.6, epsilonK: 50 },
  { name: 'Cl', mass: 35.45, charge: -1, sigma: 3.8, epsilonK: 150 },
];

/** A small disordered system: lattice start, then a short Langevin run to leave the lattice. */
function smallSystem(nSv: number, nIon: number, box: number, seed: number, coulombCutoff = 9) {
  const types: number[] = [];
  for (let i = 0; i < nSv; i++) types.push(0);
  for (let i = 0; i < nIon; i++) types.push(1, 2);
  const table = makePairTable(SPECIES, { ljCutoffSigma: 2.5, coulombCutoff, dsfAlpha: 0.2, dielectric: 78 });
  const s = createState(box, types, SPECIES);
  const rng = new Random(seed);
  latticeStart(s, rng);
  maxwellBoltzmann(s, 300, rng);
  const list = createNeighbourList(s.n, 1.0);
  computeForces(s, table, list);
  for (let k = 0; k < 200; k++) step(s, table, list, { dt: 0.002, gamma: 5, temperature: 300 }, rng);
  return { s, table, list, rng };
}

/** Potential energy with a fresh neighbour list (no skin effects). */
function energyAt(s: MDState, table: PairTable): number {
  const list = createNeighbourList(s.n, 0.5);
  computeForces(s, table, list);
  return s.potential;
}

describe('demo engine: constants', () => {
  it('derives unit conversions from CODATA constants', () => {
    // 1 g/mol (Å/ps)² = 1e-3 kg/mol × 1e4 m²/s² = 10 J/mol.
    expect(MVV_TO_KJ_PER_MOL).toBeCloseTo(0.01, 15);
    // R = 8.314462618 J/(mol K) (CODATA 2018).
    expect(KB_KJ_PER_MOL).toBeCloseTo(8.314462618e-3, 12);
    // e²N_A/(4πε₀ Å) = 1389.35 kJ/mol (CODATA 2018 ε₀), to 5 significant figures.
    expect(COULOMB_KJ_PER_MOL_A).toBeCloseTo(1389.35, 1);
    // 1 kJ/(mol Å³) = 1e3/N_A J / 1e-30 m³ = 1.66054e9 Pa = 16605.4 bar.
    expect(KJ_PER_MOL_A3_TO_BAR).toBeCloseTo(16605.39, 1);
  });

  it('erfc matches tabulated values (Abramowitz & Stegun Table 7.1) to 1e-13 relative', () => {
    const ref: [number, number][] = [
      [0, 1],
      [0.5, 0.4795001221869535],
      [1, 0.1572992070502851],
      [2, 0.004677734981047266],
      [3, 2.209049699858544e-5],
      [5, 1.537459794428035e-12],
    ];
    for (const [x, v] of ref) expect(Math.abs(erfc(x) - v) / v).toBeLessThan(1e-13);
    expect(erfc(-1)).toBeCloseTo(2 - 0.1572992070502851, 14);
  });
});

describe('demo engine: pair terms', () => {
  it('LJ force equals −du/dr (central difference, h = 1e-5 Å; error O(h²) ≈ 1e-9 relative)', () => {
    const eps = 1.0;
    for (const r of [2.8, 3.0, 3.3, 4.0, 6.0]) {
      const h = 1e-5;
      const fd = -(ljPair(r + h, 3, eps, 7.5).energy - ljPair(r - h, 3, eps, 7.5).energy) / (2 * h);
      expect(Math.abs(ljPair(r, 3, eps, 7.5).force - fd)).toBeLessThan(1e-6 * Math.max(1, Math.abs(fd)));
    }
    // Minimum at 2^{1/6} σ with depth −ε (before the shift), zero energy at the cutoff.
    const rmin = 2 ** (1 / 6) * 3;
    expect(ljPair(rmin, 3, eps, 7.5).force).toBeCloseTo(0, 12);
    expect(ljPair(rmin, 3, eps, 1e9).energy).toBeCloseTo(-eps, 12);
    expect(ljPair(7.5 - 1e-12, 3, eps, 7.5).energy).toBeCloseTo(0, 9);
  });

  it('DSF Coulomb: force = −dv/dr, and both vanish at the cutoff (Fennell & Gezelter 2006)', () => {
    for (const r of [2.5, 4, 7, 9.9]) {
      const h = 1e-5;
      const fd = -(dsfCoulomb(r + h, 0.2, 10).energy - dsfCoulomb(r - h, 0.2, 10).energy) / (2 * h);
      expect(Math.abs(dsfCoulomb(r, 0.2, 10).force - fd)).toBeLessThan(1e-8);
    }
    const atRc = dsfCoulomb(10 - 1e-9, 0.2, 10);
    expect(Math.abs(atRc.energy)).toBeLessThan(1e-10);
    expect(Math.abs(atRc.force)).toBeLessThan(1e-9);
    // Undamped, unshifted limit: α → 0 and R_c → ∞ give 1/r and 1/r².
    expect(dsfCoulomb(3, 1e-12, 1e12).energy).toBeCloseTo(1 / 3, 9);
    expect(dsfCoulomb(3, 1e-12, 1e12).force).toBeCloseTo(1 / 9, 9);
  });
});

describe('demo engine: forces, virial, integrator', () => {
  it('total forces equal −∂U/∂x (central differences on a 130-particle system with ions)', () => {
    const { s, table } = smallSystem(120, 5, 20, 7);
    const u0 = energyAt(s, table);
    expect(Number.isFinite(u0)).toBe(true);
    const f = Float64Array.from(s.force);
    const h = 1e-5;
    let maxErr = 0;
    let maxF = 0;
    for (let k = 0; k < 3 * s.n; k += 7) {
      const x = s.pos[k]!;
      s.pos[k] = x + h;
      const up = energyAt(s, table);
      s.pos[k] = x - h;
      const um = energyAt(s, table);
      s.pos[k] = x;
      maxErr = Math.max(maxErr, Math.abs(-(up - um) / (2 * h) - f[k]!));
      maxF = Math.max(maxF, Math.abs(f[k]!));
    }
    // O(h²) truncation plus round-off ~ 1e-16·|U|/h ≈ 1e-9: allow 1e-5 of the largest force.
    expect(maxErr).toBeLessThan(1e-5 * maxF);
  });

  it('virial trace equals −dU/dλ for a uniform dilation r → λr, L → λL (virial theorem)', () => {
    const { s, table } = smallSystem(120, 5, 20, 11);
    energyAt(s, table);
    const trace = s.virial[0]! + s.virial[1]! + s.virial[2]!;
    const pos0 = Float64Array.from(s.pos);
    const box0 = s.box;
    const uAt = (lam: number) => {
      for (let k = 0; k < pos0.length; k++) s.pos[k] = lam * pos0[k]!;
      s.box = lam * box0;
      return energyAt(s, table);
    };
    const h = 1e-6;
    const dUdl = (uAt(1 + h) - uAt(1 - h)) / (2 * h);
    expect(Math.abs(-dUdl - trace)).toBeLessThan(1e-5 * Math.max(1, Math.abs(trace)));
  });

  it('cell-list neighbour search finds exactly the pairs of a brute-force search', () => {
    // 1000 solvent particles at random (unwrapped, up to one box outside) in a 35 Å box:
    // list cutoff 7.5 + 1 Å for Sv–Sv, cells ≥ 10.5 Å (largest cutoff + skin) → 3 per edge.
    const table = makePairTable(SPECIES, { ljCutoffSigma: 2.5, coulombCutoff: 9, dsfAlpha: 0.2, dielectric: 78 });
    const s = createState(35, new Array<number>(1000).fill(0), SPECIES);
    const rng = new Random(3);
    for (let k = 0; k < 3 * s.n; k++) s.pos[k] = (3 * rng.uniform() - 1) * s.box;
    const list = createNeighbourList(s.n, 1.0);
    buildNeighbourList(s, table, list);
    const got = new Set<number>();
    for (let p = 0; p < list.count; p++) got.add(list.pairI[p]! * s.n + list.pairJ[p]!);
    expect(got.size).toBe(list.count);
    let expected = 0;
    let missing = 0;
    const lim2 = (7.5 + 1.0) ** 2;
    for (let i = 0; i < s.n; i++)
      for (let j = i + 1; j < s.n; j++) {
        let r2 = 0;
        for (let d = 0; d < 3; d++) {
          let dx = s.pos[3 * i + d]! - s.pos[3 * j + d]!;
          dx -= s.box * Math.round(dx / s.box);
          r2 += dx * dx;
        }
        if (r2 < lim2) {
          expected++;
          if (!got.has(i * s.n + j)) missing++;
        }
      }
    expect(missing).toBe(0);
    expect(list.count).toBe(expected);
  });

  it('velocity Verlet: energy fluctuation scales as dt² (second-order integrator)', () => {
    const rms = (dt: number) => {
      const { s, table, list } = smallSystem(120, 5, 20, 5);
      const es: number[] = [];
      const steps = Math.round(2 / dt); // 2 ps
      for (let k = 0; k < steps; k++) {
        step(s, table, list, { dt, gamma: 0, temperature: 300 }, null);
        es.push(s.potential + kineticEnergy(s));
      }
      const m = es.reduce((a, b) => a + b, 0) / es.length;
      return Math.sqrt(es.reduce((a, b) => a + (b - m) ** 2, 0) / es.length);
    };
    const r4 = rms(0.004);
    const r2 = rms(0.002);
    // Shadow-Hamiltonian argument: the energy error is O(dt²), so the ratio should be near 4.
    // Same initial state for both; allow 2.5–6 because of the trajectories' divergence.
    expect(r4 / r2).toBeGreaterThan(2.5);
    expect(r4 / r2).toBeLessThan(6);
    // And small: well below k_B T (2.49 kJ/mol) for the whole system.
    expect(r4).toBeLessThan(0.1 * KB_KJ_PER_MOL * 300);
  });

  it('Langevin thermostat gives ⟨T⟩ = T₀ by equipartition (N_dof = 3N − 3) within 2%', () => {
    const { s, table, list, rng } = smallSystem(120, 5, 20, 9);
    let sum = 0;
    const n = 10000;
    for (let k = 0; k < n; k++) {
      step(s, table, list, { dt: 0.004, gamma: 5, temperature: 300 }, rng);
      sum += temperature(s);
    }
    // One sample has relative sd √(2/N_dof) ≈ 0.07 (N_dof = 387). Block averages of longer runs of
    // this system gave an sd of the mean of ≈ 0.7% for 40 ps (10 000 steps of 4 fs), so 2% is a
    // ~3σ bound; BAOAB's O(dt²) kinetic-temperature bias at dt = 2–4 fs was below 0.3% (not resolved).
    expect(Math.abs(sum / n / 300 - 1)).toBeLessThan(0.02);
  });
});
