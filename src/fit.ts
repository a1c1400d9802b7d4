/**
 * The fit-window rules used by every transport coefficient that comes from the slope of a
 * mean-squared-displacement-like curve (MSD, Einstein–Helfand) or from the plateau of a running
 * integral (VACF, Green–Kubo), and the segments that give those coefficients their uncertainty.
 * The generic numerics they rest on (line fit, log-log slope, block standard error, Student's t,
 * trapezoid rule) live in src/numerics/.
 *
 * Rules, stated once here and repeated in the outputs:
 * - Diffusive window (automatic): among the lags 1 … ⌊f_max·(T−1)⌋ (f_max = 0.5 by default: past
 *   half the run the average rests on fewer time origins than the lag itself), the local
 *   log-log slope β(t) = d ln y / d ln t is evaluated between the lags t/1.25 and 1.25·t; the
 *   window is the longest contiguous run of lags with |β − 1| ≤ tol (tol = 0.1 by default),
 *   earliest on ties. This skips the ballistic start (β ≈ 2) and stops where noise at long lags
 *   throws the slope off. A window with fewer than MIN_WINDOW_POINTS lags counts as not found.
 * - Segments: the run is cut into M independent, equally long segments (M = 5 by default); the
 *   coefficient is computed in each over the same window, and its standard error is SD/√M
 *   (standard error over independent blocks: Frenkel & Smit, Understanding Molecular
 *   Simulation, 2nd ed. (2002), §4.4.1; Flyvbjerg & Petersen, J. Chem. Phys. 91, 461 (1989)).
 *   An automatic window is searched only among the lags a segment can hold, 1 … ⌊f_max (L−1)⌋
 *   with L = ⌊T/M⌋ (`segmentedDiffusiveWindow`): M as asked first, then fewer segments (never
 *   below MIN_SEGMENTS = 3) when no window is found, so that the window and the segments agree
 *   from the start. A user window must fit inside a segment as given (`planSegments` reduces M);
 *   otherwise no uncertainty is given and the result is flagged not converged.
 * - Few segments: with M < FULL_CONFIDENCE_SEGMENTS (5) the standard error rests on M − 1 degrees
 *   of freedom and is multiplied by the Student-t factor t_{Φ(1), M−1} (Φ(1) = 0.8413), so that the
 *   stated ± stays the half-width of a 68.3 % confidence interval (Student, Biometrika 6, 1 (1908));
 *   from 5 segments on it is the plain standard error (`segmentUncertaintyFactor`).
 *
 * The rules for the plateau of a running integral (plateau, drift after it, sampling of the
 * correlation) are in src/plateau.ts.
 */
import { AnalysisError, UsageError } from './errors.js';
import { blockStatistics } from './numerics/block-statistics.js';
import { fitLine } from './numerics/line-fit.js';
import { logLogSlopes } from './numerics/log-slope.js';
import { ONE_SIGMA_LEVEL, studentTQuantile } from './numerics/student-t.js';
import { convergenceNote, noteReason, reason, type Reason } from './estimate.js';

/** Default tolerance on |d ln y/d ln t − 1| for the automatic diffusive window. */
export const DEFAULT_SLOPE_TOLERANCE = 0.1;
/** Default largest lag of an automatic window, as a fraction of the run (or segment) length. */
export const DEFAULT_MAX_FRACTION = 0.5;
/** Default number of independent segments for the uncertainty. */
export const DEFAULT_SEGMENTS = 5;
/** Fewest independent segments that still give an uncertainty. */
export const MIN_SEGMENTS = 3;
/** Fewest lags a fit window must hold. */
export const MIN_WINDOW_POINTS = 8;

/** A fit window as inclusive lag indices. */
export interface LagWindow {
  from: number;
  to: number;
}

/** Outcome of the automatic window search. */
export interface WindowChoice extends LagWindow {
  /** True when a window satisfying the slope rule was found. */
  found: boolean;
  /** Why not, when not found. */
  reason: string | null;
  /** Stable code of `reason` (src/estimate.ts), null when found. */
  reasonCode: string | null;
}

