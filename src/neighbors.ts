/**
 * Pair-distance histograms and neighbour enumeration under periodic boundary conditions, for
 * orthorhombic and triclinic cells.
 *
 * Two search paths give bit-identical results:
 * - brute force: every pair of the two selections;
 * - linked cells in fractional coordinates (Allen & Tildesley, Computer Simulation of Liquids,
 *   2nd ed. 2017, §5.3): the cell is cut into n_k = ⌊m·w_k / r_max⌋ slabs along each cell vector
 *   (w_k = perpendicular width, m = the reach), so every sub-cell is at least r_max/m thick in
 *   every direction and two atoms closer than r_max lie in sub-cells at most m apart along each
 *   axis (|Δs_k| ≤ r / w_k < m/n_k). Reach m = 2 (search 5×5×5 sub-cells, 2.3× fewer candidate
 *   pairs than 3×3×3 cells of width r_max) when every axis then has ≥ 5 slabs; otherwise m = 1
 *   with ≥ 3 slabs per axis (⌊w_k/r_max⌋ cells, 27 neighbours); otherwise brute force. The
 *   2m+1 slabs searched along an axis are then distinct, so no pair is visited twice.
 *
 * Both paths compute the distance of a pair with the same floating-point expression — the
 * minimum image by rounding (ties to even, see RND), d = Δ − L·rint(Δ/L) (orthorhombic,
 * Cartesian) or Δs − rint(Δs) followed by d = Δs·H (triclinic, fractional) — which is exact for
 * r < half the smallest perpendicular width (src/cell.ts) and sign-symmetric, so a pair gets
 * the same r² whichever atom comes first; and one counting rule: bin k = ⌊√r² · (1/Δr)⌋, kept
 * when k < nbins. The cell list only decides which pairs are looked at, and the kernel form
 * (with or without a branch, see DENSE_FRACTION) only how fast; the counts are the same.
 *
 * Counting convention: the histogram holds ordered pairs (i ∈ A, j ∈ B, j ≠ i). When A and B
 * are the same set each unordered pair is computed once and counted twice; when they overlap
 * every (i, j) is computed and the N_{A∩B} self-pairs (r = 0 exactly, bin 0) are subtracted.
 * Pairs inside one molecule can be excluded: they are enumerated once at set-up and their
 * counts, computed with the same expression, are subtracted each frame.
 */
import type { CellGeometry } from './cell.js';
import { perpendicularWidths } from './cell.js';

/**
 * 1.5·2⁵²: for |v| < 2⁵¹, (v + RND) − RND is v rounded to the nearest integer, ties to even, in
 * IEEE 754 double arithmetic (the sum's unit in the last place is 1, so the addition rounds).
 * Several times faster than Math.round in V8's optimised code (about 7× in our measurements on
 * Node 20), and
 * symmetric: round(−v) = −round(v), which makes a pair's r² independent of its order.
 */
export const RND = 6755399441055744;

/** Which search the histogrammer uses: 'auto' follows planSearch (linked cells when they pay off). */
export type SearchMethod = 'auto' | 'cells' | 'brute';

/** Hot-loop constants of one frame's cell. */
interface Box {
  ortho: boolean;
  /** Orthorhombic edge lengths and their inverses. */
  lx: number; ly: number; lz: number;
  ilx: number; ily: number; ilz: number;
  /** Full cell matrix (rows a, b, c) and its inverse. */
  h: Float64Array;
  inv: Float64Array;
}

function boxOf(g: CellGeometry): Box {
  const h = g.h;
  return {
    ortho: g.orthorhombic,
    lx: h[0], ly: h[4], lz: h[8],
    ilx: 1 / h[0], ily: 1 / h[4], ilz: 1 / h[8],
    h, inv: g.inv,
  };
}

// ---------------------------------------------------------------------------------------------
// Kernels. Each adds 1 to hist[k], k = ⌊√r² · (1/Δr)⌋, for the pairs it examines; only bins
// k < nbins are kept by the caller, and that is the one counting rule of both search paths.
// "cross": i in [a0, a1) of the first arrays × j in [b0, b1) of the second; "self": i < j within
// [a0, a1) of one set of arrays. Coordinates are Cartesian (orthorhombic) or fractional
// (triclinic). No allocation; flat typed arrays.
// - sparse kernels skip pairs with r² ≥ cut2 (a prefilter set a hair above r²_max) before the
//   square root: best when few examined pairs lie within r_max (a branch that is mostly not taken);
// - dense kernels bin every pair without any branch (hist must hold every reachable bin): best
//   when many do, where the unpredictable branch of the sparse form costs more than the root.
// ---------------------------------------------------------------------------------------------

