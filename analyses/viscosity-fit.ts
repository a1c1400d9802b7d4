/**
 * The Green–Kubo steps of the viscosity analysis (analyses/viscosity.ts, where the methods are
 * stated): the running integral of every (segment, component) unit and their pooled mean and
 * spread, the cut-off where σ(t) exceeds a fraction of η̄(t), the weighted double-exponential fit
 * (or the single exponential when the double is not determined by the data), the plateau checks,
 * the jackknife over the units, and the Einstein–Helfand cross-check. After Zhang, Otani &
 * Maginn, J. Chem. Theory Comput. 11, 3537 (2015), with the additions listed there.
 */
import { autocorrelation } from '../src/correlate.js';
import { blockStatistics } from '../src/numerics/block-statistics.js';
import {
  doubleExponential,
  doubleExponentialRiseTime,
  fitDoubleExponential,
  fitSingleExponential,
  BOUND_MARGIN,
  type DoubleExponentialFit,
} from '../src/numerics/exponential-fits.js';
import { helfandMsd } from '../src/numerics/helfand-moment.js';
import { jackknifeStandardError } from '../src/numerics/jackknife.js';
import { fitLine } from '../src/numerics/line-fit.js';
import { fitPowerLaw } from '../src/numerics/power-law.js';
import { cumulativeTrapezoid } from '../src/numerics/trapezoid.js';
import { quantity, type Quantity } from '../src/types.js';
import type { ShearSeries, ViscosityPlan, ViscosityResult } from './viscosity.js';

/** σ(t)/η̄(t) at which the running integral is cut (Zhang, Otani & Maginn 2015, as we recall: 40 %). */
export const CUTOFF_FRACTION = 0.4;
/** The fit must reach (1 − PLATEAU_TOLERANCE) of its limit by t_cut to count as a plateau. */
export const PLATEAU_TOLERANCE = 0.05;
/** Most points used in a fit (the curves are thinned uniformly beyond this). */
export const MAX_FIT_POINTS = 1500;

/**
 * Index of the cut-off: the first k ≥ 1 with σ_k > f·η̄_k (or η̄_k ≤ 0) (Zhang, Otani & Maginn,
 * J. Chem. Theory Comput. 11, 3537 (2015)). When σ stays below that fraction, the last index is
 * returned with reached = false.
 */
export function cutoffIndex(mean: ArrayLike<number>, sd: ArrayLike<number>, fraction = CUTOFF_FRACTION): { index: number; reached: boolean } {
  for (let k = 1; k < mean.length; k++) {
    if (!(mean[k] > 0) || sd[k] > fraction * mean[k]) return { index: Math.max(1, k - 1), reached: true };
  }
  return { index: mean.length - 1, reached: false };
}

/**
 * Why a fitted double exponential cannot be trusted, or null: a time constant on its bound
 * (within BOUND_MARGIN: τ₁ ≤ (1 + 0.01)·t_min/2 or τ₂ ≥ (1 − 0.01)·t_max/3 — the data do not
 * determine it, the bound does) or α outside [0, 1] (one of the two amplitudes Aατ₁,
 * A(1 − α)τ₂ is negative: the fitted running integral overshoots and falls back, which the
 * model of Zhang, Otani & Maginn, J. Chem. Theory Comput. 11, 3537 (2015) — a sum of two
 * decaying relaxations — does not describe). Our rule; the paper's model assumes 0 ≤ α ≤ 1.
 */
export function doubleExponentialProblem(fit: DoubleExponentialFit): string | null {
  const { lower, upper } = fit.tauBounds;
  const out: string[] = [];
  if (fit.alpha < 0 || fit.alpha > 1) {
    const amp = fit.alpha > 1 ? fit.A * (1 - fit.alpha) * fit.tau2 : fit.A * fit.alpha * fit.tau1;
    out.push(
      `α = ${fit.alpha.toPrecision(5)} lies outside [0, 1]: the ${fit.alpha > 1 ? 'slow amplitude A(1−α)τ₂' : 'fast amplitude Aατ₁'} is negative ` +
        `(${((100 * amp) / Math.abs(fit.limit)).toPrecision(2)} % of the fitted limit)`,
    );
  }
  if (fit.tau2 >= (1 - BOUND_MARGIN) * upper) {
    out.push(`the slow time τ₂ = ${fit.tau2.toPrecision(4)} ps sits at its upper bound t_cut/3 = ${upper.toPrecision(4)} ps (set by the bound, not the data)`);
  }
  if (fit.tau1 <= (1 + BOUND_MARGIN) * lower) {
    out.push(`the fast time τ₁ = ${fit.tau1.toPrecision(4)} ps sits at its lower bound t_min/2 = ${lower.toPrecision(4)} ps (set by the bound, not the data)`);
  }
  return out.length ? out.join('; ') : null;
}

