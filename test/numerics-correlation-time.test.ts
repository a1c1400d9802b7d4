/**
 * Integral correlation time (src/numerics/correlation-time.ts) against closed-form integrals.
 */
import { describe, expect, it } from 'vitest';
import { integralCorrelationTime } from '../src/numerics/correlation-time.js';

describe('integralCorrelationTime', () => {
  it('integralCorrelationTime of a damped cosine equals the closed-form integral to its first zero', () => {
    // C = e^{−t/τ} cos ωt, τ = 1, ω = 2: first zero t₀ = π/(2ω); ∫₀^t₀ C dt
    // = [e^{−t/τ}(ω sin ωt − cos(ωt)/τ)]₀^t₀ / (1/τ² + ω²) = (ω e^{−t₀} + 1)/(1 + ω²) (closed form).
    const h = 1e-4;
    const c = Array.from({ length: 20000 }, (_, k) => Math.exp(-k * h) * Math.cos(2 * k * h));
    const { tau, decayed } = integralCorrelationTime(c, h);
    const t0 = Math.PI / 4;
    const exact = (2 * Math.exp(-t0) + 1) / 5;
    expect(decayed).toBe(true);
    // Tolerance: trapezoid error ~h² and linear interpolation of the crossing ~h²: 1e-6.
    expect(Math.abs(tau - exact)).toBeLessThan(1e-6);
  });

  it('an exponential that never crosses zero gives its area so far, flagged as not decayed', () => {
    // ∫₀^T e^{−t/τ} dt = τ(1 − e^{−T/τ}) (closed form), τ = 0.5, T = 1; trapezoid error
    // ≤ T h² max|C''|/12 = 1e-6·4/12 (Numerical Recipes §4.1): tolerance 1e-6. A correlation
    // that is not positive at zero lag has no correlation time (0, by the function's rule).
    const h = 1e-3;
    const c = Array.from({ length: 1001 }, (_, k) => Math.exp(-k * h / 0.5));
    const r = integralCorrelationTime(c, h);
    expect(r.decayed).toBe(false);
    expect(Math.abs(r.tau - 0.5 * (1 - Math.exp(-2)))).toBeLessThan(1e-6);
    expect(integralCorrelationTime([0, 1, 2], h)).toEqual({ tau: 0, decayed: true });
  });
});
