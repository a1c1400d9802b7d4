import { describe, expect, it } from 'vitest';
import {
  cellFromParameters, cellParameters, volume, inverse, perpendicularWidths, minimumImageLimit,
  CellGeometry, orthorhombicCell, isOrthorhombic,
} from '../src/cell.js';

/** Deterministic pseudo-random numbers for geometry tests (a linear congruential generator). */
function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 4294967296;
  };
}

describe('cell from lengths and angles (wwPDB v3.3 CRYST1 convention)', () => {
  it('matches the closed-form conversion for a triclinic cell', () => {
    // Closed form (wwPDB format v3.3, CRYST1; Giacovazzo, Fundamentals of Crystallography, ch. 2):
    // a=(a,0,0), b=(b cosγ, b sinγ, 0), c=(c cosβ, c(cosα−cosβcosγ)/sinγ, c·√(1−cos²β−cy²)).
    const [a, b, c, al, be, ga] = [10, 12, 14, 80, 95, 105];
    const d = Math.PI / 180;
    const cy = (Math.cos(al * d) - Math.cos(be * d) * Math.cos(ga * d)) / Math.sin(ga * d);
    const expected = [
      a, 0, 0,
      b * Math.cos(ga * d), b * Math.sin(ga * d), 0,
      c * Math.cos(be * d), c * cy, c * Math.sqrt(1 - Math.cos(be * d) ** 2 - cy * cy),
    ];
    const h = cellFromParameters(a, b, c, al, be, ga)!;
    // Same formula evaluated in the same order: agreement to round-off (1e-12 Å on 10 Å lengths).
    for (let k = 0; k < 9; k++) expect(h[k]).toBeCloseTo(expected[k], 12);
    const p = cellParameters(h);
    // Round trip lengths/angles: acos near 90° loses a few digits; 1e-9 is far below any printed precision.
    expect(p.lengths[0]).toBeCloseTo(a, 9);
    expect(p.lengths[2]).toBeCloseTo(c, 9);
    expect(p.angles[0]).toBeCloseTo(al, 9);
    expect(p.angles[1]).toBeCloseTo(be, 9);
    expect(p.angles[2]).toBeCloseTo(ga, 9);
  });

  it('gives the textbook triclinic volume abc√(1−cos²α−cos²β−cos²γ+2cosαcosβcosγ)', () => {
    // Volume formula: International Tables for Crystallography Vol. B, §1.1.
    const d = Math.PI / 180;
    const [a, b, c, al, be, ga] = [7, 8, 9, 70, 80, 110];
    const ca = Math.cos(al * d), cb = Math.cos(be * d), cg = Math.cos(ga * d);
    const v = a * b * c * Math.sqrt(1 - ca * ca - cb * cb - cg * cg + 2 * ca * cb * cg);
    expect(volume(cellFromParameters(a, b, c, al, be, ga)!)).toBeCloseTo(v, 9);
  });

  it('refuses non-positive lengths and angles that make no cell', () => {
    // A corner of a parallelepiped needs each angle ≤ the sum of the other two: α=β=30°, γ=120°
    // breaks it, and γ=180° is degenerate (International Tables for Crystallography Vol. B, §1.1).
    expect(cellFromParameters(0, 10, 10, 90, 90, 90)).toBeNull();
    expect(cellFromParameters(10, -1, 10, 90, 90, 90)).toBeNull();
    expect(cellFromParameters(10, 10, 10, 30, 30, 120)).toBeNull();
    expect(cellFromParameters(10, 10, 10, 90, 90, 180)).toBeNull();
  });

  it('right angles give an exactly diagonal matrix', () => {
    const h = cellFromParameters(10, 11, 12, 90, 90, 90)!;
    expect(isOrthorhombic(h)).toBe(true);
    expect(Array.from(h)).toEqual([10, 0, 0, 0, 11, 0, 0, 0, 12]);
  });
});

