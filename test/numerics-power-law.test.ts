/**
 * Power-law fit (src/numerics/power-law.ts) against exact power laws.
 */
import { describe, expect, it } from 'vitest';
import { fitPowerLaw } from '../src/numerics/power-law.js';

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('fitPowerLaw', () => {
  it('power law σ = A t^b from exact data', () => {
    // σ(t) = 0.3 t^0.55 exactly: the log-log line fit is exact (Numerical Recipes §15.2).
    const t = Array.from({ length: 100 }, (_, i) => (i + 1) * 0.05);
    const p = fitPowerLaw(t, t.map((x) => 0.3 * x ** 0.55));
    // Tolerance: rounding only.
    expect(rel(p.A, 0.3)).toBeLessThan(1e-10);
    expect(rel(p.b, 0.55)).toBeLessThan(1e-10);
  });

  it('ignores points with t ≤ 0 or σ ≤ 0 and refuses fewer than 3 positive points', () => {
    // Truth: ln is undefined there; the remaining exact points still give A = 2, b = −0.5 (1e-10).
    const p = fitPowerLaw([0, 1, 2, 4, 8], [5, 2, 2 / Math.SQRT2, 1, -1]);
    expect(rel(p.A, 2)).toBeLessThan(1e-10);
    expect(rel(p.b, -0.5)).toBeLessThan(1e-10);
    expect(() => fitPowerLaw([0, 1, 2], [1, 1, 1])).toThrow(/too few positive points/);
  });
});