/** Options of the automatic window. */
export interface WindowOptions {
  tolerance?: number;
  maxFraction?: number;
  minPoints?: number;
  /** Largest lag index searched (the lags a segment can hold); default ⌊f_max (T−1)⌋. */
  maxLag?: number;
}

/** Largest lag index allowed by the f_max rule for a series of `frames` frames: ⌊f_max (T−1)⌋. */
export function maxLagIndex(frames: number, maxFraction = DEFAULT_MAX_FRACTION): number {
  return Math.floor(maxFraction * (frames - 1));
}

/**
 * Automatic diffusive window of an MSD-like curve y(t) (y ∝ t in the diffusive regime): the
 * longest contiguous run of lags 1 … cap with |β − 1| ≤ tol, β from `logLogSlopes`, cap =
 * ⌊f_max (T−1)⌋ or `maxLag` when smaller (rule in the module comment; common practice, no
 * source). `frames` is the run length T the curve was computed from (y may be shorter). When no
 * run of at least `minPoints` lags exists, returns the fallback window [⌈cap/5⌉, cap] with
 * found = false and the reason.
 */
export function diffusiveWindow(
  time: ArrayLike<number>,
  y: ArrayLike<number>,
  frames: number,
  opts: WindowOptions = {},
): WindowChoice {
  const tol = opts.tolerance ?? DEFAULT_SLOPE_TOLERANCE;
  const minPoints = opts.minPoints ?? MIN_WINDOW_POINTS;
  const cap = Math.min(maxLagIndex(frames, opts.maxFraction), Math.min(time.length, y.length) - 1, opts.maxLag ?? Infinity);
  if (cap < 2) {
    return { from: 1, to: Math.max(1, cap), found: false, reason: `only ${frames} frames: no lags to fit`, reasonCode: 'msd.too-few-frames' };
  }
  const beta = logLogSlopes(time, y);
  let best: LagWindow | null = null;
  let start = -1;
  for (let i = 1; i <= cap + 1; i++) {
    const ok = i <= cap && Math.abs(beta[i] - 1) <= tol;
    if (ok && start < 0) start = i;
    if (!ok && start >= 0) {
      if (!best || i - 1 - start > best.to - best.from) best = { from: start, to: i - 1 };
      start = -1;
    }
  }
  if (best && best.to - best.from + 1 >= minPoints) return { ...best, found: true, reason: null, reasonCode: null };
  const fallback = { from: Math.max(1, Math.ceil(cap / 5)), to: cap };
  const longest = best ? best.to - best.from + 1 : 0;
  return {
    ...fallback,
    found: false,
    reason:
      `no run of at least ${minPoints} lags where d ln MSD/d ln t stays within 1 ± ${tol} ` +
      `(longest ${longest}) among lags 1–${cap}; fitted over the fallback window (lags ${fallback.from}–${fallback.to})`,
    reasonCode: 'msd.not-linear',
  };
}

/**
 * Lag indices [from, to] of a user window given as times (ps) on a grid of spacing dt
 * (t_k = k·dt): from = ⌈t_from/dt⌉, to = ⌊t_to/dt⌋ (with a 1e-9 relative allowance for round-off).
 * A window outside 0 < t ≤ (T−1)·dt or with fewer than 3 lags is a usage error.
 */
export function windowFromTimes(fromPs: number, toPs: number, dt: number, frames: number): LagWindow {
  if (!(toPs > fromPs)) throw new UsageError(`fit window: --fit-to (${toPs} ps) must be after --fit-from (${fromPs} ps)`);
  const eps = 1e-9;
  const from = Math.max(1, Math.ceil(fromPs / dt - eps));
  const to = Math.floor(toPs / dt + eps);
  const last = frames - 1;
  if (to > last) {
    throw new UsageError(`fit window: --fit-to ${toPs} ps is beyond the longest lag of the run (${last * dt} ps)`);
  }
  if (to - from + 1 < 3) {
    throw new UsageError(`fit window ${fromPs}–${toPs} ps holds only ${Math.max(0, to - from + 1)} lag(s) of ${dt} ps; need at least 3`);
  }
  return { from, to };
}