/** Orthorhombic cross kernel, sparse (see above); minimum image d = Δ − L·rint(Δ/L). Returns pairs examined. */
export function crossOrtho(
  xa: Float64Array, ya: Float64Array, za: Float64Array, a0: number, a1: number,
  xb: Float64Array, yb: Float64Array, zb: Float64Array, b0: number, b1: number,
  lx: number, ly: number, lz: number, ilx: number, ily: number, ilz: number,
  cut2: number, invBin: number, nbins: number, hist: Float64Array,
): number {
  for (let i = a0; i < a1; i++) {
    const xi = xa[i], yi = ya[i], zi = za[i];
    for (let j = b0; j < b1; j++) {
      let dx = xb[j] - xi;
      let dy = yb[j] - yi;
      let dz = zb[j] - zi;
      dx -= lx * ((dx * ilx + RND) - RND);
      dy -= ly * ((dy * ily + RND) - RND);
      dz -= lz * ((dz * ilz + RND) - RND);
      const r2 = dx * dx + dy * dy + dz * dz;
      if (r2 < cut2) {
        const k = (Math.sqrt(r2) * invBin) | 0;
        if (k < nbins) hist[k]++;
      }
    }
  }
  return (a1 - a0) * (b1 - b0);
}

/** Orthorhombic cross kernel, dense (no branch). Returns pairs examined. */
export function crossOrthoDense(
  xa: Float64Array, ya: Float64Array, za: Float64Array, a0: number, a1: number,
  xb: Float64Array, yb: Float64Array, zb: Float64Array, b0: number, b1: number,
  lx: number, ly: number, lz: number, ilx: number, ily: number, ilz: number,
  invBin: number, hist: Float64Array,
): number {
  for (let i = a0; i < a1; i++) {
    const xi = xa[i], yi = ya[i], zi = za[i];
    for (let j = b0; j < b1; j++) {
      let dx = xb[j] - xi;
      let dy = yb[j] - yi;
      let dz = zb[j] - zi;
      dx -= lx * ((dx * ilx + RND) - RND);
      dy -= ly * ((dy * ily + RND) - RND);
      dz -= lz * ((dz * ilz + RND) - RND);
      hist[(Math.sqrt(dx * dx + dy * dy + dz * dz) * invBin) | 0]++;
    }
  }
  return (a1 - a0) * (b1 - b0);
}

/** Orthorhombic self kernel, sparse: as crossOrtho over the pairs i < j of [a0, a1). Returns pairs examined. */
export function selfOrtho(
  x: Float64Array, y: Float64Array, z: Float64Array, a0: number, a1: number,
  lx: number, ly: number, lz: number, ilx: number, ily: number, ilz: number,
  cut2: number, invBin: number, nbins: number, hist: Float64Array,
): number {
  for (let i = a0; i < a1; i++) {
    const xi = x[i], yi = y[i], zi = z[i];
    for (let j = i + 1; j < a1; j++) {
      let dx = x[j] - xi;
      let dy = y[j] - yi;
      let dz = z[j] - zi;
      dx -= lx * ((dx * ilx + RND) - RND);
      dy -= ly * ((dy * ily + RND) - RND);
      dz -= lz * ((dz * ilz + RND) - RND);
      const r2 = dx * dx + dy * dy + dz * dz;
      if (r2 < cut2) {
        const k = (Math.sqrt(r2) * invBin) | 0;
        if (k < nbins) hist[k]++;
      }
    }
  }
  const n = a1 - a0;
  return (n * (n - 1)) / 2;
}

/** Orthorhombic self kernel, dense (no branch). Returns pairs examined. */
export function selfOrthoDense(
  x: Float64Array, y: Float64Array, z: Float64Array, a0: number, a1: number,
  lx: number, ly: number, lz: number, ilx: number, ily: number, ilz: number,
  invBin: number, hist: Float64Array,
): number {
  for (let i = a0; i < a1; i++) {
    const xi = x[i], yi = y[i], zi = z[i];
    for (let j = i + 1; j < a1; j++) {
      let dx = x[j] - xi;
      let dy = y[j] - yi;
      let dz = z[j] - zi;
      dx -= lx * ((dx * ilx + RND) - RND);
      dy -= ly * ((dy * ily + RND) - RND);
      dz -= lz * ((dz * ilz + RND) - RND);
      hist[(Math.sqrt(dx * dx + dy * dy + dz * dz) * invBin) | 0]++;
    }
  }
  const n = a1 - a0;
  return (n * (n - 1)) / 2;
}

