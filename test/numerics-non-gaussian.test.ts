/**
 * Non-Gaussian parameter and its displacement moments (src/numerics/non-gaussian.ts) against
 * Gaussian moments, arithmetic and closed forms for uniform motion.
 */
import { describe, expect, it } from 'vitest';
import { addNonGaussianSums, logSpacedLags, nonGaussianFromMoments } from '../src/numerics/non-gaussian.js';

describe('non-Gaussian parameter', () => {
  it('logSpacedLags gives round(10^(k/p)) and ends at maxLag', () => {
    // Truth: 10^(k/2) for k = 0..4 is 1, 3.162, 10, 31.62, 100 → 1, 3, 10, 32, 100 (arithmetic).
    expect(logSpacedLags(100, 2)).toEqual([1, 3, 10, 32, 100]);
    expect(logSpacedLags(50, 2)).toEqual([1, 3, 10, 32, 50]);
  });

  it('non-Gaussian parameter is zero for Gaussian moments in 3-D and 2-D', () => {
    // Truth: for Gaussian displacements with per-axis variance s², <r²> = d s² and <r⁴> = d(d+2) s⁴
    // (moments of the chi-square distribution), so α2 = 0 exactly (Rahman, Phys. Rev. 136, A405
    // (1964)). Tolerance 1e-15: two multiplications and a division.
    expect(Math.abs(nonGaussianFromMoments(3 * 2.5, 15 * 2.5 ** 2, 3))).toBeLessThan(1e-15);
    expect(Math.abs(nonGaussianFromMoments(2 * 2.5, 8 * 2.5 ** 2, 2))).toBeLessThan(1e-15);
  });

  it('moment sums of uniform motion: Σ|Δr|² = (T−m)v²m² and Σ|Δr|⁴ = (T−m)v⁴m⁴ in 3, 2 and 1 dimensions', () => {
    // Truth: r(t) = v·t per axis gives |Δr|² = Σ_axes v_a² m² at every origin (algebra), T − m
    // origins per lag. v = (0.5, −1, 2): v² = 5.25 in 3-D, 1.25 in 2-D (x, y), 0.25 in 1-D (x).
    // Tolerance 1e-12 relative: sums of at most 100 exact-ish terms. α₂ of such motion is
    // d·v⁴m⁴/((d+2)v⁴m⁴) − 1 = −2/(d+2) (algebra): −0.4 in 3-D.
    const T = 100;
    const v = [0.5, -1, 2];
    const axes = v.map((a) => Float64Array.from({ length: T }, (_, t) => a * t + 3));
    const lags = [1, 2, 7, 99];
    for (const [d, v2] of [[3, 5.25], [2, 1.25], [1, 0.25]] as const) {
      const s2 = new Float64Array(lags.length);
      const s4 = new Float64Array(lags.length);
      addNonGaussianSums(axes.slice(0, d), lags, s2, s4);
      lags.forEach((m, i) => {
        expect(Math.abs(s2[i] / ((T - m) * v2 * m * m) - 1)).toBeLessThan(1e-12);
        expect(Math.abs(s4[i] / ((T - m) * v2 * v2 * m ** 4) - 1)).toBeLessThan(1e-12);
      });
      if (d === 3) expect(Math.abs(nonGaussianFromMoments(s2[2] / (T - 7), s4[2] / (T - 7), 3) + 0.4)).toBeLessThan(1e-12);
    }
  });
});
