/**
 * Sokal's automatic window (src/numerics/sokal.ts) against hand computations on exact
 * autocorrelations.
 */
import { describe, expect, it } from 'vitest';
import { sokalWindow, windowRelativeError } from '../src/numerics/sokal.js';

describe("Sokal's window", () => {
  it("Sokal's window on an exact geometric autocorrelation (hand computation)", () => {
    // ρ(k) = 0.5^k: τ_int(M) = 1 − 2^−M. Criterion M ≥ 5(1/2 + τ_int(M)): M = 7 gives
    // 5·(1.5 − 1/128) = 7.46 > 7, M = 8 gives 5·(1.5 − 1/256) = 7.48 ≤ 8 → window 8,
    // g = 1 + 2(1 − 1/256) = 2.9921875 (hand computation). Tolerance 1e-12: only round-off.
    const rho = Float64Array.from({ length: 50 }, (_, k) => 0.5 ** k);
    const w = sokalWindow(rho);
    expect(w.window).toBe(8);
    expect(w.resolved).toBe(true);
    expect(Math.abs(w.g - 2.9921875)).toBeLessThan(1e-12);
  });

  it('an autocorrelation that never decays leaves the window unresolved at its cap', () => {
    // ρ(k) = 1: τ_int(M) = M and M ≥ 5(1/2 + M) never holds, so the window ends at maxWindow = 20
    // with g = 1 + 2·20 = 41 and resolved = false (hand computation).
    const w = sokalWindow(new Float64Array(51).fill(1), 5, 20);
    expect(w).toEqual({ window: 20, tauInt: 20, g: 41, resolved: false });
  });

  it('relative error of a correlation sum over M lags: √(2(2M+1)/n)', () => {
    // Sokal (1997), var(τ̂_int)/τ_int² ≈ 2(2M+1)/n: M = 12, n = 5000 → √(50/5000) = 0.1 (hand).
    expect(Math.abs(windowRelativeError(12, 5000) - 0.1)).toBeLessThan(1e-15);
  });
});
