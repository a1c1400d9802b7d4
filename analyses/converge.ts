/**
 * When does an average become reliable? Statistical inefficiency, block averaging,
 * equilibration detection and stationarity checks for one time series (an energy, a volume,
 * a pressure …), ending in a plain-words verdict.
 *
 * Conventions (used in every function below):
 * - ρ(k) is the normalised autocorrelation of the mean-subtracted series, from the unbiased
 *   autocovariance C(k) = 1/(n−k) Σ (x_i − x̄)(x_{i+k} − x̄) (src/correlate.ts); Geyer's estimator
 *   uses the biased γ(k) = (n−k)C(k)/n, as he prescribes.
 * - Integrated autocorrelation time in samples τ_int = Σ_{k≥1} ρ(k), statistical inefficiency
 *   g = 1 + 2τ_int (so g = 1 for uncorrelated samples; the convention of Chodera 2016). A. D. Sokal
 *   writes τ_int = 1/2 + Σ_{k≥1} ρ(k) = g/2 instead; the two differ by half a sample.
 * - Effective samples n/g; standard error of the mean σ·√(g/n) with σ the sample standard
 *   deviation (n−1 denominator).
 * - The primary estimate of g is Geyer's initial monotone sequence estimator (`geyerInefficiency`):
 *   it sums the autocovariances in adjacent pairs, so negative early lags (pressure, NVE energies)
 *   do not stop the sum before a slow positive part has been counted. Sokal's self-consistent
 *   window (`sokalWindow`) is reported beside it as a second opinion; it can stop at lag 1 when
 *   ρ(1) < 0 (see there), which is why it is no longer the primary estimate.
 * - g is floored at 1 (an anti-correlated series is treated as uncorrelated: conservative).
 * - "Production region" = samples [t0, N) after the detected equilibration point t0; every
 *   statistic in the report except the equilibration search itself uses only that region.
 * - The reported standard error is the autocorrelation estimate σ√(g/n) when block averaging
 *   agrees with it, and the larger of the two otherwise (rule and reasons at `analyseSeries`).
 */
import * as ss from 'simple-statistics';
import { regionAutocovariances, nextPowerOfTwo, type Baseline } from '../src/correlate.js';
import { AnalysisError, InputError, UsageError } from '../src/errors.js';
import { formatValue } from '../src/output.js';
import { quantity, type Quantity } from '../src/types.js';
import { estimate, reason, type Estimate, type Reason } from '../src/estimate.js';

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

/**
 * Fewest samples accepted by `analyseSeries` (AnalysisError below). With 20 samples the
 * correlation-time window may reach only 5 lags (a quarter of the series) and the standard error
 * of a standard error is already 16 % for independent samples, 1/√(2·19); fewer cannot support
 * any of the checks. Common practice, no source for the exact number.
 */
export const MIN_SAMPLES = 20;

/**
 * Default minimum number of effective samples for a "reliable" verdict. With N independent
 * samples the relative standard error of an estimated standard error is 1/√(2(N−1)) (e.g.
 * Flyvbjerg & Petersen 1989), ≈ 10 % at N = 50: the error bar itself is then good to about
 * one significant digit. Common practice, no source for the exact threshold.
 */
export const DEFAULT_MIN_EFFECTIVE = 50;

/** Largest number of candidate origins t0 tried by the equilibration search. */
export const EQUILIBRATION_CANDIDATES = 200;

/** Batch size of MSER-5 (K. P. White, M. J. Cobb and S. C. Spratt, Proc. 2000 Winter Simulation Conf., 755). */
export const MSER_BATCH = 5;

/**
 * z-value for the drift and halves tests and for the blocking/autocorrelation comparison:
 * two-sided 1 % (Φ⁻¹(0.995) = 2.5758, standard normal table). A stationary series is wrongly
 * flagged by each test with nominal probability 1 %; with g estimated from the data we measured
 * ≈ 2 % on AR(1) series (200 seeds, 2·10⁴ samples, φ = 0.5 and 0.95).
 */
export const SIGNIFICANCE_Z = 2.5758;

/**
 * Blocking levels with fewer blocks than this are not used by the plateau rule (their SE has a
 * relative error above 18 %, and the lag-1 test has little power).
 */
export const PLATEAU_MIN_BLOCKS = 16;

// ---------------------------------------------------------------------------------------------
// Basic statistics
// ---------------------------------------------------------------------------------------------

/** Arithmetic mean Σx/n (simple-statistics `mean`, compensated summation). */
export function seriesMean(x: Float64Array): number {
  return ss.mean(x as unknown as number[]);
}

/** Sample standard deviation √(Σ(x−x̄)²/(n−1)) (simple-statistics `sampleStandardDeviation`). */
export function seriesStandardDeviation(x: Float64Array): number {
  return ss.sampleStandardDeviation(x as unknown as number[]);
}

/**
 * Normalised autocorrelation ρ(k) = C(k)/C(0), k = 0 … maxLag, with C the unbiased autocovariance
 * computed by FFT (src/correlate.ts). For a constant series (C(0) = 0) ρ = (1, 0, 0, …) by
 * convention (no fluctuations, nothing correlated).
 */
