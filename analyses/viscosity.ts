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
import { fitLine, blockStatistics, correlationSamplingProblem } from '../src/fit.js';
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
 * Cumulative trapezoid integral I_k = Σ_{j<k} (y_j + y_{j+1})/2 · dt, I_0 = 0, times `scale`
 * (Press et al., Numerical Recipes, 3rd ed. (2007), §4.1). Writes into `out` when given.
 */
export function runningIntegral(y: ArrayLike<number>, dt: number, scale = 1, out?: Float64Array): Float64Array {
  const r = out ?? new Float64Array(y.length);
  let s = 0;
  if (y.length > 0) r[0] = 0;
  for (let k = 1; k < y.length; k++) {
    s += 0.5 * (y[k - 1] + y[k]) * dt;
    r[k] = s * scale;
  }
  return r;
}

/**
 * Integral correlation time of a correlation function C(k) on a grid of spacing dt:
 * τ = ∫₀^{t₀} C(t)/C(0) dt (trapezoid) up to the first zero crossing t₀ of C (common practice,
 * no source; for C = e^{−t/τ} plus noise it returns ≈ τ). `decayed` is false when C never
 * reaches zero within the array (τ is then a lower bound).
 */
export function integralCorrelationTime(c: ArrayLike<number>, dt: number): { tau: number; decayed: boolean } {
  const c0 = c[0];
  if (!(c0 > 0)) return { tau: 0, decayed: true };
  let s = 0;
  for (let k = 1; k < c.length; k++) {
    if (c[k] <= 0) {
      // Linear interpolation to the crossing.
      const f = c[k - 1] / (c[k - 1] - c[k]);
      s += 0.5 * c[k - 1] * f * dt;
      return { tau: s / c0, decayed: true };
    }
    s += 0.5 * (c[k - 1] + c[k]) * dt;
  }
  return { tau: s / c0, decayed: false };
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

/**
 * Power law σ(t) = A t^b by a straight-line least-squares fit of ln σ on ln t over the points
 * with t > 0 and σ > 0 (Zhang, Otani & Maginn 2015 fit σ(t) this way; line fit: Numerical
 * Recipes §15.2).
 */
export function fitPowerLaw(t: ArrayLike<number>, s: ArrayLike<number>): { A: number; b: number } {
  const x: number[] = [];
  const y: number[] = [];
  for (let i = 0; i < t.length; i++) {
    if (t[i] > 0 && s[i] > 0) {
      x.push(Math.log(t[i]));
      y.push(Math.log(s[i]));
    }
  }
  if (x.length < 3) throw new AnalysisError('too few positive points to fit σ(t) = A t^b');
  const f = fitLine(x, y);
  return { A: Math.exp(f.intercept), b: f.slope };
}

/** Parameters of the double-exponential running integral of Zhang, Otani & Maginn (2015). */
export interface DoubleExponential {
  /** Initial slope dη/dt at t = 0 (η per time unit). */
  A: number;
  alpha: number;
  tau1: number;
  tau2: number;
}

/**
 * η(t) = A α τ₁ (1 − e^{−t/τ₁}) + A (1 − α) τ₂ (1 − e^{−t/τ₂}) (Zhang, Otani & Maginn,
 * J. Chem. Theory Comput. 11, 3537 (2015)).
 */
export function doubleExponential(t: number, p: DoubleExponential): number {
  return p.A * p.alpha * p.tau1 * -Math.expm1(-t / p.tau1) + p.A * (1 - p.alpha) * p.tau2 * -Math.expm1(-t / p.tau2);
}

/** Long-time limit of the double exponential: A (α τ₁ + (1 − α) τ₂). */
export function doubleExponentialLimit(p: DoubleExponential): number {
  return p.A * (p.alpha * p.tau1 + (1 - p.alpha) * p.tau2);
}

// ---------------------------------------------------------------------------------------------
// Levenberg–Marquardt

/** Options of `levenbergMarquardt`. */
export interface LmOptions {
  maxIterations?: number;
  /** Stop when every step component satisfies |δ_i| ≤ xtol (|p_i| + xtol). */
  xtol?: number;
  /** Stop when an accepted step lowers the cost by less than ftol relative. */
  ftol?: number;
  /** Initial damping λ. */
  lambda?: number;
}

/** Outcome of `levenbergMarquardt`. */
export interface LmResult {
  params: Float64Array;
  /** ½ Σ r_i² at the solution. */
  cost: number;
  iterations: number;
  converged: boolean;
  message: string;
}

/** Solve the small dense system M x = v (Gaussian elimination with partial pivoting); null if singular. */
function solveSmall(M: Float64Array, v: Float64Array, n: number): Float64Array | null {
  const a = Float64Array.from(M);
  const b = Float64Array.from(v);
  for (let col = 0; col < n; col++) {
    let piv = col;
    for (let r = col + 1; r < n; r++) if (Math.abs(a[r * n + col]) > Math.abs(a[piv * n + col])) piv = r;
    if (!(Math.abs(a[piv * n + col]) > 0)) return null;
    if (piv !== col) {
      for (let c = 0; c < n; c++) [a[col * n + c], a[piv * n + c]] = [a[piv * n + c], a[col * n + c]];
      [b[col], b[piv]] = [b[piv], b[col]];
    }
    for (let r = col + 1; r < n; r++) {
      const f = a[r * n + col] / a[col * n + col];
      if (f === 0) continue;
      for (let c = col; c < n; c++) a[r * n + c] -= f * a[col * n + c];
      b[r] -= f * b[col];
    }
  }
  const x = new Float64Array(n);
  for (let r = n - 1; r >= 0; r--) {
    let s = b[r];
    for (let c = r + 1; c < n; c++) s -= a[r * n + c] * x[c];
    x[r] = s / a[r * n + r];
  }
  return x;
}

/**
 * Levenberg–Marquardt minimisation of ½ Σ r_i(p)² (Levenberg, Q. Appl. Math. 2, 164 (1944);
 * Marquardt, J. SIAM 11, 431 (1963); Numerical Recipes §15.5.2): each step solves
 * (JᵀJ + λ diag(JᵀJ)) δ = −Jᵀr, with J by central differences; a step that lowers the cost is
 * accepted and λ divided by 10, otherwise λ is multiplied by 10. `residual(p, out)` fills the m
 * residuals; `opts.jacobian(p, J)`, when given, fills ∂r_i/∂p_j row-major (else central differences).
 */
export function levenbergMarquardt(
  residual: (p: Float64Array, out: Float64Array) => void,
  m: number,
  p0: ArrayLike<number>,
  opts: LmOptions & { jacobian?: (p: Float64Array, J: Float64Array) => void } = {},
): LmResult {
  const n = p0.length;
  const maxIt = opts.maxIterations ?? 200;
  const xtol = opts.xtol ?? 1e-10;
  const ftol = opts.ftol ?? 1e-14;
  let lambda = opts.lambda ?? 1e-3;
  let p = Float64Array.from(p0);
  const r = new Float64Array(m);
  const rTry = new Float64Array(m);
  const rp = new Float64Array(m);
  const rm = new Float64Array(m);
  const J = new Float64Array(m * n);
  const cost = (v: Float64Array) => {
    let s = 0;
    for (let i = 0; i < m; i++) s += v[i] * v[i];
    return 0.5 * s;
  };
  residual(p, r);
  let c = cost(r);
  if (!Number.isFinite(c)) return { params: p, cost: c, iterations: 0, converged: false, message: 'residuals not finite at the start' };
  for (let it = 1; it <= maxIt; it++) {
    // Jacobian: analytic when given (row-major m×n), else central differences.
    if (opts.jacobian) opts.jacobian(p, J);
    else for (let j = 0; j < n; j++) {
      const h = 1e-6 * Math.max(Math.abs(p[j]), 1e-3);
      const pj = p[j];
      p[j] = pj + h;
      residual(p, rp);
      p[j] = pj - h;
      residual(p, rm);
      p[j] = pj;
      for (let i = 0; i < m; i++) J[i * n + j] = (rp[i] - rm[i]) / (2 * h);
    }
    const A = new Float64Array(n * n);
    const g = new Float64Array(n);
    for (let i = 0; i < m; i++) {
      for (let a = 0; a < n; a++) {
        const ja = J[i * n + a];
        g[a] += ja * r[i];
        for (let b = a; b < n; b++) A[a * n + b] += ja * J[i * n + b];
      }
    }
    for (let a = 0; a < n; a++) for (let b = 0; b < a; b++) A[a * n + b] = A[b * n + a];
    let gmax = 0;
    for (let a = 0; a < n; a++) gmax = Math.max(gmax, Math.abs(g[a]));
    if (gmax === 0) return { params: p, cost: c, iterations: it, converged: true, message: 'zero gradient' };
    let diagMax = 0;
    for (let a = 0; a < n; a++) diagMax = Math.max(diagMax, A[a * n + a]);
    let accepted = false;
    while (!accepted) {
      const M = Float64Array.from(A);
      for (let a = 0; a < n; a++) M[a * n + a] += lambda * Math.max(A[a * n + a], 1e-12 * diagMax);
      const neg = g.map((x) => -x);
      const delta = solveSmall(M, neg, n);
      if (delta === null) {
        lambda *= 10;
        if (lambda > 1e16) return { params: p, cost: c, iterations: it, converged: false, message: 'normal equations singular' };
        continue;
      }
      const pTry = new Float64Array(n);
      for (let a = 0; a < n; a++) pTry[a] = p[a] + delta[a];
      residual(pTry, rTry);
      const cTry = cost(rTry);
      if (Number.isFinite(cTry) && cTry < c) {
        accepted = true;
        const small = delta.every((d, a) => Math.abs(d) <= xtol * (Math.abs(p[a]) + xtol));
        const relDrop = (c - cTry) / Math.max(c, Number.MIN_VALUE);
        p = pTry;
        r.set(rTry);
        c = cTry;
        lambda = Math.max(lambda / 10, 1e-15);
        if (small || relDrop < ftol) return { params: p, cost: c, iterations: it, converged: true, message: small ? 'step below xtol' : 'cost change below ftol' };
      } else {
        lambda *= 10;
        if (lambda > 1e16) {
          // No downhill step at any damping: a minimum to machine precision.
          return { params: p, cost: c, iterations: it, converged: true, message: 'no further decrease possible' };
        }
      }
    }
  }
  return { params: p, cost: c, iterations: maxIt, converged: false, message: `no convergence in ${maxIt} iterations` };
}

// ---------------------------------------------------------------------------------------------
// Double-exponential fit: grid + linear start, then Levenberg–Marquardt

/** Result of `fitDoubleExponential`. */
export interface DoubleExponentialFit extends DoubleExponential {
  limit: number;
  converged: boolean;
  message: string;
  /** Bounds of the time constants, [t_min/2, t_max/3] of the fitted times (ps). */
  tauBounds: { lower: number; upper: number };
}

/**
 * Weighted least-squares fit of the double exponential (parameters as in `doubleExponential`)
 * to points (t_i, y_i) with weights w_i: minimises Σ w_i (y_i − η(t_i))².
 * Both time constants are bounded to [t_min/2, t_max/3] (t_min, t_max: first and last positive
 * time of the data), so that every fitted relaxation has decayed to e^{−3} ≈ 5 % by the end of
 * the window: a slower one cannot be told apart from the random-walk drift that noise gives the
 * running integral, which an unbounded τ₂ fits as a straight line (our choice, not the paper's;
 * `analyseViscosity` separately tests whether the data still rise at the end of the window).
 * The bound is built in by τ = exp(ln τ_lo + (ln τ_hi − ln τ_lo)(1 + tanh u)/2).
 * Start: the model is linear in a₁ = Aατ₁ and a₂ = A(1−α)τ₂ for fixed τ₁, τ₂, so a log grid of
 * (τ₁ ≤ τ₂) pairs is scanned with a 2×2 weighted linear solve at each (separable least squares,
 * Golub & Pereyra, SIAM J. Numer. Anal. 10, 413 (1973)); the best pair starts a
 * Levenberg–Marquardt refinement of (a₁, a₂, u₁, u₂) with the analytic Jacobian. Times and
 * values are scaled to order one inside. Returns τ₁ ≤ τ₂. With `start`, the grid is skipped and
 * the refinement starts there (used for the jackknife refits).
 */
export function fitDoubleExponential(
  t: ArrayLike<number>,
  y: ArrayLike<number>,
  w: ArrayLike<number>,
  start?: DoubleExponential,
): DoubleExponentialFit {
  const m = t.length;
  if (m < 6) throw new AnalysisError(`double-exponential fit needs at least 6 points, got ${m}`);
  let tMax = 0;
  let yMax = 0;
  let wMax = 0;
  let tMin = Infinity;
  for (let i = 0; i < m; i++) {
    tMax = Math.max(tMax, t[i]);
    if (t[i] > 0) tMin = Math.min(tMin, t[i]);
    yMax = Math.max(yMax, Math.abs(y[i]));
    wMax = Math.max(wMax, w[i]);
  }
  if (!(tMax > 0) || !(yMax > 0) || !(wMax > 0)) throw new AnalysisError('double-exponential fit: data are all zero');
  const ts = new Float64Array(m);
  const ys = new Float64Array(m);
  const sw = new Float64Array(m);
  for (let i = 0; i < m; i++) {
    ts[i] = t[i] / tMax;
    ys[i] = y[i] / yMax;
    sw[i] = Math.sqrt(w[i] / wMax);
  }
  // Bounds of the time constants (scaled units) and the bounded map u → τ.
  const lnLo = Math.log(Math.max(tMin / tMax, 1e-9) / 2);
  const lnHi = Math.log(1 / 3);
  const span = lnHi - lnLo;
  const tauOf = (u: number) => Math.exp(lnLo + (span * (1 + Math.tanh(u))) / 2);
  const uOf = (tau: number) => {
    const x = (2 * (Math.log(tau) - lnLo)) / span - 1;
    return Math.atanh(Math.max(-0.995, Math.min(0.995, x)));
  };
  // Start: grid of time constants strictly inside the bounds.
  const gridStart = (): number[] => {
    const G = 24;
    const taus = Array.from({ length: G }, (_, k) => Math.exp(lnLo + (span * (k + 0.5)) / G));
    const basis = taus.map((tau) => {
      const b = new Float64Array(m);
      for (let i = 0; i < m; i++) b[i] = -Math.expm1(-ts[i] / tau);
      return b;
    });
    let best = { cost: Infinity, a1: 0, a2: 0, i: 0, j: 0 };
    for (let i = 0; i < G; i++) {
      for (let j = i; j < G; j++) {
        const b1 = basis[i];
        const b2 = basis[j];
        let s11 = 0, s12 = 0, s22 = 0, s1y = 0, s2y = 0, syy = 0;
        for (let k = 0; k < m; k++) {
          const ww = sw[k] * sw[k];
          s11 += ww * b1[k] * b1[k];
          s12 += ww * b1[k] * b2[k];
          s22 += ww * b2[k] * b2[k];
          s1y += ww * b1[k] * ys[k];
          s2y += ww * b2[k] * ys[k];
          syy += ww * ys[k] * ys[k];
        }
        let a1: number;
        let a2: number;
        const det = s11 * s22 - s12 * s12;
        if (i === j || !(det > 1e-12 * s11 * s22)) {
          a1 = s1y / s11;
          a2 = 0;
        } else {
          a1 = (s22 * s1y - s12 * s2y) / det;
          a2 = (s11 * s2y - s12 * s1y) / det;
        }
        const cost = syy - 2 * (a1 * s1y + a2 * s2y) + a1 * a1 * s11 + 2 * a1 * a2 * s12 + a2 * a2 * s22;
        if (cost < best.cost) best = { cost, a1, a2, i, j };
      }
    }
    // Separate the two starting times a little when the grid chose a single exponential.
    const j0 = best.j === best.i ? Math.min(G - 1, best.i + 2) : best.j;
    const i0 = best.j === best.i && j0 === best.i ? Math.max(0, best.i - 2) : best.i;
    return [best.a1, best.a2, uOf(taus[i0]), uOf(taus[j0])];
  };
  let p0: number[];
  if (start) {
    p0 = [
      (start.A * start.alpha * start.tau1) / yMax,
      (start.A * (1 - start.alpha) * start.tau2) / yMax,
      uOf(start.tau1 / tMax),
      uOf(start.tau2 / tMax),
    ];
  } else {
    p0 = gridStart();
  }
  const residual = (p: Float64Array, out: Float64Array) => {
    const t1 = tauOf(p[2]);
    const t2 = tauOf(p[3]);
    for (let k = 0; k < m; k++) {
      const f = p[0] * -Math.expm1(-ts[k] / t1) + p[1] * -Math.expm1(-ts[k] / t2);
      out[k] = sw[k] * (ys[k] - f);
    }
  };
  // ∂r/∂a_i = −√w φ_i, ∂r/∂u_i = √w a_i (t/τ_i²) e^{−t/τ_i} · dτ_i/du_i,
  // dτ/du = τ · span · (1 − tanh² u)/2.
  const jacobian = (p: Float64Array, J: Float64Array) => {
    const t1 = tauOf(p[2]);
    const t2 = tauOf(p[3]);
    const th1 = Math.tanh(p[2]);
    const th2 = Math.tanh(p[3]);
    const d1 = (t1 * span * (1 - th1 * th1)) / 2;
    const d2 = (t2 * span * (1 - th2 * th2)) / 2;
    for (let k = 0; k < m; k++) {
      const e1 = Math.exp(-ts[k] / t1);
      const e2 = Math.exp(-ts[k] / t2);
      J[4 * k] = -sw[k] * (1 - e1);
      J[4 * k + 1] = -sw[k] * (1 - e2);
      J[4 * k + 2] = sw[k] * p[0] * (ts[k] / (t1 * t1)) * e1 * d1;
      J[4 * k + 3] = sw[k] * p[1] * (ts[k] / (t2 * t2)) * e2 * d2;
    }
  };
  const lm = levenbergMarquardt(residual, m, p0, {
    // A relative change of 1e-9 in the weighted sum of squares is far below anything the data
    // can resolve; flat directions (a near-single exponential) would otherwise creep for long.
    maxIterations: 500,
    ftol: 1e-9,
    jacobian,
  });
  let a1 = lm.params[0] * yMax;
  let a2 = lm.params[1] * yMax;
  let tau1 = tauOf(lm.params[2]) * tMax;
  let tau2 = tauOf(lm.params[3]) * tMax;
  let converged = lm.converged;
  let message = lm.message;
  if (!lm.converged && Math.abs(Math.log(tau2 / tau1)) < 0.2) {
    // The two time constants have merged (the data hold one relaxation): the double exponential
    // is degenerate along a1 + a2 = const, so fit the single exponential it reduces to.
    const one = (p: Float64Array, out: Float64Array) => {
      const t1 = tauOf(p[1]);
      for (let k = 0; k < m; k++) out[k] = sw[k] * (ys[k] - p[0] * -Math.expm1(-ts[k] / t1));
    };
    const lm1 = levenbergMarquardt(one, m, [lm.params[0] + lm.params[1], lm.params[2]], { maxIterations: 500, ftol: 1e-9 });
    a1 = lm1.params[0] * yMax;
    a2 = 0;
    tau1 = tau2 = tauOf(lm1.params[1]) * tMax;
    converged = lm1.converged;
    message = `the two time constants merged; single exponential (${lm1.message})`;
  }
  if (tau1 > tau2) {
    [a1, a2] = [a2, a1];
    [tau1, tau2] = [tau2, tau1];
  }
  const A = a1 / tau1 + a2 / tau2;
  const alpha = A !== 0 ? a1 / tau1 / A : 0.5;
  const finite = [A, alpha, tau1, tau2].every(Number.isFinite);
  return {
    A,
    alpha,
    tau1,
    tau2,
    limit: a1 + a2,
    converged: converged && finite,
    message: finite ? message : 'fit parameters not finite',
    tauBounds: { lower: Math.exp(lnLo) * tMax, upper: tMax / 3 },
  };
}

/** A fitted time constant within this fraction of its bound counts as sitting on the bound. */
export const BOUND_MARGIN = 0.01;

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

/**
 * Weighted least-squares fit of the single exponential η(t) = a(1 − e^{−t/τ}) — the α = 1 case of
 * the model of Zhang, Otani & Maginn (2015), limit a, initial slope A = a/τ — with τ bounded as in
 * `fitDoubleExponential` ([t_min/2, t_max/3]). The model is linear in a for fixed τ, so the cost
 * is profiled over ln τ (separable least squares, Golub & Pereyra 1973): a scan of 200 log-spaced
 * τ, then golden-section refinement around the best (Numerical Recipes §10.2). Returned in the
 * double-exponential form with α = 1 and τ₂ = τ₁ = τ; converged = false when τ ends on a bound.
 */
export function fitSingleExponential(t: ArrayLike<number>, y: ArrayLike<number>, w: ArrayLike<number>): DoubleExponentialFit {
  const m = t.length;
  if (m < 3) throw new AnalysisError(`single-exponential fit needs at least 3 points, got ${m}`);
  let tMax = 0;
  let tMin = Infinity;
  for (let i = 0; i < m; i++) {
    tMax = Math.max(tMax, t[i]);
    if (t[i] > 0) tMin = Math.min(tMin, t[i]);
  }
  if (!(tMax > 0)) throw new AnalysisError('single-exponential fit: no positive times');
  const lower = Math.max(tMin, 1e-9 * tMax) / 2;
  const upper = tMax / 3;
  const profile = (lnTau: number) => {
    const tau = Math.exp(lnTau);
    let sff = 0, sfy = 0, syy = 0;
    for (let i = 0; i < m; i++) {
      const f = -Math.expm1(-t[i] / tau);
      sff += w[i] * f * f;
      sfy += w[i] * f * y[i];
      syy += w[i] * y[i] * y[i];
    }
    const a = sff > 0 ? sfy / sff : 0;
    return { a, cost: syy - a * sfy };
  };
  const G = 200;
  const lo = Math.log(lower);
  const hi = Math.log(upper);
  let best = 0;
  let bestCost = Infinity;
  const grid = Array.from({ length: G + 1 }, (_, k) => lo + ((hi - lo) * k) / G);
  grid.forEach((x, k) => {
    const c = profile(x).cost;
    if (c < bestCost) {
      bestCost = c;
      best = k;
    }
  });
  let a0 = grid[Math.max(0, best - 1)];
  let b0 = grid[Math.min(G, best + 1)];
  const phi = (Math.sqrt(5) - 1) / 2;
  let x1 = b0 - phi * (b0 - a0);
  let x2 = a0 + phi * (b0 - a0);
  let f1 = profile(x1).cost;
  let f2 = profile(x2).cost;
  for (let i = 0; i < 200 && b0 - a0 > 1e-12; i++) {
    if (f1 < f2) {
      b0 = x2;
      x2 = x1;
      f2 = f1;
      x1 = b0 - phi * (b0 - a0);
      f1 = profile(x1).cost;
    } else {
      a0 = x1;
      x1 = x2;
      f1 = f2;
      x2 = a0 + phi * (b0 - a0);
      f2 = profile(x2).cost;
    }
  }
  const lnTau = 0.5 * (a0 + b0);
  const tau = Math.exp(lnTau);
  const { a } = profile(lnTau);
  const onBound = tau <= (1 + BOUND_MARGIN) * lower || tau >= (1 - BOUND_MARGIN) * upper;
  const finite = Number.isFinite(a) && Number.isFinite(tau);
  return {
    A: a / tau,
    alpha: 1,
    tau1: tau,
    tau2: tau,
    limit: a,
    converged: finite && !onBound,
    message: !finite ? 'fit parameters not finite' : onBound ? 'the time constant sits on a bound' : 'minimum inside the bounds',
    tauBounds: { lower, upper },
  };
}

// ---------------------------------------------------------------------------------------------
// Helfand moment

/** Work array for the Helfand moment G (reused: fresh memory is expensive to touch). */
let helfandWork: Float64Array | null = null;

/**
 * Mean-squared Helfand moment M(k) = ⟨(G_{i+k} − G_i)²⟩ over all origins i of one series, with
 * G_i = dt Σ_{j<i} x_j (i = 0 … n) (Helfand, Phys. Rev. 119, 1 (1960)). Uses
 * M(k) = [Σ_{i=0}^{L−1−k} (G_i² + G_{i+k}²)]/(L−k) − 2 C_GG(k), L = n + 1 (G centred first, which
 * leaves every difference unchanged), with C_GG the unbiased autocorrelation of G by FFT
 * (src/correlate.ts, which picks the cheapest transform layout for the lag range).
 * Units: x² · ps².
 */
export function helfandMsd(x: Float64Array, dt: number, maxLag: number): Float64Array {
  const L = x.length + 1;
  if (!Number.isInteger(maxLag) || maxLag < 0 || maxLag > L - 1) throw new UsageError(`helfandMsd: maxLag ${maxLag} must be an integer in [0, ${L - 1}]`);
  if (!helfandWork || helfandWork.length < L) helfandWork = new Float64Array(L);
  const G = helfandWork.subarray(0, L);
  let s = 0;
  G[0] = 0;
  for (let i = 0; i < x.length; i++) {
    s += x[i] * dt;
    G[i + 1] = s;
  }
  // ΔG is unchanged by a constant shift: centre G to keep S − 2C well conditioned.
  let gm = 0;
  for (let i = 0; i < L; i++) gm += G[i];
  gm /= L;
  for (let i = 0; i < L; i++) G[i] -= gm;
  const cgg = autocorrelation(G, { maxLag });
  // Σ_{i=0}^{L-1-k} G_i² = total − (sum of the last k squares); Σ_{i=k}^{L-1} G_i² = total − (first k).
  let total = 0;
  for (let i = 0; i < L; i++) total += G[i] * G[i];
  const out = new Float64Array(maxLag + 1);
  let first = 0;
  let last = 0;
  for (let k = 0; k <= maxLag; k++) {
    if (k > 0) {
      first += G[k - 1] * G[k - 1];
      last += G[L - k] * G[L - k];
    }
    out[k] = Math.max(0, (total - last + (total - first)) / (L - k) - 2 * cgg[k]);
  }
  out[0] = 0;
  return out;
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
  runningIntegral(acf, dt, pref, out);
  return out;
}

/**
 * Viscosity by Green–Kubo with the time-decomposition method plus the Helfand cross-check (all
 * methods and rules in the module comment). Never returns a bare number: when a rule fails,
 * `converged` is false and `reasons` says why.
 */
export function analyseViscosity(input: ViscosityInput): ViscosityAnalysis {
  const { components, dt } = input;
  const plan = planViscosity(input);
  const { n, nc, pref, fraction, tc, N, m, maxLag } = plan;
  const { reasons, notes } = plan;

  // 3. Running integrals: one per (segment, component) "unit". In an isotropic fluid the
  // components are equivalent and mutually uncorrelated (module comment), so the N·c unit
  // curves are independent estimates of η(t); pooling them makes σ(t) far less noisy than the
  // spread of only N segment averages. Unit curves are kept in single precision (jackknife).
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
  let fit: DoubleExponentialFit | null = null;
  let model: 'double exponential' | 'single exponential' = 'double exponential';
  let rejected: string | null = null;
  const fy = fitIdx.map((k) => mean[k]);
  try {
    fit = fitDoubleExponential(ft, fy, fw);
  } catch (e) {
    reasons.push(`the double-exponential fit failed: ${(e as Error).message}`);
  }
  // A time constant on its bound or α outside [0, 1]: the data do not support two decaying
  // relaxations; fall back to one (the α = 1 case of the same model).
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
    const rise = plateauRise(unitCurves, kCut);
    if (rise && rise.mean > 3 * rise.standardError && rise.mean > PLATEAU_TOLERANCE * Math.abs(eta)) {
      reasons.push(
        `no plateau: over the second half of the window (${((kCut >> 1) * dt).toPrecision(3)}–${(kCut * dt).toPrecision(3)} ps) the running integral ` +
          `still rises by ${((100 * rise.mean) / Math.abs(eta)).toFixed(0)} % of η (${(rise.mean / rise.standardError).toFixed(1)} standard errors): the correlation has not decayed`,
      );
    }
    const jack: number[] = [];
    for (let u = 0; u < U; u++) {
      const y = fitIdx.map((k) => (U * mean[k] - unitCurves[u][k]) / (U - 1));
      try {
        const f = refit(y, fit);
        if (Number.isFinite(f.limit)) jack.push(f.limit);
      } catch {
        /* counted below */
      }
    }
    if (jack.length === U) {
      const jm = jack.reduce((acc, v) => acc + v, 0) / U;
      etaErr = Math.sqrt(((U - 1) / U) * jack.reduce((acc, v) => acc + (v - jm) ** 2, 0));
    } else {
      reasons.push(`the jackknife refit failed for ${U - jack.length} of ${U} estimates: no uncertainty`);
    }
  }

  // 6. Per-component values at the cut-off (mean and standard error over the segments).
  const comps = components.map((c, ci) => {
    const mu = compSum[ci][kCut] / N;
    const sd = Math.sqrt(Math.max(0, (compSq[ci][kCut] - N * mu * mu) / (N - 1)));
    return { name: c.name, meanRemoved: c.mean, runningIntegralEnd: quantity(mu, sd / Math.sqrt(N), 'Pa s') };
  });

  // 7. Helfand cross-check, per unit.
  let helfand: Quantity | null = null;
  let helfandWindow: ViscosityResult['helfandWindow'] = null;
  const startTime = fit && fit.converged && eta > 0 ? t95(fit, time[kCut]) : 5 * tc.tau;
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
    cutoffReached: cut.reached,
    fitWindow,
    components: comps,
    weighting:
      nc === 5
        ? 'Daivis–Evans: mean of the five equivalent, uncorrelated components xy, xz, yz, (xx−yy)/2, (2zz−xx−yy)/(2√3), weight 1/5 each (equals V/(10 k_B T)∫Σ⟨P°αβ P°αβ⟩ over the traceless tensor)'
        : `equal weights (1/${nc}) over the available components ${components.map((c) => c.name).join(', ')}`,
    fit: {
      model,
      rejectedDoubleExponential: rejected,
      A: quantity(fit ? fit.A : NaN, null, 'Pa s/ps'),
      alpha: fit ? fit.alpha : NaN,
      tau1: quantity(fit ? fit.tau1 : NaN, null, 'ps'),
      tau2: quantity(fit ? fit.tau2 : NaN, null, 'ps'),
      b,
      sigmaPrefactor: sigmaA,
      converged: fit ? fit.converged : false,
      plateauReached: plateau,
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

/** Time at which the fitted double exponential reaches 95 % of its limit (bisection on [0, tMax]). */
function t95(fit: DoubleExponential, tMax: number): number {
  const lim = doubleExponentialLimit(fit);
  let lo = 0;
  let hi = tMax;
  if (doubleExponential(hi, fit) < 0.95 * lim) return hi;
  for (let i = 0; i < 60; i++) {
    const mid = 0.5 * (lo + hi);
    if (doubleExponential(mid, fit) < 0.95 * lim) lo = mid;
    else hi = mid;
  }
  return hi;
}
