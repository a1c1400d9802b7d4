/**
 * The rules for a transport coefficient read off the plateau of a running integral (VACF,
 * Green–Kubo viscosity and conductivity), stated once here and repeated in the outputs; the
 * slope and segment rules they share are in src/fit.ts.
 * - Plateau: the earliest span of lags over which the running integral changes by less than a
 *   relative tolerance (`plateauWindow`).
 * - Sampling: a correlation function integrated by the trapezoid rule must not lose more than
 *   half of its value within one sample interval (`correlationSamplingProblem`); for an
 *   exponential decay the trapezoid integral is then at most 4 % too large (closed form in
 *   src/numerics/trapezoid.ts).
 * - Plateau drift: after the plateau of a running integral is chosen, the integral over the lags
 *   after it (up to 3× the plateau end, inside a segment) must stay within the segment-based
 *   uncertainty of the change (`plateauDriftCheck`); otherwise "running integral keeps drifting".
 */
import { blockStatistics } from './numerics/block-statistics.js';
import { studentTQuantile } from './numerics/student-t.js';
import { trapezoidExponentialBias } from './numerics/trapezoid.js';
import type { LagWindow, WindowChoice } from './fit.js';

/** Default relative tolerance of the plateau rule. */
export const DEFAULT_PLATEAU_TOLERANCE = 0.02;
/** Default plateau span as a fraction of the analysed lags. */
export const DEFAULT_PLATEAU_SPAN = 0.1;
/** Fewest lags in a plateau span. */
export const MIN_PLATEAU_POINTS = 5;

/**
 * Plateau of a running integral I(m), m = 0 … last: with the span S = max(MIN_PLATEAU_POINTS,
 * round(spanFraction · last)), the plateau is the earliest window [i, i+S] (i ≥ 1) over which
 * |I(j) − I(i)| ≤ tol·|I(i)| for every j in it (relative change below the tolerance over the span;
 * tol = 0.02 and spanFraction = 0.1 by default; common practice, no source). When there is none,
 * returns the last span [last−S, last] with found = false ("no plateau").
 */
export function plateauWindow(
  values: ArrayLike<number>,
  opts: { tolerance?: number; spanFraction?: number; last?: number } = {},
): WindowChoice {
  const tol = opts.tolerance ?? DEFAULT_PLATEAU_TOLERANCE;
  const frac = opts.spanFraction ?? DEFAULT_PLATEAU_SPAN;
  const last = Math.min(opts.last ?? values.length - 1, values.length - 1);
  const span = Math.max(MIN_PLATEAU_POINTS, Math.round(frac * last));
  if (last - span < 1) {
    return { from: 1, to: Math.max(1, last), found: false, reason: `no plateau: only ${last} lags, fewer than a span of ${span} + 1`, reasonCode: 'plateau.too-few-lags' };
  }
  for (let i = 1; i + span <= last; i++) {
    const ref = values[i];
    if (!(Math.abs(ref) > 0)) continue;
    const lim = tol * Math.abs(ref);
    let ok = true;
    for (let j = i + 1; j <= i + span; j++) {
      if (!(Math.abs(values[j] - ref) <= lim)) {
        ok = false;
        break;
      }
    }
    if (ok) return { from: i, to: i + span, found: true, reason: null, reasonCode: null };
  }
  return {
    from: last - span,
    to: last,
    found: false,
    reason: `no plateau: the running integral never stays within ±${tol * 100}% over a span of ${span} lags; the value is its mean over the last span`,
    reasonCode: 'plateau.not-found',
  };
}

/** Outcome of `plateauDriftCheck`. */
export interface PlateauDrift {
  /** Lags compared with the plateau: [from, to] (inclusive); from > to when there are none. */
  from: number;
  to: number;
  /** Mean of the integral over those lags minus its mean over the plateau (full run). */
  drift: number;
  /** Standard error of that change over the segments (paired per segment), or null. */
  error: number | null;
  /** |drift| beyond which the integral counts as drifting. */
  threshold: number;
  /** True when the lags after the plateau were checked. */
  checked: boolean;
  /** True when the running integral leaves the plateau by more than the threshold. */
  drifting: boolean;
  /** The reason when not checked or drifting ("running integral keeps drifting …"), else null. */
  reason: string | null;
  /** Stable code of `reason` (src/estimate.ts): 'plateau.drift-unchecked' or 'plateau.drifting'; null without a reason. */
  reasonCode: string | null;
}

/** How far past the plateau end the drift check looks: up to this multiple of the end lag. */
export const DRIFT_CHECK_FACTOR = 3;