export function normalisedAutocorrelation(x: Float64Array, maxLag: number): Float64Array {
  const c = regionAutocovariances(x, [0], maxLag)[0]!;
  return normaliseCovariance(c, maxLag);
}

function normaliseCovariance(c: Float64Array, maxLag: number): Float64Array {
  const rho = new Float64Array(maxLag + 1);
  const c0 = c[0]!;
  rho[0] = 1;
  if (!(c0 > 0)) return rho;
  for (let k = 1; k <= maxLag; k++) rho[k] = c[k]! / c0;
  return rho;
}

// ---------------------------------------------------------------------------------------------
// Integrated autocorrelation time
// ---------------------------------------------------------------------------------------------

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

/** Geyer's estimate from unbiased autocovariances C(0 … maxLag) of a region of n samples. */
function geyerFromCovariance(cov: Float64Array, n: number, maxLag: number): GeyerEstimate {
  const gamma = new Float64Array(maxLag + 1);
  for (let j = 0; j <= maxLag; j++) gamma[j] = (cov[j]! * (n - j)) / n;
  return geyerInefficiency(gamma, maxLag);
}

/** Full estimate of the statistical inefficiency of one region. */
export interface InefficiencyEstimate {
  /** g from Geyer's initial monotone sequence (primary). */
  g: number;
  /** τ_int = (g−1)/2 in samples. */
  tauInt: number;
  /** Standard error of τ_int (and of Sokal's τ = g/2) in samples: (g/2)·√(2(2M+1)/n), M = `window`. */
  tauIntError: number;
  /** Largest lag summed by Geyer's estimator. */
  window: number;
  /** Geyer's sequence ended (a non-positive pair sum) within the lag cap. */
  resolved: boolean;
  /** Geyer's initial monotone sequence estimate (the primary one, in full). */
  geyer: GeyerEstimate;
  /** Sokal's window (second opinion, see `sokalWindow` for when it fails). */
  sokal: WindowEstimate;
}

/**
 * Statistical inefficiency of a whole series: Geyer's initial monotone sequence (primary) and
 * Sokal's window (second opinion). The autocovariance is computed by FFT up to a maximum lag
 * (first max(256, startLag), see `suggestedStartLag`) that is raised ×8 until both estimators
 * terminate or their caps are reached. Geyer's sequence may use at most windowFraction·n lags
 * (default n/4; see `windowFractionFor`): beyond that it is unresolved and g a lower estimate.
 * Sokal's window, being the second opinion, may use at most max(256, 10·M) lags with M Geyer's
 * largest lag (or the same cap when Geyer is unresolved), which keeps drifting series from
 * forcing an all-lags transform. With `baseline` the residuals x_i − (a + b·i) are analysed
 * (without copying the series). Constant series: g = 1.
 */
export function inefficiency(
  x: Float64Array,
  opts: { c?: number; baseline?: Baseline; windowFraction?: number; startLag?: number } = {},
): InefficiencyEstimate {
  const n = x.length;
  const c = opts.c ?? SOKAL_WINDOW_CONSTANT;
  if (n < 2) throw new AnalysisError('statistical inefficiency needs at least 2 samples');
  const cap = Math.max(1, Math.floor(n * Math.min(0.25, opts.windowFraction ?? 0.25)));
  let k = Math.min(Math.max(256, Math.ceil(opts.startLag ?? 0)), n - 1);
  for (;;) {
    const cov = regionAutocovariances(x, [0], k, { baseline: opts.baseline })[0]!;
    if (!(cov[0]! > 0)) {
      return {
        g: 1,
        tauInt: 0,
        tauIntError: 0,
        window: 0,
        resolved: true,
        geyer: { g: 1, pairs: 0, window: 0, resolved: true },
        sokal: { g: 1, tauInt: 0, window: 0, resolved: true },
      };
    }
    const gy = geyerFromCovariance(cov, n, Math.min(k, cap));
    const sokalCap = Math.max(1, Math.min(cap, gy.resolved ? Math.max(256, 10 * gy.window) : cap));
    const w = sokalWindow(normaliseCovariance(cov, k), c, Math.min(k, sokalCap));
    const geyerDone = gy.resolved || k >= cap;
    const sokalDone = w.resolved || k >= sokalCap;
    if ((geyerDone && sokalDone) || k >= n - 1) {
      return {
        g: gy.g,
        tauInt: (gy.g - 1) / 2,
        tauIntError: (gy.g / 2) * windowRelativeError(gy.window, n),
        window: gy.window,
        resolved: gy.resolved,
        geyer: gy,
        sokal: w,
      };
    }
    k = Math.min(n - 1, 8 * k);
  }
}