/**
 * Triclinic cross kernel, sparse, on fractional coordinates: Δs −= rint(Δs), d = Δs·H (rows of H
 * are the cell vectors), r² = d·d (minimum image, exact below half the smallest perpendicular
 * width; Allen & Tildesley 2017 §1.6). Returns pairs examined.
 */
export function crossTriclinic(
  sa: Float64Array, ta: Float64Array, ua: Float64Array, a0: number, a1: number,
  sb: Float64Array, tb: Float64Array, ub: Float64Array, b0: number, b1: number,
  h: Float64Array, cut2: number, invBin: number, nbins: number, hist: Float64Array,
): number {
  const h0 = h[0], h1 = h[1], h2 = h[2], h3 = h[3], h4 = h[4], h5 = h[5], h6 = h[6], h7 = h[7], h8 = h[8];
  for (let i = a0; i < a1; i++) {
    const si = sa[i], ti = ta[i], ui = ua[i];
    for (let j = b0; j < b1; j++) {
      let ds = sb[j] - si;
      let dt = tb[j] - ti;
      let du = ub[j] - ui;
      ds -= (ds + RND) - RND;
      dt -= (dt + RND) - RND;
      du -= (du + RND) - RND;
      const dx = ds * h0 + dt * h3 + du * h6;
      const dy = ds * h1 + dt * h4 + du * h7;
      const dz = ds * h2 + dt * h5 + du * h8;
      const r2 = dx * dx + dy * dy + dz * dz;
      if (r2 < cut2) {
        const k = (Math.sqrt(r2) * invBin) | 0;
        if (k < nbins) hist[k]++;
      }
    }
  }
  return (a1 - a0) * (b1 - b0);
}

/** Triclinic cross kernel, dense (no branch). Returns pairs examined. */
export function crossTriclinicDense(
  sa: Float64Array, ta: Float64Array, ua: Float64Array, a0: number, a1: number,
  sb: Float64Array, tb: Float64Array, ub: Float64Array, b0: number, b1: number,
  h: Float64Array, invBin: number, hist: Float64Array,
): number {
  const h0 = h[0], h1 = h[1], h2 = h[2], h3 = h[3], h4 = h[4], h5 = h[5], h6 = h[6], h7 = h[7], h8 = h[8];
  for (let i = a0; i < a1; i++) {
    const si = sa[i], ti = ta[i], ui = ua[i];
    for (let j = b0; j < b1; j++) {
      let ds = sb[j] - si;
      let dt = tb[j] - ti;
      let du = ub[j] - ui;
      ds -= (ds + RND) - RND;
      dt -= (dt + RND) - RND;
      du -= (du + RND) - RND;
      const dx = ds * h0 + dt * h3 + du * h6;
      const dy = ds * h1 + dt * h4 + du * h7;
      const dz = ds * h2 + dt * h5 + du * h8;
      hist[(Math.sqrt(dx * dx + dy * dy + dz * dz) * invBin) | 0]++;
    }
  }
  return (a1 - a0) * (b1 - b0);
}

/** Triclinic self kernel, sparse: as crossTriclinic over the pairs i < j of [a0, a1). Returns pairs examined. */
export function selfTriclinic(
  s: Float64Array, t: Float64Array, u: Float64Array, a0: number, a1: number,
  h: Float64Array, cut2: number, invBin: number, nbins: number, hist: Float64Array,
): number {
  const h0 = h[0], h1 = h[1], h2 = h[2], h3 = h[3], h4 = h[4], h5 = h[5], h6 = h[6], h7 = h[7], h8 = h[8];
  for (let i = a0; i < a1; i++) {
    const si = s[i], ti = t[i], ui = u[i];
    for (let j = i + 1; j < a1; j++) {
      let ds = s[j] - si;
      let dt = t[j] - ti;
      let du = u[j] - ui;
      ds -= (ds + RND) - RND;
      dt -= (dt + RND) - RND;
      du -= (du + RND) - RND;
      const dx = ds * h0 + dt * h3 + du * h6;
      const dy = ds * h1 + dt * h4 + du * h7;
      const dz = ds * h2 + dt * h5 + du * h8;
      const r2 = dx * dx + dy * dy + dz * dz;
      if (r2 < cut2) {
        const k = (Math.sqrt(r2) * invBin) | 0;
        if (k < nbins) hist[k]++;
      }
    }
  }
  const n = a1 - a0;
  return (n * (n - 1)) / 2;
}

