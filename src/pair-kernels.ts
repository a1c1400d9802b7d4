/**
 * The pair-distance kernels of src/neighbors.ts and the linked-cell window scan that drives
 * them: hand-tuned hot loops, kept together in one module on purpose.
 *
 * - Every kernel reads the rounding constant R as a module-private `const`, which V8 folds into
 *   optimised code; an imported or exported binding is read from its module cell on every use,
 *   which cost ≈ 20 % of the kernels' speed in our measurements (Node 20, x86-64).
 * - `scanColumns` calls the dense cross kernels once per window run (tens of calls per atom and
 *   frame); it stays in the kernels' module so that these calls remain module-local.
 * - `pairDistance2` must repeat the kernels' floating-point expression exactly (so that a pair
 *   subtracted there cancels the kernel's count bit for bit), so it sits beside them.
 * The eight kernels differ only in cell shape (orthorhombic, triclinic), pair set (cross, self)
 * and form (sparse, dense); each is written out so that its inner loop holds no flag and no call.
 */
import type { CellGeometry } from './cell.js';
import type { CellSort } from './cell-search.js';

/**
 * 1.5·2⁵²: for |v| < 2⁵¹, (v + RND) − RND is v rounded to the nearest integer, ties to even, in
 * IEEE 754 double arithmetic (the sum's unit in the last place is 1, so the addition rounds).
 * Several times faster than Math.round in V8's optimised code (about 7× in our measurements on
 * Node 20), and symmetric: round(−v) = −round(v), which makes a pair's r² independent of its order.
 */
export const RND = 6755399441055744;
/**
 * The same constant for the kernels: V8 folds a module's private `const` into optimised code but
 * reads an exported binding from its cell on every use, which cost ≈ 20 % of the kernels' speed
 * in our measurements (Node 20, x86-64).
 */
const R = 6755399441055744;

/** Hot-loop constants of one frame's cell. */
export interface Box {
  ortho: boolean;
  /** Orthorhombic edge lengths. */
  lx: number; ly: number; lz: number;
  /** Full cell matrix (rows a, b, c) and its inverse. */
  h: Float64Array;
  inv: Float64Array;
}

/** The hot-loop constants of a cell: edge lengths when orthorhombic, else H turned lower triangular (`lowerTriangular`). */
export function boxOf(g: CellGeometry): Box {
  const h = g.h;
  return { ortho: g.orthorhombic, lx: h[0], ly: h[4], lz: h[8], h: g.orthorhombic ? h : lowerTriangular(h), inv: g.inv };
}

/**
 * The same cell turned so that a lies along x and b in the xy plane (rows a, b, c; entries 1, 2
 * and 5 zero): a' = (|a|, 0, 0), b' = (b·â, |b − (b·â)â|, 0), c'_x = c·â, c'_y = (c·b − c'_x b'_x)/b'_y,
 * c'_z = √(|c|² − c'_x² − c'_y²) — Gram–Schmidt on the cell vectors (the usual lattice-parameter
 * frame, e.g. the wwPDB CRYST1 convention). A rotation (or reflection) keeps every distance, and
 * fractional coordinates do not change, so d = Δs·H' has the length of Δs·H while the triclinic
 * kernels need 6 multiplications instead of 9 (measured ≈ 17 % faster on Node 20).
 */
export function lowerTriangular(h: Float64Array): Float64Array {
  const dot = (i: number, j: number) => h[3 * i] * h[3 * j] + h[3 * i + 1] * h[3 * j + 1] + h[3 * i + 2] * h[3 * j + 2];
  const a = Math.sqrt(dot(0, 0));
  const bx = dot(1, 0) / a;
  const by = Math.sqrt(Math.max(0, dot(1, 1) - bx * bx));
  const cx = dot(2, 0) / a;
  const cy = (dot(2, 1) - cx * bx) / by;
  const cz = Math.sqrt(Math.max(0, dot(2, 2) - cx * cx - cy * cy));
  return Float64Array.from([a, 0, 0, bx, by, 0, cx, cy, cz]);
}

