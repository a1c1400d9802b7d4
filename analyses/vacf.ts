/**
 * Velocity autocorrelation function (VACF), the Green–Kubo self-diffusion coefficient from its
 * running integral, and the vibrational density of states (its cosine transform).
 *
 * C(t) = ⟨v(0)·v(t)⟩ averaged over the sites of a group and over all time origins (FFT,
 * src/correlate.ts), in Å²/ps², summed over the analysed components (3, or 2 with a plane).
 * D(t) = (1/d) ∫₀ᵗ C(t') dt' by the trapezoid rule (Green, J. Chem. Phys. 22, 398 (1954); Kubo,
 * J. Phys. Soc. Jpn. 12, 570 (1957)); D is the mean of D(t) over the plateau window of
 * src/plateau.ts (`plateauWindow`), and its uncertainty the standard error over independent segments.
 * Lags are analysed up to half the run (the same f_max rule as the MSD). Two checks guard the
 * value (src/plateau.ts): the VACF must keep at least half of C(0) after one frame interval, or the
 * trapezoid rule misjudges the first interval, which segments cannot see
 * (`correlationSamplingProblem`); and the running integral must stay on its plateau over the
 * later lags (`plateauDriftCheck`). Either failing makes the value not converged.
 *
 * Velocities come from the file when every frame has them; otherwise from central differences of
 * the unwrapped, drift-corrected positions, v(t) = [r(t+Δt) − r(t−Δt)]/(2Δt), at the interior
 * frames only (a warning says so: the difference smooths motion faster than Δt, so C(0) and the
 * high-frequency spectrum are underestimated when Δt is not small against the vibrations).
 *
 * Spectrum: S(ν) = 2∫₀^{t_max} C(t) w(t) cos(2πνt) dt with the Hann taper w(t) = cos²(πt/(2 t_max))
 * (the decaying half of a Hann window; Harris, Proc. IEEE 66, 51 (1978)), evaluated by FFT of the
 * even extension; ν in THz (1/ps) and in cm⁻¹ (ν̃ = ν/c: 1 THz = 33.35641 cm⁻¹). S(0)/(2d) is the
 * tapered D. The power spectrum of the VACF as the vibrational density of states: Dickey & Paskin,
 * Phys. Rev. 188, 1407 (1969) (from memory).
 *
 * Batches of sites: C(t) of a group is a site average, so the analysis first forms site sums
 * (`VacfGroupSums`: the full-run curve and every segment curve the plateau rule may ask for, all
 * before the division by the number of sites) and finishes from them (`finishVacf`). Sums from
 * batches of sites stored over several reads of a file (`--max-memory`,
 * src/engine/batches.ts) add up (`addVacfSums`) to those of one read; the normalisation,
 * running integral, plateau and spectrum follow the addition, so the result equals one read's to
 * round-off.
 *
 * The command (options, text, CSV files, site axis) is declared in analyses/vacf-analysis.ts.
 */
import FFT from 'fft.js';
import type { Pass, PassContext } from '../src/types.js';
import { estimate, noteReason, reason, type Estimate, type Reason } from '../src/estimate.js';
import { sumOfAutocorrelations, nextPowerOfTwo } from '../src/correlate.js';
import { AnalysisError } from '../src/errors.js';
import { A2_PER_PS, SPEED_OF_LIGHT } from '../src/units.js';
import { warnDiffusionRange } from '../src/checks.js';
import {
  maxLagIndex,
  segmentFactorNote,
  segmentUncertaintyFactor,
  uncertaintyRuleText,
  DEFAULT_MAX_FRACTION,
  DEFAULT_SEGMENTS,
  MIN_SEGMENTS,
  type LagWindow,
} from '../src/fit.js';
import {
  correlationSamplingProblem,
  plateauDriftCheck,
  plateauWindow,
  windowMean,
  DRIFT_CHECK_FACTOR,
  DEFAULT_PLATEAU_SPAN,
  DEFAULT_PLATEAU_TOLERANCE,
  MIN_PLATEAU_POINTS,
  type PlateauDrift,
} from '../src/plateau.js';
import { blockStatistics } from '../src/numerics/block-statistics.js';
import { cumulativeTrapezoid } from '../src/numerics/trapezoid.js';
import { resolveLayout, speciesSpec } from '../src/store/layout.js';
import type { SiteLayout, SpeciesLayoutOptions } from '../src/store/sites.js';
import { driftDescription, storeBytes, storePass, type StorePartial } from '../src/store/store.js';
import { gatherSeries, StoreView } from '../src/store/view.js';
import { planeComponents, requireFrameInterval, stillSites, type ReadInfo } from './msd.js';