/** Triclinic self kernel, dense (no branch). Returns pairs examined. */
export function selfTriclinicDense(
  s: Float64Array, t: Float64Array, u: Float64Array, a0: number, a1: number,
  h: Float64Array, invBin: number, hist: Float64Array,
): number {
  const h0 = h[0], h1 = h[1], h2 = h[2], h3 = h[3], h4 = h[4], h5 = h[5], h6 = h[6], h7 = h[7], h8 = h[8];
  for (let i = a0; i < a1; i++) {
    const si = s[i], ti = t[i], ui = u[i];
    for (let j = i + 1; j < a1; j++) {
      let ds = s[j] - si;
      let dt = t[j] - ti;
      let du = u[j] - ui;
      ds -= (ds + RND) - RND;
      dt -= (dt + RND) - RND;
      du -= (du + RND) - RND;
      const dx = ds * h0 + dt * h3 + du * h6;
      const dy = ds * h1 + dt * h4 + du * h7;
      const dz = ds * h2 + dt * h5 + du * h8;
      hist[(Math.sqrt(dx * dx + dy * dy + dz * dz) * invBin) | 0]++;
    }
  }
  const n = a1 - a0;
  return (n * (n - 1)) / 2;
}

/**
 * Squared minimum-image distance of one pair by exactly the kernels' expression (so that a pair
 * subtracted here cancels the kernel's count bit for bit). Coordinates as in the kernels.
 */
function pairDistance2(box: Box, x: Float64Array, y: Float64Array, z: Float64Array, i: number,
  xb: Float64Array, yb: Float64Array, zb: Float64Array, j: number): number {
  if (box.ortho) {
    let dx = xb[j] - x[i];
    let dy = yb[j] - y[i];
    let dz = zb[j] - z[i];
    dx -= box.lx * ((dx * box.ilx + RND) - RND);
    dy -= box.ly * ((dy * box.ily + RND) - RND);
    dz -= box.lz * ((dz * box.ilz + RND) - RND);
    return dx * dx + dy * dy + dz * dz;
  }
  const h = box.h;
  let ds = xb[j] - x[i];
  let dt = yb[j] - y[i];
  let du = zb[j] - z[i];
  ds -= (ds + RND) - RND;
  dt -= (dt + RND) - RND;
  du -= (du + RND) - RND;
  const dx = ds * h[0] + dt * h[3] + du * h[6];
  const dy = ds * h[1] + dt * h[4] + du * h[7];
  const dz = ds * h[2] + dt * h[5] + du * h[8];
  return dx * dx + dy * dy + dz * dz;
}

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
class CellSort {
  x = new Float64Array(0);
  y = new Float64Array(0);
  z = new Float64Array(0);
  order = new Int32Array(0);
  start = new Int32Array(0);
  private cellOf = new Int32Array(0);
  private cursor = new Int32Array(0);