/** How the run is cut into segments for the uncertainty, and the window they share. */
export interface SegmentPlan {
  /** Number of segments (0 when no plan works). */
  segments: number;
  /** Frames per segment ⌊T/M⌋ (the remainder at the end of the run is not used by segments). */
  segmentFrames: number;
  /** The window, possibly shrunk so that it fits in a segment. */
  window: LagWindow;
  /** True when the plan gives an uncertainty. */
  ok: boolean;
  /** What was changed, or why there is no uncertainty. */
  notes: string[];
  /** The same, coded (src/estimate.ts), one for one with `notes`. */
  reasons: Reason[];
}

/**
 * Choose the segments for a window (rule in the module comment): the window's last lag must be
 * ≤ ⌊f_max (L−1)⌋ with L = ⌊T/M⌋ the segment length. Tried in order: M as asked; the window
 * shrunk to that limit (automatic windows only, keeping ≥ minPoints lags); fewer segments down
 * to MIN_SEGMENTS, then shrinking with those. Common practice, no source.
 */
export function planSegments(
  frames: number,
  window: LagWindow,
  opts: { segments?: number; maxFraction?: number; minPoints?: number; mayShrink?: boolean } = {},
): SegmentPlan {
  const want = opts.segments ?? DEFAULT_SEGMENTS;
  const f = opts.maxFraction ?? DEFAULT_MAX_FRACTION;
  const minPoints = opts.minPoints ?? MIN_WINDOW_POINTS;
  const mayShrink = opts.mayShrink ?? true;
  const limitFor = (m: number) => maxLagIndex(Math.floor(frames / m), f);
  const lowest = Math.min(want, MIN_SEGMENTS);
  for (let m = want; m >= lowest; m--) {
    const limit = limitFor(m);
    const reasons: Reason[] = [];
    if (m !== want) reasons.push(reason('segments.fewer', `${m} segments instead of ${want}, so that the fit window fits in one`));
    if (window.to <= limit) {
      return { segments: m, segmentFrames: Math.floor(frames / m), window: { ...window }, ok: true, notes: reasons.map((r) => r.text), reasons };
    }
    if (mayShrink && limit - window.from + 1 >= minPoints) {
      reasons.push(reason(
        'segments.window-shortened',
        `fit window end moved from lag ${window.to} to ${limit} so that it fits in a segment of ${Math.floor(frames / m)} frames`,
      ));
      return { segments: m, segmentFrames: Math.floor(frames / m), window: { from: window.from, to: limit }, ok: true, notes: reasons.map((r) => r.text), reasons };
    }
  }
  const none = reason(
    'segments.window-too-long',
    `the fit window (lags ${window.from}–${window.to}) does not fit in ${lowest} independent segments of the run ` +
      `(${frames} frames): no uncertainty can be given; run longer or fit an earlier window`,
    'not-converged',
  );
  return { segments: 0, segmentFrames: 0, window: { ...window }, ok: false, notes: [none.text], reasons: [none] };
}

/** Outcome of the automatic window search among the lags a segment holds. */
export interface SegmentedWindow {
  /** The window (inclusive lag indices), inside a segment of `segmentFrames` frames. */
  window: LagWindow;
  /** True when a window satisfying the slope rule was found. */
  found: boolean;
  /** Number of segments (0 when no count down to MIN_SEGMENTS leaves room for a window). */
  segments: number;
  /** Frames per segment ⌊T/M⌋ (0 with no segments). */
  segmentFrames: number;
  /** Largest lag a segment of this plan holds, ⌊f_max (L−1)⌋ (the search cap). */
  cap: number;
  /** True when the plan gives an uncertainty. */
  ok: boolean;
  /** What was chosen and why ("not converged: …" for a failure). */
  notes: string[];
  /** The same, coded (src/estimate.ts), one for one with `notes` (which are their `convergenceNote` form). */
  reasons: Reason[];
}

