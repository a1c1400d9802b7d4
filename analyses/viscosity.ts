/**
 * Shear viscosity from a pressure-tensor time series, by Green–Kubo with the time-decomposition
 * method, and by the Einstein–Helfand route as a cross-check.
 *
 * Green–Kubo (Green, J. Chem. Phys. 22, 398 (1954); Kubo, J. Phys. Soc. Jpn. 12, 570 (1957)):
 *   η = V/(k_B T) ∫₀^∞ ⟨P_αβ(0) P_αβ(t)⟩ dt.
 *
 * Components (Daivis & Evans, J. Chem. Phys. 100, 541 (1994)): Daivis and Evans average the
 * whole symmetric traceless tensor P° = (P + Pᵀ)/2 − (tr P/3)·1,
 *   η = V/(10 k_B T) ∫ Σ_αβ ⟨P°_αβ(0) P°_αβ(t)⟩ dt.
 * Writing the diagonal of P° with a = (P_xx − P_yy)/2 and c = (2P_zz − P_xx − P_yy)/(2√3),
 * one has P°_xx = a − c/√3, P°_yy = −a − c/√3, P°_zz = 2c/√3, hence, sample by sample,
 *   Σ_αβ P°_αβ(0) P°_αβ(t) = 2[P_xy P_xy' + P_xz P_xz' + P_yz P_yz' + a a' + c c'].
 * So the Daivis–Evans estimate is exactly the equal-weight mean of the Green–Kubo integrals of
 * the five components xy, xz, yz, a, c: each weighs 1/5. In an isotropic fluid each of the five
 * has the shear autocorrelation and they are mutually uncorrelated at equal times (a and c are
 * orthogonal combinations; (P_yy − P_zz)/2 would be equivalent too, but correlated with a with
 * coefficient −1/2, which is why c is used instead). With off-diagonal columns only, the
 * available ones are averaged with equal weights.
 *
 * Time decomposition (Zhang, Otani & Maginn, J. Chem. Theory Comput. 11, 3537 (2015)): the run is
 * cut into N contiguous segments, treated as independent runs; in each the running integral η(t)
 * is computed; their mean η̄(t) and standard deviation σ(t) across segments are formed; σ(t) is
 * fitted to A_σ t^b; η̄(t) is fitted, with weights 1/t^b, to
 *   η(t) = A α τ₁ (1 − e^{−t/τ₁}) + A (1 − α) τ₂ (1 − e^{−t/τ₂})
 * up to the cut-off t_cut, the first time at which σ(t) exceeds CUTOFF_FRACTION (40 %) of η̄(t)
 * (the fraction the paper proposes, as we recall it); η = A(ατ₁ + (1 − α)τ₂), the fit's
 * long-time limit.
 * Our additions, each stated in the result:
 * - Pooling: every (segment, component) running integral is an independent estimate (the
 *   components are uncorrelated, above), so σ(t) — the spread of one segment's
 *   component-averaged curve — is estimated as SD over all N·c estimates divided by √c. With
 *   N = 10 segments alone, σ(t) scatters by ±24 % and the cut-off, chosen where σ happens to be
 *   low, then comes with too small an error (seen in tests on synthetic data).
 * - Uncertainty of η: jackknife over the N·c estimates — each left out in turn and the fit
 *   repeated with the same b and t_cut, started from the full fit (Efron & Stein, Ann. Stat. 9,
 *   586 (1981): variance (n−1)/n Σ(θ_i − θ̄)²).
 * - Bounded time constants (see `fitDoubleExponential`) and a plateau test (`plateauRise`).
 * - Model check: a double exponential with a time constant on its bound, or with α outside
 *   [0, 1] (a negative amplitude), is not determined by the data (`doubleExponentialProblem`);
 *   it is replaced by the single exponential η(t) = Aτ(1 − e^{−t/τ}), the α = 1 case of the same
 *   model (`fitSingleExponential`), and the result says so; when that too ends on a bound, the
 *   value is flagged not converged.
 * - Sampling: the stress autocorrelation must keep at least half of its zero-lag value after
 *   one sample interval, or the trapezoid integral is biased (src/fit.ts
 *   `correlationSamplingProblem`); otherwise not converged.
 *
 * Einstein–Helfand (Helfand, Phys. Rev. 119, 1 (1960)): G(t) = ∫₀^t P_αβ dt',
 *   η = lim V/(2 k_B T t) ⟨(G(t₀+t) − G(t₀))²⟩,
 * here as V/(2 k_B T) times the least-squares slope of the mean-squared Helfand moment over a
 * window from the time the Green–Kubo fit reaches 95 % of its limit to the cut-off (at least 3×
 * its start), computed for each (segment, component) and averaged (standard error over them).
 *
 * Internal units: pressure in the table's unit (a factor to Pa is folded into the prefactor),
 * time in ps, viscosity in Pa s.
 */