// ---------------------------------------------------------------------------------------------
// Kernels. Each adds 1 to hist[k], k = ⌊√r² · (1/Δr)⌋, for the pairs it examines; only bins
// k < nbins are kept by the caller, and that is the one counting rule of both search paths.
// "cross": i in [a0, a1) of the first arrays × j in [b0, b1) of the second; "self": i < j within
// [a0, a1) of one set of arrays. Coordinates are fractional, s = r·H⁻¹, for every cell; the
// minimum image is Δs − rint(Δs), then d = L∘Δs (orthorhombic) or d = Δs·H (triclinic).
// No allocation; flat typed arrays.
// - sparse kernels skip pairs with r² ≥ cut2 (a prefilter set a hair above r²_max) before the
//   square root: best when few examined pairs lie within r_max (a branch that is mostly not taken);
// - dense kernels bin every pair without any branch (hist must hold every reachable bin): best
//   when many do, where the unpredictable branch of the sparse form costs more than the root.
// ---------------------------------------------------------------------------------------------

/**
 * Orthorhombic cross kernel, sparse (see above): Δs −= rint(Δs), d = (L_x Δs, L_y Δt, L_z Δu),
 * the minimum image of Allen & Tildesley, Computer Simulation of Liquids, 2nd ed. 2017, §1.6.
 * Returns pairs examined.
 */