/**
 * Largest useful lag range as a fraction of the region for a given effective-sample threshold
 * N_min. Sokal's criterion gives M ≥ c·g/2, so a window longer than c·n/(2·N_min) would mean
 * g > n/N_min, i.e. fewer effective samples than the threshold. Geyer's sequence, for an
 * exponential decay ρ(k) = e^{−k/τ} (g ≈ 2τ), ends where the pair sum 2γ(0)e^{−K/τ} sinks into
 * its noise ≈ γ(0)√(2g/n) (Bartlett 1946 variance of ρ̂, var ρ̂(k) ≈ Σ_j ρ(j)²/n ≈ τ/n), i.e. after
 * K ≈ (g/4)·ln(2n/g) lags. Still running at K = c·n/(2·N_min) lags then means
 * n/g < N_min·ln(2n/g)/(2c): with c = 5 and N_min = 50, fewer than ≈ 18 effective samples.
 * So the same cap serves both estimators and never cuts off a series that would pass the
 * threshold (long lag ranges are also what make the FFTs expensive). Capped at 1/4. For c = 5
 * and the default 50 effective samples: n/20.
 */
export function windowFractionFor(minEffective: number, c = SOKAL_WINDOW_CONSTANT): number {
  return Math.min(0.25, c / (2 * minEffective));
}

/**
 * A first lag range for the autocorrelation estimators, from block averaging (O(n), no FFT):
 * g_b = (SE_b/SE_1)² with SE_b the plateau SE, or the largest SE among levels with ≥ 16 blocks
 * when there is no plateau (Flyvbjerg & Petersen 1989: SE² at block size m → σ²g/n). Sokal's
 * window is then ≈ c·g/2 (and Geyer's sequence, for exponential decays, ends at a similar lag);
 * we return 1.5 × that so that one FFT round usually suffices. Only a speed hint: the estimators
 * enlarge the range themselves when it is too short.
 */
export function suggestedStartLag(b: BlockingResult, c = SOKAL_WINDOW_CONSTANT): number {
  const se0 = b.standardErrors[0];
  if (!(se0 !== undefined && se0 > 0)) return 0;
  let ref = b.plateau?.standardError ?? 0;
  if (!b.plateau) {
    for (let l = 0; l < b.blocks.length && b.blocks[l]! >= PLATEAU_MIN_BLOCKS; l++) {
      ref = Math.max(ref, b.standardErrors[l]!);
    }
  }
  const g = (ref / se0) ** 2;
  return Math.ceil((1.5 * c * g) / 2);
}

/**
 * Geyer-sequence g (see `geyerInefficiency`) for the tail regions x[o, N) of many origins at once
 * (one FFT pass per round, see `regionAutocovariances`), for the equilibration search. The lag
 * range starts at max(64, startLag) (see `suggestedStartLag`) and grows ×8 for origins whose
 * sequence has not yet ended, up to windowFraction of each region (unresolved regions then keep
 * the value at that cap). Two economies, neither of which can change the winner of the search
 * (maximum (N−o)/g):
 * - the pairs still to come are positive, so an unresolved origin's g can only grow: its current
 *   value g_K bounds (N−o)/g ≤ (N−o)/g_K; once this bound is at most the best resolved (N−o)/g
 *   the origin is settled with its current value;
 * - when the transform length S becomes long the pending origins are thinned to at most
 *   max(8, N/L), L = S − maxLag the chunk length, evenly spaced (such regions have few effective
 *   samples), so that a round never costs more than ≈ 3N/L transforms; thinned origins get null.
 */
