/**
 * Block averaging of a correlated series (Flyvbjerg & Petersen) and the rule that finds the
 * plateau of its blocked standard errors (a cumulative two-sided χ² test after Jonsson), with the
 * χ² percentage points that test needs.
 *
 * Formulas: at each level blocks are averaged in pairs; SE² = Σ(b_i − b̄)²/(n_b(n_b−1)) with
 * standard error SE/√(2(n_b−1)) (H. Flyvbjerg and H. G. Petersen, J. Chem. Phys. 91, 461 (1989));
 * plateau test on z_l = (r₁ + 1/n_b)√n_b of the lag-1 correlations r₁ of the block means
 * (M. Jonsson, Phys. Rev. E 98, 043304 (2018)); χ² points from the simple-statistics table or the
 * Wilson–Hilferty approximation (E. B. Wilson and M. M. Hilferty, Proc. Natl. Acad. Sci. 17, 684
 * (1931)).
 *
 * Cost: blocking O(n) time and O(log n) memory (streamed); the plateau rule O(log n).
 */
import * as ss from 'simple-statistics';
import { AnalysisError } from '../errors.js';

/**
 * Blocking levels with fewer blocks than this are not used by the plateau rule (their SE has a
 * relative error above 18 %, and the lag-1 test has little power).
 */
export const PLATEAU_MIN_BLOCKS = 16;

/** Block-averaging table (Flyvbjerg & Petersen 1989). */
export interface BlockingResult {
  /** Block size in samples at each level: 1, 2, 4, … */
  sizes: number[];
  /** Number of blocks at each level. */
  blocks: number[];
  /** Standard error of the mean at each level. */
  standardErrors: number[];
  /** Standard error of that standard error, SE/√(2(n_b−1)). */
  errorsOfStandardErrors: number[];
  /** Lag-1 autocorrelation of the block means at each level (NaN with fewer than 3 blocks). */
  lagOneCorrelations: number[];
  /** First level of the plateau (rule in `blockingPlateau`), or null. */
  plateau: { level: number; size: number; standardError: number; error: number } | null;
}

/**
 * Block averaging by repeated pairwise blocking (H. Flyvbjerg and H. G. Petersen, J. Chem. Phys.
 * 91, 461 (1989)): at each level the blocks are averaged in pairs (an odd last block is dropped),
 * SE² = Σ(b_i − b̄)²/(n_b(n_b−1)), with standard error SE/√(2(n_b−1)). Levels continue while at
 * least 2 blocks remain. Also records the lag-1 autocorrelation r₁ = Σ(b_i−b̄)(b_{i+1}−b̄)/Σ(b_i−b̄)²
 * of the block means for the plateau rule. Streaming: every level is fed as soon as a pair of the
 * level below is complete, so O(n) time and O(log n) memory (values are shifted by the series
 * mean for well-conditioned sums).
 */
export function blockingAnalysis(x: Float64Array): BlockingResult {
  const n = x.length;
  let centre = 0;
  for (let i = 0; i < n; i++) centre += x[i]!;
  centre /= n;
  const levels = Math.max(1, Math.floor(Math.log2(Math.max(n, 1))) + 1);
  const count = new Float64Array(levels);
  const sum = new Float64Array(levels);
  const sumSq = new Float64Array(levels);
  const lagSum = new Float64Array(levels);
  const first = new Float64Array(levels);
  const prev = new Float64Array(levels);
  const pending = new Float64Array(levels);
  const hasPending = new Uint8Array(levels);
  for (let i = 0; i < n; i++) {
    let v = x[i]! - centre;
    for (let l = 0; l < levels; l++) {
      const c = count[l]!;
      if (c === 0) first[l] = v;
      else lagSum[l] += prev[l]! * v;
      count[l] = c + 1;
      sum[l] += v;
      sumSq[l] += v * v;
      prev[l] = v;
      if (hasPending[l]) {
        hasPending[l] = 0;
        v = 0.5 * (pending[l]! + v);
      } else {
        hasPending[l] = 1;
        pending[l] = v;
        break;
      }
    }
  }
  const sizes: number[] = [];
  const blocks: number[] = [];
  const se: number[] = [];
  const dse: number[] = [];
  const r1: number[] = [];
  for (let l = 0; l < levels; l++) {
    const nb = count[l]!;
    if (nb < 2) break;
    const mean = sum[l]! / nb;
    const ssd = Math.max(0, sumSq[l]! - sum[l]! * mean);
    // Σ_{i<nb−1}(b_i − b̄)(b_{i+1} − b̄) = Σ b_i b_{i+1} − b̄(2S − first − last) + (nb−1) b̄².
    const lag1 = lagSum[l]! - mean * (2 * sum[l]! - first[l]! - prev[l]!) + (nb - 1) * mean * mean;
    const e = Math.sqrt(ssd / (nb * (nb - 1)));
    sizes.push(2 ** l);
    blocks.push(nb);
    se.push(e);
    dse.push(e / Math.sqrt(2 * (nb - 1)));
    r1.push(nb >= 3 ? (ssd > 0 ? lag1 / ssd : 0) : NaN);
  }
  const plateau = blockingPlateau({ sizes, blocks, standardErrors: se, errorsOfStandardErrors: dse, lagOneCorrelations: r1 });
  return { sizes, blocks, standardErrors: se, errorsOfStandardErrors: dse, lagOneCorrelations: r1, plateau };
}

/** Significance level of the plateau test: 1 %, the level Jonsson (2018) uses. */
export const PLATEAU_ALPHA = 0.01;