import { autocorrelation, nextPowerOfTwo } from '../src/correlate.js';
import { correlationSamplingProblem } from '../src/plateau.js';
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
import { integralCorrelationTime } from '../src/numerics/correlation-time.js';
import { jackknifeStandardError } from '../src/numerics/jackknife.js';
import { fitLine } from '../src/numerics/line-fit.js';
import { fitPowerLaw } from '../src/numerics/power-law.js';
import { cumulativeTrapezoid } from '../src/numerics/trapezoid.js';
import { BOLTZMANN, CUBIC_ANGSTROM, PICOSECOND } from '../src/units.js';
import { AnalysisError, UsageError } from '../src/errors.js';
import { quantity, type Quantity } from '../src/types.js';
import { estimate, reason, type Estimate } from '../src/estimate.js';

/** σ(t)/η̄(t) at which the running integral is cut (Zhang, Otani & Maginn 2015, as we recall: 40 %). */
export const CUTOFF_FRACTION = 0.4;
/** Default: each segment should span at least this many stress correlation times (common practice, no source). */
export const SEGMENT_CORRELATION_TIMES = 200;
/** Largest default number of segments. */
export const MAX_DEFAULT_SEGMENTS = 10;
/** Fewest segments that give a standard deviation worth fitting (below: usage error). */
export const MIN_VISCOSITY_SEGMENTS = 3;
/** Running integrals are computed at most up to this fraction of the segment length. */
export const LAG_FRACTION = 0.25;
/** …and at least up to this fraction (see `maxLagFor`). */
export const MIN_LAG_FRACTION = 0.04;

/**
 * Longest lag of the running integrals for segments of m samples: min(⌊m/4⌋, S − m) with
 * S = 2^⌈log₂(⌈1.04 m⌉)⌉ the FFT length the segment needs anyway — the whole quarter segment
 * when the transform has room for it, else what fits (at least 4 % of the segment), which
 * halves the transform length for segments just under a power of two (our choice; by then the
 * cut-off of a decayed correlation is usually far inside the range, and when it is not the
 * result says so).
 */
export function maxLagFor(m: number): number {
  const size = nextPowerOfTwo(Math.ceil((1 + MIN_LAG_FRACTION) * m));
  return Math.max(8, Math.min(Math.floor(LAG_FRACTION * m), size - m, m - 1));
}
/** The fit must reach (1 − PLATEAU_TOLERANCE) of its limit by t_cut to count as a plateau. */
export const PLATEAU_TOLERANCE = 0.05;
/** Most points used in a fit (the curves are thinned uniformly beyond this). */
export const MAX_FIT_POINTS = 1500;
/** Most points of the running integral put in the JSON result. */
export const MAX_REPORT_POINTS = 1000;

// ---------------------------------------------------------------------------------------------
// Small pure pieces

/**
 * Green–Kubo prefactor turning ∫C dt (C in unit², t in ps) into Pa s:
 * V/(k_B T) · f² · 10⁻¹², with V in Å³ (×10⁻³⁰ m³), f = Pa per pressure unit (Green 1954; Kubo 1957).
 */
export function greenKuboPrefactor(volumeA3: number, temperatureK: number, pascalPerUnit: number): number {
  return ((volumeA3 * CUBIC_ANGSTROM) / (BOLTZMANN * temperatureK)) * pascalPerUnit * pascalPerUnit * PICOSECOND;
}

