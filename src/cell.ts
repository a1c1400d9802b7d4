/**
 * Periodic cells: construction from lengths and angles, volume, perpendicular widths,
 * fractional coordinates, wrapping and the minimum-image convention for orthorhombic and
 * triclinic cells.
 *
 * A cell is a Float64Array(9), row-major, rows = cell vectors a, b, c (Å).
 * A Cartesian vector r has fractional coordinates s = r · H⁻¹ (H = the cell matrix with the
 * vectors as rows), and r = s · H.
 */
import type { CellMatrix } from './types.js';

const DEG = Math.PI / 180;

/**
 * Cell matrix from lengths a, b, c (Å) and angles α, β, γ (degrees) by the PDB convention:
 * a along x, b in the xy plane (wwPDB Format v3.3, CRYST1 record; Giacovazzo et al.,
 * Fundamentals of Crystallography, ch. 2):
 *   a = (a, 0, 0); b = (b cosγ, b sinγ, 0);
 *   c = (c cosβ, c (cosα − cosβ cosγ)/sinγ, c √(1 − cos²β − ((cosα − cosβ cosγ)/sinγ)²)).
 * Returns null when the lengths are not positive or the angles make no cell.
 */
export function cellFromParameters(
  a: number,
  b: number,
  c: number,
  alpha: number,
  beta: number,
  gamma: number,
): CellMatrix | null {
  if (!(a > 0 && b > 0 && c > 0)) return null;
  if (![alpha, beta, gamma].every((x) => x > 0 && x < 180)) return null;
  const ca = Math.cos(alpha * DEG);
  const cb = Math.cos(beta * DEG);
  const cg = Math.cos(gamma * DEG);
  const sg = Math.sin(gamma * DEG);
  const cy = (ca - cb * cg) / sg;
  const zz = 1 - cb * cb - cy * cy;
  if (!(zz > 1e-12)) return null;
  // Snap round-off of right angles so that orthorhombic input gives an exactly diagonal matrix.
  const clean = (x: number) => (Math.abs(x) < 1e-12 * Math.max(a, b, c) ? 0 : x);
  return Float64Array.from([
    a, 0, 0,
    clean(b * cg), b * sg, 0,
    clean(c * cb), clean(c * cy), c * Math.sqrt(zz),
  ]);
}

/** Orthorhombic cell matrix diag(a, b, c). */
export function orthorhombicCell(a: number, b: number, c: number): CellMatrix {
  return Float64Array.from([a, 0, 0, 0, b, 0, 0, 0, c]);
}

/** Lengths (Å) and angles α = ∠(b,c), β = ∠(a,c), γ = ∠(a,b) (degrees) of a cell. */
export function cellParameters(h: CellMatrix): { lengths: [number, number, number]; angles: [number, number, number] } {
  const len = (i: number) => Math.hypot(h[3 * i], h[3 * i + 1], h[3 * i + 2]);
  const dot = (i: number, j: number) => h[3 * i] * h[3 * j] + h[3 * i + 1] * h[3 * j + 1] + h[3 * i + 2] * h[3 * j + 2];
  const la = len(0), lb = len(1), lc = len(2);
  const ang = (i: number, j: number, li: number, lj: number) =>
    Math.acos(Math.max(-1, Math.min(1, dot(i, j) / (li * lj)))) / DEG;
  return { lengths: [la, lb, lc], angles: [ang(1, 2, lb, lc), ang(0, 2, la, lc), ang(0, 1, la, lb)] };
}

/** Signed determinant of the cell matrix (a · (b × c)). */
export function determinant(h: CellMatrix): number {
  return (
    h[0] * (h[4] * h[8] - h[5] * h[7]) -
    h[1] * (h[3] * h[8] - h[5] * h[6]) +
    h[2] * (h[3] * h[7] - h[4] * h[6])
  );
}

/** Cell volume V = |a · (b × c)| in Å^3. */
export function volume(h: CellMatrix): number {
  return Math.abs(determinant(h));
}

/** Inverse of the 3×3 cell matrix (row-major), so that s = r · H⁻¹. */
export function inverse(h: CellMatrix): Float64Array {
  const d = determinant(h);
  if (d === 0 || !Number.isFinite(d)) throw new Error('singular cell matrix');
  const inv = new Float64Array(9);
  inv[0] = (h[4] * h[8] - h[5] * h[7]) / d;
  inv[1] = (h[2] * h[7] - h[1] * h[8]) / d;
  inv[2] = (h[1] * h[5] - h[2] * h[4]) / d;
  inv[3] = (h[5] * h[6] - h[3] * h[8]) / d;
  inv[4] = (h[0] * h[8] - h[2] * h[6]) / d;
  inv[5] = (h[2] * h[3] - h[0] * h[5]) / d;
  inv[6] = (h[3] * h[7] - h[4] * h[6]) / d;
  inv[7] = (h[1] * h[6] - h[0] * h[7]) / d;
  inv[8] = (h[0] * h[4] - h[1] * h[3]) / d;
  return inv;
}

