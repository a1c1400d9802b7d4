/**
 * Straight-line least squares (src/numerics/line-fit.ts) against hand computations with the
 * published formulas and an independent implementation (simple-statistics linearRegression).
 */
import { describe, expect, it } from 'vitest';
import { linearRegression } from 'simple-statistics';
import { fitLine } from '../src/numerics/line-fit.js';
import { Random } from '../src/random.js';

describe('fitLine', () => {
  it('unweighted: slope, intercept and standard errors by hand', () => {
    // Hand computation (formulas of Press et al., Numerical Recipes, 3rd ed., §15.2):
    // x = 0..4, y = 0, 2, 1, 4, 3: x̄ = 2, ȳ = 2, S_xx = 10, S_xy = 8 → b = 0.8, a = 0.4;
    // residuals −0.4, 0.8, −1.0, 1.2, −0.6 → RSS = 3.6, s² = 1.2; σ_b = √(1.2/10) = 0.346410,
    // σ_a = √(1.2·(1/5 + 4/10)) = √0.72 = 0.848528. Tolerance 1e-6 (hand values to 6 figures).
    const f = fitLine([0, 1, 2, 3, 4], [0, 2, 1, 4, 3]);
    expect(Math.abs(f.slope - 0.8)).toBeLessThan(1e-12);
    expect(Math.abs(f.intercept - 0.4)).toBeLessThan(1e-12);
    expect(Math.abs(f.slopeError - 0.34641)).toBeLessThan(1e-5);
    expect(Math.abs(f.interceptError - 0.848528)).toBeLessThan(1e-6);
  });

  it('agrees with simple-statistics linearRegression on noisy data (1e-10 relative)', () => {
    // Reference: simple-statistics 7.x linearRegression (ordinary least squares), an independent
    // implementation; both are exact formulas, so only round-off differs.
    const rng = new Random(3);
    const x = Array.from({ length: 200 }, (_, i) => 0.1 * i);
    const y = x.map((v) => 2.5 * v - 1 + rng.normal());
    const ref = linearRegression(x.map((v, i) => [v, y[i]]));
    const f = fitLine(x, y, { from: 20, to: 199 });
    const refSub = linearRegression(x.slice(20).map((v, i) => [v, y[20 + i]]));
    expect(Math.abs(f.slope - refSub.m) / Math.abs(refSub.m)).toBeLessThan(1e-10);
    expect(Math.abs(f.intercept - refSub.b) / Math.abs(refSub.b)).toBeLessThan(1e-10);
    expect(Math.abs(fitLine(x, y).slope - ref.m) / ref.m).toBeLessThan(1e-10);
  });

  it('weighted: equal weights 1/σ² give σ_b = σ/√S_xx', () => {
    // Closed form (Numerical Recipes §15.2): with w_i = 1/σ², Δ = w²(nΣx² − (Σx)²) = 50w² for
    // x = 0..4, so σ_b = √(5w/Δ) = σ/√10 = 0.316228 for σ = 1; the slope equals the unweighted 0.8.
    const f = fitLine([0, 1, 2, 3, 4], [0, 2, 1, 4, 3], { weights: [1, 1, 1, 1, 1] });
    expect(Math.abs(f.slope - 0.8)).toBeLessThan(1e-12);
    expect(Math.abs(f.slopeError - 0.316228)).toBeLessThan(1e-6);
  });

  it('refuses fewer than 3 points (2 weighted) and x values that do not vary', () => {
    // Truth: the residual variance Σr²/(n−2) needs n ≥ 3, and S_xx = 0 leaves the slope undefined
    // (Numerical Recipes §15.2).
    expect(() => fitLine([0, 1], [0, 1])).toThrow(RangeError);
    expect(fitLine([0, 1], [1, 3], { weights: [1, 1] }).slope).toBe(2);
    expect(() => fitLine([2, 2, 2], [0, 1, 2])).toThrow(/do not vary/);
  });
});