  /**
   * Counting sort of n points (coordinates cx, cy, cz; fractional fs, ft, fu) into the
   * nx × ny × nz slabs of fractional space. start[c]..start[c+1] is cell c's range afterwards.
   */
  sort(cx: Float64Array, cy: Float64Array, cz: Float64Array,
    fs: Float64Array, ft: Float64Array, fu: Float64Array, n: number, nx: number, ny: number, nz: number): void {
    const cells = nx * ny * nz;
    if (this.x.length < n) {
      this.x = new Float64Array(n); this.y = new Float64Array(n); this.z = new Float64Array(n);
      this.order = new Int32Array(n); this.cellOf = new Int32Array(n);
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
    const fill = this.order;
    const cursor = this.cursor;
    cursor.set(start.subarray(0, cells));
    for (let i = 0; i < n; i++) {
      const p = cursor[cellOf[i]]++;
      fill[p] = i;
      this.x[p] = cx[i]; this.y[p] = cy[i]; this.z[p] = cz[i];
    }
  }
}

/** Slab index ⌊(s − ⌊s⌋)·n⌋, clamped to [0, n−1] against round-off at s → 1. */
function slab(s: number, n: number): number {
  const w = s - Math.floor(s);
  const k = Math.floor(w * n);
  return k < 0 ? 0 : k >= n ? n - 1 : k;
}

/** All neighbour offsets within a reach m: (2m+1)³ triples in [−m, m]³. */
function offsets(m: number): Array<[number, number, number]> {
  const out: Array<[number, number, number]> = [];
  for (let a = -m; a <= m; a++) for (let b = -m; b <= m; b++) for (let c = -m; c <= m; c++) out.push([a, b, c]);
  return out;
}
const FULL_SHELL: Record<1 | 2, Array<[number, number, number]>> = { 1: offsets(1), 2: offsets(2) };
/** The "forward" half (lexicographically positive offsets): ((2m+1)³ − 1)/2 of them. */
const HALF_SHELL: Record<1 | 2, Array<[number, number, number]>> = {
  1: offsets(1).filter(([a, b, c]) => a > 0 || (a === 0 && (b > 0 || (b === 0 && c > 0)))),
  2: offsets(2).filter(([a, b, c]) => a > 0 || (a === 0 && (b > 0 || (b === 0 && c > 0)))),
};

/**
 * Above this expected fraction of examined pairs within r_max the branch-free ("dense") kernels
 * are used. Measured on Node 20 / x86-64 (bench/rdf.ts and the same cases with the kernel
 * forced): the sparse form is ≈ 1.5× faster at 4 % inside and ≈ 1.3× at 22 %, the dense form
 * ≈ 2× faster at 52 % (brute force with r_max = half the cell).
 */
export const DENSE_FRACTION = 0.3;

/** Per-frame options of PairHistogram.addFrame (the counts never depend on them). */
export interface FrameOptions {
  method?: SearchMethod;
  /** Linked-cell reach (1: 3×3×3 cells of width ≥ r_max; 2: 5×5×5 of width ≥ r_max/2). */
  reach?: 1 | 2;
  kernel?: 'auto' | 'sparse' | 'dense';
}

/** Options of a PairHistogram. */
export interface PairHistogramOptions {
  /** Molecule index of every atom of the topology; pairs within one molecule are not counted. */
  molecule?: Int32Array | null;
}

/**
 * Frame-by-frame histogram of the ordered pair distances between selections A and B
 * (atom indices into the frame), bins [kΔr, (k+1)Δr), k < nbins, r_max = nbins·Δr.
 * The effective number of ordered pairs, used to normalise g(r), is
 *   N_pairs = N_A·N_B − N_{A∩B} − N_intra
 * (self-pairs and, when excluded, ordered same-molecule pairs removed), which is N_A(N_A − 1)
 * for A = B; so an uncorrelated (ideal-gas) system gives g = 1 exactly on average.
 */
export class PairHistogram {
  readonly nA: number;
  readonly nB: number;
  /** A and B are the same set of atoms. */
  readonly same: boolean;
  /** |A ∩ B| (0 when same: self-pairs are never formed then). */
  readonly overlap: number;
  /** Ordered same-molecule pairs (i ∈ A, j ∈ B, i ≠ j) excluded. */
  readonly intraOrdered: number;
  /** Effective number of ordered pairs N_pairs (see the class comment). */
  readonly orderedPairs: number;
  readonly nbins: number;
  readonly binWidth: number;
  readonly rMax: number;
  /** Pair distances evaluated so far (for throughput measurements). */
  pairsExamined = 0;
  /** Method and reach used for the last frame. */
  lastMethod: 'cells' | 'brute' = 'brute';
  lastReach: 1 | 2 = 1;
  lastKernel: 'sparse' | 'dense' = 'sparse';

  private readonly a: Int32Array;
  private readonly b: Int32Array;
  private readonly ax: Float64Array; private readonly ay: Float64Array; private readonly az: Float64Array;
  private readonly bx: Float64Array; private readonly by: Float64Array; private readonly bz: Float64Array;
  private readonly fa: [Float64Array, Float64Array, Float64Array];
  private readonly fb: [Float64Array, Float64Array, Float64Array];
  /** Intra-molecular pairs as positions in the gathered A and B arrays. */
  private readonly intraA: Int32Array;
  private readonly intraB: Int32Array;
  private tmp: Float64Array;
  private readonly sortA = new CellSort();
  private readonly sortB = new CellSort();

