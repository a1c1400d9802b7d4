/**
 * Exponential fits (src/numerics/exponential-fits.ts) against exact data of the fitted models:
 * the double exponential of Zhang, Otani & Maginn (2015), its single-exponential case, and a
 * straight line through ln C.
 */
import { describe, expect, it } from 'vitest';
import {
  doubleExponential,
  doubleExponentialLimit,
  doubleExponentialRiseTime,
  fitDoubleExponential,
  fitExponentialDecay,
  fitSingleExponential,
} from '../src/numerics/exponential-fits.js';

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('double and single exponential fits', () => {
  it('recovers the parameters of exact double-exponential data', () => {
    // η(t) = Aατ₁(1 − e^{−t/τ₁}) + A(1 − α)τ₂(1 − e^{−t/τ₂}) (Zhang, Otani & Maginn, J. Chem.
    // Theory Comput. 11, 3537 (2015)) with A = 2, α = 0.7, τ₁ = 0.1, τ₂ = 1.5, on t ∈ (0, 10],
    // weights 1/t^0.5. Exact data have an exact least-squares solution.
    const truth = { A: 2, alpha: 0.7, tau1: 0.1, tau2: 1.5 };
    const t = Array.from({ length: 500 }, (_, i) => (i + 1) * 0.02);
    const y = t.map((x) => doubleExponential(x, truth));
    const f = fitDoubleExponential(t, y, t.map((x) => 1 / Math.sqrt(x)));
    expect(f.converged).toBe(true);
    // Tolerance: exact data, so only the optimiser's stopping criteria limit the match (1e-5).
    expect(rel(f.A, 2)).toBeLessThan(1e-5);
    expect(rel(f.alpha, 0.7)).toBeLessThan(1e-5);
    expect(rel(f.tau1, 0.1)).toBeLessThan(1e-5);
    expect(rel(f.tau2, 1.5)).toBeLessThan(1e-5);
    // Long-time limit A(ατ₁ + (1 − α)τ₂) = 2 (0.07 + 0.45) = 1.04 (hand).
    expect(rel(f.limit, 1.04)).toBeLessThan(1e-5);
    expect(rel(doubleExponentialLimit(truth), 1.04)).toBeLessThan(1e-14);
  });

  it('a single exponential (τ₁ = τ₂) is recovered with the right limit', () => {
    // y = 3 (1 − e^{−t/0.2}): limit 3 (closed form). The double exponential is degenerate here.
    const t = Array.from({ length: 300 }, (_, i) => (i + 1) * 0.01);
    const y = t.map((x) => 3 * -Math.expm1(-x / 0.2));
    const f = fitDoubleExponential(t, y, t.map(() => 1));
    // Tolerance: exact data; 1e-5 as above.
    expect(rel(f.limit, 3)).toBeLessThan(1e-5);
    expect(f.converged).toBe(true);
  });

  it('the single-exponential fallback recovers a(1 − e^{−t/τ}) exactly', () => {
    // y = 0.3 (1 − e^{−t/0.07}) on t ∈ (0, 3]: limit 0.3, τ = 0.07, initial slope 0.3/0.07 (the α = 1
    // case of Zhang, Otani & Maginn 2015). Exact data: the profiled minimum is exact; tolerance
    // 1e-6 (golden-section stop at 1e-12 in ln τ, flat cost near the minimum).
    const t = Array.from({ length: 750 }, (_, i) => (i + 1) * 0.004);
    const f = fitSingleExponential(t, t.map((x) => 0.3 * -Math.expm1(-x / 0.07)), t.map((x) => x ** -0.56));
    expect(f.converged).toBe(true);
    expect(rel(f.limit, 0.3)).toBeLessThan(1e-6);
    expect(rel(f.tau1, 0.07)).toBeLessThan(1e-6);
    expect(rel(f.A, 0.3 / 0.07)).toBeLessThan(1e-6);
    expect(rel(doubleExponentialLimit(f), 0.3)).toBeLessThan(1e-6);
  });

  it('refitting from a start (the jackknife path) lands on the same exact parameters', () => {
    // Same exact data as above (A = 2, α = 0.7, τ₁ = 0.1, τ₂ = 1.5), started from a point 20 %
    // off: the exact least-squares solution is unique inside the bounds, so the refinement must
    // reach it (tolerance 1e-5, the optimiser's stopping criteria).
    const truth = { A: 2, alpha: 0.7, tau1: 0.1, tau2: 1.5 };
    const t = Array.from({ length: 500 }, (_, i) => (i + 1) * 0.02);
    const f = fitDoubleExponential(t, t.map((x) => doubleExponential(x, truth)), t.map((x) => 1 / Math.sqrt(x)), { A: 2.4, alpha: 0.6, tau1: 0.12, tau2: 1.2 });
    expect(rel(f.tau1, 0.1)).toBeLessThan(1e-5);
    expect(rel(f.tau2, 1.5)).toBeLessThan(1e-5);
    expect(rel(f.limit, 1.04)).toBeLessThan(1e-5);
    expect(() => fitDoubleExponential([1, 2, 3], [1, 2, 3], [1, 1, 1])).toThrow(/at least 6 points/);
  });
});

describe('doubleExponentialRiseTime', () => {
  it('a single exponential reaches 95 % of its limit at τ ln 20; the double one where its closed form says', () => {
    // Truth: 1 − e^{−t/τ} = f at t = −τ ln(1 − f) = τ ln 20 for f = 0.95 (closed form). For the
    // double exponential the bisection result must satisfy η(t) = 0.95·limit (tolerance 1e-12
    // relative: 60 halvings of [0, 10]). A curve still below the level at tMax returns tMax.
    const single = { A: 3 / 0.2, alpha: 1, tau1: 0.2, tau2: 0.2 };
    expect(Math.abs(doubleExponentialRiseTime(single, 0.95, 10) - 0.2 * Math.log(20))).toBeLessThan(1e-12);
    const p = { A: 2, alpha: 0.7, tau1: 0.1, tau2: 1.5 };
    const t = doubleExponentialRiseTime(p, 0.95, 10);
    expect(Math.abs(doubleExponential(t, p) / (0.95 * doubleExponentialLimit(p)) - 1)).toBeLessThan(1e-12);
    expect(doubleExponentialRiseTime(p, 0.95, 0.5)).toBe(0.5);
  });
});

describe('fitExponentialDecay', () => {
  it('an exact exponential gives back its decay time', () => {
    // ln(A e^{−t/τ}) is a straight line: least squares returns τ to round-off (1e-10 relative).
    const time = Float64Array.from({ length: 200 }, (_, k) => 0.05 * k);
    const c = time.map((x) => 0.93 * Math.exp(-x / 1.7));
    expect(Math.abs(fitExponentialDecay(time, c, 3, 150) / 1.7 - 1)).toBeLessThan(1e-10);
  });

  it('a non-positive value in the window, a rising curve or fewer than 3 lags give NaN', () => {
    // Truth: ln C is undefined for C ≤ 0, and a rising curve has no decay time.
    const time = [0, 1, 2, 3, 4];
    expect(fitExponentialDecay(time, [1, 0.5, 0, 0.1, 0.05], 0, 4)).toBeNaN();
    expect(fitExponentialDecay(time, [1, 2, 4, 8, 16], 0, 4)).toBeNaN();
    expect(fitExponentialDecay(time, [1, 0.5, 0.25, 0.125, 0.0625], 1, 2)).toBeNaN();
  });
});
