/**
 * Mean-squared displacement (MSD) and self-diffusion, finished from the coordinate store
 * (src/store/store.ts) that it shares with the velocity autocorrelation and conductivity
 * analyses; sites and groups come from src/store/sites.ts and src/store/layout.ts.
 *
 * The MSD
 * -------
 * For one coordinate x(t), t = 0 … T−1, over all time origins,
 *   MSD(m) = 1/(T−m) Σ_{t=0}^{T−m−1} [x(t+m) − x(t)]² = S1(m) − 2 S2(m),
 *   S1(m) = 1/(T−m) Σ_{t=0}^{T−m−1} [x(t)² + x(t+m)²]  (a running sum),
 *   S2(m) = 1/(T−m) Σ_{t=0}^{T−m−1} x(t) x(t+m)        (autocorrelation by FFT, src/correlate.ts),
 * the Wiener–Khinchin route of Kneller, Keiner, Kneller & Schiller, Comput. Phys. Commun. 91,
 * 191 (1995) (also Calandrini et al., École thématique SFN 12, 201 (2011)); the series
 * numerics are in src/numerics/mean-squared-displacement.ts.
 * D = slope / (2d) over the fit window of src/fit.ts (d = 3, or 2 with a plane).
 * The non-Gaussian parameter α2 (Rahman 1964) is computed from its definition over all time
 * origins, at about five log-spaced lags per decade, on the same gathered series (the exact FFT
 * form needs a dozen correlations of powers of the coordinates and loses precision).
 * One gather of each block of sites serves the full-run MSD, the segment MSDs and α2.
 * Every curve is a sum over sites (`GroupSums`), so a run whose sites do not fit in memory can
 * store the sites in batches over several reads of the file (`StoreOptions.sites`,
 * src/engine/batches.ts) and add the batches' sums (`addGroupSums`, `finishMsd`): the result
 * equals one read's to round-off.
 */
import type { Pass, PassContext, Quantity, Topology } from '../src/types.js';
import { quantity } from '../src/types.js';
import { estimate, noteReason, reason, type Estimate, type Reason } from '../src/estimate.js';
import { AnalysisError, UsageError } from '../src/errors.js';
import { A2_PER_PS } from '../src/units.js';
import { checkMassesUsed } from '../src/masses.js';
import { warnDiffusionRange } from '../src/checks.js';
import { yehHummerCorrection, YEH_HUMMER_XI } from '../src/transport.js';
import {
  maxLagIndex,
  DEFAULT_MAX_FRACTION,
  DEFAULT_SEGMENTS,
  MIN_SEGMENTS,
  MIN_WINDOW_POINTS,
  fitSlopeWithSegments,
  windowRuleText,
  uncertaintyRuleText,
} from '../src/fit.js';
import { msdSumFft } from '../src/numerics/mean-squared-displacement.js';
import { addNonGaussianSums, logSpacedLags, nonGaussianFromMoments, NON_GAUSSIAN_LAGS_PER_DECADE } from '../src/numerics/non-gaussian.js';
import { resolveLayout, speciesSpec } from '../src/store/layout.js';
import type { SiteLayout, SpeciesLayoutOptions } from '../src/store/sites.js';
import { driftDescription, storeBytes, storePass, unwrapWarning, type StorePartial } from '../src/store/store.js';
import { gatherSeries, StoreView } from '../src/store/view.js';

// ---------------------------------------------------------------------------------------------
// MSD of the sites of a store
// ---------------------------------------------------------------------------------------------

/** Sites per block so that a block's series take at most ~16 MB. */
function blockSize(frames: number, comps: number): number {
  return Math.max(1, Math.min(64, Math.floor(16e6 / (8 * comps * Math.max(1, frames)))));
}

/**
 * Per-component MSD of a group of sites over frames [from, from+count), averaged over the sites:
 * result[c][m] for c = x, y, z and m = 0 … maxLag (Å²), all time origins by FFT.
 */