describe('inverse and widths', () => {
  it('H·H⁻¹ is the identity', () => {
    const h = cellFromParameters(9, 10, 11, 75, 85, 100)!;
    const inv = inverse(h);
    for (let i = 0; i < 3; i++)
      for (let j = 0; j < 3; j++) {
        let s = 0;
        for (let k = 0; k < 3; k++) s += h[3 * i + k] * inv[3 * k + j];
        // Identity to round-off on O(1) entries.
        expect(s).toBeCloseTo(i === j ? 1 : 0, 12);
      }
  });

  it('perpendicular widths: a box has its edges, the 60° FCC primitive cell has a/√3', () => {
    expect(perpendicularWidths(orthorhombicCell(5, 6, 7))).toEqual([5, 6, 7]);
    // FCC primitive cell (edge a/√2, all angles 60°): face spacing is the (111)-type spacing
    // of the primitive lattice = V / |b×c| = (a³/4) / ((a²/2)·sin60°) = a/(2 sin 60°) = a/√3.
    // (Closed form from V_prim = a³/4; Kittel, Introduction to Solid State Physics, ch. 1.)
    const a = 4;
    const h = cellFromParameters(a / Math.SQRT2, a / Math.SQRT2, a / Math.SQRT2, 60, 60, 60)!;
    expect(volume(h)).toBeCloseTo(a ** 3 / 4, 10);
    for (const w of perpendicularWidths(h)) expect(w).toBeCloseTo(a / Math.sqrt(3), 10);
    expect(minimumImageLimit(h)).toBeCloseTo(a / (2 * Math.sqrt(3)), 10);
  });
});

describe('minimum image', () => {
  /** Brute force: the shortest of the 27 images d + i·a + j·b + k·c, i,j,k ∈ {−1,0,1}. */
  function brute(h: Float64Array, d: number[]): number {
    let best = Infinity;
    for (let i = -1; i <= 1; i++)
      for (let j = -1; j <= 1; j++)
        for (let k = -1; k <= 1; k++) {
          const x = d[0] + i * h[0] + j * h[3] + k * h[6];
          const y = d[1] + i * h[1] + j * h[4] + k * h[7];
          const z = d[2] + i * h[2] + j * h[5] + k * h[8];
          best = Math.min(best, Math.hypot(x, y, z));
        }
    return best;
  }

  for (const [name, h] of [
    ['orthorhombic', orthorhombicCell(10, 12, 15)],
    ['triclinic', cellFromParameters(10, 11, 12, 70, 80, 105)!],
    ['rhombohedral 60°', cellFromParameters(8, 8, 8, 60, 60, 60)!],
  ] as const) {
    it(`equals brute force over 27 images below the stated bound (${name})`, () => {
      const g = new CellGeometry(h);
      const rnd = lcg(42);
      const v = new Float64Array(3);
      let checked = 0;
      for (let t = 0; t < 5000; t++) {
        // Vectors between points inside the cell (fractional coordinates in [0,1)).
        const s1 = [rnd(), rnd(), rnd()], s2 = [rnd(), rnd(), rnd()];
        const ds = [s2[0] - s1[0], s2[1] - s1[1], s2[2] - s1[2]];
        const d = [0, 1, 2].map((c) => ds[0] * h[c] + ds[1] * h[3 + c] + ds[2] * h[6 + c]);
        const ref = brute(h, d);
        v[0] = d[0]; v[1] = d[1]; v[2] = d[2];
        g.minimumImage(v, 0);
        const got = Math.hypot(v[0], v[1], v[2]);
        // The rounding image is never shorter than the true minimum (it is one of the images).
        expect(got).toBeGreaterThanOrEqual(ref - 1e-9);
        if (ref < g.limit) {
          // Below half the smallest width the image is exact (proof in src/cell.ts); 1e-9 Å = round-off.
          expect(Math.abs(got - ref)).toBeLessThan(1e-9);
          checked++;
        }
      }
      expect(checked).toBeGreaterThan(500);
    });
  }

  it('wrapAll puts fractional coordinates in [0,1) and preserves minimum-image distances', () => {
    const h = cellFromParameters(10, 11, 12, 70, 80, 105)!;
    const g = new CellGeometry(h);
    const inv = inverse(h);
    const rnd = lcg(7);
    const pos = new Float64Array(300).map(() => (rnd() - 0.5) * 60);
    const orig = Float64Array.from(pos);
    g.wrapAll(pos);
    for (let o = 0; o < pos.length; o += 3) {
      for (let c = 0; c < 3; c++) {
        const s = pos[o] * inv[c] + pos[o + 1] * inv[3 + c] + pos[o + 2] * inv[6 + c];
        expect(s).toBeGreaterThanOrEqual(-1e-12);
        expect(s).toBeLessThan(1 + 1e-12);
      }
      // The wrapped point differs from the original by a lattice vector: its minimum image is ~0.
      const d = Float64Array.from([pos[o] - orig[o], pos[o + 1] - orig[o + 1], pos[o + 2] - orig[o + 2]]);
      g.minimumImage(d, 0);
      expect(Math.hypot(d[0], d[1], d[2])).toBeLessThan(1e-9);
    }
  });
});