export function inefficiencyScan(
  x: Float64Array,
  origins: readonly number[],
  opts: { windowFraction?: number; startLag?: number } = {},
): Array<GeyerEstimate | null> {
  const n = x.length;
  const windowFraction = opts.windowFraction ?? 0.25;
  const out: Array<GeyerEstimate | null> = origins.map(() => null);
  let pending = origins.map((_, i) => i);
  let best = 0; // largest (N − o)/g among resolved origins
  let k = Math.min(Math.max(64, Math.ceil(opts.startLag ?? 0)), n - 1);
  while (pending.length > 0) {
    const s = nextPowerOfTwo(Math.max(4 * (k + 1), 1024));
    const limit = Math.max(8, Math.ceil(n / (s - k)));
    if (pending.length > limit) {
      const thinned: number[] = [];
      for (let j = 0; j < limit; j++) thinned.push(pending[Math.floor((j * pending.length) / limit)]!);
      pending = thinned;
    }
    const covs = regionAutocovariances(x, pending.map((i) => origins[i]!), k);
    const open: Array<{ idx: number; gy: GeyerEstimate; bound: number }> = [];
    pending.forEach((idx, j) => {
      const len = n - origins[idx]!;
      const cap = Math.max(1, Math.floor(len * Math.min(0.25, windowFraction)));
      const cov = covs[j]!;
      if (!(cov[0]! > 0)) {
        out[idx] = { g: 1, pairs: 0, window: 0, resolved: true };
        best = Math.max(best, len);
        return;
      }
      const maxL = Math.min(k, cap);
      const gy = geyerFromCovariance(cov, len, maxL);
      if (gy.resolved || maxL >= cap || k >= n - 1) {
        out[idx] = gy;
        if (gy.resolved) best = Math.max(best, len / gy.g);
      } else open.push({ idx, gy, bound: len / gy.g });
    });
    const next: number[] = [];
    for (const o of open) {
      if (o.bound <= best) out[o.idx] = o.gy;
      else next.push(o.idx);
    }
    pending = next;
    k = Math.min(n - 1, 8 * k);
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// Block averaging
// ---------------------------------------------------------------------------------------------

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

// ---------------------------------------------------------------------------------------------
// Equilibration detection
// ---------------------------------------------------------------------------------------------

/** Result of the equilibration search. */
export interface EquilibrationResult {
  /** Chosen origin t0 (sample index). */
  index: number;
  /** g of the region [t0, N). */
  g: number;
  /** (N − t0)/g. */
  effectiveSamples: number;
  /** Candidate origins tried and their effective sample counts (NaN where skipped). */
  origins: number[];
  effective: Float64Array;
}

/**
 * Equilibration point by maximising the effective sample count of the remaining data
 * (J. D. Chodera, J. Chem. Theory Comput. 12, 1799 (2016)): t0 = argmax_{t0} (N − t0)/g(t0), g from
 * Geyer's initial monotone sequence on x[t0, N) (the primary estimator, see `geyerInefficiency`).
 * Candidate origins: at most `candidates` (default 200) evenly spaced origins 0, s, 2s, … with
 * s = ⌈(N − minRegion + 1)/candidates⌉, keeping at least `minRegion` (default 20) samples after
 * the last one; all evaluated together by `inefficiencyScan`. Ties go to the earliest origin.
 * An origin whose sequence is unresolved at the lag cap enters with its lower estimate of g.
 */
export function detectEquilibration(
  x: Float64Array,
  opts: { candidates?: number; minRegion?: number; windowFraction?: number; startLag?: number } = {},
): EquilibrationResult {
  const n = x.length;
  const minRegion = Math.min(opts.minRegion ?? MIN_SAMPLES, n);
  const candidates = Math.max(1, opts.candidates ?? EQUILIBRATION_CANDIDATES);
  const span = n - minRegion + 1;
  const stride = Math.max(1, Math.ceil(span / candidates));
  const origins: number[] = [];
  for (let o = 0; o < span; o += stride) origins.push(o);
  const est = inefficiencyScan(x, origins, opts);
  const effective = new Float64Array(origins.length).fill(NaN);
  let best = -1;
  for (let j = 0; j < origins.length; j++) {
    const e = est[j];
    if (!e) continue;
    effective[j] = (n - origins[j]!) / e.g;
    if (best < 0 || effective[j]! > effective[best]!) best = j;
  }
  return { index: origins[best]!, g: est[best]!.g, effectiveSamples: effective[best]!, origins, effective };
}

/** Result of MSER. */
export interface MserResult {
  /** Truncation point in samples (batch × d*). */
  index: number;
  /** Number of batches k. */
  batches: number;
  /** False when the minimum lies at the end of the allowed range (first half): no clear point. */
  clear: boolean;
}

/**
 * MSER truncation (K. P. White, Simulation 69, 323 (1997)) on batch means of `batch` samples
 * (MSER-5 for batch = 5; White, Cobb & Spratt 2000): with k batch means z_j (a trailing partial
 * batch is dropped), d* minimises MSER(d) = Σ_{j=d}^{k−1}(z_j − z̄_d)²/(k−d)² over d = 0 … ⌊k/2⌋
 * (truncating more than half is not allowed, as recommended there). Returns t0 = batch·d*.
 * O(N) with suffix sums of the centred batch means.
 */
export function mser(x: Float64Array, batch = MSER_BATCH): MserResult {
  const k = Math.floor(x.length / batch);
  if (k < 2) throw new AnalysisError(`MSER needs at least ${2 * batch} samples`);
  let total = 0;
  for (let i = 0; i < k * batch; i++) total += x[i]!;
  const centre = total / (k * batch);
  const dMax = Math.floor(k / 2);
  // One backward pass: batch means z_j − centre, suffix sums, MSER(d) for d ≤ dMax.
  let s1 = 0;
  let s2 = 0;
  let best = dMax;
  let bestStat = Infinity;
  for (let j = k - 1; j >= 0; j--) {
    let zs = 0;
    for (let i = j * batch; i < (j + 1) * batch; i++) zs += x[i]!;
    const v = zs / batch - centre;
    s1 += v;
    s2 += v * v;
    if (j <= dMax) {
      const m = k - j;
      const stat = Math.max(0, s2 - (s1 * s1) / m) / (m * m);
      if (stat <= bestStat) {
        bestStat = stat;
        best = j; // ≤ keeps the earliest d among ties
      }
    }
  }
  return { index: best * batch, batches: k, clear: best < dMax || dMax === 0 };
}

// ---------------------------------------------------------------------------------------------
// Stationarity
// ---------------------------------------------------------------------------------------------

/** Drift test result. */
export interface DriftResult {
  /** Least-squares slope, series unit per time unit. */
  slope: number;
  /** Its standard error, inflated by √g of the residuals. */
  standardError: number;
  /** Statistical inefficiency of the residuals. */
  g: number;
  /** |slope| > SIGNIFICANCE_Z · standardError. */
  significant: boolean;
}

/**
 * Linear drift: ordinary least-squares slope b = S_ty/S_tt of y against t_i = i·dt, with the
 * ordinary standard error √(s²/S_tt), s² = Σ residual²/(n−2), multiplied by √g where g is the
 * statistical inefficiency of the residuals (correlated errors inflate the slope's variance by
 * ≈ g: for large n the slope's variance is 2πf(0)/S_tt = g·σ²/S_tt with f the residuals' spectral
 * density, U. Grenander, Ann. Math. Statist. 25, 252 (1954), from memory; the residuals are used
 * so that the trend itself does not inflate g). Flagged when |b| > 2.576·SE (two-sided 1 %).
 */
export function driftTest(
  y: Float64Array,
  dt = 1,
  opts: { windowFraction?: number; startLag?: number } = {},
): DriftResult {
  const n = y.length;
  if (n < 3) throw new AnalysisError('drift test needs at least 3 samples');
  const tMean = ((n - 1) / 2) * dt;
  const yMean = seriesMean(y);
  let stt = 0;
  let sty = 0;
  for (let i = 0; i < n; i++) {
    const dtI = i * dt - tMean;
    stt += dtI * dtI;
    sty += dtI * (y[i]! - yMean);
  }
  const slope = sty / stt;
  // Fitted line in terms of the sample index i: yMean + slope·(i·dt − tMean).
  const baseline: Baseline = { intercept: yMean - slope * tMean, slope: slope * dt };
  let rss = 0;
  for (let i = 0; i < n; i++) {
    const r = y[i]! - (baseline.intercept + baseline.slope * i);
    rss += r * r;
  }
  const g = inefficiency(y, { ...opts, baseline }).g;
  const se = Math.sqrt(rss / (n - 2) / stt) * Math.sqrt(g);
  return { slope, standardError: se, g, significant: Math.abs(slope) > SIGNIFICANCE_Z * se };
}

/** First-half / second-half comparison. */
export interface HalvesResult {
  first: number;
  second: number;
  difference: number;
  combinedError: number;
  consistent: boolean;
}

/** Mean and its standard error σ·√(g/n), g from Geyer's initial monotone sequence on the same data (`inefficiency`). */
export function meanWithError(
  x: Float64Array,
  opts: { windowFraction?: number; startLag?: number } = {},
): { mean: number; standardError: number; g: number } {
  const g = inefficiency(x, opts).g;
  return { mean: seriesMean(x), standardError: seriesStandardDeviation(x) * Math.sqrt(g / x.length), g };
}

/**
 * Compare the means of the first and second halves of y (the middle sample goes to the second
 * half when n is odd); each half's standard error comes from its own g. Combined error
 * √(SE₁² + SE₂²) (independent halves; the correlation across the cut is negligible once the
 * halves are much longer than the correlation time). Consistent when
 * |difference| ≤ 2.576 × combined error (two-sided 1 %). Common practice, no single source.
 */
export function halvesTest(y: Float64Array, opts: { windowFraction?: number; startLag?: number } = {}): HalvesResult {
  const h = Math.floor(y.length / 2);
  if (h < 2) throw new AnalysisError('halves test needs at least 4 samples');
  const a = meanWithError(y.subarray(0, h), opts);
  const b = meanWithError(y.subarray(h), opts);
  const difference = b.mean - a.mean;
  const combinedError = Math.hypot(a.standardError, b.standardError);
  const consistent =
    combinedError > 0 ? Math.abs(difference) <= SIGNIFICANCE_Z * combinedError : difference === 0;
  return { first: a.mean, second: b.mean, difference, combinedError, consistent };
}

/**
 * Extra production time for a target standard error: the SE falls as 1/√T, so
 * T_needed = T_prod·(SE/target)² and extra = max(0, T_needed − T_prod) (common practice, no
 * source). Times in any one unit.
 */
export function extraTime(productionTime: number, standardError: number, target: number): { needed: number; extra: number } {
  const needed = productionTime * (standardError / target) ** 2;
  return { needed, extra: Math.max(0, needed - productionTime) };
}

// ---------------------------------------------------------------------------------------------
// Report
// ---------------------------------------------------------------------------------------------

/** Options of `analyseSeries`. */
export interface SeriesOptions {
  /** Time between samples in ps, or null when unknown (times are then given in samples). */
  dt: number | null;
  /** Unit of the values (e.g. "kJ/mol"); default "". */
  unit?: string;
  /** Wanted standard error: relative to |mean| (0.01 = 1 %) or absolute in the series' unit. */
  target?: { relative?: number; absolute?: number };
  /** Effective samples needed for a reliable verdict (default 50). */
  minEffective?: number;
}

/** JSON report of one series. */
export interface SeriesReport {
  name: string;
  samples: number;
  /**
   * The mean with its standard error, the production window (ps, or samples without a time step),
   * verdict ('ok' when reliable, else 'unreliable') and reasons: the flags of the verdict (verdict
   * 'unreliable') and its cautions ('ok'), in the order the verdict text gives them.
   */
  mean: Estimate;
  /** Reported standard error of the mean (rule at `combineStandardErrors`). */
  standardError: number;
  /** Which estimate `standardError` is: see `CombinedStandardError.source`. */
  standardErrorSource: CombinedStandardError['source'];
  /** σ√(g/n) with g from Geyer's estimator, before the comparison with block averaging. */
  autocorrelationStandardError: number;
  /** g behind the reported standard error: SE = σ√(g/n). Geyer's g unless blocking gave the larger SE. */
  statisticalInefficiency: number;
  integratedAutocorrelationTime: Quantity;
  /** Geyer's initial monotone sequence estimate (the autocorrelation estimate of g). */
  geyerStatisticalInefficiency: number;
  /** Sokal's self-consistent window estimate (second opinion; fooled by negative early correlations). */
  sokalStatisticalInefficiency: number;
  equilibrationIndex: number;
  equilibrationTime: Quantity | null;
  mserIndex: number;
  effectiveSamples: number;
  blocking: {
    sizes: number[];
    standardErrors: number[];
    errorsOfStandardErrors: number[];
    plateau: { size: number; standardError: number } | null;
    agreesWithAutocorrelation: boolean;
  };
  drift: { slope: number; standardError: number; unit: string; significant: boolean };
  halves: { first: number; second: number; difference: number; combinedError: number; consistent: boolean };
  verdict: string;
  reliable: boolean;
  extraTimeNeeded: Quantity | null;
}

/** The standard error that `analyseSeries` reports, and where it came from. */
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
  /** A plateau exists and |SE_plateau − SE_acf| ≤ 2.576·√(δ_plateau² + δ_acf²) (two-sided 1 %). */
  agrees: boolean;
}

/**
 * The reported standard error from the autocorrelation estimate SE_acf ± δ_acf and the block
 * averaging table (Flyvbjerg & Petersen 1989, plateau rule in `blockingPlateau`):
 * - plateau, and the two agree within 2.576 combined standard errors (two-sided 1 %): SE_acf, the
 *   more precise of two consistent estimates;
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
): CombinedStandardError {
  const fromAcf = { standardError: acf.standardError, error: acf.error };
  if (b.plateau) {
    const p = b.plateau;
    const agrees = Math.abs(p.standardError - acf.standardError) <= SIGNIFICANCE_Z * Math.hypot(p.error, acf.error);
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

/**
 * Format value ± error with the error rounded to two significant digits and the value to the same
 * decimal place (common practice, no source).
 */
export function formatMeasurement(value: number, error: number): string {
  if (!(error > 0) || !Number.isFinite(error)) return `${formatNumber(value)} ± 0`;
  return formatValue(value, error);
}

/** A number with 4 significant digits, without exponent for ordinary magnitudes. */
function formatNumber(v: number): string {
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a >= 1e-3 && a < 1e7) return String(Number(v.toPrecision(4)));
  return v.toPrecision(4);
}

