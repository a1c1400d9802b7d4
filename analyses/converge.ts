/**
 * When does an average become reliable? Equilibration detection, stationarity checks and the
 * reported standard error for one time series (an energy, a volume, a pressure …), ending in a
 * plain-words verdict. The estimators it combines — statistical inefficiency (Geyer, Sokal) and
 * block averaging — live in src/numerics/ (geyer.ts, sokal.ts, inefficiency.ts, blocking.ts).
 *
 * Conventions (used in every function below; stated with the estimators in
 * src/numerics/inefficiency.ts):
 * - ρ(k) is the normalised autocorrelation of the mean-subtracted series; integrated
 *   autocorrelation time in samples τ_int = Σ_{k≥1} ρ(k), statistical inefficiency g = 1 + 2τ_int
 *   (Chodera 2016's convention; Sokal's τ = g/2); effective samples n/g; standard error of the mean
 *   σ·√(g/n) with σ the sample standard deviation (n−1 denominator).
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
import type { Baseline } from '../src/correlate.js';
import { AnalysisError, InputError, UsageError } from '../src/errors.js';
import { blockingAnalysis, PLATEAU_MIN_BLOCKS } from '../src/numerics/blocking.js';
import {
  inefficiency,
  inefficiencyScan,
  meanWithError,
  seriesMean,
  seriesStandardDeviation,
  suggestedStartLag,
  windowFractionFor,
} from '../src/numerics/inefficiency.js';
import { windowRelativeError } from '../src/numerics/sokal.js';
import { combineStandardErrors, type CombinedStandardError } from '../src/numerics/standard-error.js';
import { formatValue } from '../src/output.js';
import { quantity, type Quantity } from '../src/types.js';
import { estimate, reason, type Estimate, type Reason } from '../src/estimate.js';

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
 * z-value for the drift and halves tests and for the blocking/autocorrelation comparison
 * (`combineStandardErrors`):
 * two-sided 1 % (Φ⁻¹(0.995) = 2.5758, standard normal table). A stationary series is wrongly
 * flagged by each test with nominal probability 1 %; with g estimated from the data we measured
 * ≈ 2 % on AR(1) series (200 seeds, 2·10⁴ samples, φ = 0.5 and 0.95).
 */
export const SIGNIFICANCE_Z = 2.5758;

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
 * The target precision of `opts.target` in the series' unit (a relative target times |mean|), the
 * extra production time it needs (`extraTime`, with the relative error of g as its own) and the
 * sentence for the verdict; all null/empty without a target.
 */
function targetCheck(
  name: string,
  opts: SeriesOptions,
  mean: number,
  se: number,
  relErrG: number,
  productionTime: number,
  timeUnit: string,
  unit: string,
): { targetAbs: number | null; extraTimeNeeded: Quantity | null; extraText: string } {
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
    const { needed, extra } = extraTime(productionTime, se, targetAbs);
    extraTimeNeeded = quantity(extra, extra > 0 ? needed * relErrG : null, timeUnit);
    const targetText = withUnit(formatNumber(targetAbs), unit);
    extraText =
      extra > 0
        ? `target ±${targetText} needs about ${formatNumber(extra)} ${timeUnit} more production (${formatNumber(needed)} ${timeUnit} in total)`
        : `target ±${targetText} reached`;
  }
  return { targetAbs, extraTimeNeeded, extraText };
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
  const combined = combineStandardErrors({ standardError: seAcf, error: (seAcf * relErrAcf) / 2, lowerBound: !est.resolved }, blocking, SIGNIFICANCE_Z);
  const se = combined.standardError;
  const agrees = combined.agrees;
  // g behind the reported SE and its relative error (2·δSE/SE, since g ∝ SE²).
  const gFinal = combined.source === 'autocorrelation' ? est.g : np * (se / sd) ** 2;
  const relErrG = combined.source === 'autocorrelation' ? relErrAcf : (2 * combined.error) / se;
  const nEff = np / gFinal;

  const drift = driftTest(prod, dt ?? 1, { windowFraction, startLag });
  const halves = halvesTest(prod, { windowFraction: Math.min(0.25, 2 * windowFraction), startLag });

  // Target.
  const { targetAbs, extraTimeNeeded, extraText } = targetCheck(name, opts, mean, se, relErrG, toTime(np), timeUnit, unit);

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