/**
 * Automatic diffusive window searched only among the lags a segment can hold, so that the window
 * and the segments of the uncertainty agree from the start (rule in the module comment; common
 * practice, no source): for M = `segments` (default 5) down to MIN_SEGMENTS, cap_M =
 * ⌊f_max (⌊T/M⌋ − 1)⌋; counts whose cap is below `minPoints` are skipped; the first M whose lags
 * 1 … cap_M hold a window (`diffusiveWindow` with maxLag = cap_M) is used. When none does, the
 * fallback window of the first usable M is returned with found = false; when no M is usable,
 * the fallback window of the whole run with segments = 0 (no uncertainty).
 */
export function segmentedDiffusiveWindow(
  time: ArrayLike<number>,
  y: ArrayLike<number>,
  frames: number,
  opts: WindowOptions & { segments?: number } = {},
): SegmentedWindow {
  const want = opts.segments ?? DEFAULT_SEGMENTS;
  const minPoints = opts.minPoints ?? MIN_WINDOW_POINTS;
  const lowest = Math.min(want, MIN_SEGMENTS);
  let firstUsable: { m: number; cap: number; choice: WindowChoice } | null = null;
  for (let m = want; m >= lowest; m--) {
    const L = Math.floor(frames / m);
    const cap = Math.min(maxLagIndex(L, opts.maxFraction), Math.min(time.length, y.length) - 1);
    if (cap < minPoints) continue;
    const choice = diffusiveWindow(time, y, frames, { ...opts, maxLag: cap });
    if (!firstUsable) firstUsable = { m, cap, choice };
    if (choice.found) {
      const capWant = maxLagIndex(Math.floor(frames / want), opts.maxFraction);
      const reasons =
        m !== want
          ? [reason('segments.fewer', `${m} segments instead of ${want}: the lags 1–${capWant} a segment of ${want} holds contain no diffusive window of at least ${minPoints} lags`)]
          : [];
      return { window: { from: choice.from, to: choice.to }, found: true, segments: m, segmentFrames: L, cap, ok: true, notes: reasons.map((r) => r.text), reasons };
    }
  }
  if (firstUsable) {
    const { m, cap, choice } = firstUsable;
    const r = reason(choice.reasonCode!, `${choice.reason}${m !== want ? ` (${m} segments)` : ''}`, 'not-converged');
    return {
      window: { from: choice.from, to: choice.to },
      found: false,
      segments: m,
      segmentFrames: Math.floor(frames / m),
      cap,
      ok: true,
      notes: [convergenceNote(r)],
      reasons: [r],
    };
  }
  const whole = diffusiveWindow(time, y, frames, opts);
  const reasons = [
    ...(whole.found ? [] : [reason(whole.reasonCode!, whole.reason!, 'not-converged')]),
    reason(
      'segments.window-too-long',
      `the fit window (lags ${whole.from}–${whole.to}) does not fit in ${lowest} independent segments of the run ` +
        `(${frames} frames; a segment must hold at least ${minPoints} lags): no uncertainty can be given; run longer`,
      'not-converged',
    ),
  ];
  return {
    window: { from: whole.from, to: whole.to },
    found: false,
    segments: 0,
    segmentFrames: 0,
    cap: whole.to,
    ok: false,
    notes: reasons.map(convergenceNote),
    reasons,
  };
}

/** From this many segments on, the plain standard error is given (below: Student-t widened). */
export const FULL_CONFIDENCE_SEGMENTS = 5;

/**
 * Factor applied to a standard error over M independent segments: t_{Φ(1), M−1} (Student's t
 * quantile at the one-sigma level Φ(1) = 0.8413 for M − 1 degrees of freedom, divided by the
 * normal quantile z = 1) when M < FULL_CONFIDENCE_SEGMENTS, else 1 (module comment; Student,
 * Biometrika 6, 1 (1908)). E.g. M = 3: 1.32; M = 4: 1.20.
 */
