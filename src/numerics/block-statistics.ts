/**
 * Mean and standard error over independent blocks (segments of a run, independent estimates).
 *
 * Formula: x̄ = Σx_k/M, s² = Σ(x_k − x̄)²/(M−1), SE = s/√M (Frenkel & Smit, Understanding
 * Molecular Simulation, 2nd ed. (2002), §4.4.1; Flyvbjerg & Petersen, J. Chem. Phys. 91, 461
 * (1989)).
 *
 * Cost: O(M) time (two passes), O(1) memory.
 */

/** Mean, sample standard deviation and standard error of independent block values. */
export interface BlockStatistics {
  mean: number;
  sd: number;
  /** sd/√n. */
  standardError: number;
  count: number;
}

/**
 * Standard error over independent blocks: mean x̄ = Σx_k/M, s² = Σ(x_k − x̄)²/(M−1),
 * SE = s/√M (Frenkel & Smit, Understanding Molecular Simulation, 2nd ed., §4.4.1). Needs M ≥ 2.
 */
export function blockStatistics(values: ArrayLike<number>): BlockStatistics {
  const m = values.length;
  if (m < 2) throw new RangeError(`blockStatistics: need at least 2 blocks, got ${m}`);
  let s = 0;
  for (let i = 0; i < m; i++) s += values[i];
  const mean = s / m;
  let ss = 0;
  for (let i = 0; i < m; i++) ss += (values[i] - mean) ** 2;
  const sd = Math.sqrt(ss / (m - 1));
  return { mean, sd, standardError: sd / Math.sqrt(m), count: m };
}
