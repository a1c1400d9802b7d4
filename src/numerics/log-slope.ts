/**
 * Local slope of a curve on logarithmic axes, β(t) = d ln y / d ln t, by a centred difference
 * between the lags t/r and r·t (r = 1.25): a power law y ∝ t^β gives β exactly. Common practice,
 * no source (a finite difference on a logarithmic grid).
 *
 * Cost: O(n) time, one output array.
 */

/** Ratio between the two lags the local log-log slope is taken between (t/r and r·t). */
export const LOG_SLOPE_STENCIL = 1.25;

/**
 * Local log-log slope β_i = [ln y(j₂) − ln y(j₁)] / [ln t(j₂) − ln t(j₁)] with
 * j₁ = max(1, min(i−1, ⌊i/r⌋)) and j₂ = min(n−1, max(i+1, ⌈r·i⌉)), r = LOG_SLOPE_STENCIL
 * (a centred difference on a logarithmic grid; common practice, no source). NaN at i = 0,
 * where y or t is not positive, and where no distinct neighbours exist.
 */
export function logLogSlopes(time: ArrayLike<number>, y: ArrayLike<number>, stencil = LOG_SLOPE_STENCIL): Float64Array {
  const n = Math.min(time.length, y.length);
  const out = new Float64Array(n).fill(NaN);
  for (let i = 1; i < n; i++) {
    const j1 = Math.max(1, Math.min(i - 1, Math.floor(i / stencil)));
    const j2 = Math.min(n - 1, Math.max(i + 1, Math.ceil(i * stencil)));
    if (j2 <= j1) continue;
    const y1 = y[j1], y2 = y[j2], t1 = time[j1], t2 = time[j2];
    if (!(y1 > 0 && y2 > 0 && t1 > 0 && t2 > t1)) continue;
    out[i] = Math.log(y2 / y1) / Math.log(t2 / t1);
  }
  return out;
}
