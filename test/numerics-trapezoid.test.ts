/**
 * The cumulative trapezoid rule (src/numerics/trapezoid.ts) against exact integrals, the rule's
 * published error bound and the closed form of its error on an exponential decay.
 */
import { describe, expect, it } from 'vitest';
import { cumulativeTrapezoid, trapezoidExponentialBias } from '../src/numerics/trapezoid.js';

describe('cumulativeTrapezoid', () => {
  it('is exact for a line and within its error bound for e^{−t}', () => {
    // Truth: ∫₀ᵗ (2 + 3s) ds = 2t + 1.5t² (exact for the trapezoid rule); ∫₀ᵗ e^{−s} ds = 1 − e^{−t}
    // with the trapezoid error ≤ t·h²/12·max|f''| = 5·0.01/12 ≈ 4.2e-3 (Press et al., Numerical
    // Recipes, 3rd ed., §4.1), used as the tolerance.
    const h = 0.1;
    const lin = cumulativeTrapezoid(Float64Array.from({ length: 51 }, (_, i) => 2 + 3 * i * h), h);
    expect(Math.abs(lin[50] - (2 * 5 + 1.5 * 25))).toBeLessThan(1e-12);
    const ex = cumulativeTrapezoid(Float64Array.from({ length: 51 }, (_, i) => Math.exp(-i * h)), h);
    expect(Math.abs(ex[50] - (1 - Math.exp(-5)))).toBeLessThan((5 * h * h) / 12);
  });

  it('e^{−t} on a fine grid: within the error bound of 1 − e^{−t}, and not exact', () => {
    // Trapezoid rule error ≤ (b − a) h² max|f''| / 12 (Numerical Recipes §4.1) = 5 × 0.01² / 12.
    const h = 0.01;
    const y = Array.from({ length: 501 }, (_, k) => Math.exp(-k * h));
    const I = cumulativeTrapezoid(y, h);
    const bound = (5 * h * h) / 12;
    expect(Math.abs(I[500] - (1 - Math.exp(-5)))).toBeLessThan(bound);
    expect(Math.abs(I[500] - (1 - Math.exp(-5)))).toBeGreaterThan(0); // the rule is not exact here
  });

  it('with a scale and an output array: scale·∫ at every lag, written into the array given', () => {
    // Truth: ∫₀ᵗ 3 cos s ds = 3 sin t; trapezoid error ≤ t·h²/12·max|f''| (Numerical Recipes §4.1)
    // with max|f''| = 3, so ≤ 2·0.02²·3/12 = 2e-4 at t = 2, the tolerance at every lag up to 2.
    const h = 0.02;
    const n = 101;
    const y = Float64Array.from({ length: n }, (_, k) => Math.cos(k * h));
    const out = new Float64Array(n).fill(NaN);
    const I = cumulativeTrapezoid(y, h, 3, out);
    expect(I).toBe(out);
    expect(I[0]).toBe(0);
    for (let k = 1; k < n; k++) expect(Math.abs(I[k] - 3 * Math.sin(k * h))).toBeLessThan((k * h * h * h * 3) / 12 + 1e-15);
    expect(cumulativeTrapezoid([], h).length).toBe(0);
  });
});

describe('trapezoid rule on a coarsely sampled exponential', () => {
  it('the trapezoid integral of e^{−t/τ} with step h is h(1/2 + e^{−h/τ}/(1 − e^{−h/τ})), i.e. τ·x coth x', () => {
    // Closed form: the trapezoid sum over all steps is h(1/2 + Σ_{k≥1} r^k) = h(1/2 + r/(1 − r)),
    // r = e^{−h/τ} (geometric series); the exact integral is τ. Summed to 80τ (remainder e^{−80}).
    // Tolerance 1e-12 relative: round-off of the sum.
    const tau = 0.07;
    for (const h of [0.004, 0.05, 0.2, 0.4]) {
      const r = Math.exp(-h / tau);
      const n = Math.ceil((80 * tau) / h) + 1;
      const c = Float64Array.from({ length: n }, (_, k) => Math.exp((-k * h) / tau));
      const trap = cumulativeTrapezoid(c, h)[n - 1];
      const closed = h * (0.5 + r / (1 - r));
      expect(Math.abs(trap - closed) / closed).toBeLessThan(1e-12);
      expect(Math.abs(trap / tau - 1 - trapezoidExponentialBias(r))).toBeLessThan(1e-12);
    }
  });

  it('the bias at r = 0.5 is 1.5 ln 2 − 1; none at r = 1; undefined outside (0, 1]', () => {
    // x = ln2/2 and coth(ln2/2) = (√2 + 1/√2)/(√2 − 1/√2) = 3 exactly, so the bias is
    // 1.5 ln 2 − 1 = 0.0397 (closed form). Tolerance 1e-14: round-off.
    expect(Math.abs(trapezoidExponentialBias(0.5) - (1.5 * Math.LN2 - 1))).toBeLessThan(1e-14);
    expect(trapezoidExponentialBias(1)).toBe(0);
    expect(trapezoidExponentialBias(0)).toBeNaN();
    expect(trapezoidExponentialBias(1.2)).toBeNaN();
  });
});