/** Every `stride`-th index of 0 … last, always including last. */
export function thinIndices(first: number, last: number, maxPoints: number): number[] {
  const count = last - first + 1;
  const stride = Math.max(1, Math.ceil(count / maxPoints));
  const idx: number[] = [];
  for (let k = first; k <= last; k += stride) idx.push(k);
  if (idx[idx.length - 1] !== last) idx.push(last);
  return idx;
}

/**
 * Running Green–Kubo integral of one unit (segment s of a component's values, m samples):
 * η(t_k) = pref · Δt · trapezoid Σ C(j), C the unbiased autocorrelation up to maxLag by FFT
 * (src/correlate.ts). Independent of every other unit.
 */
export function unitRunningIntegral(values: Float64Array, s: number, m: number, maxLag: number, dt: number, pref: number): Float64Array {
  const seg = values.subarray(s * m, (s + 1) * m);
  // Unbiased autocorrelation of the segment up to maxLag (src/correlate.ts chooses the
  // transform layout: for long segments, blocks that stay in the CPU caches).
  const acf = autocorrelation(seg, { maxLag });
  const out = new Float64Array(maxLag + 1);
  cumulativeTrapezoid(acf, dt, pref, out);
  return out;
}

/** The running integrals of every (segment, component) unit and their pooled statistics. */
export interface UnitStatistics {
  /** Unit curves in single precision (for the jackknife and the plateau test), segment-major. */
  unitCurves: Float32Array[];
  /** Per component: Σ and Σ² over the segments of the running integral at each lag. */
  compSum: Float64Array[];
  compSq: Float64Array[];
  /** η̄(t) over all units and σ(t), the spread of one segment's component-averaged curve. */
  mean: Float64Array;
  sigma: Float64Array;
  time: Float64Array;
}

/**
 * Step 3 of the analysis: running integrals, one per (segment, component) "unit". In an isotropic
 * fluid the components are equivalent and mutually uncorrelated (module comment), so the N·c unit
 * curves are independent estimates of η(t); pooling them makes σ(t) far less noisy than the
 * spread of only N segment averages: σ(t) = SD_unit(t)/√c.
 */
export function unitStatistics(components: ShearSeries[], plan: ViscosityPlan, dt: number): UnitStatistics {
  const { nc, pref, N, m, maxLag } = plan;
  const L = maxLag + 1;
  const U = N * nc;
  const unitCurves: Float32Array[] = [];
  const compSum = components.map(() => new Float64Array(L));
  const compSq = components.map(() => new Float64Array(L));
  for (let s = 0; s < N; s++) {
    components.forEach((c, ci) => {
      const tmp = unitRunningIntegral(c.values, s, m, maxLag, dt, pref);
      const cs = compSum[ci];
      const cq = compSq[ci];
      for (let k = 0; k < L; k++) {
        const v = tmp[k];
        cs[k] += v;
        cq[k] += v * v;
      }
      unitCurves.push(Float32Array.from(tmp));
    });
  }
  // η̄(t) over all units; σ(t) = SD of a segment's component-averaged curve = SD_unit/√c.
  const mean = new Float64Array(L);
  const sigma = new Float64Array(L);
  for (let k = 0; k < L; k++) {
    let s1 = 0;
    let s2 = 0;
    for (let ci = 0; ci < nc; ci++) {
      s1 += compSum[ci][k];
      s2 += compSq[ci][k];
    }
    const mu = s1 / U;
    mean[k] = mu;
    sigma[k] = Math.sqrt(Math.max(0, (s2 - U * mu * mu) / (U - 1)) / nc);
  }
  const time = new Float64Array(L);
  for (let k = 0; k < L; k++) time[k] = k * dt;
  return { unitCurves, compSum, compSq, mean, sigma, time };
}

/** The fitted running integral: model, long-time limit and its jackknife uncertainty. */
export interface RunningIntegralFit {
  /** Cut-off index and whether σ(t) reached the cut-off fraction. */
  kCut: number;
  cutReached: boolean;
  /** Fitted times (thinned), ps. */
  ft: number[];
  /** σ(t) = A t^b. */
  b: number;
  sigmaA: number;
  fit: DoubleExponentialFit | null;
  model: 'double exponential' | 'single exponential';
  rejected: string | null;
  eta: number;
  etaErr: number | null;
  plateau: number;
  fitCurve: Float64Array;
}

/**
 * Steps 4–5 of the analysis: the cut-off, the σ(t) power law, the weighted double-exponential fit
 * of η̄(t) (replaced by the single exponential when it is not determined by the data), the plateau
 * checks and the jackknife over the units. Reasons and notes go to the plan's lists.
 */