/** cm⁻¹ per THz: 1e12 Hz / (c · 100 cm/m) = 33.35641 (c exact, SI). */
export const WAVENUMBER_PER_THZ = 1e12 / (SPEED_OF_LIGHT * 100);

/** Where the velocities come from. */
export type VelocitySource = 'file' | 'central differences';

/** Velocity source of a store: the file's when every frame had velocities. */
export function velocitySourceOf(store: StorePartial): VelocitySource {
  return store.velocityChunks !== null ? 'file' : 'central differences';
}

/** Number of velocity samples: T from the file, T − 2 from central differences. */
export function velocityFrames(store: StorePartial): number {
  return velocitySourceOf(store) === 'file' ? store.frames : store.frames - 2;
}

/**
 * Velocity series of sites over velocity samples [from, from+count): from the stored velocities
 * (minus the centre-of-mass velocity when drift is removed), or by central differences
 * v(t) = [r(t+1) − r(t−1)]/(2Δt) of drift-corrected positions, sample t being frame t+1.
 */
export function gatherVelocities(
  view: StoreView,
  sites: ArrayLike<number>,
  comps: readonly number[],
  from: number,
  count: number,
  dt: number,
  out: Float64Array[],
): void {
  const store = view.store;
  if (velocitySourceOf(store) === 'file') {
    gatherSeries(view, sites, comps, from, count, store.comVelocity, out, true);
    return;
  }
  // Positions of frames from … from+count+1 (sample t ↔ frame t+1).
  const pos = out.map(() => new Float64Array(count + 2));
  gatherSeries(view, sites, comps, from, count + 2, store.com, pos);
  const inv = 1 / (2 * dt);
  pos.forEach((p, j) => {
    const o = out[j];
    for (let t = 0; t < count; t++) o[t] = (p[t + 2] - p[t]) * inv;
  });
}

/**
 * VACF of a group, C(m) = (1/N) Σ_sites Σ_comps ⟨v_c(t) v_c(t+m)⟩_t over velocity samples
 * [from, from+count), m = 0 … maxLag (Å²/ps²), all time origins by FFT (src/correlate.ts):
 * `groupVacfSums` divided by the N sites.
 */
export function groupVacf(
  view: StoreView,
  sites: Int32Array,
  comps: readonly number[],
  from: number,
  count: number,
  maxLag: number,
  dt: number,
): Float64Array {
  const result = groupVacfSums(view, sites, comps, from, count, maxLag, dt).vacf;
  for (let m = 0; m <= maxLag; m++) result[m] /= sites.length;
  return result;
}

/**
 * Site sums of one group's VACF curves, not yet divided by the number of sites, so that sums
 * over batches of sites add up to those of the whole group (`addVacfSums`).
 */
export interface VacfGroupSums {
  sites: number;
  /** Σ_sites Σ_comps ⟨v_c(t) v_c(t+m)⟩_t over all samples, m = 0 … maxLag (Å²/ps² × sites). */
  vacf: Float64Array;
  /** The same over each segment k (samples [kL, (k+1)L)), m = 0 … the plan's segment lag; empty when not summed. */
  segments: Float64Array[];
  /** Sites whose stored position is the same in every frame (analyses/msd.ts stillSites). */
  still?: number;
}