  constructor(a: Int32Array, b: Int32Array, nbins: number, binWidth: number, opts: PairHistogramOptions = {}) {
    if (!(nbins >= 1) || !(binWidth > 0)) throw new RangeError('PairHistogram: need nbins ≥ 1 and binWidth > 0');
    this.a = Int32Array.from(a);
    this.b = Int32Array.from(b);
    this.nA = a.length;
    this.nB = b.length;
    this.same = a.length === b.length && a.every((v, k) => v === b[k]);
    this.nbins = nbins;
    this.binWidth = binWidth;
    this.rMax = nbins * binWidth;
    const inB = new Map<number, number>();
    b.forEach((atom, k) => inB.set(atom, k));
    let overlap = 0;
    if (!this.same) for (const atom of a) if (inB.has(atom)) overlap++;
    this.overlap = overlap;
    // Same-molecule pairs: for A = B unordered (i < j) positions; otherwise ordered (i ∈ A, j ∈ B, i ≠ j).
    const ia: number[] = [];
    const ib: number[] = [];
    const mol = opts.molecule ?? null;
    if (mol) {
      const byMolB = new Map<number, number[]>();
      b.forEach((atom, k) => {
        const m = mol[atom];
        const list = byMolB.get(m);
        if (list) list.push(k); else byMolB.set(m, [k]);
      });
      a.forEach((atom, p) => {
        for (const q of byMolB.get(mol[atom]) ?? []) {
          if (b[q] === atom) continue;
          if (this.same && q <= p) continue;
          ia.push(p);
          ib.push(q);
        }
      });
    }
    this.intraA = Int32Array.from(ia);
    this.intraB = Int32Array.from(ib);
    this.intraOrdered = this.same ? 2 * ia.length : ia.length;
    this.orderedPairs = this.same
      ? this.nA * (this.nA - 1) - this.intraOrdered
      : this.nA * this.nB - this.overlap - this.intraOrdered;
    this.ax = new Float64Array(this.nA); this.ay = new Float64Array(this.nA); this.az = new Float64Array(this.nA);
    this.fa = [new Float64Array(this.nA), new Float64Array(this.nA), new Float64Array(this.nA)];
    if (this.same) {
      this.bx = this.ax; this.by = this.ay; this.bz = this.az; this.fb = this.fa;
    } else {
      this.bx = new Float64Array(this.nB); this.by = new Float64Array(this.nB); this.bz = new Float64Array(this.nB);
      this.fb = [new Float64Array(this.nB), new Float64Array(this.nB), new Float64Array(this.nB)];
    }
    this.tmp = new Float64Array(nbins);
  }

  /** Search plan 'auto' resolves to for a cell (see planSearch). */
  planFor(g: CellGeometry): SearchPlan {
    return planSearch(g.h, this.rMax, Math.max(this.nA, this.nB));
  }

  /**
   * Add this frame's ordered-pair counts to `hist` (length nbins). The caller guarantees
   * r_max ≤ g.limit (half the smallest perpendicular width), where the minimum image is exact.
   * Options force the search ('cells' uses planSearch's reach unless `reach` is given) or the
   * kernel form (for tests and benchmarks); the counts never depend on them.
   */
  addFrame(positions: Float64Array, g: CellGeometry, hist: Float64Array, opts: FrameOptions = {}): void {
    if (this.rMax > g.limit * (1 + 1e-12)) {
      throw new RangeError(`r_max ${this.rMax} Å exceeds half the smallest cell width (${g.limit} Å)`);
    }
    const box = boxOf(g);
    this.gather(positions, box);
    const method = opts.method ?? 'auto';
    let plan = this.planFor(g);
    if (method === 'brute') plan = { ...plan, method: 'brute' };
    else if (method === 'cells') {
      const m: 1 | 2 = opts.reach ?? (plan.method === 'cells' ? plan.reach : 1);
      const grid = cellGrid(g.h, this.rMax, m, Math.max(125, 4 * Math.max(this.nA, this.nB)));
      if (!grid.every((x) => x >= 2 * m + 1)) throw new RangeError(`cell search with reach ${m} needs at least ${2 * m + 1} cells along each axis`);
      plan = { method: 'cells', reach: m, grid };
    }
    // Fraction of examined pairs expected within r_max (uniform density): sphere over the
    // volume searched per atom — the cell, or (2m+1)³ sub-cells.
    const sphere = (4 * Math.PI / 3) * this.rMax ** 3;
    const searched = plan.method === 'brute' ? g.volume : ((2 * plan.reach + 1) ** 3 * g.volume) / (plan.grid[0] * plan.grid[1] * plan.grid[2]);
    const dense = opts.kernel === 'dense' || (opts.kernel !== 'sparse' && sphere / searched > DENSE_FRACTION);
    this.lastMethod = plan.method;
    this.lastReach = plan.reach;
    this.lastKernel = dense ? 'dense' : 'sparse';
    // Scratch: dense kernels write every pair's bin; |d| ≤ ½(|a| + |b| + |c|) after rounding
    // (each |Δs_k| ≤ ½), so that many bins plus slack hold every index.
    const h = g.h;
    const reachBins = dense
      ? Math.ceil((0.5 * (Math.hypot(h[0], h[1], h[2]) + Math.hypot(h[3], h[4], h[5]) + Math.hypot(h[6], h[7], h[8]))) / this.binWidth) + 4
      : this.nbins;
    if (this.tmp.length < Math.max(reachBins, this.nbins)) this.tmp = new Float64Array(Math.max(reachBins, this.nbins));
    const tmp = this.tmp;
    tmp.fill(0, 0, Math.max(reachBins, this.nbins));
    if (plan.method === 'brute') this.brute(box, tmp, dense);
    else this.cells(box, plan, tmp, dense);
    // Self-pairs (r = 0 exactly) of overlapping selections.
    if (!this.same && this.overlap > 0) tmp[0] -= this.overlap;
    // Same-molecule pairs, distance and bin by the kernels' own expressions.
    const [cx, cy, cz] = box.ortho ? [this.ax, this.ay, this.az] : this.fa;
    const [dx, dy, dz] = box.ortho ? [this.bx, this.by, this.bz] : this.fb;
    const cut2 = this.cut2();
    const invBin = 1 / this.binWidth;
    for (let k = 0; k < this.intraA.length; k++) {
      const r2 = pairDistance2(box, cx, cy, cz, this.intraA[k], dx, dy, dz, this.intraB[k]);
      if (r2 < cut2) {
        const bin = (Math.sqrt(r2) * invBin) | 0;
        if (bin < this.nbins) tmp[bin]--;
      }
    }
    const f = this.same ? 2 : 1;
    for (let k = 0; k < this.nbins; k++) hist[k] += f * tmp[k];
  }

