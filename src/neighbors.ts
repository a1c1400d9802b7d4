/**
 * Pair-distance histograms and neighbour enumeration under periodic boundary conditions, for
 * orthorhombic and triclinic cells.
 *
 * Two search paths give bit-identical results:
 * - brute force: every pair of the two selections;
 * - linked cells with per-atom windows, in fractional coordinates (after Allen & Tildesley,
 *   Computer Simulation of Liquids, 2nd ed. 2017, §5.3): the cell is cut into columns, n_k =
 *   ⌊m·w_k / r_max⌋ slabs along the first two cell vectors (w_k = perpendicular width, m = the
 *   reach), so two atoms closer than r_max lie in columns at most m apart along each of those
 *   axes; along the third axis a partner lies within |Δu| ≤ r_max/w_c, and in an orthorhombic
 *   cell within √(r_max² − g²)/L_z where g is the gap to the neighbour column. Atoms are sorted by
 *   column and thin slab, so each window is one or two runs of consecutive atoms. Reach m = 2
 *   (5×5 columns of width ≥ r_max/2) when every axis has ≥ 5 slabs of r_max/2; otherwise m = 1
 *   with ≥ 3 slabs of r_max per axis; otherwise brute force. The 2m+1 columns searched along an
 *   axis are then distinct, and a window (at most 0.4 of the third axis) never covers a column
 *   twice, so no pair is visited twice. 20 000 uniform atoms at r_max 10 Å: 2.1× fewer pairs
 *   examined than 5×5×5 sub-cells (8.8 M against 18.7 M per frame; bench/rdf.ts).
 *
 * Both paths compute the distance of a pair with the same floating-point expression from
 * fractional coordinates s = r·H⁻¹ — the minimum image by rounding (ties to even, see RND),
 * Δs − rint(Δs), then d = L∘Δs (orthorhombic) or d = Δs·H (triclinic) — which is exact for
 * r < half the smallest perpendicular width (src/cell.ts) and sign-symmetric, so a pair gets
 * the same r² whichever atom comes first; and one counting rule: bin k = ⌊√r² · (1/Δr)⌋, kept
 * when k < nbins. The search only decides which pairs are looked at, and the kernel form
 * (with or without a branch, see DENSE_FRACTION) only how fast; the counts are the same.
 *
 * Counting convention: the histogram holds ordered pairs (i ∈ A, j ∈ B, j ≠ i). When A and B
 * are the same set each unordered pair is computed once and counted twice; when they overlap
 * every (i, j) is computed and the N_{A∩B} self-pairs (r = 0 exactly, bin 0) are subtracted.
 * Pairs inside one molecule can be excluded: they are enumerated once at set-up and their
 * counts, computed with the same expression, are subtracted each frame.
 *
 * The kernels and the window scan are in src/pair-kernels.ts (kept together for speed, see
 * there), the linked-cell plans and the counting sort in src/cell-search.ts.
 */
import type { CellGeometry } from './cell.js';
import { perpendicularWidths } from './cell.js';
import { cellGrid, planSearch, CellSort, ALL_COLUMNS, FORWARD_COLUMNS, type SearchPlan } from './cell-search.js';
import {
  boxOf, pairDistance2, scanColumns, type Box,
  crossOrtho, crossOrthoDense, selfOrtho, selfOrthoDense,
  crossTriclinic, crossTriclinicDense, selfTriclinic, selfTriclinicDense,
} from './pair-kernels.js';

/** Which search the histogrammer uses: 'auto' follows planSearch (linked cells when they pay off). */
export type SearchMethod = 'auto' | 'cells' | 'brute';

/**
 * Brute force uses the branch-free ("dense") kernels above this expected fraction of examined
 * pairs within r_max, the branching ("sparse") ones below. Measured on Node 20 / x86-64, 2 000
 * uniform atoms (bench/rdf.ts cases with the kernel forced): sparse/dense 322/184 M pairs/s at
 * 2.6 % inside, 198/183 at 11 %, 139/181 at 21 %, 79/182 at 52 %. The linked-cell search always
 * uses the dense kernels: its windows leave ≥ 30 % of the examined pairs inside, where the
 * branch is unpredictable (20 000 atoms, r_max 6/10/15 Å: dense 79/139/160 against sparse
 * 64/109/139 M pairs/s).
 */
export const DENSE_FRACTION = 0.12;

/** Per-frame options of PairHistogram.addFrame (the counts never depend on them). */
export interface FrameOptions {
  method?: SearchMethod;
  /** Linked-cell reach (1: 3×3 columns of width ≥ r_max; 2: 5×5 of width ≥ r_max/2). */
  reach?: 1 | 2;
  /** Kernel form of the brute-force search (the linked-cell search always uses the dense form). */
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
  private readonly fa: [Float64Array, Float64Array, Float64Array];
  private readonly fb: [Float64Array, Float64Array, Float64Array];
  /** Intra-molecular pairs as positions in the gathered A and B arrays. */
  private readonly intraA: Int32Array;
  private readonly intraB: Int32Array;
  private tmp: Float64Array;
  private readonly sortA = new CellSort();
  private readonly sortB = new CellSort();
  /** Scratch: the runs of one atom's linked-cell windows. */
  private runs = new Int32Array(0);

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
    this.fa = [new Float64Array(this.nA), new Float64Array(this.nA), new Float64Array(this.nA)];
    this.fb = this.same ? this.fa : [new Float64Array(this.nB), new Float64Array(this.nB), new Float64Array(this.nB)];
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
    // Kernel form (DENSE_FRACTION): brute force by the fraction of pairs expected within r_max
    // at uniform density (sphere over cell volume); the linked-cell windows always dense.
    const sphere = (4 * Math.PI / 3) * this.rMax ** 3;
    const auto = plan.method === 'cells' || sphere / g.volume > DENSE_FRACTION;
    const dense = plan.method === 'cells' || opts.kernel === 'dense' || (opts.kernel !== 'sparse' && auto);
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
    else this.cells(box, plan, tmp);
    // Self-pairs (r = 0 exactly) of overlapping selections.
    if (!this.same && this.overlap > 0) tmp[0] -= this.overlap;
    // Same-molecule pairs, distance and bin by the kernels' own expressions.
    const [cx, cy, cz] = this.fa;
    const [dx, dy, dz] = this.fb;
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