export function fitRunningIntegral(st: UnitStatistics, plan: ViscosityPlan, dt: number): RunningIntegralFit {
  const { fraction, m, maxLag, reasons, notes } = plan;
  const { mean, sigma, time } = st;
  const L = maxLag + 1;
  // 4. Cut-off and σ(t) power law.
  const cut = cutoffIndex(mean, sigma, fraction);
  const kCut = cut.index;
  if (!cut.reached) {
    notes.push(`σ(t) stays below ${Math.round(fraction * 100)} % of η(t) up to ${(maxLag * dt).toPrecision(4)} ps (${Math.round((100 * maxLag) / m)} % of a segment, the longest lag computed); the cut-off is the end of that range`);
  }
  if (kCut < 8) {
    reasons.push(`σ(t) exceeds ${Math.round(fraction * 100)} % of η(t) after only ${kCut} samples: the running integral is dominated by noise`);
  }
  const fitIdx = thinIndices(1, Math.min(L - 1, Math.max(kCut, 7)), MAX_FIT_POINTS);
  let b = 0.5;
  let sigmaA = NaN;
  try {
    const pw = fitPowerLaw(fitIdx.map((k) => time[k]), fitIdx.map((k) => sigma[k]));
    b = pw.b;
    sigmaA = pw.A;
  } catch (e) {
    reasons.push(`σ(t) could not be fitted to A t^b (${(e as Error).message}); b = 0.5 used`);
  }

  // 5. Weighted double-exponential fit; jackknife over the units.
  const ft = fitIdx.map((k) => time[k]);
  const fw = ft.map((t) => 1 / Math.pow(t, b));
  const fy = fitIdx.map((k) => mean[k]);
  const { fit, model, rejected } = chooseModel(ft, fy, fw, reasons, notes);
  const refit = (y: number[], start: DoubleExponentialFit) =>
    model === 'single exponential' ? fitSingleExponential(ft, y, fw) : fitDoubleExponential(ft, y, fw, start);
  let eta = NaN;
  let etaErr: number | null = null;
  let plateau = NaN;
  const fitCurve = new Float64Array(L).fill(NaN);
  if (fit) {
    eta = fit.limit;
    if (!fit.converged) reasons.push(`the ${model} fit did not converge (${fit.message})`);
    for (let k = 0; k < L; k++) fitCurve[k] = doubleExponential(time[k], fit);
    plateau = doubleExponential(time[kCut], fit) / fit.limit;
    if (!(Math.abs(1 - plateau) <= PLATEAU_TOLERANCE)) {
      reasons.push(
        `no plateau: at the cut-off (${(kCut * dt).toPrecision(4)} ps) the fitted running integral is ${(100 * plateau).toFixed(0)} % of its long-time limit ` +
          `(slow time τ₂ = ${fit.tau2.toPrecision(3)} ps); the limit is an extrapolation`,
      );
    }
    if (!(eta > 0)) reasons.push('the fitted long-time limit is not positive');
    const rise = plateauRise(st.unitCurves, kCut);
    if (rise && rise.mean > 3 * rise.standardError && rise.mean > PLATEAU_TOLERANCE * Math.abs(eta)) {
      reasons.push(
        `no plateau: over the second half of the window (${((kCut >> 1) * dt).toPrecision(3)}–${(kCut * dt).toPrecision(3)} ps) the running integral ` +
          `still rises by ${((100 * rise.mean) / Math.abs(eta)).toFixed(0)} % of η (${(rise.mean / rise.standardError).toFixed(1)} standard errors): the correlation has not decayed`,
      );
    }
    const U = st.unitCurves.length;
    const jack: number[] = [];
    for (let u = 0; u < U; u++) {
      const y = fitIdx.map((k) => (U * mean[k] - st.unitCurves[u][k]) / (U - 1));
      try {
        const f = refit(y, fit);
        if (Number.isFinite(f.limit)) jack.push(f.limit);
      } catch {
        /* counted below */
      }
    }
    if (jack.length === U) etaErr = jackknifeStandardError(jack);
    else reasons.push(`the jackknife refit failed for ${U - jack.length} of ${U} estimates: no uncertainty`);
  }
  return { kCut, cutReached: cut.reached, ft, b, sigmaA, fit, model, rejected, eta, etaErr, plateau, fitCurve };
}

/**
 * The fitted model: the double exponential, or — when a time constant sits on its bound or α lies
 * outside [0, 1] (`doubleExponentialProblem`), so that the data do not support two decaying
 * relaxations — the single exponential, the α = 1 case of the same model, when it fits inside
 * its bounds. Failures are reasons; the switch is a note.
 */