  /** Prefilter of the sparse kernels: r² < (r_max(1 + 1e-9))², above every r with ⌊r/Δr⌋ < nbins. */
  private cut2(): number {
    const c = this.rMax * (1 + 1e-9);
    return c * c;
  }

  /** Copy the selected coordinates (Cartesian for orthorhombic, and fractional always). */
  private gather(pos: Float64Array, box: Box): void {
    const v = box.inv;
    const fill = (idx: Int32Array, x: Float64Array, y: Float64Array, z: Float64Array, f: [Float64Array, Float64Array, Float64Array]) => {
      const [s, t, u] = f;
      for (let k = 0; k < idx.length; k++) {
        const o = 3 * idx[k];
        const px = pos[o], py = pos[o + 1], pz = pos[o + 2];
        x[k] = px; y[k] = py; z[k] = pz;
        s[k] = px * v[0] + py * v[3] + pz * v[6];
        t[k] = px * v[1] + py * v[4] + pz * v[7];
        u[k] = px * v[2] + py * v[5] + pz * v[8];
      }
    };
    fill(this.a, this.ax, this.ay, this.az, this.fa);
    if (!this.same) fill(this.b, this.bx, this.by, this.bz, this.fb);
  }

  /** One block of pairs through the right kernel: [a0, a1) × [b0, b1), or i < j in [a0, a1) when self. */
  private kernel(
    box: Box, dense: boolean, self: boolean,
    xa: Float64Array, ya: Float64Array, za: Float64Array, a0: number, a1: number,
    xb: Float64Array, yb: Float64Array, zb: Float64Array, b0: number, b1: number, hist: Float64Array,
  ): number {
    const cut2 = this.cut2(), invBin = 1 / this.binWidth, nb = this.nbins;
    if (box.ortho) {
      const { lx, ly, lz, ilx, ily, ilz } = box;
      if (self) {
        return dense
          ? selfOrthoDense(xa, ya, za, a0, a1, lx, ly, lz, ilx, ily, ilz, invBin, hist)
          : selfOrtho(xa, ya, za, a0, a1, lx, ly, lz, ilx, ily, ilz, cut2, invBin, nb, hist);
      }
      return dense
        ? crossOrthoDense(xa, ya, za, a0, a1, xb, yb, zb, b0, b1, lx, ly, lz, ilx, ily, ilz, invBin, hist)
        : crossOrtho(xa, ya, za, a0, a1, xb, yb, zb, b0, b1, lx, ly, lz, ilx, ily, ilz, cut2, invBin, nb, hist);
    }
    const h = box.h;
    if (self) {
      return dense
        ? selfTriclinicDense(xa, ya, za, a0, a1, h, invBin, hist)
        : selfTriclinic(xa, ya, za, a0, a1, h, cut2, invBin, nb, hist);
    }
    return dense
      ? crossTriclinicDense(xa, ya, za, a0, a1, xb, yb, zb, b0, b1, h, invBin, hist)
      : crossTriclinic(xa, ya, za, a0, a1, xb, yb, zb, b0, b1, h, cut2, invBin, nb, hist);
  }