/** Segments whose curves are summed with the full run: count M, samples per segment L, largest lag. */
export interface VacfSegmentSpec {
  segments: number;
  samples: number;
  lag: number;
}

/**
 * Σ_sites Σ_comps ⟨v_c(t) v_c(t+m)⟩_t of a group over velocity samples [from, from+count),
 * m = 0 … maxLag, and with `seg` the same sum over each of its M segments [from + kL, from + (k+1)L)
 * up to its lag, from one gather of each block of sites (the segment series are views of the
 * gathered full-run series, so the values are those of a separate gather). All time origins by
 * FFT (src/correlate.ts `sumOfAutocorrelations`).
 */
export function groupVacfSums(
  view: StoreView,
  sites: Int32Array,
  comps: readonly number[],
  from: number,
  count: number,
  maxLag: number,
  dt: number,
  seg?: VacfSegmentSpec,
): VacfGroupSums {
  const result = new Float64Array(maxLag + 1);
  const segSpec = seg && seg.segments > 0 && seg.samples >= 2 ? seg : null;
  const segLag = segSpec ? Math.min(segSpec.lag, segSpec.samples - 1) : 0;
  const segments = segSpec ? Array.from({ length: segSpec.segments }, () => new Float64Array(segLag + 1)) : [];
  const nc = comps.length;
  const B = Math.max(1, Math.min(64, Math.floor(16e6 / (8 * nc * Math.max(1, count)))));
  const buffers = Array.from({ length: Math.min(B, sites.length) * nc }, () => new Float64Array(count));
  for (let i0 = 0; i0 < sites.length; i0 += B) {
    const block = sites.subarray(i0, Math.min(sites.length, i0 + B));
    const bufs = buffers.slice(0, block.length * nc);
    gatherVelocities(view, block, comps, from, count, dt, bufs);
    const c = sumOfAutocorrelations(bufs, { maxLag });
    for (let m = 0; m <= maxLag; m++) result[m] += c[m];
    if (segSpec) {
      const L = segSpec.samples;
      segments.forEach((acc, k) => {
        const part = sumOfAutocorrelations(
          bufs.map((x) => x.subarray(k * L, (k + 1) * L)),
          { maxLag: segLag },
        );
        for (let m = 0; m <= segLag; m++) acc[m] += part[m];
      });
    }
  }
  return { sites: sites.length, vacf: result, segments, still: stillSites(view, sites) };
}

/** Add the sums of b (other sites of the same group, same lags) into a; returns a. */
export function addVacfSums(a: VacfGroupSums, b: VacfGroupSums): VacfGroupSums {
  const add = (x: Float64Array, y: Float64Array) => {
    for (let i = 0; i < x.length; i++) x[i] += y[i];
  };
  a.sites += b.sites;
  add(a.vacf, b.vacf);
  a.segments.forEach((x, k) => add(x, b.segments[k]));
  a.still = (a.still ?? 0) + (b.still ?? 0);
  return a;
}

/**
 * Hann-tapered cosine transform of a correlation function sampled every dt (ps):
 * S(ν_k) = Δt [c₀w₀ + 2 Σ_{j≥1} c_j w_j cos(2π j k/N)], w_j = cos²(π j/(2M)) (M = c.length),
 * ν_k = k/(NΔt) THz, k = 0 … N/2, N = the power of two ≥ 2M (zero padding interpolates).
 * This is the trapezoid rule for 2∫₀^{t_max} c(t) w(t) cos(2πνt) dt (w vanishes at t_max = MΔt).
 * Window: Harris, Proc. IEEE 66, 51 (1978). Units: those of c times ps.
 */