export function segmentUncertaintyFactor(segments: number): number {
  if (segments >= FULL_CONFIDENCE_SEGMENTS) return 1;
  if (segments < 2) return NaN;
  return studentTQuantile(ONE_SIGMA_LEVEL, segments - 1);
}

/** Text of the few-segment rule for a note, or null when no widening applies. */
export function segmentFactorNote(segments: number): string | null {
  if (segments >= FULL_CONFIDENCE_SEGMENTS || segments < 2) return null;
  return (
    `only ${segments} independent segments (${segments - 1} degrees of freedom): the standard error is multiplied by ` +
    `t(0.8413, ${segments - 1}) = ${segmentUncertaintyFactor(segments).toFixed(3)} (Student's t) so that ± stays a 68 % confidence half-width`
  );
}

// ---------------------------------------------------------------------------------------------
// Slope of an MSD-like curve with its segment uncertainty, and the rules in words

/** Diffusion from one MSD-like curve: the window, slope, D, segments and the verdict. */
export interface SlopeFit {
  window: LagWindow;
  /** Window in ps. */
  from: number;
  to: number;
  points: number;
  automatic: boolean;
  slope: number;
  /** Segment values of the slope, and their standard error (null when no plan works). */
  segmentSlopes: number[];
  slopeError: number | null;
  /** Segments used for the uncertainty (0: none). */
  segments: number;
  /** Factor applied to the segment standard error (Student-t for M < 5, else 1). */
  uncertaintyFactor: number;
  converged: boolean;
  notes: string[];
  /** The notes, coded (src/estimate.ts), one for one: each note is its reason's `convergenceNote`. */
  reasons: Reason[];
}

/**
 * Fit the slope of an MSD-like curve y(m·dt) over the user window or the automatic diffusive
 * window, and its uncertainty over independent segments whose curves `segmentCurve(start,
 * frames, maxLag)` computes (rules in src/fit.ts): an automatic window is searched only among
 * the lags a segment holds (`segmentedDiffusiveWindow`); a user window keeps its lags and the
 * segment count is reduced until it fits (`planSegments`). The uncertainty is the standard error
 * over the M segments used, times the Student-t factor t_{0.8413, M−1} when M < 5
 * (`segmentUncertaintyFactor`).
 */