function withUnit(s: string, unit: string): string {
  return unit ? `${s} ${unit}` : s;
}

function checkOptions(opts: SeriesOptions): void {
  if (opts.dt !== null && !(Number.isFinite(opts.dt) && opts.dt > 0)) {
    throw new UsageError(`time between samples must be a positive number of ps, got ${opts.dt}`);
  }
  const t = opts.target;
  if (t) {
    if (t.relative !== undefined && t.absolute !== undefined) {
      throw new UsageError('give either a relative or an absolute target precision, not both');
    }
    const v = t.relative ?? t.absolute;
    if (v === undefined || !(Number.isFinite(v) && v > 0)) {
      throw new UsageError(`target precision must be a positive number, got ${v}`);
    }
  }
  if (opts.minEffective !== undefined && !(opts.minEffective > 0)) {
    throw new UsageError(`minimum effective samples must be positive, got ${opts.minEffective}`);
  }
}

/**
 * Full convergence report of one series: equilibration point t0 (Chodera 2016, maximum effective
 * samples; MSER-5 as second opinion), and on the production region [t0, N): the autocorrelation
 * standard error σ√(g/n) with g from Geyer's initial monotone sequence (Sokal's window alongside),
 * block averaging with its plateau (cumulative χ² test, `blockingPlateau`), the reported standard
 * error from both (`combineStandardErrors`), drift and halves tests, and a verdict in plain words.
 * The reported g is the one behind the reported SE, g = n·SE²/σ², and the effective samples n/g.
 *
 * The correlation sums use at most windowFractionFor(minEffective)·n lags (n/20 by default):
 * needing more would already mean fewer than minEffective effective samples.
 *
 * reliable = at least `minEffective` effective samples, correlation time resolved, a blocking
 * plateau (without one the blocked SE is still growing at the largest usable block size, so no
 * error bar can be trusted: a lower estimate is reported), no significant drift, consistent
 * halves, and — when a target is given — standard error ≤ target. A disagreement between the
 * blocking and autocorrelation errors (the larger is reported), or an MSER point well after t0,
 * is a caution in the verdict but does not by itself make the series unreliable.
 *
 * Errors: NaN or ±∞ in the values → InputError (file = series name); fewer than MIN_SAMPLES (20)
 * samples → AnalysisError ("too short"); bad options → UsageError; a relative target for a series
 * whose mean is 0 → UsageError. A constant series gives g = 1, standard error 0 and says so.
 */