export function cosineSpectrum(c: ArrayLike<number>, dt: number): { frequencyTHz: Float64Array; intensity: Float64Array } {
  const M = c.length;
  const N = nextPowerOfTwo(2 * M);
  const a = new Float64Array(N);
  for (let j = 0; j < M; j++) {
    const w = Math.cos((Math.PI * j) / (2 * M)) ** 2;
    a[j] = c[j] * w;
    if (j > 0) a[N - j] = a[j];
  }
  const fft = new FFT(N);
  const out = new Float64Array(2 * N);
  fft.realTransform(out, a);
  const K = N / 2 + 1;
  const frequencyTHz = new Float64Array(K);
  const intensity = new Float64Array(K);
  for (let k = 0; k < K; k++) {
    frequencyTHz[k] = k / (N * dt);
    intensity[k] = dt * out[2 * k];
  }
  return { frequencyTHz, intensity };
}

/** Options of the VACF analysis. */
export interface VacfOptions {
  plane?: string;
  segments?: number;
  /** Plateau rule (src/plateau.ts). */
  plateauTolerance?: number;
  plateauSpan?: number;
  maxFraction?: number;
}

/** VACF result of one group. */
export interface VacfGroupResult {
  label: string;
  count: number;
  /** Lags, ps. */
  time: Float64Array;
  /** C(t), Å²/ps². */
  vacf: Float64Array;
  /** C(t)/C(0). */
  normalized: Float64Array;
  /** D(t) = (1/d)∫C, m²/s. */
  runningIntegral: Float64Array;
  plateau: { from: number; to: number; found: boolean };
  /** D with its plateau window (ps), verdict ('ok' when converged, else 'not-converged') and the coded notes. */
  diffusion: Estimate;
  segmentDiffusion: number[];
  /** Segments the uncertainty rests on (0: none), and the factor applied to their standard error. */
  segments: number;
  uncertaintyFactor: number;
  /** False when the VACF falls below half of C(0) within one frame interval (src/plateau.ts). */
  samplingOk: boolean;
  /** The drift check after the plateau (src/plateau.ts plateauDriftCheck): later lags in ps, change and threshold in m²/s. */
  plateauDrift: { from: number; to: number; change: number; error: number | null; threshold: number; drifting: boolean } | null;
  converged: boolean;
  notes: string[];
  /** The notes, coded (src/estimate.ts), one for one: each note is its reason's `convergenceNote`. */
  reasons: Reason[];
  spectrum: { frequencyTHz: Float64Array; wavenumber: Float64Array; intensity: Float64Array; unit: string };
}

/** VACF result. */
export interface VacfResult {
  groups: VacfGroupResult[];
  velocitySource: VelocitySource;
  dimensions: number;
  frames: number;
  frameInterval: number;
  driftRemoved: boolean;
  driftNote: string;
  /** Bytes of the largest store held at once, reads of the file, and why the sites were batched (or null). */
  bytesHeld: number;
  reads: number;
  memoryNote: string | null;
  rules: { plateau: string; uncertainty: string; spectrum: string };
}

/** Plateau, value and uncertainty of a running integral (`plateauWithSegments`). */
export interface SegmentedPlateau {
  window: LagWindow;
  found: boolean;
  value: number;
  segmentValues: number[];
  /** Standard error over the segments (× the Student-t factor when M < 5), or null. */
  error: number | null;
  segments: number;
  uncertaintyFactor: number;
  /** The check that the integral stays on the plateau over later lags (src/plateau.ts). */
  drift: PlateauDrift;
  converged: boolean;
  notes: string[];
  /** The notes, coded (src/estimate.ts), one for one: each note is its reason's `convergenceNote`. */
  reasons: Reason[];
}

/**
 * Segments for the plateau of a running integral of `lags` lags (0 … lags−1) computed from
 * `samples` samples: the requested count M (default DEFAULT_SEGMENTS), lowered towards
 * MIN_SEGMENTS while a segment of L = ⌊samples/M⌋ samples holds fewer than 3·MIN_PLATEAU_POINTS
 * lags under the f_max rule; `last` = min(lags − 1, ⌊f_max (L − 1)⌋) is the largest lag a segment
 * holds (the plateau search and every segment curve stay within it). Segments 0 when no count
 * fits (then `last` = lags − 1). Depends on the lengths only, never on the data, so a batched run
 * can sum the segment curves before the plateau is known. Rule: common practice, no source.
 */
