/**
 * The non-Gaussian parameter of displacements, α₂ = d⟨Δr⁴⟩/((d+2)⟨Δr²⟩²) − 1 (Rahman, Phys. Rev.
 * 136, A405 (1964); zero for Gaussian displacements), from moments summed directly over all time
 * origins, and the log-spaced lags it is evaluated at.
 *
 * The moments are summed from their definition rather than by FFT (the exact FFT form needs a
 * dozen correlations of powers of the coordinates and loses precision).
 *
 * Cost: O(T) per lag and series for the moment sums, so O(T · lags) per site with about five lags
 * per decade.
 */

/** Lags per decade at which the non-Gaussian parameter is computed (ratio 10^(1/5) ≈ 1.58). */
export const NON_GAUSSIAN_LAGS_PER_DECADE = 5;

/**
 * Log-spaced integer lags 1 … maxLag, about `perDecade` per decade (duplicates removed):
 * round(10^(k/perDecade)) for k = 0, 1, …, plus maxLag itself.
 */
export function logSpacedLags(maxLag: number, perDecade = NON_GAUSSIAN_LAGS_PER_DECADE): number[] {
  const out: number[] = [];
  if (maxLag < 1) return out;
  for (let k = 0; ; k++) {
    const m = Math.round(10 ** (k / perDecade));
    if (m > maxLag) break;
    if (out[out.length - 1] !== m) out.push(m);
  }
  if (out[out.length - 1] !== maxLag) out.push(maxLag);
  return out;
}

/**
 * Non-Gaussian parameter in d dimensions, α₂ = d⟨Δr⁴⟩ / ((d+2)⟨Δr²⟩²) − 1 (Rahman, Phys. Rev.
 * 136, A405 (1964) for d = 3: 3⟨Δr⁴⟩/(5⟨Δr²⟩²) − 1; the d-dimensional form follows from the
 * Gaussian moment ⟨r⁴⟩ = (1 + 2/d)⟨r²⟩²). Zero for Gaussian displacements.
 */
export function nonGaussianFromMoments(msd: number, fourth: number, dims: number): number {
  return (dims * fourth) / ((dims + 2) * msd * msd) - 1;
}

/**
 * Add Σ_t |Δr|² and Σ_t |Δr|⁴ over all origins t for each lag m of `lags` to s2 and s4, for one
 * site whose coordinate series (the analysed axes) are `axes`: |Δr|² = Σ_axes [x(t+m) − x(t)]²
 * (the moments of Rahman, Phys. Rev. 136, A405 (1964), directly from the definition).
 */
export function addNonGaussianSums(axes: Float64Array[], lags: readonly number[], s2: Float64Array, s4: Float64Array): void {
  const T = axes[0].length;
  const x = axes[0];
  const y = axes.length > 1 ? axes[1] : null;
  const z = axes.length > 2 ? axes[2] : null;
  for (let li = 0; li < lags.length; li++) {
    const m = lags[li];
    let a2 = 0, a4 = 0;
    if (y && z) {
      // Two origins per step with separate partial sums (shorter dependency chains).
      let b2 = 0, b4 = 0;
      let t = 0;
      for (; t + 1 + m < T; t += 2) {
        const dx = x[t + m] - x[t], dy = y[t + m] - y[t], dz = z[t + m] - z[t];
        const r2 = dx * dx + dy * dy + dz * dz;
        a2 += r2;
        a4 += r2 * r2;
        const ex = x[t + 1 + m] - x[t + 1], ey = y[t + 1 + m] - y[t + 1], ez = z[t + 1 + m] - z[t + 1];
        const q2 = ex * ex + ey * ey + ez * ez;
        b2 += q2;
        b4 += q2 * q2;
      }
      if (t + m < T) {
        const dx = x[t + m] - x[t], dy = y[t + m] - y[t], dz = z[t + m] - z[t];
        const r2 = dx * dx + dy * dy + dz * dz;
        a2 += r2;
        a4 += r2 * r2;
      }
      a2 += b2;
      a4 += b4;
    } else if (y) {
      for (let t = 0; t + m < T; t++) {
        const dx = x[t + m] - x[t], dy = y[t + m] - y[t];
        const r2 = dx * dx + dy * dy;
        a2 += r2;
        a4 += r2 * r2;
      }
    } else {
      for (let t = 0; t + m < T; t++) {
        const dx = x[t + m] - x[t];
        const r2 = dx * dx;
        a2 += r2;
        a4 += r2 * r2;
      }
    }
    s2[li] += a2;
    s4[li] += a4;
  }
}
