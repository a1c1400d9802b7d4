import { describe, expect, it } from 'vitest';
import { mkdtempSync, writeFileSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import {
  rdfPass, mergeRdfPartials, resolveBins, type RdfSpec, type RdfPartial, type RdfResult,
} from '../analyses/rdf.js';
import {
  shellVolumes, binCentres, normaliseCounts, runningCoordination, savitzkyGolay7, findFirstShell, automaticBlockCount,
  groupContiguous,
} from '../analyses/rdf-curves.js';
import { PairHistogram, forEachPairWithin } from '../src/neighbors.js';
import { cellGrid, planSearch } from '../src/cell-search.js';
import { RND, lowerTriangular } from '../src/pair-kernels.js';
import { parsePairOption, parseWavenumber, safeName } from '../analyses/rdf-analysis.js';
import { CellGeometry, orthorhombicCell, cellFromParameters } from '../src/cell.js';
import { Random } from '../src/random.js';
import { UsageError } from '../src/errors.js';
import type { CellMatrix, Frame, PassContext, Topology } from '../src/types.js';
import { main } from '../src/cli.js';

// ---------------------------------------------------------------------------------------------
// Helpers: in-memory frames from seeded generators (src/random.ts).
// ---------------------------------------------------------------------------------------------

function topology(labels: string[], molecule?: Int32Array): Topology {
  const n = labels.length;
  return {
    atoms: n,
    labels,
    elements: labels.map((l) => l.replace(/[^A-Za-z]/g, '')),
    masses: new Float64Array(n).fill(39.95),
    charges: null,
    residues: molecule
      ? { names: labels.map(() => 'M'), numbers: Int32Array.from(molecule, (m) => m + 1), chains: labels.map(() => ''), molecule, count: Math.max(...molecule) + 1 }
      : null,
  };
}

function frameOf(index: number, positions: Float64Array, cell: CellMatrix | null, topo: Topology): Frame {
  return { index, time: null, cell, positions, velocities: null, line: 1, topology: topo };
}

/** Uniform random points in a (possibly triclinic) cell: r = s·H with s uniform in [0,1)³. */
function uniformPositions(rng: Random, n: number, h: CellMatrix): Float64Array {
  const p = new Float64Array(3 * n);
  for (let i = 0; i < n; i++) {
    const s0 = rng.uniform(), s1 = rng.uniform(), s2 = rng.uniform();
    for (let k = 0; k < 3; k++) p[3 * i + k] = s0 * h[k] + s1 * h[3 + k] + s2 * h[6 + k];
  }
  return p;
}

function ctxFor(topo: Topology, cell: CellMatrix | null): PassContext {
  return { topology: topo, firstCell: cell ? Float64Array.from(cell) : null, frameInterval: 0.1, warnings: [] };
}

function runPass(spec: RdfSpec, frames: Frame[], topo: Topology): { partial: RdfPartial; result: RdfResult; ctx: PassContext } {
  const pass = rdfPass(spec);
  const ctx = ctxFor(topo, frames[0].cell);
  const acc = pass.create(ctx);
  for (const f of frames) acc.frame(f);
  const partial = acc.partial();
  return { partial, result: pass.finish(partial, ctx), ctx };
}

const baseSpec = (pairs: RdfSpec['pairs'], extra: Partial<RdfSpec> = {}): RdfSpec => ({
  pairs, rMax: null, binWidth: 0.05, skipSameMolecule: false, blocks: null, ...extra,
});

/**
 * Independent reference histogram: every ordered pair, minimum image from src/cell.ts
 * (Math.round, its own formula), bin ⌊r/Δr⌋ kept when r < nbins·Δr.
 */
function plainLoopHistogram(pos: Float64Array, g: CellGeometry, n: number, nb: number, bw: number): Float64Array {
  const ref = new Float64Array(nb);
  const d = new Float64Array(3);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
    if (i === j) continue;
    for (let c = 0; c < 3; c++) d[c] = pos[3 * j + c] - pos[3 * i + c];
    g.minimumImage(d, 0);
    const r = Math.hypot(d[0], d[1], d[2]);
    const k = Math.floor(r / bw);
    if (r < nb * bw && k < nb) ref[k]++;
  }
  return ref;
}

/** FCC lattice positions: conventional cubic cell of edge a, m×m×m cells (4 atoms each). */
function fccConventional(a: number, m: number): Float64Array {
  const basis = [[0, 0, 0], [0.5, 0.5, 0], [0.5, 0, 0.5], [0, 0.5, 0.5]];
  const out: number[] = [];
  for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) for (let k = 0; k < m; k++) {
    for (const b of basis) out.push((i + b[0]) * a, (j + b[1]) * a, (k + b[2]) * a);
  }
  return Float64Array.from(out);
}

// ---------------------------------------------------------------------------------------------

