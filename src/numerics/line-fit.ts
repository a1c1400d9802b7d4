/**
 * Straight-line least squares y = a + b·x, unweighted or with weights w_i = 1/σ_i².
 *
 * Formula (Press et al., Numerical Recipes, 3rd ed. (2007), §15.2): unweighted b = S_xy/S_xx,
 * a = ȳ − b x̄ (centred sums), residual variance s² = Σr²/(n−2), σ_b = s/√S_xx,
 * σ_a = s √(1/n + x̄²/S_xx); weighted Δ = S·S_xx − S_x², b = (S·S_xy − S_x S_y)/Δ,
 * a = (S_xx S_y − S_x S_xy)/Δ, σ_b = √(S/Δ), σ_a = √(S_xx/Δ).
 *
 * Cost: O(n) time (three passes unweighted, one weighted), O(1) memory.
 */

/** Result of a straight-line fit y = intercept + slope·x. */
export interface LineFit {
  slope: number;
  intercept: number;
  /** Standard error of the slope (from the residuals, or from the weights). */
  slopeError: number;
  interceptError: number;
  /** Number of points used. */
  points: number;
}

/**
 * Least-squares line y = a + b x over the points i ∈ [from, to] (inclusive).
 * Unweighted: b = S_xy/S_xx, a = ȳ − b x̄, s² = Σr²/(n−2), σ_b = s/√S_xx,
 * σ_a = s √(1/n + x̄²/S_xx). Weighted (w_i = 1/σ_i²): Δ = S·S_xx − S_x², b = (S·S_xy − S_x S_y)/Δ,
 * a = (S_xx S_y − S_x S_xy)/Δ, σ_b = √(S/Δ), σ_a = √(S_xx/Δ) (Press et al., Numerical Recipes,
 * 3rd ed. (2007), §15.2). Needs at least 3 points (2 when weighted) and distinct x.
 */
export function fitLine(
  x: ArrayLike<number>,
  y: ArrayLike<number>,
  opts: { from?: number; to?: number; weights?: ArrayLike<number> } = {},
): LineFit {
  const from = opts.from ?? 0;
  const to = opts.to ?? x.length - 1;
  const n = to - from + 1;
  const w = opts.weights;
  if (!(n >= (w ? 2 : 3))) throw new RangeError(`fitLine: need at least ${w ? 2 : 3} points, got ${n}`);
  if (w) {
    let s = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
    for (let i = from; i <= to; i++) {
      const wi = w[i];
      s += wi;
      sx += wi * x[i];
      sy += wi * y[i];
      sxx += wi * x[i] * x[i];
      sxy += wi * x[i] * y[i];
    }
    const delta = s * sxx - sx * sx;
    if (!(delta > 0)) throw new RangeError('fitLine: x values do not vary');
    return {
      slope: (s * sxy - sx * sy) / delta,
      intercept: (sxx * sy - sx * sxy) / delta,
      slopeError: Math.sqrt(s / delta),
      interceptError: Math.sqrt(sxx / delta),
      points: n,
    };
  }
  let mx = 0, my = 0;
  for (let i = from; i <= to; i++) {
    mx += x[i];
    my += y[i];
  }
  mx /= n;
  my /= n;
  let sxx = 0, sxy = 0;
  for (let i = from; i <= to; i++) {
    const dx = x[i] - mx;
    sxx += dx * dx;
    sxy += dx * (y[i] - my);
  }
  if (!(sxx > 0)) throw new RangeError('fitLine: x values do not vary');
  const slope = sxy / sxx;
  const intercept = my - slope * mx;
  let rss = 0;
  for (let i = from; i <= to; i++) {
    const r = y[i] - intercept - slope * x[i];
    rss += r * r;
  }
  const s2 = rss / (n - 2);
  return {
    slope,
    intercept,
    slopeError: Math.sqrt(s2 / sxx),
    interceptError: Math.sqrt(s2 * (1 / n + (mx * mx) / sxx)),
    points: n,
  };
}
