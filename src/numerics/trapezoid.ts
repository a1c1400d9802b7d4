/**
 * The cumulative trapezoid rule: the running integral of samples on a uniform grid, and the
 * closed-form error of the rule on an exponential decay.
 *
 * Formula: I_0 = 0 and I_k = scale · s_k with s_k = s_{k−1} + Δt (y_{k−1} + y_k)/2 (trapezoidal
 * rule; Press et al., Numerical Recipes, 3rd ed. (2007), §4.1). Its error on a smooth function is
 * at most (b − a) Δt² max|y''|/12 (same source); on e^{−t/τ} sampled every h the whole integral
 * comes out too large by the factor x·coth(x), x = h/(2τ) (closed form, `trapezoidExponentialBias`).
 *
 * Cost: O(n) time; one output array of n doubles (none when the caller passes `out`).
 */

/**
 * Cumulative trapezoid integral of y on a grid of spacing dt, times `scale`:
 * I_0 = 0, I_k = scale · Σ_{j<k} (y_j + y_{j+1})/2 · dt (trapezoidal rule, Press et al., Numerical
 * Recipes, 3rd ed. (2007), §4.1). The sum is accumulated unscaled, left to right, and each entry
 * multiplied by `scale` once (scale = 1 leaves the sums untouched). Writes into `out` when given
 * (it must hold y.length values).
 */
export function cumulativeTrapezoid(y: ArrayLike<number>, dt: number, scale = 1, out?: Float64Array): Float64Array {
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
 * Relative overestimate of the trapezoid integral of an exponential decay C(t) = C(0)e^{−t/τ}
 * sampled every h, as a function of r = C(h)/C(0) = e^{−h/τ}: the trapezoid sum over all steps is
 * h(1/2 + r/(1 − r)) = (h/2)(1 + r)/(1 − r) against the exact τ = −h/ln r (geometric series), a
 * ratio x·coth(x) with x = −ln(r)/2 — the same for every step, hence for the whole integral.
 * Returns x·coth(x) − 1 (closed form; e.g. 1.5 ln 2 − 1 = 0.0397 at r = 0.5, 1.38 at r = 0.0094);
 * 0 at r = 1, NaN outside (0, 1].
 */
export function trapezoidExponentialBias(r: number): number {
  if (!(r > 0 && r < 1)) return r === 1 ? 0 : NaN;
  const x = -Math.log(r) / 2;
  return x / Math.tanh(x) - 1;
}