describe('shell volumes and running coordination (closed forms)', () => {
  it('shell volumes telescope to the sphere volume 4πR³/3', () => {
    // Σ (4π/3)(r_hi³ − r_lo³) = (4π/3)R³ (elementary geometry). Relative 1e-12: only round-off.
    const v = shellVolumes(200, 0.05);
    const sum = v.reduce((s, x) => s + x, 0);
    expect(Math.abs(sum - (4 * Math.PI / 3) * 10 ** 3) / sum).toBeLessThan(1e-12);
    expect(binCentres(4, 0.5)[3]).toBe(1.75); // (k + ½)Δr, exact in binary
  });

  it('coordination integral of a step g(r) is 4πρ(R³ − r0³)/3', () => {
    // g = 0 below r0, 1 above (r0 on a bin edge): n(R) = 4πρ ∫_{r0}^{R} r² dr = 4πρ(R³ − r0³)/3
    // (closed-form integral). Evaluated at every bin centre beyond r0; the bin-wise integral is
    // exact for a piecewise-constant g, so only round-off remains: relative 1e-12.
    const bw = 0.05, nb = 240, rho = 0.0334, r0 = 3.0;
    const g = Float64Array.from({ length: nb }, (_, k) => (k * bw >= r0 - 1e-12 ? 1 : 0));
    const n = runningCoordination(g, bw, rho);
    for (let k = 60; k < nb; k++) {
      const R = (k + 0.5) * bw;
      const exact = (4 * Math.PI * rho * (R ** 3 - r0 ** 3)) / 3;
      expect(Math.abs(n[k] - exact)).toBeLessThan(1e-12 * Math.max(1, exact));
    }
  });

  it('normalisation: counts equal to the ideal expectation give g = 1', () => {
    // C_k = N_pairs · V_k · Σ 1/V_f is the ideal-gas expectation (definition of g, Allen &
    // Tildesley 2017 §8.2), so g must be 1 to round-off (1e-12).
    const nb = 50, bw = 0.1, pairs = 999 * 1000, inv = 3 / 8000;
    const counts = Array.from(shellVolumes(nb, bw), (v) => pairs * v * inv);
    for (const x of normaliseCounts(counts, bw, pairs, inv)) expect(Math.abs(x - 1)).toBeLessThan(1e-12);
  });
});

describe('Savitzky–Golay smoothing and shell location', () => {
  it('the 7-point quadratic filter reproduces a cubic exactly', () => {
    // Savitzky & Golay, Anal. Chem. 36, 1627 (1964): the quadratic/cubic smoothing weights are
    // exact for polynomials of degree ≤ 3. Values are O(10); 1e-9 absolute leaves room for round-off.
    const y = Array.from({ length: 40 }, (_, k) => 2 - 0.3 * k + 0.05 * k * k - 0.001 * k ** 3);
    const s = savitzkyGolay7(y);
    for (let k = 0; k < 40; k++) expect(Math.abs(s[k] - y[k])).toBeLessThan(1e-9);
  });

  it('finds the peak and minimum of g = 1 + 0.8 cos(π(r − 3)) at r = 3 and 4 Å', () => {
    // For r ≥ 2.5 the curve peaks at r = 3 and has its first minimum at r = 4 (cos = −1), closed
    // form; below 2.5 g = 0 (an excluded core). Located positions are bin centres: tolerance half
    // a bin (0.025 Å). Counts are set large so the excursion is significant.
    const bw = 0.05, nb = 200;
    const r = binCentres(nb, bw);
    const g = Array.from(r, (x) => (x < 2.5 ? 0 : 1 + 0.8 * Math.cos(Math.PI * (x - 3))));
    const shell = findFirstShell(savitzkyGolay7(g), new Array(nb).fill(1000));
    expect(Math.abs(r[shell.peak!] - 3)).toBeLessThanOrEqual(0.025 + 1e-12);
    expect(Math.abs(r[shell.minimum!] - 4)).toBeLessThanOrEqual(0.025 + 1e-12);
  });

  it('ignores an isolated noise spike with too few counts before the first shell', () => {
    // A single close contact (5 counts < MIN_PEAK_COUNTS = 25) must not become the first peak;
    // the true peak at r = 3 Å (cos form as above) is found within half a bin.
    const bw = 0.05, nb = 200;
    const r = binCentres(nb, bw);
    const g = Array.from(r, (x) => (x < 2.5 ? 0 : 1 + 0.8 * Math.cos(Math.PI * (x - 3))));
    g[20] = 40; // spike at 1.025 Å
    // Counts consistent with g (∝ g·V_k): none in the excluded core except the spike's 5.
    const counts: number[] = g.map((x) => (x === 0 ? 0 : 1000));
    counts[20] = 5;
    const shell = findFirstShell(savitzkyGolay7(g), counts);
    expect(Math.abs(r[shell.peak!] - 3)).toBeLessThanOrEqual(0.025 + 1e-12);
  });
});