export function plateauSegments(
  lags: number,
  samples: number,
  opts: { segments?: number; maxFraction?: number },
): { segments: number; last: number; notes: string[]; reasons: Reason[] } {
  const notes: string[] = [];
  const reasons: Reason[] = [];
  const want = opts.segments ?? DEFAULT_SEGMENTS;
  const f = opts.maxFraction ?? DEFAULT_MAX_FRACTION;
  for (let m = want; m >= Math.min(want, MIN_SEGMENTS); m--) {
    const cap = Math.min(lags - 1, maxLagIndex(Math.floor(samples / m), f));
    if (cap >= 3 * MIN_PLATEAU_POINTS) {
      if (m !== want) noteReason(notes, reasons, reason('segments.fewer', `${m} segments instead of ${want}: segments of ${want} would be too short`), '', true);
      return { segments: m, last: cap, notes, reasons };
    }
  }
  noteReason(notes, reasons, reason('segments.too-few', `the run is too short for ${Math.min(want, MIN_SEGMENTS)} independent segments; no uncertainty`, 'not-converged'), '', true);
  return { segments: 0, last: lags - 1, notes, reasons };
}

/**
 * Plateau and segment uncertainty of a running integral. The run of `samples` samples is cut
 * into M segments (default 5, reduced to no fewer than MIN_SEGMENTS when a segment would be too
 * short); the plateau is searched (src/plateau.ts `plateauWindow`) among the lags a segment can hold
 * under the f_max rule, so that every segment can be evaluated over the same window. The value is
 * the mean of the full-run integral over the window, its uncertainty the standard error of the
 * segment means (Frenkel & Smit, 2nd ed., §4.4.1), times t_{0.8413, M−1} when M < 5
 * (`segmentUncertaintyFactor`). Then the integral over the later lags, up to 3× the plateau end
 * inside a segment, must stay on the plateau within the segment uncertainty of the change
 * (`plateauDriftCheck`); otherwise not converged ("running integral keeps drifting").
 * `segmentIntegral(start, count, maxLag)` gives a segment's running integral.
 */
export function plateauWithSegments(
  integral: Float64Array,
  samples: number,
  opts: { plateauTolerance?: number; plateauSpan?: number; segments?: number; maxFraction?: number; timeStep?: number },
  segmentIntegral: (start: number, count: number, maxLag: number) => Float64Array,
): SegmentedPlateau {
  const tol = opts.plateauTolerance ?? DEFAULT_PLATEAU_TOLERANCE;
  const sp = plateauSegments(integral.length, samples, opts);
  const notes = [...sp.notes];
  const reasons = [...sp.reasons];
  const M = sp.segments;
  const last = sp.last;
  const w = plateauWindow(integral, { tolerance: tol, spanFraction: opts.plateauSpan, last });
  if (!w.found && w.reason) noteReason(notes, reasons, reason(w.reasonCode!, w.reason, 'not-converged'), '', true);
  const window = { from: w.from, to: w.to };
  const value = windowMean(integral, window);
  const segmentValues: number[] = [];
  const segmentCurves: Float64Array[] = [];
  let error: number | null = null;
  let factor = 1;
  if (M > 0) {
    const L = Math.floor(samples / M);
    const reach = Math.min(last, Math.max(window.to, DRIFT_CHECK_FACTOR * window.to));
    for (let k = 0; k < M; k++) {
      const c = segmentIntegral(k * L, L, reach);
      segmentCurves.push(c);
      segmentValues.push(windowMean(c, window));
    }
    factor = segmentUncertaintyFactor(M);
    error = blockStatistics(segmentValues).standardError * factor;
    const fn = segmentFactorNote(M);
    if (fn) noteReason(notes, reasons, reason('segments.student-t', fn), '', true);
  }
  const drift = plateauDriftCheck(integral, segmentCurves, window, last, tol);
  // A plateau that was not found is already flagged; the drift check speaks for found ones.
  if (w.found && drift.reason) noteReason(notes, reasons, reason(drift.reasonCode!, drift.reason, 'not-converged'), '', true);
  // Beyond the lags a segment holds there is no segment uncertainty; a large departure of the
  // full-run integral there is reported (not part of the verdict).
  if (w.found && error !== null && integral.length - 1 > last) {
    let kMax = last + 1;
    for (let k = last + 1; k < integral.length; k++) if (Math.abs(integral[k] - value) > Math.abs(integral[kMax] - value)) kMax = k;
    const dev = integral[kMax] - value;
    if (Math.abs(dev) > Math.max(3 * error, tol * Math.abs(value))) {
      const at = opts.timeStep !== undefined ? `${Number((kMax * opts.timeStep).toPrecision(4))} ps` : `lag ${kMax}`;
      noteReason(notes, reasons, reason(
        'plateau.departs-beyond-segments',
        `beyond the lags a segment holds, the full-run running integral departs from the plateau by up to ${((100 * dev) / Math.abs(value)).toFixed(0)} % ` +
          `(at ${at}; ${(Math.abs(dev) / error).toFixed(1)}× the uncertainty); no segment uncertainty exists there, so this is not part of the verdict — inspect the curve`,
      ), '', true);
    }
  }
  const converged = w.found && M > 0 && drift.checked && !drift.drifting;
  return { window, found: w.found, value, segmentValues, error, segments: M, uncertaintyFactor: factor, drift, converged, notes, reasons };
}