/**
 * Default number of segments: N = min(10, ⌊n / (200 τ/dt)⌋), at least 3, so that each segment
 * spans ≥ 200 stress correlation times τ when the run allows (common practice, no source).
 */
export function defaultSegmentCount(samples: number, tauSamples: number): number {
  const fit = Math.floor(samples / (SEGMENT_CORRELATION_TIMES * Math.max(tauSamples, 1)));
  return Math.max(MIN_VISCOSITY_SEGMENTS, Math.min(MAX_DEFAULT_SEGMENTS, fit));
}

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

// ---------------------------------------------------------------------------------------------
// Trust in a double-exponential fit

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

// ---------------------------------------------------------------------------------------------
// The analysis

/** Pressure-tensor columns (any subset), all the same length, in one pressure unit. */
export interface StressColumns {
  xy?: Float64Array;
  xz?: Float64Array;
  yz?: Float64Array;
  xx?: Float64Array;
  yy?: Float64Array;
  zz?: Float64Array;
}

/** One shear component series. */
export interface ShearSeries {
  name: string;
  values: Float64Array;
  /** Mean removed from the series (pressure unit). */
  mean: number;
}

/**
 * The independent, equivalent shear components available from the columns, each centred on its
 * own mean over the whole run: P_xy, P_xz, P_yz; with all three diagonal entries also
 * a = (P_xx − P_yy)/2 and c = (2P_zz − P_xx − P_yy)/(2√3) (Daivis & Evans 1994; see the module
 * comment); with only P_xx and P_yy, a. With `inPlace` the caller gives up the arrays: the
 * off-diagonal ones are centred in place, and a and c overwrite P_xx and P_zz (no copy).
 */
export function shearComponents(cols: StressColumns, inPlace = false): ShearSeries[] {
  const out: ShearSeries[] = [];
  const centre = (name: string, v: Float64Array, own: boolean) => {
    const x = own ? v : Float64Array.from(v);
    let s = 0;
    for (let i = 0; i < x.length; i++) s += x[i];
    const mean = s / x.length;
    for (let i = 0; i < x.length; i++) x[i] -= mean;
    out.push({ name, values: x, mean });
  };
  if (cols.xy) centre('xy', cols.xy, inPlace);
  if (cols.xz) centre('xz', cols.xz, inPlace);
  if (cols.yz) centre('yz', cols.yz, inPlace);
  const { xx, yy, zz } = cols;
  if (xx && yy) {
    // With inPlace, c is written over zz and a over xx (each entry only reads its own row, and c
    // is formed before xx changes): no fresh 8-byte-per-row arrays, which are slow to first touch.
    const k = 1 / (2 * Math.sqrt(3));
    let c: Float64Array | null = null;
    if (zz) {
      c = inPlace ? zz : new Float64Array(xx.length);
      for (let i = 0; i < c.length; i++) c[i] = k * (2 * zz[i] - xx[i] - yy[i]);
    }
    const a = inPlace ? xx : new Float64Array(xx.length);
    for (let i = 0; i < a.length; i++) a[i] = 0.5 * (xx[i] - yy[i]);
    centre('(xx-yy)/2', a, true);
    if (c) centre('(2zz-xx-yy)/(2*sqrt3)', c, true);
  }
  if (out.length === 0) throw new UsageError('no shear component: need at least one of pxy, pxz, pyz, or pxx with pyy');
  const n = out[0].values.length;
  if (out.some((c) => c.values.length !== n)) throw new UsageError('pressure columns differ in length');
  return out;
}

/** Input of `analyseViscosity`. */
export interface ViscosityInput {
  components: ShearSeries[];
  /** Time between samples, ps. */
  dt: number;
  volumeA3: number;
  temperatureK: number;
  /** Pa per unit of the pressure values. */
  pascalPerUnit: number;
  /** Number of segments; default from `defaultSegmentCount`. */
  segments?: number;
  /** Fraction for the cut-off (default CUTOFF_FRACTION). */
  cutoffFraction?: number;
}

