/**
 * All-origins mean-squared displacement of one-dimensional series,
 * MSD(m) = 1/(T−m) Σ_{t=0}^{T−m−1} [x(t+m) − x(t)]², for lags m = 0 … maxLag.
 *
 * Formula: MSD(m) = S1(m) − 2 S2(m) with S1(m) = 1/(T−m) Σ [x(t)² + x(t+m)²] (a running sum) and
 * S2(m) = 1/(T−m) Σ x(t) x(t+m) (autocorrelation by FFT, src/correlate.ts): the Wiener–Khinchin
 * route of Kneller, Keiner, Kneller & Schiller, Comput. Phys. Commun. 91, 191 (1995) (also
 * Calandrini et al., École thématique SFN 12, 201 (2011)). Each series is centred on its mean
 * first (the MSD does not change; the sums stay well conditioned). The direct definition is kept
 * as the reference the FFT form is tested against.
 *
 * Cost: FFT form O(T log T) per series (one batched autocorrelation) plus O(T); direct form
 * O(T·maxLag).
 */
import { sumOfAutocorrelations } from '../correlate.js';

/**
 * Self term S1(m) summed over series: Σ_series 1/(T−m) Σ_{t=0}^{T−m−1} [x(t)² + x(t+m)²], by the
 * recursion Q(0) = 2 Σ x², Q(m) = Q(m−1) − x(m−1)² − x(T−m)², S1 = Q/(T−m) (Kneller et al.,
 * Comput. Phys. Commun. 91, 191 (1995)). Adds into `acc` (length maxLag+1).
 */
export function addSelfTerm(x: Float64Array, maxLag: number, acc: Float64Array): void {
  const T = x.length;
  let q = 0;
  for (let t = 0; t < T; t++) q += x[t] * x[t];
  q *= 2;
  acc[0] += q / T;
  for (let m = 1; m <= maxLag; m++) {
    q -= x[m - 1] * x[m - 1] + x[T - m] * x[T - m];
    acc[m] += q / (T - m);
  }
}

/** Subtract the mean of x from every element, in place (the MSD is shift invariant). */
export function centreInPlace(x: Float64Array): void {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += x[i];
  const m = s / x.length;
  for (let i = 0; i < x.length; i++) x[i] -= m;
}

/**
 * Sum over series of the all-origins MSD, MSD(m) = S1(m) − 2 S2(m) (Kneller et al. 1995; S2 by
 * FFT, src/correlate.ts). The series are centred in place first. m = 0 … maxLag.
 */
export function msdSumFft(series: Float64Array[], maxLag: number): Float64Array {
  const out = new Float64Array(maxLag + 1);
  if (series.length === 0) return out;
  for (const x of series) {
    centreInPlace(x);
    addSelfTerm(x, maxLag, out);
  }
  const s2 = sumOfAutocorrelations(series, { maxLag });
  for (let m = 0; m <= maxLag; m++) out[m] -= 2 * s2[m];
  out[0] = 0;
  return out;
}

/** All-origins MSD of one series by FFT: msdSumFft([x]) on a copy of x. */
export function msdOfSeries(x: Float64Array, maxLag = x.length - 1): Float64Array {
  return msdSumFft([Float64Array.from(x)], maxLag);
}

/**
 * Direct O(T·maxLag) all-origins MSD of one series, MSD(m) = 1/(T−m) Σ_t [x(t+m) − x(t)]²
 * (the definition; the reference the FFT form is tested against).
 */
export function directMsdOfSeries(x: Float64Array, maxLag = x.length - 1): Float64Array {
  const T = x.length;
  const out = new Float64Array(maxLag + 1);
  for (let m = 1; m <= maxLag; m++) {
    let s = 0;
    for (let t = 0; t + m < T; t++) {
      const d = x[t + m] - x[t];
      s += d * d;
    }
    out[m] = s / (T - m);
  }
  return out;
}
