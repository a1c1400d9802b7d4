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
 *   one sample interval, or the trapezoid integral is biased (src/plateau.ts
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
 *
 * This file holds the inputs, the plan (correlation time, segments) and the result; the running
 * integrals, their fit, the jackknife and the Helfand cross-check are in analyses/viscosity-fit.ts.
 */
import { autocorrelation, nextPowerOfTwo } from '../src/correlate.js';
import { correlationSamplingProblem } from '../src/plateau.js';
import { integralCorrelationTime } from '../src/numerics/correlation-time.js';
import { BOLTZMANN, CUBIC_ANGSTROM, PICOSECOND } from '../src/units.js';
import { AnalysisError, UsageError } from '../src/errors.js';
import { quantity, type Quantity } from '../src/types.js';
import { estimate, reason, type Estimate } from '../src/estimate.js';
import { fitRunningIntegral, helfandCrossCheck, thinIndices, unitStatistics, CUTOFF_FRACTION } from './viscosity-fit.js';

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