/** The JSON-ready result. */
export interface ViscosityResult {
  /**
   * η with its fit window (ps) and verdict ('ok' when converged); its reasons are `reasons` (code
   * 'viscosity.not-converged', verdict 'not-converged') then `notes` (code 'viscosity.note',
   * cautions). The codes are not finer yet: nothing decides on them.
   */
  viscosity: Estimate;
  method: string;
  /** Running integral (thinned to ≤ MAX_REPORT_POINTS): time ps, eta and sigma Pa s. */
  runningIntegral: { time: Float64Array; eta: Float64Array; sigma: Float64Array; fit: Float64Array };
  cutoffTime: Quantity;
  cutoffFraction: number;
  cutoffReached: boolean;
  fitWindow: { from: number; to: number; unit: 'ps' };
  /** Per component: the mean removed (table pressure unit) and η(t_cut) ± standard error over segments. */
  components: Array<{ name: string; meanRemoved: number; runningIntegralEnd: Quantity }>;
  weighting: string;
  fit: {
    /** The model fitted: the double exponential, or the single one when the double was rejected. */
    model: 'double exponential' | 'single exponential';
    /** Why the double exponential was rejected (`doubleExponentialProblem`), or null. */
    rejectedDoubleExponential: string | null;
    A: Quantity;
    alpha: number;
    tau1: Quantity;
    tau2: Quantity;
    b: number;
    sigmaPrefactor: number;
    converged: boolean;
    plateauReached: number;
  };
  helfand: Quantity | null;
  helfandWindow: { from: number; to: number; unit: 'ps' } | null;
  segments: number;
  segmentLength: Quantity;
  samples: number;
  sampleInterval: Quantity;
  correlationTime: Quantity;
  converged: boolean;
  reasons: string[];
  notes: string[];
}

/** Result plus the full-resolution curves (for --csv). */
export interface ViscosityAnalysis {
  result: ViscosityResult;
  curves: { time: Float64Array; eta: Float64Array; sigma: Float64Array; fit: Float64Array };
}

/** Every `stride`-th index of 0 … last, always including last. */
function thinIndices(first: number, last: number, maxPoints: number): number[] {
  const count = last - first + 1;
  const stride = Math.max(1, Math.ceil(count / maxPoints));
  const idx: number[] = [];
  for (let k = first; k <= last; k += stride) idx.push(k);
  if (idx[idx.length - 1] !== last) idx.push(last);
  return idx;
}

/** What the viscosity analysis settles before the running integrals (see `planViscosity`). */
export interface ViscosityPlan {
  /** Samples and shear components. */
  n: number;
  nc: number;
  /** Green–Kubo prefactor V/(k_B T) in Pa⁻¹ s⁻¹ per squared table unit (greenKuboPrefactor). */
  pref: number;
  /** Cut-off fraction of σ(t) over η(t). */
  fraction: number;
  reasons: string[];
  notes: string[];
  /** Integral correlation time of the probe autocorrelation, ps. */
  tc: { tau: number; decayed: boolean };
  /** Segments, samples per segment, longest lag of the running integrals. */
  N: number;
  m: number;
  maxLag: number;
}

/**
 * Steps 1–2 of the analysis: input checks, the stress correlation time from a probe
 * autocorrelation, the segment count and length and the lag range (see analyseViscosity).
 */