/**
 * Does a running integral stay on its plateau? Compares the integral over the later lags
 * (window.to, end] — end = min(DRIFT_CHECK_FACTOR·window.to, cap), cap being the largest lag a
 * segment holds — with its plateau mean: Δ = mean_later(I) − mean_plateau(I) on the full run, and
 * per segment k the same difference d_k, whose standard error SE = SD(d)/√M (paired blocks,
 * Frenkel & Smit, 2nd ed., §4.4.1) is the uncertainty of Δ. Drifting when |Δ| exceeds both
 * t_{0.975, M−1}·SE (a two-sided 95 % test of "no change", Student 1908) and tol·|plateau mean|
 * (a change below the plateau tolerance is immaterial). With fewer than 2 segments only the
 * tolerance applies. Fewer than MIN_PLATEAU_POINTS later lags: not checked, with the reason.
 * Common practice, no source for the rule itself.
 */
export function plateauDriftCheck(
  full: ArrayLike<number>,
  segments: ReadonlyArray<ArrayLike<number>>,
  window: LagWindow,
  cap: number,
  tolerance = DEFAULT_PLATEAU_TOLERANCE,
): PlateauDrift {
  const end = Math.min(DRIFT_CHECK_FACTOR * window.to, cap, full.length - 1, ...segments.map((c) => c.length - 1));
  const later = { from: window.to + 1, to: end };
  const plateauMean = windowMean(full, window);
  if (end - window.to < MIN_PLATEAU_POINTS) {
    return {
      ...later,
      drift: NaN,
      error: null,
      threshold: NaN,
      checked: false,
      drifting: false,
      reason:
        `only ${Math.max(0, end - window.to)} lag(s) after the plateau inside a segment (fewer than ${MIN_PLATEAU_POINTS}): ` +
        'cannot check that the running integral stays on it',
      reasonCode: 'plateau.drift-unchecked',
    };
  }
  const drift = windowMean(full, later) - plateauMean;
  let error: number | null = null;
  let threshold = tolerance * Math.abs(plateauMean);
  if (segments.length >= 2) {
    const d = segments.map((c) => windowMean(c, later) - windowMean(c, window));
    error = blockStatistics(d).standardError;
    threshold = Math.max(threshold, studentTQuantile(0.975, segments.length - 1) * error);
  }
  const drifting = !(Math.abs(drift) <= threshold);
  return {
    ...later,
    drift,
    error,
    threshold,
    checked: true,
    drifting,
    reason: drifting
      ? `running integral keeps drifting: over lags ${later.from}–${later.to} (up to ${DRIFT_CHECK_FACTOR}× the plateau end) its mean differs from the plateau by ` +
        `${((100 * drift) / Math.abs(plateauMean)).toFixed(0)} %` +
        (error !== null ? ` (${(Math.abs(drift) / error).toFixed(1)} standard errors over ${segments.length} segments)` : '')
      : null,
    reasonCode: drifting ? 'plateau.drifting' : null,
  };
}

/** Mean of values[from..to] (inclusive). */
export function windowMean(values: ArrayLike<number>, w: LagWindow): number {
  let s = 0;
  for (let i = w.from; i <= w.to; i++) s += values[i];
  return s / (w.to - w.from + 1);
}

/** Smallest C(Δt)/C(0) of a correlation sampled every Δt that is integrated by the trapezoid rule without a flag. */
export const CORRELATION_SAMPLING_RATIO = 0.5;

/**
 * Whether a correlation function c (c[0] at lag 0, c[1] one sample interval `dt` ps later) is
 * sampled finely enough to be integrated by the trapezoid rule: null when
 * c[1]/c[0] ≥ CORRELATION_SAMPLING_RATIO (0.5) or c[0] ≤ 0 (other checks report that), otherwise
 * the reason, naming `what` and the bias the trapezoid rule would have for an exponential decay
 * (`trapezoidExponentialBias`: at most 4 % at the threshold). A correlation that loses most of
 * its value within one interval lies mostly inside the first trapezoid, whose area depends on the
 * unseen shape between the samples; no correction can recover it. Segment uncertainties cannot
 * see this bias (every segment shares it).
 */
export function correlationSamplingProblem(c: ArrayLike<number>, dt: number, what: string): string | null {
  if (c.length < 2 || !(c[0] > 0) || !Number.isFinite(c[1])) return null;
  const r = c[1] / c[0];
  if (r >= CORRELATION_SAMPLING_RATIO) return null;
  const pct = (x: number) => (Math.abs(x) >= 10 ? x.toFixed(0) : x.toPrecision(2));
  const head =
    `${what} falls to ${pct(100 * r)} % of its zero-lag value within one sample interval (${Number(dt.toPrecision(6))} ps): ` +
    `too coarsely sampled for the trapezoid rule (C(Δt)/C(0) must be at least ${CORRELATION_SAMPLING_RATIO})`;
  if (!(r > 0)) return `${head}; the integral depends on the unseen shape between the samples — store frames more often`;
  return (
    `${head}; for an exponential decay the integral would come out ${pct(100 * trapezoidExponentialBias(r))} % too large — ` +
    'store frames (velocities) more often'
  );
}
