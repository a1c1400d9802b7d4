/**
 * Integral correlation time of a sampled correlation function: the area under C(t)/C(0) up to
 * its first zero crossing.
 *
 * Formula: τ = ∫₀^{t₀} C(t)/C(0) dt by the trapezoid rule (Press et al., Numerical Recipes, 3rd
 * ed. (2007), §4.1), the last interval ending at the zero t₀ found by linear interpolation
 * between the samples on either side. Stopping at the first zero keeps the noisy tail out of the
 * sum (common practice, no source).
 *
 * Cost: O(k) for a crossing at sample k, O(n) at most.
 */

/**
 * Integral correlation time of a correlation function C(k) on a grid of spacing dt:
 * τ = ∫₀^{t₀} C(t)/C(0) dt (trapezoid) up to the first zero crossing t₀ of C (common practice,
 * no source; for C = e^{−t/τ} plus noise it returns ≈ τ). `decayed` is false when C never
 * reaches zero within the array (τ is then a lower bound).
 */
export function integralCorrelationTime(c: ArrayLike<number>, dt: number): { tau: number; decayed: boolean } {
  const c0 = c[0];
  if (!(c0 > 0)) return { tau: 0, decayed: true };
  let s = 0;
  for (let k = 1; k < c.length; k++) {
    if (c[k] <= 0) {
      // Linear interpolation to the crossing.
      const f = c[k - 1] / (c[k - 1] - c[k]);
      s += 0.5 * c[k - 1] * f * dt;
      return { tau: s / c0, decayed: true };
    }
    s += 0.5 * (c[k - 1] + c[k]) * dt;
  }
  return { tau: s / c0, decayed: false };
}
