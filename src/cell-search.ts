/**
 * Linked-cell search plans for the pair histograms of src/neighbors.ts: how many slabs to cut
 * each cell vector into (`cellGrid`), whether linked cells pay off and with which reach
 * (`planSearch`), the counting sort of atoms into those slabs (`CellSort`) and the column
 * stencils. After Allen & Tildesley, Computer Simulation of Liquids, 2nd ed. 2017, §5.3; the
 * reasoning for the reach and the windows is in the src/neighbors.ts module comment.
 */
import { perpendicularWidths } from './cell.js';
import { fineSlab } from './pair-kernels.js';

/**
 * Number of linked-cell slabs along each cell vector for a search radius r and reach m:
 * n_k = ⌊m·w_k/r⌋ (w_k = perpendicular width; Allen & Tildesley 2017 §5.3), shrunk by a relative
 * 1e-9 so that round-off can never make a slab thinner than r/m, and capped (never below 2m+1)
 * so that the total stays ≤ maxCells.
 */
export function cellGrid(h: Float64Array, r: number, reach: 1 | 2 = 1, maxCells = Infinity): [number, number, number] {
  const w = perpendicularWidths(h);
  const n = w.map((wk) => Math.max(1, Math.floor(((reach * wk) / r) * (1 - 1e-9)))) as [number, number, number];
  const least = 2 * reach + 1;
  while (n[0] * n[1] * n[2] > maxCells && Math.max(...n) > least) {
    const k = n.indexOf(Math.max(...n));
    n[k] = Math.max(least, Math.floor(n[k] * 0.8));
  }
  return n;
}

/** A search plan: brute force, or linked cells with a grid and a reach. */
export interface SearchPlan {
  method: 'cells' | 'brute';
  reach: 1 | 2;
  grid: [number, number, number];
}

/**
 * Choose the search for a cell, radius and atom count: reach 2 when every axis holds ≥ 5 slabs
 * and there are more than 125 in all, else reach 1 with ≥ 3 per axis and more than 27 in all,
 * else brute force (the cell list would then visit every pair anyway). The grid is capped at
 * max(125, 4·atoms) sub-cells so that empty sub-cells cannot dominate.
 */
export function planSearch(h: Float64Array, r: number, atoms: number): SearchPlan {
  const cap = Math.max(125, 4 * atoms);
  const g2 = cellGrid(h, r, 2, cap);
  if (g2.every((x) => x >= 5) && g2[0] * g2[1] * g2[2] > 125) return { method: 'cells', reach: 2, grid: g2 };
  const g1 = cellGrid(h, r, 1, cap);
  if (g1.every((x) => x >= 3) && g1[0] * g1[1] * g1[2] > 27) return { method: 'cells', reach: 1, grid: g1 };
  return { method: 'brute', reach: 1, grid: g1 };
}

/** Growable scratch for the sorted (cell-ordered) coordinates of one selection. */
export class CellSort {
  x = new Float64Array(0);
  y = new Float64Array(0);
  z = new Float64Array(0);
  /** The same coordinates reduced into [0, 1) (s − ⌊s⌋): for search windows, never for distances. */
  rs = new Float64Array(0);
  rt = new Float64Array(0);
  ru = new Float64Array(0);
  start = new Int32Array(0);
  private cellOf = new Int32Array(0);
  private cursor = new Int32Array(0);

  /**
   * Counting sort of n points (fractional coordinates fs, ft, fu) into the nx × ny × nz slabs of
   * fractional space. start[c]..start[c+1] is cell c's range afterwards.
   */
  sort(fs: Float64Array, ft: Float64Array, fu: Float64Array, n: number, nx: number, ny: number, nz: number): void {
    const cells = nx * ny * nz;
    if (this.x.length < n) {
      this.x = new Float64Array(n); this.y = new Float64Array(n); this.z = new Float64Array(n);
      this.rs = new Float64Array(n); this.rt = new Float64Array(n); this.ru = new Float64Array(n);
      this.cellOf = new Int32Array(n);
    }
    if (this.start.length < cells + 1) {
      this.start = new Int32Array(cells + 1);
      this.cursor = new Int32Array(cells + 1);
    }
    const start = this.start, cellOf = this.cellOf;
    start.fill(0, 0, cells + 1);
    for (let i = 0; i < n; i++) {
      const a = slab(fs[i], nx), b = slab(ft[i], ny), c = slab(fu[i], nz);
      const id = (a * ny + b) * nz + c;
      cellOf[i] = id;
      start[id + 1]++;
    }
    for (let c = 0; c < cells; c++) start[c + 1] += start[c];
    const cursor = this.cursor;
    cursor.set(start.subarray(0, cells));
    for (let i = 0; i < n; i++) {
      const p = cursor[cellOf[i]]++;
      const a = fs[i], b = ft[i], c = fu[i];
      this.x[p] = a; this.y[p] = b; this.z[p] = c;
      this.rs[p] = a - Math.floor(a); this.rt[p] = b - Math.floor(b); this.ru[p] = c - Math.floor(c);
    }
  }
}

/** Slab index ⌊(s − ⌊s⌋)·n⌋, clamped to [0, n−1] against round-off at s → 1. */
function slab(s: number, n: number): number {
  return fineSlab(s - Math.floor(s), n);
}

/** Column offsets (o_x, o_y) ∈ [−m, m]² of a reach m: (2m+1)² of them. */
function columns(m: number): Array<[number, number]> {
  const out: Array<[number, number]> = [];
  for (let a = -m; a <= m; a++) for (let b = -m; b <= m; b++) out.push([a, b]);
  return out;
}
/** Every column offset of reach 1 and 2 (the stencil when A and B differ). */
export const ALL_COLUMNS: Record<1 | 2, Array<[number, number]>> = { 1: columns(1), 2: columns(2) };
/**
 * The "forward" columns (o_x > 0, or o_x = 0 and o_y > 0): ((2m+1)² − 1)/2 of them. With the
 * forward part of the home column (o_z = 1..m) they make the forward half shell, so that each
 * unordered pair of distinct sub-cells is visited once.
 */
export const FORWARD_COLUMNS: Record<1 | 2, Array<[number, number]>> = {
  1: columns(1).filter(([a, b]) => a > 0 || (a === 0 && b > 0)),
  2: columns(2).filter(([a, b]) => a > 0 || (a === 0 && b > 0)),
};