  /** Copy the selected atoms' fractional coordinates s = r·H⁻¹ (the kernels' coordinates for every cell). */
  private gather(pos: Float64Array, box: Box): void {
    const v = box.inv;
    const fill = (idx: Int32Array, f: [Float64Array, Float64Array, Float64Array]) => {
      const [s, t, u] = f;
      for (let k = 0; k < idx.length; k++) {
        const o = 3 * idx[k];
        const px = pos[o], py = pos[o + 1], pz = pos[o + 2];
        s[k] = px * v[0] + py * v[3] + pz * v[6];
        t[k] = px * v[1] + py * v[4] + pz * v[7];
        u[k] = px * v[2] + py * v[5] + pz * v[8];
      }
    };
    fill(this.a, this.fa);
    if (!this.same) fill(this.b, this.fb);
  }

  /** One block of pairs through the right kernel: [a0, a1) × [b0, b1), or i < j in [a0, a1) when self. */
  private kernel(
    box: Box, dense: boolean, self: boolean,
    xa: Float64Array, ya: Float64Array, za: Float64Array, a0: number, a1: number,
    xb: Float64Array, yb: Float64Array, zb: Float64Array, b0: number, b1: number, hist: Float64Array,
  ): number {
    const cut2 = this.cut2(), invBin = 1 / this.binWidth, nb = this.nbins;
    if (box.ortho) {
      const { lx, ly, lz } = box;
      if (self) {
        return dense
          ? selfOrthoDense(xa, ya, za, a0, a1, lx, ly, lz, invBin, hist)
          : selfOrtho(xa, ya, za, a0, a1, lx, ly, lz, cut2, invBin, nb, hist);
      }
      return dense
        ? crossOrthoDense(xa, ya, za, a0, a1, xb, yb, zb, b0, b1, lx, ly, lz, invBin, hist)
        : crossOrtho(xa, ya, za, a0, a1, xb, yb, zb, b0, b1, lx, ly, lz, cut2, invBin, nb, hist);
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
    const [xa, ya, za] = this.fa;
    const [xb, yb, zb] = this.fb;
    this.pairsExamined += this.same
      ? this.kernel(box, dense, true, xa, ya, za, 0, this.nA, xa, ya, za, 0, this.nA, hist)
      : this.kernel(box, dense, false, xa, ya, za, 0, this.nA, xb, yb, zb, 0, this.nB, hist);
  }

  /**
   * Linked-cell search with per-atom windows. Atoms are sorted into columns (n_a × n_b slabs
   * along the first two cell vectors, each at least r_max/m wide, as planned) and, inside a
   * column, into n_f thin slabs along the third (thickness ≤ r_max/8). A partner of atom i within
   * r_max lies in one of the (2m+1)² neighbour columns (the linked-cell argument of Allen &
   * Tildesley 2017 §5.3 applied to two axes) and within |Δu| ≤ r_max/w_c of it along the third
   * axis (w_c = perpendicular width: the distance from the a–b plane is |Δu|·w_c). So for each
   * atom and neighbour column only the thin slabs of that window are examined (one or two runs
   * of consecutive atoms). In an orthorhombic cell the window is narrowed further to
   * √(r_max² − g_x² − g_y²)/L_z, g the gap between the atom and the neighbour column, so the
   * examined volume follows the sphere instead of a box. With A = B each unordered pair is
   * examined once: forward columns only (HALF of the stencil), and within the atom's own column
   * only partners later in the sorted order. Windows are widened by a relative 1e-7 (and the
   * gaps narrowed by 1e-12 of a cell edge) so round-off can never drop a pair; the windows only
   * choose which pairs are examined, the kernels' expression and counting rule decide.
   */
  private cells(box: Box, plan: SearchPlan, hist: Float64Array): void {
    const [nx, ny] = plan.grid;
    const m = plan.reach;
    const w = perpendicularWidths(box.h);
    // Thin slabs along the third axis: thickness ≥ r_max/8. plan.grid[2] ≥ 2m+1 gives
    // w_c ≥ (2m+1)·r_max/m, so the window half-width h ≤ m/(2m+1) ≤ 0.4 and nf ≥ 20: a window
    // (2h plus one thin slab at each end) never covers a column twice.
    const nf = Math.max(20, Math.floor(((8 * w[2]) / this.rMax) * (1 - 1e-9)));
    const A = this.sortA;
    const [fs, ft, fu] = this.fa;
    A.sort(fs, ft, fu, this.nA, nx, ny, nf);
    let B = A;
    if (!this.same) {
      B = this.sortB;
      const [gs, gt, gu] = this.fb;
      B.sort(gs, gt, gu, this.nB, nx, ny, nf);
    }
    const cols = this.same ? FORWARD_COLUMNS[m] : ALL_COLUMNS[m];
    const maxRuns = 2 * cols.length + 2;
    if (this.runs.length < 2 * maxRuns) this.runs = new Int32Array(2 * maxRuns);
    this.pairsExamined += scanColumns(
      box, A, B, this.same, nx, ny, nf, m, cols, this.rMax * (1 + 1e-7), w[2], 1 / this.binWidth, hist, this.runs,
    );
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