  private brute(box: Box, hist: Float64Array, dense: boolean): void {
    const [xa, ya, za] = box.ortho ? [this.ax, this.ay, this.az] : this.fa;
    const [xb, yb, zb] = box.ortho ? [this.bx, this.by, this.bz] : this.fb;
    this.pairsExamined += this.same
      ? this.kernel(box, dense, true, xa, ya, za, 0, this.nA, xa, ya, za, 0, this.nA, hist)
      : this.kernel(box, dense, false, xa, ya, za, 0, this.nA, xb, yb, zb, 0, this.nB, hist);
  }

  private cells(box: Box, plan: SearchPlan, hist: Float64Array, dense: boolean): void {
    const [nx, ny, nz] = plan.grid;
    const half = HALF_SHELL[plan.reach];
    const full = FULL_SHELL[plan.reach];
    const A = this.sortA;
    const [fs, ft, fu] = this.fa;
    // Coordinates the kernels use: Cartesian (orthorhombic) or fractional (triclinic).
    if (box.ortho) A.sort(this.ax, this.ay, this.az, fs, ft, fu, this.nA, nx, ny, nz);
    else A.sort(fs, ft, fu, fs, ft, fu, this.nA, nx, ny, nz);
    let B = A;
    if (!this.same) {
      B = this.sortB;
      const [gs, gt, gu] = this.fb;
      if (box.ortho) B.sort(this.bx, this.by, this.bz, gs, gt, gu, this.nB, nx, ny, nz);
      else B.sort(gs, gt, gu, gs, gt, gu, this.nB, nx, ny, nz);
    }
    let examined = 0;
    // n ≥ 2m+1 > m, so a single fold brings k ∈ [−m, n−1+m] back into [0, n).
    const wrap = (k: number, n: number) => (k < 0 ? k + n : k >= n ? k - n : k);
    for (let cxi = 0; cxi < nx; cxi++) for (let cyi = 0; cyi < ny; cyi++) for (let czi = 0; czi < nz; czi++) {
      const c = (cxi * ny + cyi) * nz + czi;
      const a0 = A.start[c], a1 = A.start[c + 1];
      if (a0 === a1) continue;
      if (this.same) {
        examined += this.kernel(box, dense, true, A.x, A.y, A.z, a0, a1, A.x, A.y, A.z, a0, a1, hist);
        for (const [ox, oy, oz] of half) {
          const d = (wrap(cxi + ox, nx) * ny + wrap(cyi + oy, ny)) * nz + wrap(czi + oz, nz);
          const b0 = A.start[d], b1 = A.start[d + 1];
          if (b0 !== b1) examined += this.kernel(box, dense, false, A.x, A.y, A.z, a0, a1, A.x, A.y, A.z, b0, b1, hist);
        }
      } else {
        for (const [ox, oy, oz] of full) {
          const d = (wrap(cxi + ox, nx) * ny + wrap(cyi + oy, ny)) * nz + wrap(czi + oz, nz);
          const b0 = B.start[d], b1 = B.start[d + 1];
          if (b0 !== b1) examined += this.kernel(box, dense, false, A.x, A.y, A.z, a0, a1, B.x, B.y, B.z, b0, b1, hist);
        }
      }
    }
    this.pairsExamined += examined;
  }
}

/**
 * Enumerate every pair (i ∈ centres, j ∈ around, j ≠ i as atoms) closer than `cutoff` under the
 * minimum image (cutoff ≤ half the smallest perpendicular width), calling visit(p, q, r²) with
 * p, q the positions in the two index lists. Brute force over the pairs, Cartesian minimum
 * image by rounding fractional coordinates (Allen & Tildesley 2017 §1.6); meant for the few
 * centres of a solvation-shell analysis (cost N_centres × N_around per frame).
 */
export function forEachPairWithin(
  positions: Float64Array, g: CellGeometry, centres: Int32Array, around: Int32Array, cutoff: number,
  visit: (p: number, q: number, r2: number) => void,
): void {
  if (cutoff > g.limit * (1 + 1e-12)) throw new RangeError(`cutoff ${cutoff} Å exceeds half the smallest cell width (${g.limit} Å)`);
  const c2 = cutoff * cutoff;
  const d = new Float64Array(3);
  for (let p = 0; p < centres.length; p++) {
    const i = centres[p];
    const xi = positions[3 * i], yi = positions[3 * i + 1], zi = positions[3 * i + 2];
    for (let q = 0; q < around.length; q++) {
      const j = around[q];
      if (j === i) continue;
      d[0] = positions[3 * j] - xi;
      d[1] = positions[3 * j + 1] - yi;
      d[2] = positions[3 * j + 2] - zi;
      g.minimumImage(d, 0);
      const r2 = d[0] * d[0] + d[1] * d[1] + d[2] * d[2];
      if (r2 < c2) visit(p, q, r2);
    }
  }
}