export function crossOrtho(
  sa: Float64Array, ta: Float64Array, ua: Float64Array, a0: number, a1: number,
  sb: Float64Array, tb: Float64Array, ub: Float64Array, b0: number, b1: number,
  lx: number, ly: number, lz: number, cut2: number, invBin: number, nbins: number, hist: Float64Array,
): number {
  for (let i = a0; i < a1; i++) {
    const si = sa[i], ti = ta[i], ui = ua[i];
    for (let j = b0; j < b1; j++) {
      let dx = sb[j] - si;
      let dy = tb[j] - ti;
      let dz = ub[j] - ui;
      dx = lx * (dx - ((dx + R) - R));
      dy = ly * (dy - ((dy + R) - R));
      dz = lz * (dz - ((dz + R) - R));
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
  sa: Float64Array, ta: Float64Array, ua: Float64Array, a0: number, a1: number,
  sb: Float64Array, tb: Float64Array, ub: Float64Array, b0: number, b1: number,
  lx: number, ly: number, lz: number, invBin: number, hist: Float64Array,
): number {
  for (let i = a0; i < a1; i++) {
    const si = sa[i], ti = ta[i], ui = ua[i];
    for (let j = b0; j < b1; j++) {
      let dx = sb[j] - si;
      let dy = tb[j] - ti;
      let dz = ub[j] - ui;
      dx = lx * (dx - ((dx + R) - R));
      dy = ly * (dy - ((dy + R) - R));
      dz = lz * (dz - ((dz + R) - R));
      hist[(Math.sqrt(dx * dx + dy * dy + dz * dz) * invBin) | 0]++;
    }
  }
  return (a1 - a0) * (b1 - b0);
}

/** Orthorhombic self kernel, sparse: as crossOrtho over the pairs i < j of [a0, a1). Returns pairs examined. */
export function selfOrtho(
  s: Float64Array, t: Float64Array, u: Float64Array, a0: number, a1: number,
  lx: number, ly: number, lz: number, cut2: number, invBin: number, nbins: number, hist: Float64Array,
): number {
  for (let i = a0; i < a1; i++) {
    const si = s[i], ti = t[i], ui = u[i];
    for (let j = i + 1; j < a1; j++) {
      let dx = s[j] - si;
      let dy = t[j] - ti;
      let dz = u[j] - ui;
      dx = lx * (dx - ((dx + R) - R));
      dy = ly * (dy - ((dy + R) - R));
      dz = lz * (dz - ((dz + R) - R));
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
  s: Float64Array, t: Float64Array, u: Float64Array, a0: number, a1: number,
  lx: number, ly: number, lz: number, invBin: number, hist: Float64Array,
): number {
  for (let i = a0; i < a1; i++) {
    const si = s[i], ti = t[i], ui = u[i];
    for (let j = i + 1; j < a1; j++) {
      let dx = s[j] - si;
      let dy = t[j] - ti;
      let dz = u[j] - ui;
      dx = lx * (dx - ((dx + R) - R));
      dy = ly * (dy - ((dy + R) - R));
      dz = lz * (dz - ((dz + R) - R));
      hist[(Math.sqrt(dx * dx + dy * dy + dz * dz) * invBin) | 0]++;
    }
  }
  const n = a1 - a0;
  return (n * (n - 1)) / 2;
}

/**
 * Triclinic cross kernel, sparse, on fractional coordinates: Δs −= rint(Δs), d = Δs·H (rows of H
 * are the cell vectors, H lower triangular as `lowerTriangular` gives it: h[1] = h[2] = h[5] = 0
 * are not read), r² = d·d (minimum image, exact below half the smallest perpendicular width;
 * Allen & Tildesley 2017 §1.6). Returns pairs examined.
 */
export function crossTriclinic(
  sa: Float64Array, ta: Float64Array, ua: Float64Array, a0: number, a1: number,
  sb: Float64Array, tb: Float64Array, ub: Float64Array, b0: number, b1: number,
  h: Float64Array, cut2: number, invBin: number, nbins: number, hist: Float64Array,
): number {
  const h0 = h[0], h3 = h[3], h4 = h[4], h6 = h[6], h7 = h[7], h8 = h[8];
  for (let i = a0; i < a1; i++) {
    const si = sa[i], ti = ta[i], ui = ua[i];
    for (let j = b0; j < b1; j++) {
      let ds = sb[j] - si;
      let dt = tb[j] - ti;
      let du = ub[j] - ui;
      ds -= (ds + R) - R;
      dt -= (dt + R) - R;
      du -= (du + R) - R;
      const dx = ds * h0 + dt * h3 + du * h6;
      const dy = dt * h4 + du * h7;
      const dz = du * h8;
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
  const h0 = h[0], h3 = h[3], h4 = h[4], h6 = h[6], h7 = h[7], h8 = h[8];
  for (let i = a0; i < a1; i++) {
    const si = sa[i], ti = ta[i], ui = ua[i];
    for (let j = b0; j < b1; j++) {
      let ds = sb[j] - si;
      let dt = tb[j] - ti;
      let du = ub[j] - ui;
      ds -= (ds + R) - R;
      dt -= (dt + R) - R;
      du -= (du + R) - R;
      const dx = ds * h0 + dt * h3 + du * h6;
      const dy = dt * h4 + du * h7;
      const dz = du * h8;
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
  const h0 = h[0], h3 = h[3], h4 = h[4], h6 = h[6], h7 = h[7], h8 = h[8];
  for (let i = a0; i < a1; i++) {
    const si = s[i], ti = t[i], ui = u[i];
    for (let j = i + 1; j < a1; j++) {
      let ds = s[j] - si;
      let dt = t[j] - ti;
      let du = u[j] - ui;
      ds -= (ds + R) - R;
      dt -= (dt + R) - R;
      du -= (du + R) - R;
      const dx = ds * h0 + dt * h3 + du * h6;
      const dy = dt * h4 + du * h7;
      const dz = du * h8;
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
  const h0 = h[0], h3 = h[3], h4 = h[4], h6 = h[6], h7 = h[7], h8 = h[8];
  for (let i = a0; i < a1; i++) {
    const si = s[i], ti = t[i], ui = u[i];
    for (let j = i + 1; j < a1; j++) {
      let ds = s[j] - si;
      let dt = t[j] - ti;
      let du = u[j] - ui;
      ds -= (ds + R) - R;
      dt -= (dt + R) - R;
      du -= (du + R) - R;
      const dx = ds * h0 + dt * h3 + du * h6;
      const dy = dt * h4 + du * h7;
      const dz = du * h8;
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
export function pairDistance2(box: Box, x: Float64Array, y: Float64Array, z: Float64Array, i: number,
  xb: Float64Array, yb: Float64Array, zb: Float64Array, j: number): number {
  let ds = xb[j] - x[i];
  let dt = yb[j] - y[i];
  let du = zb[j] - z[i];
  if (box.ortho) {
    ds = box.lx * (ds - ((ds + R) - R));
    dt = box.ly * (dt - ((dt + R) - R));
    du = box.lz * (du - ((du + R) - R));
    return ds * ds + dt * dt + du * du;
  }
  const h = box.h;
  ds -= (ds + R) - R;
  dt -= (dt + R) - R;
  du -= (du + R) - R;
  const dx = ds * h[0] + dt * h[3] + du * h[6];
  const dy = dt * h[4] + du * h[7];
  const dz = du * h[8];
  return dx * dx + dy * dy + dz * dz;
}

/**
 * The per-atom window scan of PairHistogram's linked-cell search (see its `cells` method):
 * for each atom of A, collect the runs of B's sorted atoms that can hold a partner within rc,
 * then bin each run with the dense cross kernels (one call per run: measured faster than one
 * kernel looping over all the runs, 59 against 78 ms per frame for 20 000 atoms, r_max 10 Å).
 * Returns pairs examined.
 */
export function scanColumns(
  box: Box, A: CellSort, B: CellSort, same: boolean, nx: number, ny: number, nf: number, m: number,
  cols: Array<[number, number]>, rc: number, wc: number, invBin: number, hist: Float64Array, runs: Int32Array,
): number {
  const aStart = A.start, bStart = B.start;
  const AX = A.x, AY = A.y, AZ = A.z, ARS = A.rs, ART = A.rt, ARU = A.ru;
  const BX = B.x, BY = B.y, BZ = B.z;
  const ortho = box.ortho, lx = box.lx, ly = box.ly, lz = box.lz, h = box.h;
  const rc2 = rc * rc;
  const hFull = rc / wc;
  const inx = 1 / nx, iny = 1 / ny, ilz = 1 / lz;
  const colX = Int32Array.from(cols, (c) => c[0]), colY = Int32Array.from(cols, (c) => c[1]);
  const nc = cols.length;
  let examined = 0;
  for (let cx = 0; cx < nx; cx++) for (let cy = 0; cy < ny; cy++) {
    const home = (cx * ny + cy) * nf;
    const p0 = aStart[home], p1 = aStart[home + nf];
    for (let p = p0; p < p1; p++) {
      const u = ARU[p];
      let r = 0;
      if (same) {
        // Own column, partners later in the sorted order with u' ≤ u + h (wrapping past 1).
        const hi = u + hFull;
        if (hi < 1) {
          runs[r++] = p + 1; runs[r++] = bStart[home + fineSlab(hi, nf) + 1];
        } else {
          runs[r++] = p + 1; runs[r++] = p1;
          runs[r++] = p0; runs[r++] = bStart[home + fineSlab(hi - 1, nf) + 1];
        }
      }
      const s = ARS[p], t = ART[p];
      for (let k = 0; k < nc; k++) {
        const ox = colX[k], oy = colY[k];
        let hw = hFull;
        if (ortho) {
          const gs = Math.max(0, (cx + ox) * inx - s, s - (cx + ox + 1) * inx) - 1e-12;
          const gt = Math.max(0, (cy + oy) * iny - t, t - (cy + oy + 1) * iny) - 1e-12;
          const gx = gs > 0 ? gs * lx : 0, gy = gt > 0 ? gt * ly : 0;
          const rem = rc2 - gx * gx - gy * gy;
          if (rem <= 0) continue;
          hw = Math.sqrt(rem) * ilz * (1 + 1e-7);
        }
        let ax = cx + ox, ay = cy + oy;
        ax = ax < 0 ? ax + nx : ax >= nx ? ax - nx : ax;
        ay = ay < 0 ? ay + ny : ay >= ny ? ay - ny : ay;
        const base = (ax * ny + ay) * nf;
        const lo = u - hw, hi = u + hw;
        if (lo < 0) {
          runs[r++] = bStart[base + fineSlab(lo + 1, nf)]; runs[r++] = bStart[base + nf];
          runs[r++] = bStart[base]; runs[r++] = bStart[base + fineSlab(hi, nf) + 1];
        } else if (hi >= 1) {
          runs[r++] = bStart[base + fineSlab(lo, nf)]; runs[r++] = bStart[base + nf];
          runs[r++] = bStart[base]; runs[r++] = bStart[base + fineSlab(hi - 1, nf) + 1];
        } else {
          runs[r++] = bStart[base + fineSlab(lo, nf)]; runs[r++] = bStart[base + fineSlab(hi, nf) + 1];
        }
      }
      for (let q = 0; q < r; q += 2) {
        examined += ortho
          ? crossOrthoDense(AX, AY, AZ, p, p + 1, BX, BY, BZ, runs[q], runs[q + 1], lx, ly, lz, invBin, hist)
          : crossTriclinicDense(AX, AY, AZ, p, p + 1, BX, BY, BZ, runs[q], runs[q + 1], h, invBin, hist);
      }
    }
  }
  return examined;
}

/** Thin-slab index ⌊v·n⌋ of a reduced coordinate v, clamped to [0, n−1]. */
export function fineSlab(v: number, n: number): number {
  const k = Math.floor(v * n);
  return k < 0 ? 0 : k >= n ? n - 1 : k;
}