/** Lags and segments of a VACF analysis (shared by the one-read and the batched paths). */
export interface VacfPlan {
  /** Velocity samples Tv (T from the file, T − 2 from central differences). */
  samples: number;
  /** Largest lag of the full-run curve, ⌊f_max (Tv − 1)⌋. */
  maxLag: number;
  /** Segments M of the plateau uncertainty (0: none), samples per segment L and the largest lag a segment curve is needed for. */
  segments: number;
  segmentSamples: number;
  segmentLag: number;
}

/**
 * The lag ranges for Tv velocity samples: the full-run curve up to ⌊f_max (Tv − 1)⌋ and the M
 * segment curves up to the largest lag a segment holds (`plateauSegments`), which bounds every
 * lag the plateau and drift checks of `plateauWithSegments` ask a segment for. Throws an
 * AnalysisError below 4·MIN_PLATEAU_POINTS samples.
 */
export function vacfPlan(samples: number, opts: VacfOptions = {}): VacfPlan {
  if (samples < 4 * MIN_PLATEAU_POINTS) throw new AnalysisError(`only ${samples} velocity samples: the VACF needs at least ${4 * MIN_PLATEAU_POINTS}`);
  const maxLag = maxLagIndex(samples, opts.maxFraction ?? DEFAULT_MAX_FRACTION);
  const sp = plateauSegments(maxLag + 1, samples, opts);
  return { samples, maxLag, segments: sp.segments, segmentSamples: sp.segments > 0 ? Math.floor(samples / sp.segments) : 0, segmentLag: sp.last };
}

/**
 * Site sums of every group's VACF curves (full run and the plan's segments) over the sites a
 * store holds. `groupSites` gives, per group of the layout, the indices of its sites in the
 * store's site map (default: the layout's own).
 */
export function vacfSums(
  store: StorePartial,
  layout: SiteLayout,
  plan: VacfPlan,
  comps: readonly number[],
  dt: number,
  groupSites?: Int32Array[],
): VacfGroupSums[] {
  const view = new StoreView(store);
  const seg = { segments: plan.segments, samples: plan.segmentSamples, lag: plan.segmentLag };
  return layout.groups.map((g, i) => groupVacfSums(view, groupSites ? groupSites[i] : g.sites, comps, 0, plan.samples, plan.maxLag, dt, seg));
}

