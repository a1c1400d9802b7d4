/**
 * The standard error of the mean of a correlated series, reconciled between its two estimates:
 * the autocorrelation estimate σ√(g/n) (src/numerics/inefficiency.ts) and block averaging
 * (src/numerics/blocking.ts, Flyvbjerg & Petersen, J. Chem. Phys. 91, 461 (1989)).
 *
 * Rule: the autocorrelation estimate when a blocking plateau exists and agrees with it within z
 * combined standard errors; otherwise the larger of the two (an error bar that is too small is
 * the harmful mistake). Common practice, no source for the exact rule; reasons at the function.
 *
 * Cost: O(number of blocking levels), i.e. O(log n).
 */
import { PLATEAU_MIN_BLOCKS, type BlockingResult } from './blocking.js';

/** The reported standard error of a correlated mean, and where it came from. */
export interface CombinedStandardError {
  standardError: number;
  /** Standard error of that standard error. */
  error: number;
  /**
   * 'autocorrelation': σ√(g/n) with Geyer's g; 'blocking plateau': the plateau level's blocked SE;
   * 'largest blocks': no plateau, the largest blocked SE among levels with ≥ 16 blocks (a lower
   * estimate of the true SE).
   */
  source: 'autocorrelation' | 'blocking plateau' | 'largest blocks';
  /** A plateau exists and |SE_plateau − SE_acf| ≤ z·√(δ_plateau² + δ_acf²). */
  agrees: boolean;
}

/**
 * The reported standard error from the autocorrelation estimate SE_acf ± δ_acf and the block
 * averaging table (Flyvbjerg & Petersen 1989, plateau rule in `blockingPlateau`):
 * - plateau, and the two agree within z combined standard errors (z = 2.5758 for the two-sided
 *   1 % level the convergence analysis uses): SE_acf, the more precise of two consistent estimates;
 * - plateau, and they disagree: max(SE_acf, SE_plateau); the same when SE_acf is only a lower
 *   bound (`lowerBound`: Geyer's sequence still positive at the lag cap), agreement or not;
 * - no plateau: max(SE_acf, largest blocked SE among the levels with ≥ 16 blocks); the caller
 *   flags the series as not reliable, since that blocked SE was still growing.
 *
 * Why the larger one rather than only a warning: the two methods fail in opposite directions.
 * An autocorrelation sum misses whatever correlation lies beyond the lag where it stops (a slow
 * component hidden behind fast noise or oscillations, a drift), which makes it too small; a
 * plateau chosen too early is also too small, while one from too few blocks is noisy either way.
 * An error bar that is too small is the harmful mistake — it makes differences look significant —
 * whereas one that is too large only costs precision, so when they disagree the larger is the
 * defensible number (common practice, no source for the exact rule). A disagreement alone does
 * not mark the series unreliable: the larger estimate is still a sound, if pessimistic, error bar;
 * the verdict names both values.
 */
export function combineStandardErrors(
  acf: { standardError: number; error: number; lowerBound?: boolean },
  b: Pick<BlockingResult, 'blocks' | 'standardErrors' | 'errorsOfStandardErrors' | 'plateau'>,
  z: number,
): CombinedStandardError {
  const fromAcf = { standardError: acf.standardError, error: acf.error };
  if (b.plateau) {
    const p = b.plateau;
    const agrees = Math.abs(p.standardError - acf.standardError) <= z * Math.hypot(p.error, acf.error);
    if ((agrees && !acf.lowerBound) || p.standardError <= acf.standardError) return { ...fromAcf, source: 'autocorrelation', agrees };
    return { standardError: p.standardError, error: p.error, source: 'blocking plateau', agrees };
  }
  let largest = -1;
  for (let l = 0; l < b.blocks.length && b.blocks[l]! >= PLATEAU_MIN_BLOCKS; l++) {
    if (largest < 0 || b.standardErrors[l]! > b.standardErrors[largest]!) largest = l;
  }
  if (largest >= 0 && b.standardErrors[largest]! > acf.standardError) {
    return { standardError: b.standardErrors[largest]!, error: b.errorsOfStandardErrors[largest]!, source: 'largest blocks', agrees: false };
  }
  return { ...fromAcf, source: 'autocorrelation', agrees: false };
}