export function analyseSeries(name: string, values: Float64Array, opts: SeriesOptions): SeriesReport {
  checkOptions(opts);
  const unit = opts.unit ?? '';
  const minEffective = opts.minEffective ?? DEFAULT_MIN_EFFECTIVE;
  const n = values.length;
  for (let i = 0; i < n; i++) {
    if (!Number.isFinite(values[i]!)) {
      throw new InputError(name, null, null, `sample ${i} is ${values[i]}, not a finite number`);
    }
  }
  if (n < MIN_SAMPLES) {
    throw new AnalysisError(`${name}: too short for a convergence analysis (${n} samples, need at least ${MIN_SAMPLES})`);
  }
  const dt = opts.dt;
  const timeUnit = dt === null ? 'samples' : 'ps';
  const toTime = (samples: number): number => (dt === null ? samples : samples * dt);
  const slopeUnit = dt === null ? `${unit || '1'}/sample` : `${unit || '1'}/ps`;

  let constant = true;
  for (let i = 1; i < n && constant; i++) if (values[i] !== values[0]) constant = false;
  if (constant) return constantReport(name, values, opts, unit, timeUnit, slopeUnit);

  // Equilibration.
  // Longest correlation window worth resolving (beyond it there are < minEffective effective samples).
  const windowFraction = windowFractionFor(minEffective);
  // Lag-range hint from block averaging of the second half (likely equilibrated; O(n)).
  const hint = suggestedStartLag(blockingAnalysis(values.subarray(Math.floor(n / 2))));
  const eq = detectEquilibration(values, { windowFraction, startLag: hint });
  const ms = mser(values);
  const t0 = eq.index;
  const prod = values.subarray(t0);
  const np = prod.length;

  // Production statistics.
  const blocking = blockingAnalysis(prod);
  const startLag = suggestedStartLag(blocking);
  const est = inefficiency(prod, { windowFraction, startLag });
  const mean = seriesMean(prod);
  const sd = seriesStandardDeviation(prod);
  const seAcf = sd * Math.sqrt(est.g / np);
  const relErrAcf = windowRelativeError(est.window, np);
  // SE ∝ √g, so its relative error is half that of g.
  const combined = combineStandardErrors({ standardError: seAcf, error: (seAcf * relErrAcf) / 2, lowerBound: !est.resolved }, blocking);
  const se = combined.standardError;
  const agrees = combined.agrees;
  // g behind the reported SE and its relative error (2·δSE/SE, since g ∝ SE²).
  const gFinal = combined.source === 'autocorrelation' ? est.g : np * (se / sd) ** 2;
  const relErrG = combined.source === 'autocorrelation' ? relErrAcf : (2 * combined.error) / se;
  const nEff = np / gFinal;

  const drift = driftTest(prod, dt ?? 1, { windowFraction, startLag });
  const halves = halvesTest(prod, { windowFraction: Math.min(0.25, 2 * windowFraction), startLag });

  // Target.
  let targetAbs: number | null = null;
  if (opts.target) {
    if (opts.target.absolute !== undefined) targetAbs = opts.target.absolute;
    else {
      if (mean === 0) throw new UsageError(`${name}: a relative target is undefined for a series whose mean is 0`);
      targetAbs = opts.target.relative! * Math.abs(mean);
    }
  }
  let extraTimeNeeded: Quantity | null = null;
  let extraText = '';
  if (targetAbs !== null) {
    const tProd = toTime(np);
    const { needed, extra } = extraTime(tProd, se, targetAbs);
    extraTimeNeeded = quantity(extra, extra > 0 ? needed * relErrG : null, timeUnit);
    const targetText = withUnit(formatNumber(targetAbs), unit);
    extraText =
      extra > 0
        ? `target ±${targetText} needs about ${formatNumber(extra)} ${timeUnit} more production (${formatNumber(needed)} ${timeUnit} in total)`
        : `target ±${targetText} reached`;
  }

  // Verdict: flags make the series unreliable, cautions do not (coded, src/estimate.ts).
  const reasons: Reason[] = [];
  const flag = (code: string, text: string) => reasons.push(reason(code, text, 'unreliable'));
  const caution = (code: string, text: string) => reasons.push(reason(code, text));
  if (!est.resolved) {
    flag(
      'series.correlation-unresolved',
      `correlation time not resolved within ${est.window} lags (${formatNumber((100 * est.window) / np)} % of the production run): the autocorrelation g is only a lower estimate and the effective sample count an upper one`,
    );
  }
  if (nEff < minEffective) flag('series.few-effective-samples', `only ${formatNumber(nEff)} effective samples (fewer than ${minEffective})`);
  if (drift.significant) flag('series.drift', `drifts by ${formatMeasurement(drift.slope, drift.standardError)} ${slopeUnit}`);
  if (!halves.consistent) {
    flag('series.halves-differ', `first and second halves differ by ${withUnit(formatMeasurement(halves.difference, halves.combinedError), unit)}`);
  }
  if (targetAbs !== null && se > targetAbs) flag('series.target-not-reached', extraText);
  if (!blocking.plateau) {
    const largestBlock = blocking.sizes[blocking.blocks.filter((b) => b >= PLATEAU_MIN_BLOCKS).length - 1] ?? 1;
    flag(
      'series.no-blocking-plateau',
      `block averaging found no plateau (the blocked standard error is still changing at blocks of ${largestBlock} samples, the longest with at least ${PLATEAU_MIN_BLOCKS} blocks), so the error bar${combined.source === 'largest blocks' ? ', the largest blocked one,' : ''} may be too small`,
    );
  } else if (!agrees) {
    caution(
      'series.blocking-disagrees',
      `blocked standard error ${formatNumber(blocking.plateau.standardError)} and autocorrelation estimate ${formatNumber(seAcf)} disagree beyond their uncertainty; the larger is reported`,
    );
  } else if (combined.source === 'blocking plateau') {
    caution(
      'series.blocking-reported',
      `the blocked standard error ${formatNumber(blocking.plateau.standardError)} is reported: the autocorrelation estimate ${formatNumber(seAcf)} is only a lower bound`,
    );
  }
  const mserGap = ms.index - t0;
  if (mserGap > 0.1 * n) caution('series.mser-later', `MSER-5 would discard the first ${ms.index} samples`);
  if (!ms.clear) caution('series.mser-unclear', 'MSER-5 finds no clear truncation point in the first half');
  const flags = reasons.filter((r) => r.verdict !== 'ok').map((r) => r.text);
  const cautions = reasons.filter((r) => r.verdict === 'ok').map((r) => r.text);

  const reliable = flags.length === 0;
  const parts = [
    t0 === 0
      ? 'equilibrated from the start'
      : dt === null
        ? `equilibrated from sample ${t0}`
        : `equilibrated from t = ${formatNumber(t0 * dt)} ps (sample ${t0})`,
    `g = ${formatNumber(gFinal)}`,
    `${Math.round(nEff)} effective samples`,
    `mean ${withUnit(formatMeasurement(mean, se), unit)}`,
  ];
  if (targetAbs !== null && se <= targetAbs) parts.push(extraText);
  let verdict = parts.join('; ');
  verdict += reliable ? '; reliable' : `; not reliable: ${flags.join('; ')}`;
  if (cautions.length > 0) verdict += ` (caution: ${cautions.join('; ')})`;

  return {
    name,
    samples: n,
    mean: estimate(mean, se, unit, { window: { from: toTime(t0), to: toTime(n - 1), unit: timeUnit }, verdict: reliable ? 'ok' : 'unreliable', reasons }),
    standardError: se,
    standardErrorSource: combined.source,
    autocorrelationStandardError: seAcf,
    statisticalInefficiency: gFinal,
    integratedAutocorrelationTime: quantity(toTime((gFinal - 1) / 2), toTime((gFinal / 2) * relErrG), timeUnit),
    geyerStatisticalInefficiency: est.geyer.g,
    sokalStatisticalInefficiency: est.sokal.g,
    equilibrationIndex: t0,
    equilibrationTime: dt === null ? null : quantity(t0 * dt, null, 'ps'),
    mserIndex: ms.index,
    effectiveSamples: nEff,
    blocking: {
      sizes: blocking.sizes,
      standardErrors: blocking.standardErrors,
      errorsOfStandardErrors: blocking.errorsOfStandardErrors,
      plateau: blocking.plateau ? { size: blocking.plateau.size, standardError: blocking.plateau.standardError } : null,
      agreesWithAutocorrelation: agrees,
    },
    drift: { slope: drift.slope, standardError: drift.standardError, unit: slopeUnit, significant: drift.significant },
    halves,
    verdict,
    reliable,
    extraTimeNeeded,
  };
}

