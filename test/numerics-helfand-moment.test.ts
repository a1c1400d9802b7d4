/**
 * Mean-squared Helfand moment (src/numerics/helfand-moment.ts) against closed forms (constant
 * series, random walk) and the direct definition averaged over all origins.
 */
import { describe, expect, it } from 'vitest';
import { helfandMsd } from '../src/numerics/helfand-moment.js';
import { Random } from '../src/random.js';

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('helfandMsd', () => {
  it('constant series: ⟨ΔG²⟩ = (c k dt)² exactly', () => {
    // G_i = c i dt, so G_{i+k} − G_i = c k dt for every origin (closed form).
    const x = new Float64Array(1000).fill(2.5);
    const m = helfandMsd(x, 0.01, 100);
    for (const k of [1, 10, 57, 100]) {
      // Tolerance: M = S − 2C cancels terms of size ⟨G²⟩ ≈ 52 (G centred, |G| ≤ 12.5) with FFT
      // round-off ≈ ε log₂S ≈ 3e-15 relative, i.e. ≈ 2e-13 absolute, against M(1) = 6.25e-4:
      // ≈ 3e-10 relative at k = 1; allow 1e-8.
      expect(rel(m[k], (2.5 * k * 0.01) ** 2)).toBeLessThan(1e-8);
    }
  });

  it('white noise: ⟨ΔG²⟩ = k s² dt² (random walk, Einstein 1905)', () => {
    // Independent N(0, s²) increments: the mean-squared displacement after k steps is k s² dt².
    const n = 200_000;
    const x = new Random(4).fillNormal(new Float64Array(n), 0, 2);
    const m = helfandMsd(x, 0.5, 50);
    // Tolerance: for overlapping windows the relative SD of the origin-averaged MSD of a random
    // walk is ≈ √(4k/(3n)) (from memory): 1.8 % at k = 50, 0.6 % at k = 5; allow 6 % (> 3 SD).
    expect(rel(m[50], 50 * 4 * 0.25)).toBeLessThan(0.06);
    expect(rel(m[5], 5 * 4 * 0.25)).toBeLessThan(0.06);
  });

  it('Helfand moment equals the direct definition ⟨(G_{i+k} − G_i)²⟩ for short and long lag ranges', () => {
    // Direct O(n·k) average over all origins of the definition (Helfand, Phys. Rev. 119, 1
    // (1960)); the lag ranges exercise the different transform layouts of src/correlate.ts.
    const rng = new Random(8);
    for (const [n, maxLag] of [
      [777, 200],
      [5000, 4999],
      [70_000, 3000],
      [150_000, 40_000],
    ] as const) {
      const x = rng.fillNormal(new Float64Array(n), 0.3, 1);
      const dt = 0.25;
      const m = helfandMsd(x, dt, maxLag);
      const G = new Float64Array(n + 1);
      for (let i = 0; i < n; i++) G[i + 1] = G[i] + x[i] * dt;
      for (const k of [1, 13, Math.floor(maxLag / 2), maxLag]) {
        let s = 0;
        for (let i = 0; i + k <= n; i++) s += (G[i + k] - G[i]) ** 2;
        const ref = s / (n + 1 - k);
        // Tolerance: M = S − 2C cancels sums of size ⟨G²⟩ (G centred, |G| up to ≈ 0.3·n·dt)
        // with FFT round-off ≈ ε log₂S relative; 1e-7 relative to ⟨G²⟩ leaves wide margin and
        // still catches any indexing or normalisation error (those are O(1)).
        let g2 = 0;
        let gm = 0;
        for (let i = 0; i <= n; i++) gm += G[i] / (n + 1);
        for (let i = 0; i <= n; i++) g2 += (G[i] - gm) ** 2 / (n + 1);
        expect(Math.abs(m[k] - ref)).toBeLessThan(1e-7 * g2);
      }
    }
  });
});