/** The VACF analysis on a finished store (see the module comment). */
export function analyseVacf(store: StorePartial, layout: SiteLayout, ctx: PassContext, opts: VacfOptions = {}): VacfResult {
  const dt = requireFrameInterval(ctx);
  const comps = planeComponents(opts.plane);
  const plan = vacfPlan(velocityFrames(store), opts);
  const view = new StoreView(store);
  // The full-run sums now; segment curves on demand from the stored coordinates (only the lags
  // the plateau check needs).
  const sums = layout.groups.map((g) => groupVacfSums(view, g.sites, comps, 0, plan.samples, plan.maxLag, dt));
  return finishVacf(sums, plan, store, layout, ctx, opts, { reads: 1, bytesHeld: storeBytes(store) }, (gi, start, count, lag) =>
    groupVacf(view, layout.groups[gi].sites, comps, start, count, lag, dt),
  );
}

/**
 * The VACF result from site sums (`vacfSums`, possibly added over batches of sites with
 * `addVacfSums`): per group C(t) = sum/N, the running integral D(t) = (1/d)∫C, its plateau and
 * segment uncertainty (`plateauWithSegments`), the sampling check and the spectrum (module
 * comment). `info` is a store of the run (its velocity source, drift and cell records; its
 * coordinates are not used). Segment curves come from the sums; `recompute`, when the
 * coordinates are still held, serves segments that were not summed.
 */