export function planViscosity(input: ViscosityInput): ViscosityPlan {
  const { components, dt, volumeA3, temperatureK, pascalPerUnit } = input;
  const fraction = input.cutoffFraction ?? CUTOFF_FRACTION;
  if (!(dt > 0)) throw new UsageError('sample interval must be positive');
  if (!(volumeA3 > 0)) throw new UsageError('volume must be positive');
  if (!(temperatureK > 0)) throw new UsageError('temperature must be positive');
  if (components.length === 0) throw new UsageError('no shear components');
  const n = components[0].values.length;
  const reasons: string[] = [];
  const notes: string[] = [];
  const nc = components.length;
  const pref = greenKuboPrefactor(volumeA3, temperatureK, pascalPerUnit);

  // 1. Correlation time of the stress from a short-lag autocorrelation of the first
  // min(n, 2^21) samples: first up to 2^13 lags (cheap), then 8× longer while it has not
  // crossed zero, up to 1/20 of that stretch. It only sets the default segment count and flags.
  if (n < 200) throw new AnalysisError(`only ${n} pressure samples: far too few for a viscosity`);
  // A shear stress that never fluctuates has no Green–Kubo integral: say so instead of 0/0.
  const flat = components.every((c) => {
    const v = c.values;
    for (let i = 1; i < v.length; i++) if (v[i] !== v[0]) return false;
    return true;
  });
  if (flat) throw new AnalysisError('the shear-stress components are constant: no fluctuations, so no Green–Kubo viscosity (check the columns and the table)');
  const probeLength = Math.min(n, 1 << 21);
  const probeCap = Math.max(16, Math.floor(probeLength / 20));
  let probeLag = Math.min(probeCap, 1 << 13);
  let tc: { tau: number; decayed: boolean };
  let probe: Float64Array;
  for (;;) {
    probe = new Float64Array(probeLag + 1);
    for (const c of components) {
      const a = autocorrelation(c.values.subarray(0, probeLength), { maxLag: probeLag });
      for (let k = 0; k <= probeLag; k++) probe[k] += a[k] / nc;
    }
    tc = integralCorrelationTime(probe, dt);
    if (tc.decayed || probeLag >= probeCap) break;
    probeLag = Math.min(probeCap, probeLag * 8);
  }
  const sampling = correlationSamplingProblem(probe!, dt, 'the shear-stress autocorrelation');
  if (sampling) reasons.push(sampling);
  if (!tc.decayed) {
    reasons.push(`the stress autocorrelation does not reach zero within ${(probeLag * dt).toPrecision(3)} ps (1/20 of the first ${probeLength} samples): the correlation never decays in the data`);
  }
  const tauSamples = Math.max(tc.tau / dt, 0.5);

  // 2. Segments.
  let N = input.segments ?? defaultSegmentCount(n, tauSamples);
  if (!Number.isInteger(N) || N < MIN_VISCOSITY_SEGMENTS) throw new UsageError(`--segments must be an integer ≥ ${MIN_VISCOSITY_SEGMENTS}, got ${N}`);
  const m = Math.floor(n / N);
  if (m < 64) throw new UsageError(`${N} segments of ${m} samples each are too short; use fewer segments`);
  const maxLag = maxLagFor(m);
  if (m < SEGMENT_CORRELATION_TIMES * tauSamples) {
    reasons.push(
      `each of the ${N} segments spans ${(m * dt).toPrecision(3)} ps, fewer than ${SEGMENT_CORRELATION_TIMES} stress correlation times ` +
        `(τ = ${tc.tau.toPrecision(3)} ps): the run is too short for independent segments`,
    );
  }
  if (n - N * m > 0) notes.push(`the last ${n - N * m} sample(s) do not fill a segment and are not used`);

  // Mean offsets: an isotropic fluid at equilibrium has zero mean shear stress.
  for (const c of components) {
    let v = 0;
    for (let i = 0; i < n; i++) v += c.values[i] * c.values[i];
    const sd = Math.sqrt(v / n);
    const se = sd * Math.sqrt((2 * tauSamples) / n);
    if (Math.abs(c.mean) > 4 * se && se > 0) {
      notes.push(`component ${c.name} has a mean of ${c.mean.toPrecision(4)} in the table's pressure unit (about ${Math.round(Math.abs(c.mean) / se)} standard errors from zero); it was removed before correlating — check that the fluid is isotropic and at equilibrium`);
    }
  }
  return { n, nc, pref, fraction, reasons, notes, tc, N, m, maxLag };
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
interface UnitStatistics {
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
function unitStatistics(components: ShearSeries[], plan: ViscosityPlan, dt: number): UnitStatistics {
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
interface RunningIntegralFit {
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
function fitRunningIntegral(st: UnitStatistics, plan: ViscosityPlan, dt: number): RunningIntegralFit {
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
function helfandCrossCheck(
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
 * Viscosity by Green–Kubo with the time-decomposition method plus the Helfand cross-check (all
 * methods and rules in the module comment). Never returns a bare number: when a rule fails,
 * `converged` is false and `reasons` says why.
 */
export function analyseViscosity(input: ViscosityInput): ViscosityAnalysis {
  const { components, dt } = input;
  const plan = planViscosity(input);
  const { n, nc, fraction, tc, N, m, maxLag } = plan;
  const { reasons, notes } = plan;
  const U = N * nc;

  // 3. Running integrals; 4–5. cut-off, fit and jackknife.
  const st = unitStatistics(components, plan, dt);
  const { mean, sigma, time } = st;
  const g = fitRunningIntegral(st, plan, dt);
  const { kCut, ft, fit, model, eta, etaErr, fitCurve } = g;

  // 6. Per-component values at the cut-off (mean and standard error over the segments).
  const comps = components.map((c, ci) => {
    const mu = st.compSum[ci][kCut] / N;
    const sd = Math.sqrt(Math.max(0, (st.compSq[ci][kCut] - N * mu * mu) / (N - 1)));
    return { name: c.name, meanRemoved: c.mean, runningIntegralEnd: quantity(mu, sd / Math.sqrt(N), 'Pa s') };
  });

  // 7. Helfand cross-check, per unit.
  const { helfand, helfandWindow } = helfandCrossCheck(components, plan, dt, g, time);

  // 8. Report.
  const rIdx = thinIndices(0, maxLag, MAX_REPORT_POINTS);
  const pick = (a: Float64Array) => Float64Array.from(rIdx, (k) => a[k]);
  notes.push(
    `uncertainty of η: jackknife over the ${U} independent running integrals (${N} segments × ${nc} components) of the weighted ${model} fit (b and the cut-off held fixed)`,
  );
  if (N < 10) notes.push(`only ${N} segments: σ(t) and the uncertainty rest on few independent estimates`);
  const converged = reasons.length === 0 && etaErr !== null;
  const fitWindow = { from: ft[0], to: ft[ft.length - 1], unit: 'ps' as const };
  const result: ViscosityResult = {
    viscosity: estimate(eta, etaErr, 'Pa s', {
      window: fitWindow,
      verdict: converged ? 'ok' : 'not-converged',
      reasons: [...reasons.map((t) => reason('viscosity.not-converged', t, 'not-converged')), ...notes.map((t) => reason('viscosity.note', t))],
    }),
    method: `Green–Kubo, time-decomposition (Zhang, Otani & Maginn 2015) with Daivis–Evans component averaging; ${model} fit`,
    runningIntegral: { time: pick(time), eta: pick(mean), sigma: pick(sigma), fit: pick(fitCurve) },
    cutoffTime: quantity(kCut * dt, null, 'ps'),
    cutoffFraction: fraction,
    cutoffReached: g.cutReached,
    fitWindow,
    components: comps,
    weighting:
      nc === 5
        ? 'Daivis–Evans: mean of the five equivalent, uncorrelated components xy, xz, yz, (xx−yy)/2, (2zz−xx−yy)/(2√3), weight 1/5 each (equals V/(10 k_B T)∫Σ⟨P°αβ P°αβ⟩ over the traceless tensor)'
        : `equal weights (1/${nc}) over the available components ${components.map((c) => c.name).join(', ')}`,
    fit: {
      model,
      rejectedDoubleExponential: g.rejected,
      A: quantity(fit ? fit.A : NaN, null, 'Pa s/ps'),
      alpha: fit ? fit.alpha : NaN,
      tau1: quantity(fit ? fit.tau1 : NaN, null, 'ps'),
      tau2: quantity(fit ? fit.tau2 : NaN, null, 'ps'),
      b: g.b,
      sigmaPrefactor: g.sigmaA,
      converged: fit ? fit.converged : false,
      plateauReached: g.plateau,
    },
    helfand,
    helfandWindow,
    segments: N,
    segmentLength: quantity(m * dt, null, 'ps'),
    samples: n,
    sampleInterval: quantity(dt, null, 'ps'),
    correlationTime: quantity(tc.tau, null, 'ps'),
    converged,
    reasons,
    notes,
  };
  return { result, curves: { time, eta: mean, sigma, fit: fitCurve } };
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
