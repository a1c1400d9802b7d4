/**
 * Student's t distribution with a whole number ν of degrees of freedom: its cumulative
 * distribution and quantiles, for confidence intervals from few independent estimates.
 *
 * Formula: the finite series of Abramowitz & Stegun, Handbook of Mathematical Functions (1964),
 * 26.7.3 (ν odd) and 26.7.4 (ν even) give P(|T| ≤ t) exactly; quantiles by bisection on it
 * (Student, Biometrika 6, 1 (1908)).
 *
 * Cost: the CDF is O(ν) (one series of about ν/2 terms); a quantile about 50–60 CDF evaluations
 * (bisection to 1e-13 relative), O(ν) each.
 */

/** Φ(1) = 0.841344746…: probability that a standard normal variable is below 1 (one-sigma level). */
export const ONE_SIGMA_LEVEL = 0.8413447460685429;

/**
 * Cumulative distribution of Student's t with ν (integer ≥ 1) degrees of freedom, by the finite
 * series of Abramowitz & Stegun, Handbook of Mathematical Functions (1964), 26.7.3 (ν odd) and
 * 26.7.4 (ν even): with θ = arctan(|t|/√ν), A(t|ν) = P(|T| ≤ |t|) =
 * (2/π)[θ + sin θ (cos θ + (2/3)cos³θ + … + (2·4···(ν−3))/(1·3···(ν−2)) cos^{ν−2}θ)] for odd ν
 * (the bracket's series empty for ν = 1), sin θ [1 + (1/2)cos²θ + … + (1·3···(ν−3))/(2·4···(ν−2))
 * cos^{ν−2}θ] for even ν; F(t) = (1 ± A)/2.
 */
export function studentTCdf(t: number, dof: number): number {
  if (!(Number.isInteger(dof) && dof >= 1)) throw new RangeError(`studentTCdf: degrees of freedom must be a whole number ≥ 1, got ${dof}`);
  if (t === Infinity) return 1;
  if (t === -Infinity) return 0;
  const theta = Math.atan(Math.abs(t) / Math.sqrt(dof));
  const s = Math.sin(theta);
  const c2 = Math.cos(theta) ** 2;
  let A: number;
  if (dof % 2 === 1) {
    let sum = 0;
    if (dof > 1) {
      let term = Math.cos(theta);
      sum = term;
      for (let j = 3; j <= dof - 2; j += 2) {
        term *= ((j - 1) / j) * c2;
        sum += term;
      }
    }
    A = (2 / Math.PI) * (theta + s * sum);
  } else {
    let term = 1;
    let sum = 1;
    for (let j = 2; j <= dof - 2; j += 2) {
      term *= ((j - 1) / j) * c2;
      sum += term;
    }
    A = s * sum;
  }
  return t >= 0 ? 0.5 * (1 + A) : 0.5 * (1 - A);
}

/**
 * Quantile t_{p,ν} of Student's t (F(t_{p,ν}) = p, 0 < p < 1, integer ν ≥ 1): bisection on the
 * exact CDF `studentTCdf` to 1e-13 relative (Abramowitz & Stegun 26.7.3–4).
 */
export function studentTQuantile(p: number, dof: number): number {
  if (!(p > 0 && p < 1)) throw new RangeError(`studentTQuantile: p must lie in (0, 1), got ${p}`);
  if (p < 0.5) return -studentTQuantile(1 - p, dof);
  if (p === 0.5) return 0;
  let hi = 1;
  while (studentTCdf(hi, dof) < p) hi *= 2;
  let lo = 0;
  for (let i = 0; i < 200 && hi - lo > 1e-13 * hi; i++) {
    const mid = 0.5 * (lo + hi);
    if (studentTCdf(mid, dof) < p) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}
