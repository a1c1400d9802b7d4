/**
 * Jackknife standard error of an estimator from its leave-one-out values.
 *
 * Formula: with θ_i the estimate computed without the i-th of n independent pieces of data and
 * θ̄ = Σθ_i/n, var = (n − 1)/n · Σ(θ_i − θ̄)² (Quenouille 1949; Tukey 1958; Efron & Stein,
 * Ann. Stat. 9, 586 (1981)).
 *
 * Cost: O(n) (two passes); the leave-one-out estimates themselves are the caller's cost.
 */

/**
 * Jackknife standard error √((n − 1)/n · Σ(θ_i − θ̄)²) of the leave-one-out estimates θ_i
 * (Efron & Stein, Ann. Stat. 9, 586 (1981)); NaN for fewer than 2 estimates.
 */
export function jackknifeStandardError(estimates: readonly number[]): number {
  const n = estimates.length;
  if (n < 2) return NaN;
  const mean = estimates.reduce((acc, v) => acc + v, 0) / n;
  return Math.sqrt(((n - 1) / n) * estimates.reduce((acc, v) => acc + (v - mean) ** 2, 0));
}