describe('ideal gas: g(r) = 1 within binomial noise', () => {
  const rng = new Random(20240611);
  const n = 400, L = 20, frames = 40;
  const topo = topology(Array.from({ length: n }, (_, i) => (i < 150 ? 'Ar' : 'Kr')));
  const cell = orthorhombicCell(L, L, L);
  const fr = Array.from({ length: frames }, (_, f) => frameOf(f, uniformPositions(rng, n, cell), cell, topo));

  it('every well-populated bin is within 4.5 SD of 1 and the mean square deviation is χ²-like', () => {
    // For independent uniform points the distances of distinct pairs are pairwise independent,
    // so the count of unordered pairs in bin k over F frames is binomial with M = F·N(N−1)/2
    // trials and p_k = V_k/V: SD(g_k) = √((1 − p_k)/(M p_k)) (binomial variance). Bins with ≥ 100
    // expected pairs are near-normal: max |z| < 4.5 fails by chance with probability ≈ 170 bins ×
    // 7e-6 ≈ 1e-3, and mean z² must lie within 1 ± 5·√(2/bins) (χ² mean and SD).
    const { result } = runPass(baseSpec([{ a: 'all', b: 'all' }]), fr, topo);
    const p = result.pairs[0];
    const M = (frames * n * (n - 1)) / 2;
    const v = shellVolumes(p.g.length, 0.05);
    let z2 = 0, bins = 0, zmax = 0;
    p.g.forEach((g, k) => {
      const pk = v[k] / L ** 3;
      if (M * pk < 100) return;
      const z = (g - 1) / Math.sqrt((1 - pk) / (M * pk));
      z2 += z * z;
      bins++;
      zmax = Math.max(zmax, Math.abs(z));
    });
    expect(bins).toBeGreaterThan(150);
    expect(zmax).toBeLessThan(4.5);
    expect(Math.abs(z2 / bins - 1)).toBeLessThan(5 * Math.sqrt(2 / bins));
    // Running coordination at the last bin centre R: mean number of other atoms within R of an
    // atom, (N − 1)·(4π/3)R³/V (closed form); relative SD ≤ 1/√(unordered pairs within R, ≈ 1.7e6)
    // ≈ 7.8e-4 (Poisson bound on the binomial): accept 4 SD = 3.1e-3.
    const nLast = p.n[p.n.length - 1]; // at the last bin centre, 9.975 Å
    const R = 9.975;
    expect(Math.abs(nLast / ((n - 1) * (4 * Math.PI / 3) * R ** 3 / L ** 3) - 1)).toBeLessThan(3.1e-3);
  });

  it('fewer than 20 frames: no correlation time, so the result is not called converged', () => {
    // A block standard error needs blocks longer than the correlation time, which cannot be
    // measured from a handful of frames (Flyvbjerg & Petersen, J. Chem. Phys. 91, 461 (1989)).
    const { result } = runPass(baseSpec([{ a: 'all', b: 'all' }]), fr.slice(0, 3), topo);
    expect(result.pairs[0].converged).toBe(false);
    expect(result.pairs[0].notes.join(' ')).toMatch(/no correlation time can be measured/);
    expect(result.pairs[0].reasons.map((x) => x.code)).toContain('rdf.too-few-frames');
  });

  it('error bars from blocks match the binomial SD of g', () => {
    // With independent frames the block SE of g_k estimates the binomial SD above. Each bin's SE
    // has a relative error 1/√(2(B−1)) ≈ 24 % for B = 10; the median ratio over ~170 bins is then
    // known to a few %: the χ-distribution median for 9 d.o.f. is 0.96, accept 0.8–1.15.
    const { result } = runPass(baseSpec([{ a: 'all', b: 'all' }]), fr, topo);
    const p = result.pairs[0];
    // Independent frames: true s = 1 → F/4 = 10 blocks. The estimate of s from 40 frames has a
    // standard error of order √(2(2M+1)/F) ≈ 0.5 for a window M of a few lags (Sokal 1997), so
    // accept any block count down to that of s = 2.
    expect(p.blocks).toBeLessThanOrEqual(automaticBlockCount(frames, 1));
    expect(p.blocks).toBeGreaterThanOrEqual(automaticBlockCount(frames, 2));
    const M = (frames * n * (n - 1)) / 2;
    const v = shellVolumes(p.g.length, 0.05);
    const ratios: number[] = [];
    p.gError.forEach((e, k) => {
      const pk = v[k] / L ** 3;
      if (M * pk >= 100 && e !== null) ratios.push(e / Math.sqrt((1 - pk) / (M * pk)));
    });
    ratios.sort((a, b) => a - b);
    const median = ratios[Math.floor(ratios.length / 2)];
    expect(median).toBeGreaterThan(0.8);
    expect(median).toBeLessThan(1.15);
  });

  it('overlapping selections are normalised by N_A·N_B − N_{A∩B}', () => {
    // A = all 100 atoms, B = the first 50 (inside A), 400 frames. Ideal gas: total observed
    // ordered pairs over the expectation (N_A·N_B − N_{A∩B})·F·p, p = (4π/3)R³/V, must be 1.
    // Variance (binomial per distinct pair, pairs inside A∩B counted twice): per frame
    // p(1−p)(4·1225 + 2500), so the relative SD is 8.3e-4; dividing by N_A·N_B instead would
    // give 1 − 1/N_A = 0.99, 12 SD off. Accept 4 SD.
    const r3 = new Random(4242);
    const L3 = 20;
    const topo3 = topology(Array.from({ length: 100 }, (_, i) => (i < 50 ? 'Ne' : 'Xe')));
    const c3 = orthorhombicCell(L3, L3, L3);
    const fr3 = Array.from({ length: 400 }, (_, f) => frameOf(f, uniformPositions(r3, 100, c3), c3, topo3));
    const { result, partial } = runPass(baseSpec([{ a: 'all', b: 'Ne' }]), fr3, topo3);
    const counts = partial.chunks.reduce((s, c) => s + c.counts[0].reduce((a, b) => a + b, 0), 0);
    const pr = ((4 * Math.PI) / 3) * result.rMax.value ** 3 / L3 ** 3;
    const ideal = (100 * 50 - 50) * 400 * pr;
    const sd = Math.sqrt((pr * (1 - pr) * (4 * 1225 + 2500)) / 400) / (4950 * pr);
    expect(Math.abs(counts / ideal - 1)).toBeLessThan(4 * sd);
    expect(Math.abs((counts / ideal) * (4950 / 5000) - 1)).toBeGreaterThan(4 * sd); // the wrong rule would fail
    expect(result.pairs[0].nA).toBe(100);
  });

  it('excluding same-molecule pairs removes them from the normalisation too', () => {
    // 90 independent uniform points grouped as 30 "molecules" of 3, 300 frames, r-max 6 Å in a
    // 12 Å box. Excluding the 2 partners of each atom leaves N_pairs = 90·89 − 180 ordered pairs,
    // all still uniform, so observed/expected = 1; normalising by 90·89 would be 2.2 % low.
    // Relative SD ≤ 1/√(unordered counts ≈ 6e5) ≈ 1.3e-3 (Poisson bound): accept 4 SD.
    const r4 = new Random(606);
    const molecule = Int32Array.from({ length: 90 }, (_, i) => Math.floor(i / 3));
    const topo4 = topology(new Array(90).fill('Ar'), molecule);
    const c4 = orthorhombicCell(12, 12, 12);
    const fr4 = Array.from({ length: 300 }, (_, f) => frameOf(f, uniformPositions(r4, 90, c4), c4, topo4));
    const { partial, result } = runPass(baseSpec([{ a: 'all', b: 'all' }], { skipSameMolecule: true }), fr4, topo4);
    const counts = partial.chunks.reduce((s, c) => s + c.counts[0].reduce((a, b) => a + b, 0), 0);
    const ideal = (90 * 89 - 180) * 300 * ((4 * Math.PI / 3) * result.rMax.value ** 3) / 12 ** 3;
    const sd = 1 / Math.sqrt(counts / 2);
    expect(Math.abs(counts / ideal - 1)).toBeLessThan(4 * sd);
    expect(partial.pairs[0].orderedPairs).toBe(90 * 89 - 180);
    // Without residues the option is a usage error.
    expect(() => rdfPass(baseSpec([{ a: 'all', b: 'all' }], { skipSameMolecule: true })).create(ctxFor(topology(['Ar', 'Ar']), c4))).toThrow(UsageError);
  });

  it('NPT: each frame is normalised with its own volume', () => {
    // Frames with edges L_f uniform in [19, 23] Å, r-max 9 Å. The ideal count is Σ_f N(N−1)V_k/V_f
    // (per-frame normalisation); using the mean volume instead would be biased by the Jensen gap
    // ⟨1/V⟩⟨V⟩ − 1 ≈ 9·var(L)/L² ≈ 2.7 % here. Each unordered pair is counted twice, so the
    // relative SD is at most 1/√(counts/2) (Poisson bound on the binomial) ≈ 1.5e-3: accept 4 SD;
    // the biased rule is ≈ 18 SD off.
    const r2 = new Random(77);
    const frs = Array.from({ length: 30 }, (_, f) => {
      const Lf = 19 + 4 * r2.uniform();
      const c = orthorhombicCell(Lf, Lf, Lf);
      return frameOf(f, uniformPositions(r2, 300, c), c, topology(new Array(300).fill('Ar')));
    });
    const topo2 = frs[0].topology;
    const { partial, result } = runPass(baseSpec([{ a: 'all', b: 'all' }], { rMax: 9 }), frs, topo2);
    const counts = partial.chunks.reduce((s, c) => s + c.counts[0].reduce((a, b) => a + b, 0), 0);
    const sphere = (4 * Math.PI / 3) * result.rMax.value ** 3;
    const ideal = frs.reduce((s, f) => s + (300 * 299 * sphere) / f.cell![0] ** 3, 0);
    const sd = 1 / Math.sqrt(counts / 2);
    expect(Math.abs(counts / ideal - 1)).toBeLessThan(4 * sd);
    const meanV = frs.reduce((s, f) => s + f.cell![0] ** 3, 0) / frs.length;
    const biased = (frs.length * 300 * 299 * sphere) / meanV;
    expect(Math.abs(counts / biased - 1)).toBeGreaterThan(4 * sd); // the test can tell them apart
  });
});

