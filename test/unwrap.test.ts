import { describe, expect, it } from 'vitest';
import { Unwrapper } from '../src/unwrap.js';
import { CellGeometry, cellFromParameters, orthorhombicCell } from '../src/cell.js';

function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 4294967296;
  };
}

describe('unwrapping a wrapped random walk', () => {
  for (const [name, h] of [
    ['cubic', orthorhombicCell(12, 12, 12)],
    ['triclinic', cellFromParameters(12, 13, 14, 75, 85, 100)!],
  ] as const) {
    it(`recovers the original walk exactly (${name})`, () => {
      // Truth: the unwrapped trajectory is the walk itself; steps (≤ 0.9 Å per axis) are far
      // below half the cell width, where the minimum-image step is exact (common practice, no source).
      const n = 50, frames = 400;
      const rnd = lcg(3);
      const g = new CellGeometry(h);
      const walk = new Float64Array(3 * n).map(() => rnd() * 10);
      const atoms = Int32Array.from({ length: n }, (_, i) => i);
      const u = new Unwrapper(atoms);
      // The first wrapped frame may differ from the walk by a lattice vector: compare displacements.
      let offset: Float64Array | null = null;
      for (let t = 0; t < frames; t++) {
        if (t > 0) for (let k = 0; k < walk.length; k++) walk[k] += (rnd() - 0.5) * 1.8;
        const wrapped = Float64Array.from(walk);
        g.wrapAll(wrapped);
        const out = u.step(wrapped, h);
        if (!offset) offset = walk.map((w, k) => w - out[k]);
        // Round-off accumulates over 400 additions of O(10 Å) numbers: 1e-9 Å is ample.
        for (let k = 0; k < walk.length; k++) expect(Math.abs(out[k] + offset[k] - walk[k])).toBeLessThan(1e-9);
      }
      expect(u.warning()).toBeNull();
    });
  }

  it('warns when a step exceeds a third of the cell width', () => {
    const h = orthorhombicCell(10, 10, 10);
    const u = new Unwrapper(Int32Array.from([0]));
    u.step(Float64Array.from([1, 1, 1]), h);
    u.step(Float64Array.from([5, 1, 1]), h); // 4 Å step > 10/3 Å
    expect(u.longSteps).toBe(1);
    expect(u.warning()).toMatch(/too far apart to unwrap reliably/);
  });
});