export function finishVacf(
  sums: VacfGroupSums[],
  plan: VacfPlan,
  info: StorePartial,
  layout: SiteLayout,
  ctx: PassContext,
  opts: VacfOptions,
  read: ReadInfo,
  recompute?: (group: number, start: number, count: number, maxLag: number) => Float64Array,
): VacfResult {
  const dt = requireFrameInterval(ctx);
  const comps = planeComponents(opts.plane);
  const dims = comps.length;
  const source = velocitySourceOf(info);
  const Tv = plan.samples;
  if (source === 'central differences') {
    ctx.warnings.push(
      (info.velocitiesMissing ? 'some frames carry no velocities: ' : 'the file carries no velocities: ') +
        `velocities are central differences of positions ${dt} ps apart, at interior frames only; ` +
        'motion faster than the frame interval is smoothed away (C(0) and the high-frequency spectrum are underestimated)',
    );
  }
  const toD = A2_PER_PS / dims;
  const groups: VacfGroupResult[] = [];
  layout.groups.forEach((g, gi) => {
    const sum = sums[gi];
    const n = sum.sites;
    const c = sum.vacf.map((x) => x / n);
    const running = cumulativeTrapezoid(c, dt).map((x) => x * toD);
    const pw = plateauWithSegments(running, Tv, { ...opts, timeStep: dt }, (start, count, lag) => {
      let seg: Float64Array;
      const summed = sum.segments.length > 0 && count === plan.segmentSamples && start % count === 0 && lag <= plan.segmentLag;
      if (summed) seg = sum.segments[start / count].slice(0, lag + 1).map((x) => x / n);
      else if (recompute) seg = recompute(gi, start, count, lag);
      else throw new AnalysisError(`no VACF segment curves of ${count} samples were summed`);
      return cumulativeTrapezoid(seg, dt).map((x) => x * toD);
    });
    const spec = cosineSpectrum(c, dt);
    // Sites that never move: D = 0 exactly (what the VACF shows of them is the drift removed).
    const frozen = sum.still !== undefined && sum.still === n && n > 0;
    const notes = frozen ? [] : [...pw.notes];
    const reasons = frozen ? [] : [...pw.reasons];
    if (frozen) noteReason(notes, reasons, reason('vacf.does-not-move', 'does not move: every site keeps the same position in every frame (frozen atoms?): D = 0 exactly, and no ratio is built on it', 'not-determined'));
    else if (!(c[0] > 0)) noteReason(notes, reasons, reason('vacf.no-motion', 'C(0) is not positive (no motion)', 'not-converged'), '', true);
    const sampling = correlationSamplingProblem(c, dt, 'the VACF');
    if (sampling) {
      noteReason(notes, reasons, reason('vacf.coarse-sampling', `${sampling}; the MSD value does not depend on this sampling`, 'not-converged'), '', true);
    }
    const converged = pw.converged && c[0] > 0 && sampling === null;
    groups.push({
      label: g.label,
      count: g.sites.length,
      time: Float64Array.from(c, (_, k) => k * dt),
      vacf: c,
      normalized: c.map((x) => x / c[0]),
      runningIntegral: running,
      plateau: { from: pw.window.from * dt, to: pw.window.to * dt, found: pw.found },
      diffusion: estimate(frozen ? 0 : pw.value, frozen ? 0 : pw.error, 'm^2/s', {
        window: { from: pw.window.from * dt, to: pw.window.to * dt, unit: 'ps' },
        verdict: converged ? 'ok' : 'not-converged',
        reasons,
      }),
      segmentDiffusion: pw.segmentValues,
      segments: pw.segments,
      uncertaintyFactor: pw.uncertaintyFactor,
      samplingOk: sampling === null,
      plateauDrift: pw.drift.checked
        ? { from: pw.drift.from * dt, to: pw.drift.to * dt, change: pw.drift.drift, error: pw.drift.error, threshold: pw.drift.threshold, drifting: pw.drift.drifting }
        : null,
      converged,
      notes,
      reasons,
      spectrum: {
        frequencyTHz: spec.frequencyTHz,
        wavenumber: spec.frequencyTHz.map((f) => f * WAVENUMBER_PER_THZ),
        intensity: spec.intensity,
        unit: 'A^2/ps',
      },
    });
  });
  for (const g of groups) warnDiffusionRange(ctx, g.label, g.diffusion.value, 'VACF');
  return {
    groups,
    velocitySource: source,
    dimensions: dims,
    frames: info.frames,
    frameInterval: dt,
    driftRemoved: info.com !== null,
    driftNote: driftDescription(info, ctx.topology),
    bytesHeld: read.bytesHeld,
    reads: read.reads,
    memoryNote: read.note ?? null,
    rules: {
      plateau:
        `earliest window of ${Math.round(100 * (opts.plateauSpan ?? DEFAULT_PLATEAU_SPAN))}% of the lags a segment holds (at least ${MIN_PLATEAU_POINTS}; ` +
        `searched up to half a segment so that every segment covers it) ` +
        `over which the running integral changes by at most ±${100 * (opts.plateauTolerance ?? DEFAULT_PLATEAU_TOLERANCE)}% of its value at the window start; D = its mean there; ` +
        `the integral over the later lags (up to ${DRIFT_CHECK_FACTOR}× the plateau end, inside a segment) must stay on it within the segment uncertainty ` +
        `(two-sided 95 % Student-t test) or by the tolerance, else "running integral keeps drifting"; ` +
        `C(Δt)/C(0) must be at least 0.5 for the trapezoid rule (for an exponential the integral is then at most 4 % too large)`,
      uncertainty: uncertaintyRuleText(opts, groups.map((g) => ({ label: g.label, segments: g.segments }))),
      spectrum: 'S(ν) = 2∫C(t)w(t)cos(2πνt)dt with the Hann taper w = cos²(πt/(2 t_max)); S(0)/(2d) is the tapered D',
    },
  };
}

/** Options of the VACF pass. */
export interface VacfPassOptions extends VacfOptions, SpeciesLayoutOptions {
  keepDrift?: boolean;
}

/** The VACF Pass: stores positions and velocities, finishes with `analyseVacf`. */
export function vacfPass(opts: VacfPassOptions = {}): Pass<StorePartial, VacfResult> {
  const layout = speciesSpec(opts);
  const store = storePass({ layout, removeDrift: !opts.keepDrift, keepVelocities: true });
  return {
    name: 'vacf',
    needsEvenSpacing: true,
    create: store.create,
    merge: store.merge,
    finish: (p, ctx) => analyseVacf(p, resolveLayout(layout, ctx.topology), ctx, opts),
  };
}