export function groupMsdComponents(
  view: StoreView,
  sites: Int32Array,
  from: number,
  count: number,
  maxLag: number,
  removeDrift: boolean,
): Float64Array[] {
  const comps = [0, 1, 2];
  const drift = removeDrift ? view.store.com : null;
  const result = comps.map(() => new Float64Array(maxLag + 1));
  const B = blockSize(count, 3);
  const buffers = Array.from({ length: Math.min(B, sites.length) * 3 }, () => new Float64Array(count));
  for (let i0 = 0; i0 < sites.length; i0 += B) {
    const block = sites.subarray(i0, Math.min(sites.length, i0 + B));
    const bufs = buffers.slice(0, block.length * 3);
    gatherSeries(view, block, comps, from, count, drift, bufs);
    for (let c = 0; c < 3; c++) {
      const series = bufs.filter((_, j) => j % 3 === c);
      const part = msdSumFft(series, maxLag);
      for (let m = 0; m <= maxLag; m++) result[c][m] += part[m];
    }
  }
  for (const r of result) for (let m = 0; m <= maxLag; m++) r[m] /= sites.length;
  return result;
}

/** Curves of one group from a single gather of its series (see `groupCurves`). */
export interface GroupCurves {
  /** Per-component MSD, lags 0 … maxLag, averaged over the sites (Å²). */
  xyz: Float64Array[];
  /** Per segment, per-component MSD for lags 0 … segmentMaxLag (default all lags, L−1). */
  segments: Float64Array[][];
  /** Frames per segment L = ⌊T/M⌋ (0 without segments). */
  segmentFrames: number;
  /** Non-Gaussian parameter at the requested lags (empty when none asked). */
  nonGaussian: { lag: number; msd: number; value: number }[];
}

/** Segment curves for one segment count M: per segment, per component, lags 0 … lag. */
export interface SegmentSums {
  segments: number;
  /** Frames per segment L = ⌊T/M⌋. */
  frames: number;
  lag: number;
  curves: Float64Array[][];
}

/**
 * Site sums of one group's MSD curves (not yet divided by the number of sites), so that sums
 * from batches of sites add up to those of the whole group (`addGroupSums`).
 */
export interface GroupSums {
  sites: number;
  /** Σ_sites per-component MSD, lags 0 … maxLag. */
  xyz: Float64Array[];
  /** Segment sums for each segment count computed. */
  segments: SegmentSums[];
  /** Σ |Δr|² and Σ |Δr|⁴ over sites and origins at the α2 lags. */
  s2: Float64Array;
  s4: Float64Array;
  /** Sites whose stored position is the same in every frame (before any drift is removed). */
  still?: number;
}

/** Add the sums of b (other sites, same curves) into a; returns a. */
export function addGroupSums(a: GroupSums, b: GroupSums): GroupSums {
  const add = (x: Float64Array, y: Float64Array) => {
    for (let i = 0; i < x.length; i++) x[i] += y[i];
  };
  a.sites += b.sites;
  a.xyz.forEach((x, c) => add(x, b.xyz[c]));
  a.segments.forEach((sa, i) => sa.curves.forEach((seg, k) => seg.forEach((x, c) => add(x, b.segments[i].curves[k][c]))));
  add(a.s2, b.s2);
  add(a.s4, b.s4);
  a.still = (a.still ?? 0) + (b.still ?? 0);
  return a;
}

/**
 * Everything the MSD analysis needs from one group in one gather per block of sites (so each
 * stored coordinate is read once), as sums over the sites: the full-run per-component MSD up to
 * maxLag, for each requested segment count M and its lag the MSD of each of the M equal
 * segments [kL, (k+1)L), and the α2 moment sums at `ngLags` (direct sums over all origins on the
 * gathered, cache-resident series). Order matters: α2 sums, then the full run (centring each
 * series once), then the segments (each centred on its own mean; the MSD is shift invariant,
 * Kneller et al. 1995).
 */
