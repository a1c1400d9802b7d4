/**
 * Mean-squared Helfand moment of a series: the mean-squared displacement of its running integral
 * G_i = Δt Σ_{j<i} x_j over all time origins, ⟨(G_{i+k} − G_i)²⟩ (Helfand, Phys. Rev. 119, 1
 * (1960)); its slope gives a transport coefficient without integrating a correlation function.
 *
 * Formula: M(k) = [Σ_{i=0}^{L−1−k} (G_i² + G_{i+k}²)]/(L−k) − 2 C_GG(k), L = n + 1, with C_GG the
 * unbiased autocorrelation of G by FFT (the Wiener–Khinchin route of Kneller et al., Comput.
 * Phys. Commun. 91, 191 (1995), as for the MSD); G is centred first, which changes no
 * difference and keeps the subtraction well conditioned.
 *
 * Cost: one FFT autocorrelation of n + 1 values (O(n log n), src/correlate.ts) plus O(n); one work
 * array of n + 1 doubles kept between calls.
 */
import { autocorrelation } from '../correlate.js';
import { UsageError } from '../errors.js';

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
