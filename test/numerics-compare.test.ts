/**
 * Comparison of two independent estimates (src/numerics/compare.ts) against hand computations
 * with the GUM's combined uncertainty.
 */
import { describe, expect, it } from 'vitest';
import { compareEstimates } from '../src/numerics/compare.js';
import { quantity } from '../src/types.js';

describe('compareEstimates', () => {
  it('agree at 2σ, disagree at 3σ of the combined uncertainty', () => {
    // Truth: σ_Δ = √(0.03² + 0.04²) = 0.05 (3-4-5 triangle; JCGM 100:2008 eq. 10); Δ = 0.1 → 2σ (agree,
    // the threshold is inclusive), Δ = 0.15 → 3σ (disagree). Tolerance 1e-12: arithmetic.
    const a = quantity(1.0, 0.03, 'm^2/s');
    const ok = compareEstimates(a, quantity(0.9, 0.04, 'm^2/s'));
    expect(Math.abs(ok.sigmas! - 2)).toBeLessThan(1e-12);
    expect(ok.agree).toBe(true);
    const bad = compareEstimates(a, quantity(0.85, 0.04, 'm^2/s'));
    expect(Math.abs(bad.sigmas! - 3)).toBeLessThan(1e-12);
    expect(bad.agree).toBe(false);
    expect(compareEstimates(a, quantity(0.9, null, 'm^2/s')).agree).toBeNull();
  });

  it('exact inputs: equal values agree at 0 σ, different ones disagree at infinitely many', () => {
    // u(Δ) = 0 (GUM eq. 10 with both uncertainties 0): any non-zero difference is significant.
    const same = compareEstimates(quantity(1, 0, 'm^2/s'), quantity(1, 0, 'm^2/s'));
    expect([same.sigmas, same.agree]).toEqual([0, true]);
    const apart = compareEstimates(quantity(1, 0, 'm^2/s'), quantity(1.1, 0, 'm^2/s'));
    expect([apart.sigmas, apart.agree]).toEqual([Infinity, false]);
    expect(Math.abs(apart.difference.value + 0.1)).toBeLessThan(1e-15);
  });
});