export function groupCurveSums(
  view: StoreView,
  sites: Int32Array,
  maxLag: number,
  removeDrift: boolean,
  opts: { segments: ReadonlyArray<{ segments: number; lag: number }>; ngLags: readonly number[]; ngComps: readonly number[] },
): GroupSums {
  const T = view.frames;
  const comps = [0, 1, 2];
  const drift = removeDrift ? view.store.com : null;
  const xyz = comps.map(() => new Float64Array(maxLag + 1));
  const segs: SegmentSums[] = opts.segments
    .filter((p) => p.segments > 0 && Math.floor(T / p.segments) >= 2)
    .map((p) => {
      const L = Math.floor(T / p.segments);
      const lag = Math.max(1, Math.min(L - 1, p.lag));
      return { segments: p.segments, frames: L, lag, curves: Array.from({ length: p.segments }, () => comps.map(() => new Float64Array(lag + 1))) };
    });
  const nl = opts.ngLags.length;
  const s2 = new Float64Array(nl);
  const s4 = new Float64Array(nl);
  const B = blockSize(T, 3);
  const buffers = Array.from({ length: Math.min(B, sites.length) * 3 }, () => new Float64Array(T));
  for (let i0 = 0; i0 < sites.length; i0 += B) {
    const block = sites.subarray(i0, Math.min(sites.length, i0 + B));
    const bufs = buffers.slice(0, block.length * 3);
    gatherSeries(view, block, comps, 0, T, drift, bufs);
    if (nl > 0) {
      for (let b = 0; b < block.length; b++) {
        addNonGaussianSums(opts.ngComps.map((c) => bufs[3 * b + c]), opts.ngLags, s2, s4);
      }
    }
    for (let c = 0; c < 3; c++) {
      const series = bufs.filter((_, j) => j % 3 === c);
      const part = msdSumFft(series, maxLag);
      for (let m = 0; m <= maxLag; m++) xyz[c][m] += part[m];
      for (const sg of segs) {
        const L = sg.frames;
        for (let k = 0; k < sg.segments; k++) {
          // Copies: msdSumFft centres its series in place, which must not shift the full series
          // seen by the next segment length.
          const seg = msdSumFft(series.map((x) => x.slice(k * L, (k + 1) * L)), sg.lag);
          const acc = sg.curves[k][c];
          for (let m = 0; m <= sg.lag; m++) acc[m] += seg[m];
        }
      }
    }
  }
  return { sites: sites.length, xyz, segments: segs, s2, s4, still: stillSites(view, sites) };
}

/**
 * How many of `sites` never move: their stored (unwrapped, drift not removed) position is the
 * same, bit for bit, in every frame. A moving site is usually found at the second frame, so the
 * cost is one comparison per site unless sites are frozen.
 */
export function stillSites(view: StoreView, sites: ArrayLike<number>): number {
  const T = view.frames;
  if (T === 0) return 0;
  const [c0, o0] = view.at(0);
  let still = 0;
  for (let i = 0; i < sites.length; i++) {
    const b0 = o0 + 3 * sites[i]!;
    const x = c0[b0]!, y = c0[b0 + 1]!, z = c0[b0 + 2]!;
    let moved = false;
    for (let t = 1; t < T && !moved; t++) {
      const [c, o] = view.at(t);
      const b = o + 3 * sites[i]!;
      moved = c[b] !== x || c[b + 1] !== y || c[b + 2] !== z;
    }
    if (!moved) still++;
  }
  return still;
}

/** The reason of a group whose sites never move (code 'msd.does-not-move'). */
export const DOES_NOT_MOVE = 'msd.does-not-move';

/**
 * Everything the MSD analysis needs from one group in one gather (see `groupCurveSums`),
 * averaged over the sites: the full-run per-component MSD up to maxLag, the MSD of each of M
 * equal segments up to segmentMaxLag (default all lags of a segment), and α2 at `ngLags`.
 */
export function groupCurves(
  view: StoreView,
  sites: Int32Array,
  maxLag: number,
  removeDrift: boolean,
  opts: { segments: number; ngLags: readonly number[]; ngComps: readonly number[]; segmentMaxLag?: number },
): GroupCurves {
  const T = view.frames;
  const L = opts.segments > 0 ? Math.floor(T / opts.segments) : 0;
  const sums = groupCurveSums(view, sites, maxLag, removeDrift, {
    segments: [{ segments: opts.segments, lag: opts.segmentMaxLag ?? L - 1 }],
    ngLags: opts.ngLags,
    ngComps: opts.ngComps,
  });
  return curvesFromSums(sums, T, opts.ngLags, opts.ngComps.length);
}