export function fitSlopeWithSegments(
  curve: Float64Array,
  dt: number,
  frames: number,
  opts: { fitFrom?: number; fitTo?: number; tolerance?: number; maxFraction?: number; segments?: number },
  segmentCurve: (start: number, count: number, maxLag: number) => Float64Array,
): SlopeFit {
  const notes: string[] = [];
  const reasons: Reason[] = [];
  const time = Float64Array.from(curve, (_, k) => k * dt);
  let window: LagWindow;
  let automatic: boolean;
  let found = true;
  let plan: { ok: boolean; segments: number; segmentFrames: number };
  if (opts.fitFrom !== undefined && opts.fitTo !== undefined) {
    window = windowFromTimes(opts.fitFrom, opts.fitTo, dt, frames);
    if (window.to >= curve.length) throw new UsageError(`fit window ends beyond the computed curve (${(curve.length - 1) * dt} ps)`);
    automatic = false;
    const p = planSegments(frames, window, { segments: opts.segments ?? DEFAULT_SEGMENTS, maxFraction: 1, mayShrink: false });
    for (const r of p.reasons) noteReason(notes, reasons, r, '', true);
    window = p.window;
    plan = p;
  } else {
    const w = segmentedDiffusiveWindow(time, curve, frames, {
      tolerance: opts.tolerance,
      maxFraction: opts.maxFraction,
      segments: opts.segments ?? DEFAULT_SEGMENTS,
    });
    window = w.window;
    automatic = true;
    found = w.found;
    for (const r of w.reasons) noteReason(notes, reasons, r, '', true);
    plan = w;
  }
  const points = window.to - window.from + 1;
  if (points < 3) throw new AnalysisError(`fit window of ${points} lag(s) is too short to fit a line`);
  const fit = fitLine(time, curve, { from: window.from, to: window.to });
  const segmentSlopes: number[] = [];
  let slopeError: number | null = null;
  let factor = 1;
  if (plan.ok) {
    for (let k = 0; k < plan.segments; k++) {
      const c = segmentCurve(k * plan.segmentFrames, plan.segmentFrames, window.to);
      segmentSlopes.push(fitLine(time, c, { from: window.from, to: window.to }).slope);
    }
    factor = segmentUncertaintyFactor(plan.segments);
    slopeError = blockStatistics(segmentSlopes).standardError * factor;
    const fn = segmentFactorNote(plan.segments);
    if (fn) noteReason(notes, reasons, reason('segments.student-t', fn));
  }
  if (points < MIN_WINDOW_POINTS) {
    noteReason(notes, reasons, reason('msd.window-too-short', `the fit window holds ${points} lags, fewer than ${MIN_WINDOW_POINTS}`, 'not-converged'), '', true);
  }
  const converged = found && plan.ok && points >= MIN_WINDOW_POINTS;
  return {
    window,
    from: window.from * dt,
    to: window.to * dt,
    points,
    automatic,
    slope: fit.slope,
    segmentSlopes,
    slopeError,
    segments: plan.ok ? plan.segments : 0,
    uncertaintyFactor: factor,
    converged,
    notes,
    reasons,
  };
}


/** Text of the window rule with the parameters in force. */
export function windowRuleText(opts: { fitFrom?: number; fitTo?: number; tolerance?: number; maxFraction?: number }): string {
  if (opts.fitFrom !== undefined && opts.fitTo !== undefined) return `user window ${opts.fitFrom}–${opts.fitTo} ps`;
  return (
    `automatic: the longest run of lags up to ${Math.round(100 * (opts.maxFraction ?? DEFAULT_MAX_FRACTION))}% of the run ` +
    `where d ln MSD/d ln t is within 1 ± ${opts.tolerance ?? DEFAULT_SLOPE_TOLERANCE} (at least ${MIN_WINDOW_POINTS} lags)`
  );
}

/**
 * Text of the uncertainty rule with the segment counts actually used: `used` lists, per result
 * (group, or one collective curve), the segments its uncertainty rests on (0: none). Without
 * `used`, the requested count is stated as requested.
 */
export function uncertaintyRuleText(opts: { segments?: number }, used?: ReadonlyArray<{ label: string; segments: number }>): string {
  const want = opts.segments ?? DEFAULT_SEGMENTS;
  const source = '(block averages: Frenkel & Smit, Understanding Molecular Simulation, 2nd ed., §4.4.1)';
  const widen =
    `; with fewer than ${FULL_CONFIDENCE_SEGMENTS} segments multiplied by Student's t(0.8413, M−1) so that ± stays a 68 % confidence half-width (Student 1908)`;
  if (!used || used.length === 0) {
    return `standard error over ${want} (requested) independent segments of the run, SD/√M, same window ${source}${widen}`;
  }
  const counts = new Map<number, string[]>();
  for (const u of used) {
    if (!counts.has(u.segments)) counts.set(u.segments, []);
    counts.get(u.segments)!.push(u.label);
  }
  let how: string;
  if (counts.size === 1) {
    const m = [...counts.keys()][0];
    how = m === 0 ? 'no segments fit: no uncertainty' : `standard error over M = ${m} independent segments of the run`;
  } else {
    how =
      'standard error over M independent segments of the run, M = ' +
      [...counts.entries()].map(([m, labels]) => `${m === 0 ? 'none' : m} (${labels.join(', ')})`).join('; ');
  }
  return `${how} (${want} requested), SD/√M, same window ${source}${widen}`;
}