describe('FCC crystal: coordination shells 12, 6, 24, 12', () => {
  // Crystallography of the face-centred cubic lattice (e.g. Kittel, Introduction to Solid State
  // Physics, 8th ed., ch. 1; shell counts = theta series of the FCC lattice, OEIS A004015,
  // from memory): 12 neighbours at a/√2, 6 at a, 24 at a√(3/2), 12 at a√2. Cumulative: 12, 18,
  // 42, 54. A perfect lattice gives integer counts, so the running integral at a bin centre
  // between shells must equal them to round-off (1e-9).
  const a = 4.0;
  const checkShells = (res: RdfResult) => {
    const p = res.pairs[0];
    const at = (r: number) => p.n[Math.floor(r / 0.05)]; // bin containing r, value at its centre
    expect(Math.abs(at(3.4) - 12)).toBeLessThan(1e-9);
    expect(Math.abs(at(4.45) - 18)).toBeLessThan(1e-9);
    expect(Math.abs(at(5.3) - 42)).toBeLessThan(1e-9);
    expect(Math.abs(at(6.0) - 54)).toBeLessThan(1e-9);
    // First peak at a/√2 = 2.828 Å within half a bin; coordination number at the first minimum 12.
    expect(Math.abs(p.firstPeak!.r - a / Math.SQRT2)).toBeLessThanOrEqual(0.025 + 1e-12);
    expect(Math.abs(p.coordinationNumber!.value - 12)).toBeLessThan(1e-9);
  };

  it('conventional cubic cell (orthorhombic path)', () => {
    const pos = fccConventional(a, 4); // 256 atoms, 16 Å box
    const topo = topology(new Array(pos.length / 3).fill('Cu'));
    const cell = orthorhombicCell(16, 16, 16);
    const { result } = runPass(baseSpec([{ a: 'Cu', b: 'Cu' }], { blocks: 2 }), [frameOf(0, pos, cell, topo), frameOf(1, pos, cell, topo)], topo);
    checkShells(result);
  });

  it('60° rhombohedral primitive cell, replicated (triclinic path)', () => {
    // The FCC primitive cell is the rhombohedron of edge a/√2 with α = β = γ = 60°; 8×8×8 copies
    // (512 atoms) at fractional positions (i, j, k)/8 of the supercell are the same crystal.
    const m = 8;
    const e = (m * a) / Math.SQRT2;
    const cell = cellFromParameters(e, e, e, 60, 60, 60)!;
    const pos = new Float64Array(3 * m ** 3);
    let o = 0;
    for (let i = 0; i < m; i++) for (let j = 0; j < m; j++) for (let k = 0; k < m; k++) {
      for (let c = 0; c < 3; c++) pos[o + c] = (i / m) * cell[c] + (j / m) * cell[3 + c] + (k / m) * cell[6 + c];
      o += 3;
    }
    const topo = topology(new Array(m ** 3).fill('Cu'));
    expect(new CellGeometry(cell).orthorhombic).toBe(false);
    const { result } = runPass(baseSpec([{ a: 'Cu', b: 'Cu' }], { blocks: 2 }), [frameOf(0, pos, cell, topo), frameOf(1, pos, cell, topo)], topo);
    checkShells(result);
  });
});

