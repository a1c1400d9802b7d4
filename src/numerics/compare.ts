/**
 * Comparison of two independent estimates of one quantity: their difference, its combined
 * standard uncertainty and whether they agree.
 *
 * Formula: Δ = a − b with u(Δ) = √(u_a² + u_b²) (JCGM 100:2008, GUM, eq. 10, uncorrelated inputs);
 * they agree when |Δ| ≤ 2·u(Δ), about a two-sided 95 % test for Gaussian errors (common practice,
 * no source for the factor).
 *
 * Cost: O(1).
 */
import { quantity, type Quantity } from '../types.js';

/** Two estimates disagree when |D1 − D2| > DISAGREEMENT_FACTOR · √(σ1² + σ2²). */
export const DISAGREEMENT_FACTOR = 2;

/** Comparison of two estimates of one quantity. */
export interface Agreement {
  difference: Quantity;
  /** |D1 − D2| / √(σ1² + σ2²), or null when an uncertainty is missing. */
  sigmas: number | null;
  agree: boolean | null;
}

/**
 * Compare two independent estimates: Δ = D1 − D2 with σ_Δ = √(σ1² + σ2²) (JCGM 100:2008, eq. 10,
 * uncorrelated inputs); they agree when |Δ| ≤ DISAGREEMENT_FACTOR·σ_Δ (a two-sided test at about
 * 95 % for Gaussian errors; common practice, no source). Unknown when an uncertainty is missing.
 */
export function compareEstimates(a: Quantity, b: Quantity): Agreement {
  const diff = a.value - b.value;
  if (a.uncertainty === null || b.uncertainty === null) return { difference: quantity(diff, null, a.unit), sigmas: null, agree: null };
  const s = Math.hypot(a.uncertainty, b.uncertainty);
  const sigmas = s > 0 ? Math.abs(diff) / s : diff === 0 ? 0 : Infinity;
  return { difference: quantity(diff, s, a.unit), sigmas, agree: sigmas <= DISAGREEMENT_FACTOR };
}