/** Site averages of group sums (the `GroupCurves` of the first segment count). */
function curvesFromSums(sums: GroupSums, T: number, ngLags: readonly number[], dims: number): GroupCurves {
  const n = sums.sites;
  const xyz = sums.xyz.map((r) => r.map((v) => v / n));
  const first = sums.segments[0];
  const segments = first ? first.curves.map((seg) => seg.map((r) => r.map((v) => v / n))) : [];
  const nonGaussian = ngLags.map((lag, i) => {
    const pairs = (T - lag) * n;
    const msd = sums.s2[i] / pairs;
    return { lag, msd, value: nonGaussianFromMoments(msd, sums.s4[i] / pairs, dims) };
  });
  return { xyz, segments, segmentFrames: first ? first.frames : 0, nonGaussian };
}

// ---------------------------------------------------------------------------------------------
// Diffusion from the MSD
// ---------------------------------------------------------------------------------------------

/** Components of a plane option: 'xy' → [0, 1], etc.; undefined → [0, 1, 2]. */
export function planeComponents(plane: string | undefined): number[] {
  if (plane === undefined) return [0, 1, 2];
  const map: Record<string, number[]> = { xy: [0, 1], xz: [0, 2], yz: [1, 2] };
  const c = map[plane];
  if (!c) throw new UsageError(`--plane: expected xy, xz or yz, got "${plane}"`);
  return c;
}

/**
 * Self-diffusion coefficient from an MSD slope in d dimensions: D = slope / (2d) (Einstein,
 * Ann. Phys. 17, 549 (1905)), with the slope in Å²/ps and D returned in m²/s (1 Å²/ps = 1e-8 m²/s).
 */
export function diffusionFromSlope(slopeA2PerPs: number, dims: number): number {
  return (slopeA2PerPs / (2 * dims)) * A2_PER_PS;
}

/** Options of the MSD analysis. */
export interface MsdOptions {
  /** Plane for 2-D diffusion ('xy', 'xz', 'yz'); default 3-D. */
  plane?: string;
  /** User fit window in ps (both or neither). */
  fitFrom?: number;
  fitTo?: number;
  /** Window rule parameters (src/fit.ts). */
  tolerance?: number;
  maxFraction?: number;
  segments?: number;
  /** Yeh–Hummer correction inputs: viscosity (Pa s) and temperature (K). */
  viscosity?: number;
  temperature?: number;
  /** Compute the non-Gaussian parameter (default true). */
  nonGaussian?: boolean;
}

/** MSD result of one group. */
export interface MsdGroupResult {
  label: string;
  count: number;
  /** Lag times, ps. */
  time: Float64Array;
  /** Total MSD over the analysed dimensions, Å². */
  msd: Float64Array;
  /** MSD of x, y and z, Å². */
  msdXYZ: [Float64Array, Float64Array, Float64Array];
  /** Non-Gaussian parameter at log-spaced lags. */
  nonGaussian: { time: number; value: number }[];
  fit: { from: number; to: number; points: number; automatic: boolean };
  slope: Quantity;
  /** D with its fit window (ps), verdict ('ok' when converged, else 'not-converged') and the coded notes. */
  diffusion: Estimate;
  diffusionCorrected: Quantity | null;
  /** D in each independent segment, m²/s. */
  segmentDiffusion: number[];
  /** Segments the uncertainty rests on (0: none), and the factor applied to their standard error. */
  segments: number;
  uncertaintyFactor: number;
  converged: boolean;
  notes: string[];
  /** The notes, coded (src/estimate.ts), one for one: each note is its reason's `convergenceNote`. */
  reasons: Reason[];
}

/** MSD result of the whole analysis. */
export interface MsdResult {
  groups: MsdGroupResult[];
  dimensions: number;
  plane: string | null;
  frames: number;
  frameInterval: number;
  driftRemoved: boolean;
  driftNote: string;
  molecules: boolean;
  /** Bytes of coordinates held at once (the largest store when the sites were batched). */
  bytesHeld: number;
  /** Reads of the trajectory (more than 1 when --max-memory split the sites into batches). */
  reads: number;
  /** How the sites were batched over several reads (null for one read). */
  memoryNote: string | null;
  yehHummer: { viscosity: Quantity; temperature: Quantity; boxLength: Quantity; correction: Quantity; note: string } | null;
  rules: { window: string; uncertainty: string; nonGaussian: string };
}