describe('linked cells and brute force give identical histograms', () => {
  // Both paths evaluate the same pairs within r-max with the same floating-point expression
  // (src/neighbors.ts; linked cells after Allen & Tildesley 2017 §5.3); the histograms are
  // integer counts and must be equal exactly, for either cell reach.
  const cases: Array<[string, CellMatrix, number]> = [
    ['orthorhombic', orthorhombicCell(30, 32, 34), 6],
    ['triclinic', cellFromParameters(36, 38, 40, 75, 82, 68)!, 6.5],
  ];
  for (const [name, cell, rmax] of cases) {
    it(`${name}: A:A, disjoint A:B, overlapping A:B and same-molecule exclusion`, () => {
      const rng = new Random(name.length * 1000 + 7);
      const n = 2400;
      const pos = uniformPositions(rng, n, cell);
      // Shift some atoms by whole cell vectors so that raw coordinates are not all wrapped.
      for (let i = 0; i < n; i += 7) for (let c = 0; c < 3; c++) pos[3 * i + c] += cell[c] - 2 * cell[6 + c];
      const g = new CellGeometry(cell);
      const nb = Math.floor(rmax / 0.05);
      const molecule = Int32Array.from({ length: n }, (_, i) => Math.floor(i / 3));
      const all = Int32Array.from({ length: n }, (_, i) => i);
      const A = all.filter((i) => i % 3 === 0);
      const B = all.filter((i) => i % 3 !== 0);
      const C = all.filter((i) => i % 2 === 0);
      const grid = cellGrid(cell, nb * 0.05);
      expect(Math.min(...grid)).toBeGreaterThanOrEqual(3);
      for (const [a, b, mol] of [[all, all, null], [A, B, null], [A, C, null], [all, C, molecule], [all, all, molecule]] as const) {
        const ph = new PairHistogram(a, b, nb, 0.05, { molecule: mol });
        const ref = new Float64Array(nb);
        ph.addFrame(pos, g, ref, { method: 'brute', kernel: 'sparse' });
        // Brute force with the branch-free ("dense") kernel; 3×3 columns of width ≥ r-max (reach 1)
        // and 5×5 of width ≥ r-max/2 (reach 2) with their per-atom windows.
        for (const opts of [
          { method: 'brute', kernel: 'dense' }, { method: 'cells', reach: 1 }, { method: 'cells', reach: 2 },
        ] as const) {
          const h = new Float64Array(nb);
          ph.addFrame(pos, g, h, opts);
          expect(Array.from(h)).toEqual(Array.from(ref));
        }
        const h1 = ref;
        expect(h1.reduce((s, x) => s + x, 0)).toBeGreaterThan(1000);
      }
    });
  }

  it('per-atom windows lose no pair at the edges: r-max at the reach-2 limit, atoms on slab boundaries', () => {
    // Exact integer counts again (same argument as above). Cases chosen to stress the windows:
    // (1) cube of 30 Å with r-max 11.95 Å: ⌊2·30/11.95⌋ = 5 columns, the window reaches 0.398 of
    // the third axis, the most the plan allows; (2) a simple cubic lattice of spacing 2.5 Å in a
    // 30 Å cube, so atoms sit exactly on column and thin-slab boundaries and many pairs sit exactly
    // at r-max = 7.5 Å and at bin edges (0.25 Å bins); (3) the same lattice in a sheared cell.
    const lattice = (cell: CellMatrix, k: number): Float64Array => {
      const out: number[] = [];
      for (let a = 0; a < k; a++) for (let b = 0; b < k; b++) for (let c = 0; c < k; c++) {
        for (let d = 0; d < 3; d++) out.push((a / k) * cell[d] + (b / k) * cell[3 + d] + (c / k) * cell[6 + d]);
      }
      return Float64Array.from(out);
    };
    const cube = orthorhombicCell(30, 30, 30);
    const sheared = cellFromParameters(30, 30, 30, 90, 90, 75)!;
    const cases: Array<[CellMatrix, Float64Array, number, number]> = [
      [cube, uniformPositions(new Random(11), 1500, cube), 11.95, 0.05],
      [cube, lattice(cube, 12), 7.5, 0.25],
      [sheared, lattice(sheared, 12), 7.0, 0.25],
    ];
    for (const [cell, pos, rmax, bw] of cases) {
      const g = new CellGeometry(cell);
      const n = pos.length / 3;
      const nb = Math.round(rmax / bw);
      const idx = Int32Array.from({ length: n }, (_, i) => i);
      const half = idx.filter((i) => i % 2 === 0);
      for (const [a, b] of [[idx, idx], [half, idx]] as const) {
        const ph = new PairHistogram(a, b, nb, bw);
        const ref = new Float64Array(nb);
        ph.addFrame(pos, g, ref, { method: 'brute', kernel: 'sparse' });
        for (const reach of [1, 2] as const) {
          if (!cellGrid(cell, rmax, reach).every((x) => x >= 2 * reach + 1)) continue;
          const h = new Float64Array(nb);
          ph.addFrame(pos, g, h, { method: 'cells', reach });
          expect(ph.lastMethod).toBe('cells');
          expect(Array.from(h)).toEqual(Array.from(ref));
        }
        expect(ref.reduce((s, x) => s + x, 0)).toBeGreaterThan(1000);
      }
    }
  });

  it('brute force agrees with a plain pair loop using CellGeometry.minimumImage', () => {
    // Independent reference: every ordered pair, minimum image from src/cell.ts (Math.round, its
    // own formula) and ⌊r/Δr⌋. The two differ only for r within ~1e-15 Å of a bin edge, which
    // has probability ~1e-10 for these samples, so counts must agree exactly.
    const cell = cellFromParameters(18, 19, 20, 80, 95, 105)!;
    const rng = new Random(5);
    const n = 300;
    const pos = uniformPositions(rng, n, cell);
    const g = new CellGeometry(cell);
    const nb = Math.floor(g.limit / 0.1);
    const idx = Int32Array.from({ length: n }, (_, i) => i);
    const h = new Float64Array(nb);
    new PairHistogram(idx, idx, nb, 0.1).addFrame(pos, g, h, { method: 'brute' });
    const ref = plainLoopHistogram(pos, g, n, nb, 0.1);
    expect(Array.from(h)).toEqual(Array.from(ref));
  });

  it('a cell in any orientation (not lower triangular) gives the plain pair loop\'s histogram', () => {
    // The triclinic kernels use the cell turned into its lower-triangular form (lowerTriangular,
    // Gram–Schmidt); a rotation keeps every distance, so a cell and positions rotated by the same
    // matrix must give the counts of the plain loop with CellGeometry.minimumImage on the rotated
    // input. Same exactness argument as above (bin edges within ~1e-15 Å are improbable).
    const base = cellFromParameters(18, 19, 20, 80, 95, 105)!;
    const th = 0.7, ph = 0.4;
    const Rm = [
      [Math.cos(th), -Math.sin(th) * Math.cos(ph), Math.sin(th) * Math.sin(ph)],
      [Math.sin(th), Math.cos(th) * Math.cos(ph), -Math.cos(th) * Math.sin(ph)],
      [0, Math.sin(ph), Math.cos(ph)],
    ];
    const rot = (v: number[]) => [0, 1, 2].map((r) => Rm[r]![0]! * v[0]! + Rm[r]![1]! * v[1]! + Rm[r]![2]! * v[2]!);
    const cell = Float64Array.from([0, 1, 2].flatMap((k) => rot([base[3 * k]!, base[3 * k + 1]!, base[3 * k + 2]!]))) as CellMatrix;
    expect(Math.abs(cell[1]!) + Math.abs(cell[2]!) + Math.abs(cell[5]!)).toBeGreaterThan(1);
    // Gram–Schmidt keeps the lengths and angles: compare the Gram matrices (round-off only, 1e-12).
    const t = lowerTriangular(cell);
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) {
      const g0 = cell[3 * i]! * cell[3 * j]! + cell[3 * i + 1]! * cell[3 * j + 1]! + cell[3 * i + 2]! * cell[3 * j + 2]!;
      const g1 = t[3 * i]! * t[3 * j]! + t[3 * i + 1]! * t[3 * j + 1]! + t[3 * i + 2]! * t[3 * j + 2]!;
      expect(Math.abs(g1 - g0)).toBeLessThan(1e-12 * 400);
    }
    const rng = new Random(9);
    const n = 300;
    const pos = uniformPositions(rng, n, cell);
    const g = new CellGeometry(cell);
    const nb = 50; // r-max 5 Å: small enough for 3 slabs of ≥ r-max along each axis (cells, reach 1)
    const idx = Int32Array.from({ length: n }, (_, i) => i);
    const ref = plainLoopHistogram(pos, g, n, nb, 0.1);
    expect(ref.reduce((a, b) => a + b, 0)).toBeGreaterThan(1000);
    for (const method of ['brute', 'cells'] as const) {
      const h = new Float64Array(nb);
      new PairHistogram(idx, idx, nb, 0.1).addFrame(pos, g, h, { method, ...(method === 'cells' ? { reach: 1 as const } : {}) });
      expect(Array.from(h)).toEqual(Array.from(ref));
    }
  });

  it('rounds to nearest with ties to even, symmetrically', () => {
    // IEEE 754 round-to-nearest-even: (v + 1.5·2^52) − 1.5·2^52 = rint(v) for |v| < 2^51.
    // Exact values, no tolerance.
    const rint = (v: number) => (v + RND) - RND;
    expect([rint(2.5), rint(-2.5), rint(0.49), rint(-0.51), rint(3.5)]).toEqual([2, -2, 0, -1, 4]);
  });
});