/** Report for a series whose samples are all equal: exact mean, g = 1, SE 0. */
function constantReport(
  name: string,
  values: Float64Array,
  opts: SeriesOptions,
  unit: string,
  timeUnit: string,
  slopeUnit: string,
): SeriesReport {
  const n = values.length;
  const v = values[0]!;
  const blocking = blockingAnalysis(values);
  if (opts.target?.relative !== undefined && v === 0) {
    throw new UsageError(`${name}: a relative target is undefined for a series whose mean is 0`);
  }
  return {
    name,
    samples: n,
    mean: estimate(v, 0, unit, { window: { from: 0, to: opts.dt === null ? n - 1 : (n - 1) * opts.dt, unit: timeUnit } }),
    standardError: 0,
    standardErrorSource: 'autocorrelation',
    autocorrelationStandardError: 0,
    statisticalInefficiency: 1,
    integratedAutocorrelationTime: quantity(0, 0, timeUnit),
    geyerStatisticalInefficiency: 1,
    sokalStatisticalInefficiency: 1,
    equilibrationIndex: 0,
    equilibrationTime: opts.dt === null ? null : quantity(0, null, 'ps'),
    mserIndex: 0,
    effectiveSamples: n,
    blocking: {
      sizes: blocking.sizes,
      standardErrors: blocking.standardErrors,
      errorsOfStandardErrors: blocking.errorsOfStandardErrors,
      plateau: { size: 1, standardError: 0 },
      agreesWithAutocorrelation: true,
    },
    drift: { slope: 0, standardError: 0, unit: slopeUnit, significant: false },
    halves: { first: v, second: v, difference: 0, combinedError: 0, consistent: true },
    verdict: `constant: all ${n} samples equal ${withUnit(formatNumber(v), unit)}; no fluctuations, so g = 1 and the standard error is 0; reliable`,
    reliable: true,
    extraTimeNeeded: opts.target ? quantity(0, null, timeUnit) : null,
  };
}
