/**
 * Benchmark of the pair-distance histogram behind `sojourn rdf` (src/neighbors.ts), on synthetic
 * uniform positions in memory at a liquid-like density of 0.1 atoms/Å³ (no file reading):
 * 2 000 atoms (27.1 Å cube) and 20 000 atoms (58.5 Å cube), each with r-max 10 Å and r-max =
 * half the cell. One selection paired with itself (each unordered pair evaluated once).
 * Rows (best of three timed windows per case): million pair distances per CPU second (the
 * per-core figure; the machine may be shared),
 * frames per CPU second and per wall-clock second for every case, the search path used, plus
 * the brute-force triclinic throughput for reference.
 * Targets: ≥ 150 M pairs/s per core for the orthorhombic brute force; 20 000 atoms with r-max
 * 10 Å in under 0.1 s per frame.
 */
import { PairHistogram } from '../src/neighbors.js';
import { CellGeometry, orthorhombicCell, cellFromParameters } from '../src/cell.js';
import { Random } from '../src/random.js';
import type { CellMatrix } from '../src/types.js';

/** One benchmark row. */
export interface BenchRow {
  name: string;
  value: number;
  unit: string;
  target: string;
}

/** Uniform positions r = s·H for n atoms in cell H (seeded). */
export function positions(n: number, h: CellMatrix, seed: number): Float64Array {
  const rng = new Random(seed);
  const p = new Float64Array(3 * n);
  for (let i = 0; i < n; i++) {
    const s0 = rng.uniform(), s1 = rng.uniform(), s2 = rng.uniform();
    for (let k = 0; k < 3; k++) p[3 * i + k] = s0 * h[k] + s1 * h[3 + k] + s2 * h[6 + k];
  }
  return p;
}

/** Time repeated frames of one case for at least `seconds` (after one warm-up frame). */
function timeCase(n: number, h: CellMatrix, rMax: number | null, seconds: number) {
  const g = new CellGeometry(h);
  const bw = 0.05;
  const nb = Math.floor(Math.min(rMax ?? g.limit, g.limit) / bw);
  const idx = Int32Array.from({ length: n }, (_, i) => i);
  const ph = new PairHistogram(idx, idx, nb, bw);
  const hist = new Float64Array(nb);
  const pos = positions(n, h, n);
  // Warm-up: let the optimising compiler settle (the first frames run in lower tiers).
  const w0 = performance.now();
  for (let k = 0; k < 3 || performance.now() - w0 < 300; k++) ph.addFrame(pos, g, hist);
  // Three timed windows; the best is reported (the machine's capability: on a shared virtual
  // machine a window can land on a core slowed by a neighbour, common practice, no source).
  let best = { mpairs: 0, fps: 0, wallFps: 0 };
  for (let rep = 0; rep < 3; rep++) {
    ph.pairsExamined = 0;
    let frames = 0;
    const c0 = process.cpuUsage();
    const t0 = performance.now();
    let t = t0;
    while (t - t0 < (seconds / 3) * 1000 || frames < 2) {
      ph.addFrame(pos, g, hist);
      frames++;
      t = performance.now();
    }
    const cu = process.cpuUsage(c0);
    // CPU time of this (single-threaded) process: the per-core figure, robust to other jobs on the machine.
    const cpu = (cu.user + cu.system) / 1e6;
    const wall = (t - t0) / 1000;
    if (ph.pairsExamined / cpu / 1e6 > best.mpairs) best = { mpairs: ph.pairsExamined / cpu / 1e6, fps: frames / cpu, wallFps: frames / wall };
  }
  return { ...best, method: ph.lastMethod, reach: ph.lastReach, kernel: ph.lastKernel, rMax: nb * bw };
}

/** Run the g(r) histogram benchmark and return its rows (`seconds` per case). */
export function benchRdf(seconds = 3): BenchRow[] {
  const rows: BenchRow[] = [];
  for (const n of [2000, 20000]) {
    const L = Math.cbrt(n / 0.1);
    const cell = orthorhombicCell(L, L, L);
    for (const rMax of [10, null]) {
      const r = timeCase(n, cell, rMax, seconds);
      const how = `${r.method === 'brute' ? 'brute force' : `linked columns, reach ${r.reach}, per-atom windows`}, ${r.kernel} kernel`;
      const label = `rdf ${n} atoms, r-max ${rMax === null ? `half cell (${r.rMax.toFixed(2)} Å)` : '10 Å'} [${how}]`;
      const bruteOrtho = r.method === 'brute';
      rows.push({ name: `${label}: pair distances per CPU second`, value: r.mpairs, unit: 'M pairs/s', target: bruteOrtho ? '≥ 150' : '—' });
      rows.push({
        name: `${label}: frames per CPU second`,
        value: r.fps,
        unit: 'frames/s',
        target: n === 20000 && rMax === 10 ? '≥ 10 (< 0.1 s/frame)' : '—',
      });
      rows.push({ name: `${label}: frames per wall-clock second`, value: r.wallFps, unit: 'frames/s', target: '—' });
    }
  }
  const L = Math.cbrt(2000 / 0.1 / 0.8);
  const tri = timeCase(2000, cellFromParameters(L, L, L, 75, 80, 85)!, null, seconds);
  rows.push({ name: `rdf 2000 atoms triclinic, r-max half cell [${tri.method}, ${tri.kernel} kernel]: pair distances per CPU second`, value: tri.mpairs, unit: 'M pairs/s', target: '—' });
  return rows;
}