describe('linked-cell grid and plan', () => {
  it('slab counts are ⌊m·w/r⌋ of the perpendicular widths', () => {
    // Cube of 30 Å, r = 5.9 Å: ⌊30/5.9⌋ = 5 (reach 1), ⌊60/5.9⌋ = 10 (reach 2). 60° rhombohedron
    // of edge e: perpendicular width V/|b×c| = (e³/√2)/(e²√3/2) = e·√(2/3) (solid geometry), so
    // e = 30 Å gives ⌊24.49/5.9⌋ = 4. A ratio that is exactly whole loses one slab (the 1e-9 safety
    // shrink): 30/6 → 4. Exact integers.
    expect(cellGrid(orthorhombicCell(30, 30, 30), 5.9, 1)).toEqual([5, 5, 5]);
    expect(cellGrid(orthorhombicCell(30, 30, 30), 5.9, 2)).toEqual([10, 10, 10]);
    expect(cellGrid(cellFromParameters(30, 30, 30, 60, 60, 60)!, 5.9, 1)).toEqual([4, 4, 4]);
    expect(cellGrid(orthorhombicCell(30, 30, 30), 6, 1)).toEqual([4, 4, 4]);
    // 20 000 atoms in a 58.5 Å cube with r = 10 Å: ⌊2·58.5/10⌋ = 11 ≥ 5 → reach 2; 2 000 atoms in
    // 27.1 Å: ⌊27.1/10⌋ = 2 < 3 → brute force (rule of planSearch).
    expect(planSearch(orthorhombicCell(58.5, 58.5, 58.5), 10, 20000)).toEqual({ method: 'cells', reach: 2, grid: [11, 11, 11] });
    expect(planSearch(orthorhombicCell(27.1, 27.1, 27.1), 10, 2000).method).toBe('brute');
  });

  it('neighbour enumeration finds the 12 nearest neighbours of every FCC site', () => {
    // FCC, a = 4 Å: 12 neighbours at 2.83 Å, the next 6 at 4 Å (crystallography, Kittel ch. 1);
    // a 3.4 Å cutoff must give exactly 12 per atom. Exact integers.
    const pos = fccConventional(4, 3);
    const n = pos.length / 3;
    const idx = Int32Array.from({ length: n }, (_, i) => i);
    const per = new Int32Array(n);
    forEachPairWithin(pos, new CellGeometry(orthorhombicCell(12, 12, 12)), idx, idx, 3.4, (p) => per[p]++);
    expect(Array.from(new Set(per))).toEqual([12]);
  });
});

