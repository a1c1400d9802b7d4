/**
 * Sokal's self-consistent window for the integrated autocorrelation time of a correlated series,
 * and the relative standard error of a correlation sum over a fixed window.
 *
 * Formula: τ_int(M) = Σ_{k=1}^{M} ρ(k) with M the smallest window such that M ≥ c·τ_S(M),
 * τ_S(M) = 1/2 + τ_int(M) (A. D. Sokal, "Monte Carlo methods in statistical mechanics: foundations
 * and new algorithms", in Functional Integration: Basics and Applications, NATO ASI Series B 361,
 * Plenum 1997, pp. 131–192; N. Madras and A. D. Sokal, J. Stat. Phys. 50, 109 (1988));
 * g = max(1, 1 + 2τ_int); relative standard error of the sum √(2(2M+1)/n) (same sources).
 * Conventions for ρ, τ_int and g: src/numerics/inefficiency.ts.
 *
 * Cost: O(M) for a window M, O(1) for the error.
 */

/**
 * Sokal's window constant c: the summation window M is the smallest M with M ≥ c·τ_S(M), where
 * τ_S(M) = 1/2 + Σ_{k=1}^{M} ρ(k) is Sokal's integrated autocorrelation time (= g/2, see above).
 * For ρ(k) = e^{−k/τ} the neglected tail is ≈ τ·e^{−c}, i.e. 0.7 % of τ at c = 5, while the
 * variance grows only like 2(2M+1)/n (A. D. Sokal, "Monte Carlo methods in statistical mechanics:
 * foundations and new algorithms", in Functional Integration: Basics and Applications, NATO ASI
 * Series B 361, Plenum 1997, pp. 131–192; N. Madras and A. D. Sokal, J. Stat. Phys. 50, 109
 * (1988)). Sokal suggests c of about 4–6 when ρ decays roughly exponentially and more otherwise
 * (from memory); we take 5.
 */
export const SOKAL_WINDOW_CONSTANT = 5;

/** Result of Sokal's automatic windowing. */
export interface WindowEstimate {
  /** Summation window M (lags 1 … M summed). */
  window: number;
  /** τ_int(M) = Σ_{k=1}^{M} ρ(k), in samples (floored so that g ≥ 1). */
  tauInt: number;
  /** g = 1 + 2τ_int, at least 1. */
  g: number;
  /** False when no M ≤ maxWindow satisfied M ≥ c·τ_S(M): g is then a lower estimate. */
  resolved: boolean;
}

/**
 * Sokal's automatic window (Sokal 1997; Madras & Sokal 1988): τ_int(M) = Σ_{k=1}^{M} ρ(k) and M
 * the smallest window ≥ 1 with M ≥ c·τ_S(M), τ_S(M) = 1/2 + τ_int(M) being Sokal's own
 * definition (so the criterion reads M ≥ c·g(M)/2). If no M ≤ maxWindow qualifies, the value at
 * maxWindow is returned with resolved = false. g = max(1, 1 + 2τ_int).
 *
 * Second opinion only. The criterion trusts the running estimate, which assumes ρ(k) is mostly
 * positive and decays roughly exponentially, the case Sokal recommends it for. When ρ(1) is strongly negative it stops at
 * once: a slow AR(1) part (φ = 0.99, variance share 11 %) plus a differenced white noise gives
 * ρ(1) = −0.33, τ_S(1) = 0.17 and 1 ≥ 5·0.17, so M = 1 and g = 1 while the exact g is 22
 * (closed form in test/converge.test.ts). Waiting for τ_int(M) > 0 does not help: the sum turns
 * positive at M = 5 with τ_S(5) = 0.6 and the criterion is met there too (g = 1.2). Geyer's
 * pairwise estimator below has no such failure, so it is the primary estimate.
 */
export function sokalWindow(
  rho: Float64Array,
  c = SOKAL_WINDOW_CONSTANT,
  maxWindow = rho.length - 1,
): WindowEstimate {
  const last = Math.min(maxWindow, rho.length - 1);
  let tau = 0;
  for (let m = 1; m <= last; m++) {
    tau += rho[m]!;
    if (m >= c * (0.5 + tau)) return windowResult(m, tau, true);
  }
  return windowResult(Math.max(last, 0), tau, last < 1);
}

function windowResult(window: number, tau: number, resolved: boolean): WindowEstimate {
  const g = Math.max(1, 1 + 2 * tau);
  return { window, tauInt: (g - 1) / 2, g, resolved };
}

/**
 * Relative standard error of a g (equivalently of Sokal's τ = g/2) summed over lags 1 … M:
 * √(2(2M+1)/n) (Sokal 1997, variance of τ̂_int for a window M; Madras & Sokal 1988), valid for
 * M ≪ n. Used for Geyer's estimate with M its largest lag (its data-chosen, monotone-smoothed
 * truncation is not a fixed window, so this is an approximation; the AR(1) tests bound it).
 */
export function windowRelativeError(window: number, n: number): number {
  return Math.sqrt((2 * (2 * window + 1)) / n);
}