/** Why the Yeh–Hummer correction is refused for in-plane (2-D) diffusion. */
export const YEH_HUMMER_PLANE_ERROR =
  'the Yeh–Hummer correction (--viscosity with --temperature) applies to 3-D diffusion in a cubic periodic cell; ' +
  'in-plane diffusion (--plane), e.g. in a slab, has a different finite-size correction: drop --plane or the correction inputs';

/** Frame interval of a context, or a usage error asking for it. */
export function requireFrameInterval(ctx: PassContext): number {
  if (ctx.frameInterval === null || !(ctx.frameInterval > 0)) {
    throw new UsageError(`${ctx.file ?? 'the file'} carries no frame times: give the time between frames with --frame-interval`);
  }
  return ctx.frameInterval;
}

/** Box length for the Yeh–Hummer correction: ⟨V⟩^(1/3), with a note when the cell is not cubic. */
export function yehHummerBoxLength(store: StorePartial): { length: number; note: string } {
  if (store.volumeFrames === 0) {
    throw new UsageError('the Yeh–Hummer correction needs the periodic cell and the file has none: give --box');
  }
  const v = store.volumeSum / store.volumeFrames;
  const L = Math.cbrt(v);
  const note = store.allCubic
    ? `cubic cell: L = <V>^(1/3) = ${L.toPrecision(6)} A`
    : `the cell is not cubic: L = <V>^(1/3) = ${L.toPrecision(6)} A is used, but the correction (ξ = ${YEH_HUMMER_XI}) is derived for cubic cells only`;
  return { length: L, note };
}

/** Lag ranges of an MSD analysis of T frames (shared by the one-read and the batched paths). */
export interface MsdPlan {
  frames: number;
  maxLag: number;
  ngLags: number[];
  /** Segment counts and lags whose sums are computed with the full-run curve. */
  segments: Array<{ segments: number; lag: number }>;
}

/**
 * The lag ranges for T frames: lags up to half the run (or the end of a user window), α2 lags,
 * and the segment curves: the requested count M with the lags a segment window may use; with
 * `allCounts`, also every smaller count down to MIN_SEGMENTS that the segment plan may fall back
 * to (src/fit.ts planSegments), so that no stored coordinates are needed afterwards.
 */
export function msdPlan(T: number, dt: number, opts: MsdOptions, allCounts = false): MsdPlan {
  if (T < 2 * MIN_WINDOW_POINTS) throw new AnalysisError(`only ${T} frames: the MSD needs at least ${2 * MIN_WINDOW_POINTS}`);
  const userTo = opts.fitTo !== undefined ? Math.floor(opts.fitTo / dt + 1e-9) : 0;
  const f = opts.maxFraction ?? DEFAULT_MAX_FRACTION;
  const maxLag = Math.min(T - 1, Math.max(maxLagIndex(T, f), userTo));
  const want = opts.segments ?? DEFAULT_SEGMENTS;
  // An automatic window never ends past ⌊f_max (L−1)⌋ of a segment (src/fit.ts planSegments); a
  // user window may use every lag of a segment.
  const userWindow = opts.fitFrom !== undefined && opts.fitTo !== undefined;
  const lagFor = (m: number) => (userWindow ? Math.floor(T / m) - 1 : maxLagIndex(Math.floor(T / m), f));
  const counts = allCounts ? Array.from({ length: Math.max(1, want - Math.min(want, MIN_SEGMENTS) + 1) }, (_, i) => want - i) : [want];
  return {
    frames: T,
    maxLag,
    ngLags: opts.nonGaussian ?? true ? logSpacedLags(maxLag) : [],
    segments: counts.map((m) => ({ segments: m, lag: lagFor(m) })),
  };
}

/**
 * Sums of every group's curves over the sites a store holds. `groupSites` gives, per group of
 * the layout, the indices of its sites in the store's site map (default: the layout's own).
 */
export function msdSums(store: StorePartial, layout: SiteLayout, plan: MsdPlan, comps: readonly number[], groupSites?: Int32Array[]): GroupSums[] {
  const view = new StoreView(store);
  return layout.groups.map((g, i) =>
    groupCurveSums(view, groupSites ? groupSites[i] : g.sites, plan.maxLag, store.com !== null, { segments: plan.segments, ngLags: plan.ngLags, ngComps: comps }),
  );
}