describe('command-line parsing helpers', () => {
  it('splits pairs, reads wavenumbers and makes safe file names', () => {
    // Our own syntax (src/selection.ts forbids ':' inside a selection); 1/nm = 0.1/Å exactly.
    expect(parsePairOption('Na:el=O')).toEqual({ a: 'Na', b: 'el=O' });
    expect(() => parsePairOption('Na')).toThrow(UsageError);
    expect(() => parsePairOption('a:b:c')).toThrow(UsageError);
    expect(parseWavenumber('20', '--q-max')).toBe(20);
    expect(parseWavenumber('200/nm', '--q-max')).toBeCloseTo(20, 12);
    expect(() => parseWavenumber('-1', '--q-max')).toThrow(UsageError);
    expect(safeName('el=O&res=SOL')).toBe('el_O_res_SOL');
  });

  it('automatic block count: ⌊F/(4s)⌋ between 2 and 32', () => {
    // The rule (Flyvbjerg & Petersen 1989: blocks much longer than the correlation time), closed form.
    expect(automaticBlockCount(1000, 10)).toBe(25);
    expect(automaticBlockCount(1000, 200)).toBe(2);
    expect(automaticBlockCount(100000, 1)).toBe(32);
  });
});

describe('partials merge exactly', () => {
  it('two and three consecutive ranges give the single-run result, with chunk coarsening', () => {
    // Merging is exact addition of integer counts and concatenation (common practice, no
    // source): results must be identical. 600 frames exceed MAX_CHUNKS = 256, so chunks are
    // coarsened; the split points 301 and 455 are not aligned with the chunk size.
    const rng = new Random(99);
    const n = 40, L = 12;
    const topo = topology(new Array(n).fill('Ar'));
    const cell = orthorhombicCell(L, L, L);
    const fr = Array.from({ length: 600 }, (_, f) => frameOf(f, uniformPositions(rng, n, cell), cell, topo));
    const spec = baseSpec([{ a: 'Ar', b: 'Ar' }], { binWidth: 0.1 });
    const pass = rdfPass(spec);
    const ctx = ctxFor(topo, cell);
    const run = (from: number, to: number) => {
      const acc = pass.create(ctx);
      for (const f of fr.slice(from, to)) acc.frame(f);
      return acc.partial();
    };
    const whole = run(0, 600);
    const two = mergeRdfPartials(run(0, 301), run(301, 600));
    const threeL = mergeRdfPartials(mergeRdfPartials(run(0, 301), run(301, 455)), run(455, 600));
    const threeR = mergeRdfPartials(run(0, 301), mergeRdfPartials(run(301, 455), run(455, 600)));
    for (const m of [two, threeL, threeR]) {
      expect(m.chunkSize).toBe(whole.chunkSize);
      expect(m.chunks.map((c) => c.key)).toEqual(whole.chunks.map((c) => c.key));
      expect(m.chunks.map((c) => Array.from(c.counts[0]))).toEqual(whole.chunks.map((c) => Array.from(c.counts[0])));
      const a = pass.finish(m, ctx), b = pass.finish(whole, ctx);
      expect(a.pairs[0].g).toEqual(b.pairs[0].g);
      expect(a.pairs[0].gError).toEqual(b.pairs[0].gError);
    }
  });
});