function chooseModel(
  ft: number[],
  fy: number[],
  fw: number[],
  reasons: string[],
  notes: string[],
): { fit: DoubleExponentialFit | null; model: 'double exponential' | 'single exponential'; rejected: string | null } {
  let fit: DoubleExponentialFit | null = null;
  let model: 'double exponential' | 'single exponential' = 'double exponential';
  let rejected: string | null = null;
  try {
    fit = fitDoubleExponential(ft, fy, fw);
  } catch (e) {
    reasons.push(`the double-exponential fit failed: ${(e as Error).message}`);
  }
  const problem = fit ? doubleExponentialProblem(fit) : null;
  if (fit && problem) {
    rejected = problem;
    let single: DoubleExponentialFit | null = null;
    try {
      single = fitSingleExponential(ft, fy, fw);
    } catch {
      single = null;
    }
    if (single && single.converged && single.limit > 0) {
      fit = single;
      model = 'single exponential';
      notes.push(
        `double exponential rejected (${problem}); the single exponential η(t) = Aτ(1 − e^{−t/τ}), the α = 1 case of the ` +
          `Zhang, Otani & Maginn (2015) model, is fitted instead (τ = ${single.tau1.toPrecision(4)} ps, inside [${single.tauBounds.lower.toPrecision(3)}, ${single.tauBounds.upper.toPrecision(4)}] ps)`,
      );
    } else {
      reasons.push(
        `the double-exponential fit is not determined by the data (${problem}), and a single exponential does not fit either ` +
          `(${single ? single.message : 'fit failed'}): the long-time limit is not trustworthy`,
      );
    }
  }
  return { fit, model, rejected };
}

/**
 * Step 7 of the analysis: the Einstein–Helfand cross-check per unit, over the window from the
 * time the fit reaches 95 % of its limit (or 5 correlation times) to the cut-off (at least 3× its
 * start); its mean and standard error over the units. Notes go to the plan's list.
 */
export function helfandCrossCheck(
  components: ShearSeries[],
  plan: ViscosityPlan,
  dt: number,
  g: RunningIntegralFit,
  time: Float64Array,
): { helfand: Quantity | null; helfandWindow: ViscosityResult['helfandWindow'] } {
  const { pref, tc, N, m, maxLag, notes } = plan;
  const { fit, eta, etaErr, kCut } = g;
  let helfand: Quantity | null = null;
  let helfandWindow: ViscosityResult['helfandWindow'] = null;
  const startTime = fit && fit.converged && eta > 0 ? doubleExponentialRiseTime(fit, 0.95, time[kCut]) : 5 * tc.tau;
  const hFrom = Math.max(1, Math.ceil(startTime / dt));
  const hTo = Math.min(maxLag - 1, Math.max(kCut, 3 * hFrom));
  if (hTo - hFrom >= 4) {
    helfandWindow = { from: hFrom * dt, to: hTo * dt, unit: 'ps' };
    const slopes: number[] = [];
    const hIdx = thinIndices(hFrom, hTo, MAX_FIT_POINTS);
    const hx = hIdx.map((k) => k * dt);
    for (let s = 0; s < N; s++) {
      for (const c of components) {
        const h = helfandMsd(c.values.subarray(s * m, (s + 1) * m), dt, hTo);
        const f = fitLine(hx, hIdx.map((k) => h[k]));
        slopes.push((f.slope / 2) * pref);
      }
    }
    const st = blockStatistics(slopes);
    helfand = quantity(st.mean, st.standardError, 'Pa s');
    if (etaErr !== null && Number.isFinite(eta)) {
      const z = Math.abs(st.mean - eta) / Math.hypot(st.standardError, etaErr);
      if (z > 3) notes.push(`the Helfand estimate differs from Green–Kubo by ${z.toFixed(1)} combined standard errors`);
    }
  } else {
    notes.push('no room for a Helfand fit window between the decay of the correlation and the cut-off');
  }
  return { helfand, helfandWindow };
}

/**
 * Rise of the running integral over the second half of the window, per independent estimate:
 * Δ_s = η_s(k) − η_s(⌊k/2⌋), with mean and standard error over the estimates
 * (Frenkel & Smit, Understanding Molecular Simulation, 2nd ed. (2002), §4.4.1 for block errors).
 * A converged integral has Δ̄ ≈ 0 within its error; a correlation that has not decayed gives
 * Δ̄ > 0 (our plateau test; common practice, no source). Null with fewer than 2 segments.
 */
export function plateauRise(segmentCurves: ReadonlyArray<ArrayLike<number>>, k: number): { mean: number; standardError: number } | null {
  if (segmentCurves.length < 2 || k < 2) return null;
  const st = blockStatistics(Array.from(segmentCurves, (c) => c[k] - c[k >> 1]));
  return { mean: st.mean, standardError: st.standardError };
}
