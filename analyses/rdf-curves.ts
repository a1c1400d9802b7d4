/**
 * The g(r) computations on accumulated histograms and finished curves, free of any pass state:
 * the ideal-gas shell volumes and the normalisation of pair counts to g(r), the running
 * coordination number, the Savitzky–Golay smoothing and the first-shell search, and the block
 * rules of the uncertainty. The formulas are stated in the module comment of analyses/rdf.ts.
 */

/** Each automatic block spans at least this many statistical inefficiencies. */
export const BLOCK_LENGTH_FACTOR = 4;
/** Upper limit of the automatic block count (SE of the SE is then 1/√(2·31) ≈ 13 %). */
export const MAX_AUTO_BLOCKS = 32;
/** Fewest pair counts in the first excursion above 1 for it to count as the first peak. */
export const MIN_PEAK_COUNTS = 25;
/** Name of the smoothing used to locate shells (reported in the results). */
export const SMOOTHING = 'Savitzky-Golay 7-point quadratic (Savitzky & Golay 1964); raw values in the 3 bins at each end';

/** Ideal-gas volume of each spherical shell bin: V_k = (4π/3)(r_hi³ − r_lo³), r_lo = kΔr (Å³). */
export function shellVolumes(nbins: number, binWidth: number): Float64Array {
  const v = new Float64Array(nbins);
  for (let k = 0; k < nbins; k++) {
    const lo = k * binWidth, hi = (k + 1) * binWidth;
    v[k] = (4 * Math.PI / 3) * (hi * hi * hi - lo * lo * lo);
  }
  return v;
}

/** Bin centres r_k = (k + ½)Δr (Å). */
export function binCentres(nbins: number, binWidth: number): Float64Array {
  const r = new Float64Array(nbins);
  for (let k = 0; k < nbins; k++) r[k] = (k + 0.5) * binWidth;
  return r;
}

/**
 * g(r_k) = C_k / (N_pairs · V_k · Σ_f 1/V_f): observed ordered-pair counts over the ideal-gas
 * expectation summed frame by frame (normalisation in the module comment; common practice, e.g.
 * Allen & Tildesley, Computer Simulation of Liquids, 2nd ed. 2017, §8.2).
 */
export function normaliseCounts(counts: ArrayLike<number>, binWidth: number, orderedPairs: number, inverseVolumeSum: number): Float64Array {
  const v = shellVolumes(counts.length, binWidth);
  const g = new Float64Array(counts.length);
  const norm = orderedPairs * inverseVolumeSum;
  for (let k = 0; k < counts.length; k++) g[k] = norm > 0 ? counts[k] / (norm * v[k]) : NaN;
  return g;
}

/**
 * Running coordination number at the bin centres, n(r_c,k) = 4πρ ∫_0^{r_c,k} g r² dr with g
 * constant in each bin: ρ [Σ_{m<k} g_m V_m + g_k (4π/3)(r_c,k³ − r_k³)] (definition of the
 * coordination number, e.g. Hansen & McDonald, Theory of Simple Liquids, 4th ed. 2013, §2.5).
 */
export function runningCoordination(g: ArrayLike<number>, binWidth: number, density: number): Float64Array {
  const n = new Float64Array(g.length);
  let acc = 0;
  for (let k = 0; k < g.length; k++) {
    const lo = k * binWidth, c = (k + 0.5) * binWidth, hi = (k + 1) * binWidth;
    const half = (4 * Math.PI / 3) * (c * c * c - lo * lo * lo);
    n[k] = density * (acc + g[k] * half);
    acc += g[k] * (4 * Math.PI / 3) * (hi * hi * hi - lo * lo * lo);
  }
  return n;
}

/** Coefficients of the 7-point quadratic/cubic Savitzky–Golay smoother (Savitzky & Golay 1964, Table I). */
export const SG7 = [-2, 3, 6, 7, 6, 3, -2].map((c) => c / 21);

/**
 * 7-point quadratic Savitzky–Golay smoothing y_s(k) = Σ_{j=−3}^{3} c_j y(k+j), c = (−2, 3, 6, 7,
 * 6, 3, −2)/21 (Savitzky & Golay 1964); exact for polynomials up to degree 3. The three points at
 * each end are returned unsmoothed.
 */
export function savitzkyGolay7(y: ArrayLike<number>): Float64Array {
  const n = y.length;
  const out = Float64Array.from(y as ArrayLike<number>);
  for (let k = 3; k < n - 3; k++) {
    let s = 0;
    for (let j = -3; j <= 3; j++) s += SG7[j + 3] * y[k + j];
    out[k] = s;
  }
  return out;
}

