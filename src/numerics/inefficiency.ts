/**
 * Conventions of the statistical-inefficiency estimators (src/numerics/sokal.ts, geyer.ts,
 * inefficiency.ts, blocking.ts):
 * - ρ(k) is the normalised autocorrelation of the mean-subtracted series, from the unbiased
 *   autocovariance C(k) = 1/(n−k) Σ (x_i − x̄)(x_{i+k} − x̄) (src/correlate.ts); Geyer's estimator
 *   uses the biased γ(k) = (n−k)C(k)/n, as he prescribes.
 * - Integrated autocorrelation time in samples τ_int = Σ_{k≥1} ρ(k), statistical inefficiency
 *   g = 1 + 2τ_int (so g = 1 for uncorrelated samples; the convention of Chodera 2016). A. D. Sokal
 *   writes τ_int = 1/2 + Σ_{k≥1} ρ(k) = g/2 instead; the two differ by half a sample.
 * - Effective samples n/g; standard error of the mean σ·√(g/n) with σ the sample standard
 *   deviation (n−1 denominator). g is floored at 1.
 *
 * This file: the mean and standard deviation of a series, its normalised autocorrelation, the
 * statistical inefficiency of a whole series (Geyer's initial monotone sequence, primary, with
 * Sokal's window as a second opinion) and of the tails of many origins at once, and the standard
 * error of a correlated mean σ√(g/n). Autocovariances by FFT (src/correlate.ts).
 *
 * Cost: one FFT round of length ≈ 4× the lag range per attempt (O(n log K) for lag range K), the
 * range growing ×8 until the estimators terminate; the scan over origins thins its origins so a
 * round stays O(n log n).
 */
import * as ss from 'simple-statistics';
import { regionAutocovariances, nextPowerOfTwo, type Baseline } from '../correlate.js';
import { AnalysisError } from '../errors.js';
import { PLATEAU_MIN_BLOCKS, type BlockingResult } from './blocking.js';
import { geyerInefficiency, type GeyerEstimate } from './geyer.js';
import { sokalWindow, windowRelativeError, SOKAL_WINDOW_CONSTANT, type WindowEstimate } from './sokal.js';

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

/** Geyer's estimate (`geyerInefficiency`) from unbiased autocovariances C(0 … maxLag) of a region of n samples: γ(k) = (n−k)C(k)/n. */
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

/** Mean and its standard error σ·√(g/n), g from Geyer's initial monotone sequence on the same data (`inefficiency`). */
export function meanWithError(
  x: Float64Array,
  opts: { windowFraction?: number; startLag?: number } = {},
): { mean: number; standardError: number; g: number } {
  const g = inefficiency(x, opts).g;
  return { mean: seriesMean(x), standardError: seriesStandardDeviation(x) * Math.sqrt(g / x.length), g };
}