/**
 * Upper-α point of the χ² distribution with k degrees of freedom, P(χ²_k > q) = α: from the
 * percentage-point table in simple-statistics (`chiSquaredDistributionTable`, after Hines &
 * Montgomery 1980, Table III; k = 1 … 30 and 40, 50, … 100, α ∈ {0.005, 0.01, 0.025, 0.05, 0.1})
 * where it lists k, otherwise the Wilson–Hilferty approximation
 * q ≈ k(1 − 2/(9k) + z_α√(2/(9k)))³ with z_α the upper-α normal point (E. B. Wilson and
 * M. M. Hilferty, Proc. Natl. Acad. Sci. 17, 684 (1931); relative error below 0.1 % for k ≥ 30).
 */
export function chiSquaredUpperPoint(k: number, alpha = PLATEAU_ALPHA): number {
  if (!(Number.isInteger(k) && k >= 1)) throw new AnalysisError(`χ² degrees of freedom must be a positive integer, got ${k}`);
  const table = ss.chiSquaredDistributionTable as unknown as Record<number, Record<string, number> | undefined>;
  const listed = table[k]?.[String(alpha)];
  if (listed !== undefined) return listed;
  const z = UPPER_NORMAL_POINTS[alpha];
  if (z === undefined) throw new AnalysisError(`no normal point for α = ${alpha}`);
  const a = 2 / (9 * k);
  return k * (1 - a + z * Math.sqrt(a)) ** 3;
}

/** Upper-α points of the standard normal, Φ⁻¹(1 − α) (standard normal table). */
const UPPER_NORMAL_POINTS: Record<number, number> = { 0.005: 2.5758, 0.01: 2.3263, 0.025: 1.96, 0.05: 1.6449, 0.1: 1.2816 };

/**
 * Plateau rule, a cumulative two-sided test of the lag-1 correlation of block means after
 * M. Jonsson, Phys. Rev. E 98, 043304 (2018). Levels l = 0 … L−1 are those with at least
 * PLATEAU_MIN_BLOCKS = 16 blocks. For independent block means the lag-1 autocorrelation r₁ of n_b
 * means has mean ≈ −1/n_b (P. A. P. Moran 1948, from memory) and standard error ≈ 1/√n_b (M. S.
 * Bartlett, J. R. Statist. Soc. Suppl. 8, 27 (1946)), so z_l = (r₁ + 1/n_b)·√n_b is ≈ N(0, 1) and
 * the levels are nearly independent of one another (Jonsson 2018, from memory). The plateau is the first level
 * j whose statistic M_j = Σ_{l=j}^{L−1} z_l² stays below the upper 1 % point of χ² with L − j
 * degrees of freedom (Jonsson's test) and whose own z_j² stays below the upper 1 % point of χ²
 * with 1 degree of freedom, 6.63 (|z_j| < 2.576).
 *
 * Why this form: (1) two-sided — z² rejects strongly negative r₁ as well as positive; a one-sided
 * test accepted block size 1 of a series with ρ(1) = −0.33 whose SE then still grows 4.7-fold.
 * (2) Cumulative — in expectation SE²_{2m} = SE²_m·(1 + r₁(m)), r₁(m) the lag-1 correlation of
 * means of m samples (the variance of the mean of two of them is var·(1 + r₁)/2), so a later level whose SE is still rising shows up as a positive
 * r₁ there, and M_j rejects level j whenever any later level is significantly correlated, i.e.
 * whenever a later SE is significantly larger. Summing squares instead of taking the maximum keeps
 * one chance excursion of one level from pushing the plateau far out: the χ² point grows with
 * the number of levels tested. (3) The level's own test — on its own M_j dilutes one clearly
 * correlated level among many later quiet ones: for a slow AR(1) part (φ = 0.99) plus differenced
 * noise, 2^20 samples, the level of 512-sample blocks had z² = 10.9 but M_j = 17.7 < 20.1 (8
 * degrees of freedom), and its SE was still 12 % below the exact one. Each test is at 1 %, so a
 * genuine plateau level is passed over with probability ≈ 2 %, which only moves the choice one
 * level up. Levels with fewer than 16 blocks are left out (their r₁ is far from normal and the
 * SE's relative error exceeds 18 %). Null when no level qualifies: the blocked standard error has
 * not stopped growing at the largest usable block size.
 */
export function blockingPlateau(
  b: Pick<BlockingResult, 'sizes' | 'blocks' | 'standardErrors' | 'errorsOfStandardErrors' | 'lagOneCorrelations'>,
): BlockingResult['plateau'] {
  let levels = 0;
  while (levels < b.sizes.length && b.blocks[levels]! >= PLATEAU_MIN_BLOCKS) levels++;
  const z2 = new Float64Array(levels);
  const suffix = new Float64Array(levels + 1);
  for (let l = levels - 1; l >= 0; l--) {
    const nb = b.blocks[l]!;
    z2[l] = ((b.lagOneCorrelations[l]! + 1 / nb) * Math.sqrt(nb)) ** 2;
    suffix[l] = suffix[l + 1]! + z2[l]!;
  }
  const single = chiSquaredUpperPoint(1);
  for (let l = 0; l < levels; l++) {
    if (z2[l]! < single && suffix[l]! < chiSquaredUpperPoint(levels - l)) {
      return { level: l, size: b.sizes[l]!, standardError: b.standardErrors[l]!, error: b.errorsOfStandardErrors[l]! };
    }
  }
  return null;
}