/** First shell of a g(r) curve: indices of the first peak and the first minimum (or null). */
export interface ShellIndices {
  peak: number | null;
  minimum: number | null;
  /** Why a feature is missing, when it is. */
  note: string | null;
}

/**
 * Locate the first peak and first minimum on a smoothed curve `gs` (rule in the module comment):
 * excursion = maximal run of bins with gs > 1; the first excursion holding ≥ minCounts raw
 * pair counts gives the peak (argmax of gs); the minimum is the argmin of gs from the end of
 * that excursion to the start of the next (middle of ties). If gs never falls below 1 after the
 * peak, the first local minimum (gs[k−1] > gs[k] ≤ gs[k+1]) is used. A minimum in the last three
 * bins (unsmoothed edge, g may still be falling) is not accepted. Common practice, no source.
 */
export function findFirstShell(gs: ArrayLike<number>, counts: ArrayLike<number>, minCounts = MIN_PEAK_COUNTS): ShellIndices {
  const n = gs.length;
  let k = 0;
  let peak: number | null = null;
  let end = n;
  while (k < n) {
    while (k < n && !(gs[k] > 1)) k++;
    if (k >= n) break;
    let e = k;
    let total = 0;
    let best = k;
    while (e < n && gs[e] > 1) {
      total += counts[e];
      if (gs[e] > gs[best]) best = e;
      e++;
    }
    if (total >= minCounts) {
      peak = best;
      end = e;
      break;
    }
    k = e;
  }
  if (peak === null) return { peak: null, minimum: null, note: `g(r) never rises above 1 with at least ${minCounts} pair counts within r-max` };
  let minimum: number | null = null;
  if (end < n) {
    let next = end;
    while (next < n && !(gs[next] > 1)) next++;
    let low = Infinity;
    for (let j = end; j < next; j++) if (gs[j] < low) low = gs[j];
    let first = -1, last = -1;
    for (let j = end; j < next; j++) {
      if (gs[j] === low) {
        if (first < 0) first = j;
        last = j;
      } else if (first >= 0) break;
    }
    minimum = Math.floor((first + last) / 2);
  } else {
    for (let j = peak + 1; j < n - 1; j++) {
      if (gs[j - 1] > gs[j] && gs[j] <= gs[j + 1]) {
        minimum = j;
        break;
      }
    }
  }
  if (minimum !== null && minimum >= n - 3) minimum = null;
  return {
    peak,
    minimum,
    note: minimum === null ? 'no first minimum inside r-max (g(r) still falling at r-max): the coordination number is not defined; raise --r-max or use a larger cell' : null,
  };
}

/**
 * Automatic block count: B = min(MAX_AUTO_BLOCKS, ⌊F / (BLOCK_LENGTH_FACTOR · s)⌋), at least 2,
 * s the statistical inefficiency in frames — blocks much longer than the correlation time give
 * nearly independent block means (Flyvbjerg & Petersen, J. Chem. Phys. 91, 461 (1989)).
 */
export function automaticBlockCount(frames: number, inefficiencyFrames: number): number {
  const b = Math.floor(frames / (BLOCK_LENGTH_FACTOR * Math.max(1, inefficiencyFrames)));
  return Math.max(2, Math.min(MAX_AUTO_BLOCKS, b));
}

/**
 * Group consecutive items with sizes w_m into at most `blocks` contiguous groups of nearly equal
 * total size: item m goes to group ⌊(Σ_{j<m} w_j + w_m/2)·B / W⌋; empty groups are dropped.
 * Returns the group index of every item and the number of groups.
 */
export function groupContiguous(sizes: ArrayLike<number>, blocks: number): { group: Int32Array; count: number } {
  const total = Array.from(sizes as ArrayLike<number>).reduce((a, b) => a + b, 0);
  const raw = new Int32Array(sizes.length);
  let before = 0;
  for (let m = 0; m < sizes.length; m++) {
    raw[m] = Math.min(blocks - 1, Math.floor(((before + sizes[m] / 2) * blocks) / total));
    before += sizes[m];
  }
  const group = new Int32Array(sizes.length);
  let count = 0;
  for (let m = 0; m < sizes.length; m++) {
    if (m > 0 && raw[m] !== raw[m - 1]) count++;
    group[m] = count;
  }
  return { group, count: sizes.length ? count + 1 : 0 };
}