/** How the MSD sums were obtained: reads of the file and the largest store held. */
export interface ReadInfo {
  reads: number;
  bytesHeld: number;
  /** Why and how the sites were batched (several reads), or absent. */
  note?: string;
}

/**
 * The MSD analysis on a finished store: per group, MSD per component and total for all lags up
 * to half the run (or the end of a user window), the non-Gaussian parameter, the diffusion
 * coefficient with its segment uncertainty and fit window, and the Yeh–Hummer-corrected value
 * when viscosity and temperature are given.
 */
export function analyseMsd(store: StorePartial, layout: SiteLayout, ctx: PassContext, opts: MsdOptions = {}): MsdResult {
  const dt = requireFrameInterval(ctx);
  const plan = msdPlan(store.frames, dt, opts);
  const comps = planeComponents(opts.plane);
  const sums = msdSums(store, layout, plan, comps);
  const view = new StoreView(store);
  return finishMsd(sums, plan, store, layout, ctx, opts, { reads: 1, bytesHeld: storeBytes(store) }, (g, start, count, lag) =>
    groupMsdComponents(view, layout.groups[g].sites, start, count, lag, store.com !== null),
  );
}

/**
 * The MSD result from site sums (`msdSums`, possibly added over batches of sites): fits, segment
 * uncertainty, α2 and the Yeh–Hummer correction (see `analyseMsd`). `info` is a store of the run
 * (its cell, drift and unwrapping records; its coordinates are not used). Segment curves come
 * from the sums; `recompute`, when the coordinates are still held, serves a segment count that
 * was not summed (else that count gives no uncertainty, which `msdPlan(…, true)` prevents).
 */
