/**
 * Student's t distribution (src/numerics/student-t.ts) against closed forms, a published table
 * and the normal limit (simple-statistics' normal CDF).
 */
import { describe, expect, it } from 'vitest';
import { cumulativeStdNormalProbability } from 'simple-statistics';
import { studentTCdf, studentTQuantile, ONE_SIGMA_LEVEL } from '../src/numerics/student-t.js';

describe("Student's t", () => {
  it('the CDF equals the closed forms for 1 and 2 degrees of freedom', () => {
    // Closed forms: ν = 1 (Cauchy) F = 1/2 + arctan(t)/π; ν = 2: F = 1/2 + t/(2√(2 + t²))
    // (e.g. Johnson, Kotz & Balakrishnan, Continuous Univariate Distributions, vol. 2, ch. 28;
    // from memory, checked by differentiating). Tolerance 1e-14: exact formulas, round-off only.
    for (const x of [-3, -0.5, 0, 0.7, 1.3213, 5]) {
      expect(Math.abs(studentTCdf(x, 1) - (0.5 + Math.atan(x) / Math.PI))).toBeLessThan(1e-14);
      expect(Math.abs(studentTCdf(x, 2) - (0.5 + x / (2 * Math.sqrt(2 + x * x))))).toBeLessThan(1e-14);
    }
  });

  it('quantiles match the published two-sided 95 % table and approach the normal', () => {
    // Table of t_{0.975,ν} (NIST/SEMATECH e-Handbook of Statistical Methods, §1.3.6.7.2; from
    // memory): 12.706, 4.303, 3.182, 2.776, 2.571, 2.228 for ν = 1, 2, 3, 4, 5, 10. Tolerance: the
    // table's 3 decimals (5e-4).
    const table: Array<[number, number]> = [[1, 12.706], [2, 4.303], [3, 3.182], [4, 2.776], [5, 2.571], [10, 2.228]];
    for (const [nu, t] of table) expect(Math.abs(studentTQuantile(0.975, nu) - t)).toBeLessThan(5e-4);
    // Φ(1) from simple-statistics' normal CDF (an independent implementation, tabulated to 4
    // decimals: tolerance 1e-4); for ν → ∞ the t quantile at Φ(1) tends to z = 1: at ν = 2000 the
    // leading correction (z³ + z)/(4ν) = 2.5e-4 (Cornish–Fisher expansion, from memory): tolerance 5e-4.
    expect(Math.abs(cumulativeStdNormalProbability(1) - ONE_SIGMA_LEVEL)).toBeLessThan(1e-4);
    expect(Math.abs(studentTQuantile(ONE_SIGMA_LEVEL, 2000) - 1)).toBeLessThan(5e-4);
  });

  it('ν = 3 equals its closed form; quantiles invert the CDF; bad arguments are refused', () => {
    // Closed form for ν = 3: F = 1/2 + (1/π)[θ + sin θ cos θ], θ = arctan(t/√3) (Abramowitz &
    // Stegun 26.7.3 with one series term). Tolerance 1e-14: round-off.
    for (const x of [-2, 0.4, 3.1]) {
      const th = Math.atan(x / Math.sqrt(3));
      expect(Math.abs(studentTCdf(x, 3) - (0.5 + (th + Math.sin(th) * Math.cos(th)) / Math.PI))).toBeLessThan(1e-14);
    }
    // Symmetry F(−t) = 1 − F(t) and t_{1−p} = −t_p (the distribution is symmetric).
    expect(Math.abs(studentTQuantile(0.1, 7) + studentTQuantile(0.9, 7))).toBeLessThan(1e-12);
    expect(studentTQuantile(0.5, 4)).toBe(0);
    expect(studentTCdf(Infinity, 2)).toBe(1);
    expect(() => studentTCdf(1, 1.5)).toThrow(RangeError);
    expect(() => studentTQuantile(1, 3)).toThrow(RangeError);
  });
});
