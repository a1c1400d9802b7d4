/**
 * Fits of exponential relaxations: the double exponential η(t) = Aατ₁(1 − e^{−t/τ₁}) +
 * A(1 − α)τ₂(1 − e^{−t/τ₂}) and its single-exponential case a(1 − e^{−t/τ}) to a running
 * integral (Zhang, Otani & Maginn, J. Chem. Theory Comput. 11, 3537 (2015)), and the decay time of
 * C(t) ∝ e^{−t/τ} from a straight line through ln C.
 *
 * Methods: separable least squares (the models are linear in the amplitudes for fixed time
 * constants; Golub & Pereyra, SIAM J. Numer. Anal. 10, 413 (1973)) for the starting point or the
 * profiled cost, Levenberg–Marquardt (src/numerics/levenberg-marquardt.ts) or golden-section
 * search (Press et al., Numerical Recipes, 3rd ed. (2007), §10.2) for the refinement, and the
 * unweighted line fit of src/numerics/line-fit.ts for ln C.
 *
 * Cost, for m points: double exponential O(24²/2 · m) for the start grid plus O(m) per
 * Levenberg–Marquardt iteration (at most 500); single exponential O(m) per profile evaluation,
 * about 200 + 2·60 of them; log-linear decay O(m).
 */
import { AnalysisError } from '../errors.js';
import { levenbergMarquardt } from './levenberg-marquardt.js';
import { fitLine } from './line-fit.js';


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

/**
 * Time at which the double exponential reaches `fraction` of its long-time limit,
 * η(t) = fraction · A(ατ₁ + (1 − α)τ₂), by 60 bisections on [0, tMax]; tMax itself when the curve
 * has not reached it there (a rising sum of relaxations: the crossing is unique).
 */
export function doubleExponentialRiseTime(p: DoubleExponential, fraction: number, tMax: number): number {
  const lim = doubleExponentialLimit(p);
  let lo = 0;
  let hi = tMax;
  if (doubleExponential(hi, p) < fraction * lim) return hi;
  for (let i = 0; i < 60; i++) {
    const mid = 0.5 * (lo + hi);
    if (doubleExponential(mid, p) < fraction * lim) lo = mid;
    else hi = mid;
  }
  return hi;
}

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
  let p0: number[];
  if (start) {
    p0 = [
      (start.A * start.alpha * start.tau1) / yMax,
      (start.A * (1 - start.alpha) * start.tau2) / yMax,
      uOf(start.tau1 / tMax),
      uOf(start.tau2 / tMax),
    ];
  } else {
    p0 = gridStart(ts, ys, sw, lnLo, span, uOf);
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

/**
 * Start of the double-exponential fit (see `fitDoubleExponential`): a log grid of 24 time
 * constants strictly inside the bounds, every pair τ_i ≤ τ_j with the 2×2 weighted linear solve for
 * the amplitudes (separable least squares, Golub & Pereyra 1973); returns (a₁, a₂, u₁, u₂) of the
 * cheapest pair on the scaled data (ts, ys, weights sw²).
 */
function gridStart(
  ts: Float64Array,
  ys: Float64Array,
  sw: Float64Array,
  lnLo: number,
  span: number,
  uOf: (tau: number) => number,
): number[] {
  const m = ts.length;
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
}

/** A fitted time constant within this fraction of its bound counts as sitting on the bound. */
export const BOUND_MARGIN = 0.01;

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

/**
 * Decay time τ of C(t) ∝ e^{−t/τ} (e.g. a residence-time survival curve) from ln C(t) = a − t/τ by
 * unweighted least squares over lags [from, to] (Press et al., Numerical Recipes, 3rd ed. 2007,
 * §15.2 via `fitLine`): τ = −1/slope in the unit of `time`. Returns NaN when a value in the window is not positive or the slope is
 * not negative.
 */
export function fitExponentialDecay(time: ArrayLike<number>, c: ArrayLike<number>, from: number, to: number): number {
  const x: number[] = [], y: number[] = [];
  for (let t = from; t <= to; t++) {
    if (!(c[t] > 0)) return NaN;
    x.push(time[t]);
    y.push(Math.log(c[t]));
  }
  if (x.length < 3) return NaN;
  const f = fitLine(x, y);
  return f.slope < 0 ? -1 / f.slope : NaN;
}