export function finishMsd(
  sums: GroupSums[],
  plan: MsdPlan,
  info: StorePartial,
  layout: SiteLayout,
  ctx: PassContext,
  opts: MsdOptions,
  read: ReadInfo,
  recompute?: (group: number, start: number, count: number, maxLag: number) => Float64Array[],
): MsdResult {
  const dt = requireFrameInterval(ctx);
  const T = plan.frames;
  const maxLag = plan.maxLag;
  const comps = planeComponents(opts.plane);
  const dims = comps.length;
  const removeDrift = info.com !== null;
  let yh: MsdResult['yehHummer'] = null;
  let correction = 0;
  if (opts.viscosity !== undefined || opts.temperature !== undefined) {
    if (opts.viscosity === undefined || opts.temperature === undefined) {
      throw new UsageError('the Yeh–Hummer correction needs both --viscosity and --temperature');
    }
    if (opts.plane !== undefined) throw new UsageError(YEH_HUMMER_PLANE_ERROR);
    const box = yehHummerBoxLength(info);
    if (!info.allCubic) ctx.warnings.push(box.note);
    correction = yehHummerCorrection(opts.temperature, opts.viscosity, box.length);
    yh = {
      viscosity: quantity(opts.viscosity, null, 'Pa s'),
      temperature: quantity(opts.temperature, null, 'K'),
      boxLength: quantity(box.length, null, 'A'),
      correction: quantity(correction, null, 'm^2/s'),
      note: `${box.note}; D_inf = D_PBC + k_B T ξ/(6 π η L), ξ = ${YEH_HUMMER_XI} (Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004)); η and T taken as exact`,
    };
  }
  const groups: MsdGroupResult[] = [];
  layout.groups.forEach((g, gi) => {
    const sum = sums[gi];
    const curves = curvesFromSums(sum, T, plan.ngLags, comps.length);
    const xyz = curves.xyz;
    const total = new Float64Array(maxLag + 1);
    for (const c of comps) for (let m = 0; m <= maxLag; m++) total[m] += xyz[c][m];
    const sf = fitSlopeWithSegments(total, dt, T, opts, (start, count, lag) => {
      const s = new Float64Array(lag + 1);
      // Segments of a summed count come from the sums; others (fewer segments chosen by the
      // plan) are computed here from the coordinates when they are still held.
      const sg = sum.segments.find((x) => x.frames === count && start % count === 0 && lag <= x.lag);
      let seg: Float64Array[];
      if (sg) seg = sg.curves[start / count].map((r) => r.map((v) => v / sum.sites));
      else if (recompute) seg = recompute(gi, start, count, lag);
      else throw new AnalysisError(`no segment curves of ${count} frames were summed`);
      for (const c of comps) for (let m = 0; m <= lag; m++) s[m] += seg[c][m];
      return s;
    });
    // Sites that never move (frozen atoms): D = 0 exactly, said in so many words. Their fitted
    // slope is round-off of a zero curve (or, with the drift removed, the drift of the others),
    // and no ratio may be built on it.
    const frozen = sum.still !== undefined && sum.still === sum.sites && sum.sites > 0;
    const notes = frozen ? [] : [...sf.notes];
    const reasons = frozen ? [] : [...sf.reasons];
    if (frozen) {
      noteReason(notes, reasons, reason(DOES_NOT_MOVE, `does not move: every site keeps the same position in every frame (frozen atoms?): D = 0 exactly, and no ratio is built on it`, 'not-determined'));
    }
    const dUnc = frozen ? 0 : sf.slopeError === null ? null : diffusionFromSlope(sf.slopeError, dims);
    const D = frozen ? 0 : diffusionFromSlope(sf.slope, dims);
    const ng = curves.nonGaussian.map((r) => ({ time: r.lag * dt, value: r.value }));
    if (g.sites.length < 2) noteReason(notes, reasons, reason('msd.single-site', 'a single site: its D rests on one trajectory'), '', true);
    groups.push({
      label: g.label,
      count: g.sites.length,
      time: Float64Array.from({ length: maxLag + 1 }, (_, k) => k * dt),
      msd: total,
      msdXYZ: [xyz[0], xyz[1], xyz[2]],
      nonGaussian: ng,
      fit: { from: sf.from, to: sf.to, points: sf.points, automatic: sf.automatic },
      slope: quantity(sf.slope, sf.slopeError, 'A^2/ps'),
      diffusion: estimate(D, dUnc, 'm^2/s', {
        window: { from: sf.from, to: sf.to, unit: 'ps' },
        verdict: sf.converged || frozen ? 'ok' : 'not-converged',
        reasons,
      }),
      diffusionCorrected: yh && !frozen ? quantity(D + correction, dUnc, 'm^2/s') : null,
      segmentDiffusion: sf.segmentSlopes.map((s) => (frozen ? 0 : diffusionFromSlope(s, dims))),
      segments: sf.segments,
      uncertaintyFactor: sf.uncertaintyFactor,
      converged: sf.converged && !frozen,
      notes,
      reasons,
    });
  });
  const warn = unwrapWarning(info);
  if (warn) ctx.warnings.push(warn);
  for (const g of groups) warnDiffusionRange(ctx, g.label, g.diffusion.value, 'MSD');
  return {
    groups,
    dimensions: dims,
    plane: opts.plane ?? null,
    frames: T,
    frameInterval: dt,
    driftRemoved: removeDrift,
    driftNote: driftDescription(info, ctx.topology),
    molecules: layout.molecules,
    bytesHeld: read.bytesHeld,
    reads: read.reads,
    memoryNote: read.note ?? null,
    yehHummer: yh,
    rules: {
      window: windowRuleText(opts),
      uncertainty: uncertaintyRuleText(opts, groups.map((g) => ({ label: g.label, segments: g.segments }))),
      nonGaussian:
        `α2 = d<Δr^4>/((d+2)<Δr^2>^2) − 1 (Rahman 1964), computed directly over all time origins at about ${NON_GAUSSIAN_LAGS_PER_DECADE} log-spaced lags per decade`,
    },
  };
}

/** Options of the MSD pass: which sites, drift, and the analysis options. */
export interface MsdPassOptions extends MsdOptions, SpeciesLayoutOptions {
  /** Keep the centre-of-mass drift (default false: drift removed). */
  keepDrift?: boolean;
}

/** The MSD Pass: stores the unwrapped coordinates, finishes with `analyseMsd`. */
export function msdPass(opts: MsdPassOptions = {}): Pass<StorePartial, MsdResult> {
  const layout = speciesSpec(opts);
  const store = storePass({ layout, removeDrift: !opts.keepDrift, keepVelocities: false });
  return {
    name: 'msd',
    needsEvenSpacing: true,
    create: store.create,
    merge: store.merge,
    finish: (p, ctx) => analyseMsd(p, resolveLayout(layout, ctx.topology), ctx, opts),
  };
}
