/**
 * Geyer's initial monotone sequence estimator of the statistical inefficiency g of a correlated
 * series (the asymptotic variance of its mean over the variance of one sample).
 *
 * Formula (C. J. Geyer, Statist. Sci. 7, 473 (1992), §3.3): from biased autocovariances γ(k),
 * pair sums Γ_m = γ(2m) + γ(2m+1), kept while positive, each replaced by the minimum of those
 * before it; σ² = −γ(0) + 2 Σ_m Γ_m; g = σ²/γ(0), floored at 1. Conventions for ρ, τ_int and g:
 * src/numerics/inefficiency.ts.
 *
 * Cost: O(K) for a sequence ending at lag K.
 */

/** Result of Geyer's initial-sequence estimator. */
export interface GeyerEstimate {
  /** g = σ²_asymptotic / γ(0), at least 1. */
  g: number;
  /** Number of pair sums Γ_m used. */
  pairs: number;
  /** Largest lag summed, 2·pairs − 1 (0 when no pair was used). */
  window: number;
  /** False when the sequence was still positive at the last available lag: g is then a lower estimate. */
  resolved: boolean;
}

/**
 * Geyer's initial monotone sequence estimator (C. J. Geyer, Statist. Sci. 7, 473 (1992), §3.3),
 * the primary estimate of g. From biased autocovariances γ(k) = (1/n)Σ(x_i−x̄)(x_{i+k}−x̄): pair
 * sums Γ_m = γ(2m) + γ(2m+1), kept while positive (initial positive sequence), each replaced by
 * the minimum of those before it (initial monotone sequence); asymptotic variance
 * σ² = −γ(0) + 2 Σ_m Γ_m; g = σ²/γ(0), floored at 1.
 *
 * Why this estimator: for a reversible Markov chain Γ_m = ∫ λ^{2m}(1+λ) dE(λ) with λ ∈ [−1, 1],
 * so the true pair sums are positive and decreasing whatever the sign of ρ(1) — a negative ρ(1)
 * (fast oscillation, e.g. pressure or the total energy of an NVE run) is absorbed into Γ_0 instead
 * of stopping the sum — and the estimator is consistent and asymptotically conservative (Geyer
 * 1992, Theorem 3.2: it overestimates σ² as n → ∞, from memory). Truncation at the first
 * non-positive pair replaces Sokal's c-window, which needs the unknown g itself. For AR(1),
 * γ(k) ∝ φ^k and g = (1+φ)/(1−φ) exactly; for a damped oscillation it stops inside the first
 * negative lobe, dropping a tail whose sum is negative, so it errs on the large side.
 */
export function geyerInefficiency(gamma: Float64Array, maxLag = gamma.length - 1): GeyerEstimate {
  const g0 = gamma[0]!;
  if (!(g0 > 0)) return { g: 1, pairs: 0, window: 0, resolved: true };
  let sum = 0;
  let prev = Infinity;
  let m = 0;
  let resolved = false;
  for (; 2 * m + 1 <= maxLag; m++) {
    let pair = gamma[2 * m]! + gamma[2 * m + 1]!;
    if (!(pair > 0)) {
      resolved = true;
      break;
    }
    if (pair > prev) pair = prev;
    prev = pair;
    sum += pair;
  }
  const g = (-g0 + 2 * sum) / g0;
  return { g: Math.max(1, g), pairs: m, window: Math.max(0, 2 * m - 1), resolved };
}