/**
 * Perpendicular widths w_a = V/|b × c|, w_b = V/|c × a|, w_c = V/|a × b| (Å): the distances
 * between opposite faces of the cell.
 */
export function perpendicularWidths(h: CellMatrix): [number, number, number] {
  const v = volume(h);
  const cross = (i: number, j: number) => {
    const x = h[3 * i + 1] * h[3 * j + 2] - h[3 * i + 2] * h[3 * j + 1];
    const y = h[3 * i + 2] * h[3 * j] - h[3 * i] * h[3 * j + 2];
    const z = h[3 * i] * h[3 * j + 1] - h[3 * i + 1] * h[3 * j];
    return Math.hypot(x, y, z);
  };
  return [v / cross(1, 2), v / cross(2, 0), v / cross(0, 1)];
}

/**
 * Largest distance for which the minimum image by rounding fractional coordinates is exact:
 * half the smallest perpendicular width. If the true minimum-image distance r_min is below
 * w_min/2, every fractional component of the minimum-image vector has |s_i| ≤ r_min / w_i < 1/2,
 * so rounding finds it (Allen & Tildesley, Computer Simulation of Liquids, 2nd ed. 2017, §1.6).
 */
export function minimumImageLimit(h: CellMatrix): number {
  const w = perpendicularWidths(h);
  return 0.5 * Math.min(w[0], w[1], w[2]);
}

/** True when the off-diagonal elements are zero (to 1e-12 relative), i.e. an orthorhombic box. */
export function isOrthorhombic(h: CellMatrix): boolean {
  const scale = Math.max(Math.abs(h[0]), Math.abs(h[4]), Math.abs(h[8]));
  const tol = 1e-12 * scale;
  return [1, 2, 3, 5, 6, 7].every((k) => Math.abs(h[k]) <= tol);
}

/**
 * Precomputed geometry of one cell for the hot loops: inverse, orthorhombic flag, limit.
 * `minimumImage(d, o)` replaces the vector d[o..o+2] by its minimum image in place:
 * s = d·H⁻¹; s −= round(s); d = s·H (exact for |d*| < minimumImageLimit).
 */
export class CellGeometry {
  readonly h: CellMatrix;
  readonly inv: Float64Array;
  readonly orthorhombic: boolean;
  readonly volume: number;
  readonly limit: number;
  constructor(h: CellMatrix) {
    this.h = Float64Array.from(h);
    this.inv = inverse(h);
    this.orthorhombic = isOrthorhombic(h);
    this.volume = volume(h);
    this.limit = minimumImageLimit(h);
  }

  /** Minimum image of the vector stored at d[o], d[o+1], d[o+2], in place. */
  minimumImage(d: Float64Array, o: number): void {
    const h = this.h;
    if (this.orthorhombic) {
      d[o] -= h[0] * Math.round(d[o] / h[0]);
      d[o + 1] -= h[4] * Math.round(d[o + 1] / h[4]);
      d[o + 2] -= h[8] * Math.round(d[o + 2] / h[8]);
      return;
    }
    const v = this.inv;
    const x = d[o], y = d[o + 1], z = d[o + 2];
    let s0 = x * v[0] + y * v[3] + z * v[6];
    let s1 = x * v[1] + y * v[4] + z * v[7];
    let s2 = x * v[2] + y * v[5] + z * v[8];
    s0 -= Math.round(s0);
    s1 -= Math.round(s1);
    s2 -= Math.round(s2);
    d[o] = s0 * h[0] + s1 * h[3] + s2 * h[6];
    d[o + 1] = s0 * h[1] + s1 * h[4] + s2 * h[7];
    d[o + 2] = s0 * h[2] + s1 * h[5] + s2 * h[8];
  }

  /** Wrap every position of a flat array into the cell (fractional coordinates in [0, 1)). */
  wrapAll(pos: Float64Array): void {
    const h = this.h, v = this.inv;
    for (let o = 0; o < pos.length; o += 3) {
      const x = pos[o], y = pos[o + 1], z = pos[o + 2];
      let s0 = x * v[0] + y * v[3] + z * v[6];
      let s1 = x * v[1] + y * v[4] + z * v[7];
      let s2 = x * v[2] + y * v[5] + z * v[8];
      s0 -= Math.floor(s0);
      s1 -= Math.floor(s1);
      s2 -= Math.floor(s2);
      pos[o] = s0 * h[0] + s1 * h[3] + s2 * h[6];
      pos[o + 1] = s0 * h[1] + s1 * h[4] + s2 * h[7];
      pos[o + 2] = s0 * h[2] + s1 * h[5] + s2 * h[8];
    }
  }
}

/** True when two cells are equal element by element to a relative tolerance. */
export function sameCell(a: CellMatrix, b: CellMatrix, rel = 1e-9): boolean {
  let scale = 0;
  for (let k = 0; k < 9; k++) scale = Math.max(scale, Math.abs(a[k]));
  for (let k = 0; k < 9; k++) if (Math.abs(a[k] - b[k]) > rel * scale) return false;
  return true;
}