describe('usage checks', () => {
  const topo = topology(['Ar', 'Ar', 'Ar']);
  it('refuses r-max beyond half the smallest perpendicular width, and a cell-less file', () => {
    // Half the smallest width of a 10×12×14 box is 5 Å (src/cell.ts minimumImageLimit).
    expect(() => resolveBins(5.2, 0.05, 5)).toThrow(UsageError);
    expect(resolveBins(null, 0.05, 5).nbins).toBe(100);
    const pass = rdfPass(baseSpec([{ a: 'Ar', b: 'Ar' }], { rMax: 6 }));
    expect(() => pass.create(ctxFor(topo, orthorhombicCell(10, 12, 14)))).toThrow(/half the smallest perpendicular width/);
    expect(() => rdfPass(baseSpec([{ a: 'Ar', b: 'Ar' }])).create(ctxFor(topo, null))).toThrow(/--box/);
  });

  it('groups chunks into contiguous, nearly equal blocks', () => {
    // 10 chunks of 10 frames into 4 blocks: chunk m goes to ⌊(10m + 5)·4/100⌋ (the rule's closed
    // form) = 0,0,1,1,1,2,2,3,3,3: contiguous blocks of 20, 30, 20, 30 frames. Exact integers.
    const { group, count } = groupContiguous(new Array(10).fill(10), 4);
    expect(count).toBe(4);
    expect(Array.from(group)).toEqual([0, 0, 1, 1, 1, 2, 2, 3, 3, 3]);
  });
});

describe('command line', () => {
  it('sojourn rdf prints one JSON envelope with g, n and error bars, and writes the CSV', async () => {
    // FCC argon-like crystal (a = 5.26 Å, 3×3×3 conventional cells, 108 atoms) with small
    // seeded displacements, 24 frames in extended XYZ: 12 nearest neighbours (crystallography,
    // as above). Displacements of SD 0.05 Å move no atom past the first minimum (at ≥ 4.5σ
    // relative), so the coordination number must be 12 within 1e-6.
    const dir = mkdtempSync(join(tmpdir(), 'sojourn-rdf-'));
    try {
      const a = 5.26, m = 3, L = a * m;
      const base = fccConventional(a, m);
      const rng = new Random(3);
      let text = '';
      for (let f = 0; f < 24; f++) {
        text += `${base.length / 3}\nLattice="${L} 0 0 0 ${L} 0 0 0 ${L}" Properties=species:S:1:pos:R:3 Time=${f * 0.5}\n`;
        for (let i = 0; i < base.length; i += 3) {
          text += `Ar ${base[i] + 0.05 * rng.normal()} ${base[i + 1] + 0.05 * rng.normal()} ${base[i + 2] + 0.05 * rng.normal()}\n`;
        }
      }
      const file = join(dir, 'ar.xyz');
      writeFileSync(file, text);
      const out: string[] = [];
      const orig = process.stdout.write.bind(process.stdout);
      (process.stdout as unknown as { write: (s: string) => boolean }).write = (s: string) => (out.push(String(s)), true);
      let code: number;
      try {
        code = await main(['node', 'sojourn', 'rdf', file, '--pair', 'Ar:Ar', '--bin-width', '0.02A', '--json', '--quiet', '--threads', '1', '--csv', join(dir, 'out')]);
      } finally {
        (process.stdout as unknown as { write: typeof orig }).write = orig;
      }
      expect(code).toBe(0);
      const env = JSON.parse(out.join(''));
      const p = env.results.pairs[0];
      expect(Math.abs(p.coordinationNumber.value - 12)).toBeLessThan(1e-6);
      expect(p.coordinationNumber.unit).toBe('1');
      const csv = readFileSync(join(dir, 'out-Ar-Ar.csv'), 'utf8').split('\n');
      expect(csv[0]).toBe('r_A,g,n,g_error');
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
