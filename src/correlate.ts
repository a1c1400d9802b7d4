/**
 * Time correlation functions by FFT, shared by MSD, velocity autocorrelation, Green–Kubo and the
 * convergence statistics.
 *
 * Definition used everywhere (unbiased, all time origins):
 *   C_xy(k) = 1/(N−k) · Σ_{i=0}^{N−k−1} x_i · y_{i+k},   k = 0 … maxLag.
 * The sums are computed with the correlation theorem (Wiener–Khinchin): with zero padding to a
 * length S ≥ N + maxLag the circular correlation equals the linear one, and
 *   Σ_i x_i y_{i+k} = IDFT( conj(DFT x) · DFT y )_k
 * (W. H. Press et al., Numerical Recipes, 3rd ed., 2007, §13.2). Cost O(N log N).
 *
 * Two code paths, chosen automatically:
 * - Whole-series path (maxLag comparable with N). One transform of length S = 2^⌈log₂(N+maxLag)⌉.
 *   For autocorrelations the real input is packed into a complex array of half length and
 *   unpacked with the standard even/odd split (Numerical Recipes §12.3), for both the forward
 *   and the inverse transform. Memory ≈ 28·S bytes (fft.js twiddle table 8·S, two complex
 *   buffers 16·S, power spectrum 4·S) plus the result: N = 10⁷ samples with all lags gives
 *   S = 2^25 and ≈ 0.95 GB. Cross-correlations pack x and y as real and imaginary parts of one
 *   complex transform of length S: ≈ 80·S bytes.
 * - Segmented path (maxLag ≪ N; the default whenever S_chunk ≤ S/2). The series is cut into
 *   chunks of length L = S_c − maxLag, S_c = 2^⌈log₂ max(4(maxLag+1), 1024)⌉; each chunk x[a, a+L)
 *   is correlated with y[a, a+L+maxLag) through one complex transform of length S_c (x and y
 *   packed as real and imaginary parts) and the cross spectra are summed, so one inverse
 *   transform gives the total (overlap–save, Numerical Recipes §13.1). Memory ≈ 80·S_c bytes,
 *   independent of N; cost O(N log S_c). The same machinery gives the lagged sums for many
 *   time origins at once (`laggedProductSums`), which the equilibration search needs.
 *
 * FFT objects and work buffers are cached per transform length up to 2^16 (complex) points,
 * where they cost at most ≈ 5 MB each; larger ones are built per call and released. Not
 * re-entrant across worker threads' shared memory (each worker has its own module instance).
 */
import FFT from 'fft.js';
import { AnalysisError, UsageError } from './errors.js';

/** Options shared by the correlation functions. */
export interface CorrelationOptions {
  /** Largest lag k computed (default N−1). The result has maxLag+1 entries. */
  maxLag?: number;
  /** Subtract each series' own mean before correlating (default false). */
  subtractMean?: boolean;
}

/** Smallest power of two ≥ max(n, 2). */
export function nextPowerOfTwo(n: number): number {
  let p = 2;
  while (p < n) p *= 2;
  return p;
}

interface Workspace {
  fft: FFT;
  /** Complex buffers of length 2·size. */
  a: Float64Array;
  b: Float64Array;
  acc: Float64Array;
  out: Float64Array;
}

const CACHE_MAX_SIZE = 1 << 16;
const workspaces = new Map<number, Workspace>();

/** Workspace (FFT object + buffers) for a complex transform length; cached for small sizes. */
function workspace(size: number): Workspace {
  const hit = workspaces.get(size);
  if (hit) return hit;
  const ws: Workspace = {
    fft: new FFT(size),
    a: new Float64Array(2 * size),
    b: new Float64Array(2 * size),
    acc: new Float64Array(2 * size),
    out: new Float64Array(2 * size),
  };
  if (size <= CACHE_MAX_SIZE) workspaces.set(size, ws);
  return ws;
}

/** Smallest transform length used by the segmented path (keeps per-call overhead low). */
const MIN_CHUNK_TRANSFORM = 1024;

/** Transform length of the segmented path for a given maximum lag. */
function chunkTransformLength(maxLag: number): number {
  return nextPowerOfTwo(Math.max(4 * (maxLag + 1), MIN_CHUNK_TRANSFORM));
}

function checkMaxLag(maxLag: number, n: number): void {
  if (!Number.isInteger(maxLag) || maxLag < 0 || maxLag > n - 1) {
    throw new UsageError(`maximum lag must be an integer in [0, ${n - 1}], got ${maxLag}`);
  }
}

/**
 * Raw lagged product sums for several time origins at once:
 *   R_o(k) = Σ_pairs Σ_{i=o}^{N−1−k} x_i · y_{i+k},  k = 0 … maxLag,
 * one Float64Array(maxLag+1) per origin (entries with k ≥ N−o are 0). Origins must be strictly
 * increasing integers in [0, N). All pairs must have length N. Computed by the FFT correlation
 * theorem (Numerical Recipes §13.2) over chunks, accumulating cross spectra from the last origin
 * backwards, so all origins cost one pass plus one inverse transform each.
 */
export function laggedProductSums(
  pairs: ReadonlyArray<readonly [Float64Array, Float64Array]>,
  origins: readonly number[],
  maxLag: number,
): Float64Array[] {
  if (pairs.length === 0) throw new UsageError('laggedProductSums: no series given');
  const n = pairs[0]![0].length;
  if (n === 0) throw new AnalysisError('cannot correlate an empty series');
  for (const [x, y] of pairs) {
    if (x.length !== n || y.length !== n) {
      throw new AnalysisError(`series lengths differ (${x.length}, ${y.length}, expected ${n})`);
    }
  }
  checkMaxLag(maxLag, n);
  if (origins.length === 0) throw new UsageError('laggedProductSums: no time origins given');
  for (let j = 0; j < origins.length; j++) {
    const o = origins[j]!;
    if (!Number.isInteger(o) || o < 0 || o >= n || (j > 0 && o <= origins[j - 1]!)) {
      throw new UsageError('time origins must be strictly increasing integers inside the series');
    }
  }
  const sChunk = chunkTransformLength(maxLag);
  const sWhole = nextPowerOfTwo(n + maxLag);
  const allAuto = pairs.every(([x, y]) => x === y);
  if (origins.length === 1 && origins[0] === 0 && sWhole <= 2 * sChunk) {
    if (allAuto) return [wholeAutoSums(pairs.map((p) => p[0]), maxLag, sWhole)];
    return segmentedSums(pairs, origins, maxLag, sWhole, n);
  }
  return segmentedSums(pairs, origins, maxLag, Math.min(sChunk, sWhole), n);
}

/**
 * Segmented (overlap–save) lagged sums with transform length s: chunks x[a, a+L) (L = s−maxLag)
 * against y[a, a+L+maxLag), both packed into one complex transform z = u + i·v; the spectra are
 * separated with U_f = (Z_f + Z*_{−f})/2, V_f = (Z_f − Z*_{−f})/(2i) (Numerical Recipes §12.3)
 * and conj(U)·V is accumulated.
 */
function segmentedSums(
  pairs: ReadonlyArray<readonly [Float64Array, Float64Array]>,
  origins: readonly number[],
  maxLag: number,
  s: number,
  n: number,
): Float64Array[] {
  const ws = workspace(s);
  const { fft, a: z, b: spec, acc, out } = ws;
  const chunk = s - maxLag;
  const mask = s - 1;
  acc.fill(0);
  const result: Float64Array[] = new Array(origins.length);
  for (let seg = origins.length - 1; seg >= 0; seg--) {
    const start = origins[seg]!;
    const end = seg + 1 < origins.length ? origins[seg + 1]! : n;
    for (let a0 = start; a0 < end; a0 += chunk) {
      const len = Math.min(chunk, end - a0);
      const vLen = Math.min(n - a0, len + maxLag);
      for (const [x, y] of pairs) {
        for (let j = 0; j < len; j++) z[2 * j] = x[a0 + j]!;
        for (let j = len; j < s; j++) z[2 * j] = 0;
        for (let j = 0; j < vLen; j++) z[2 * j + 1] = y[a0 + j]!;
        for (let j = vLen; j < s; j++) z[2 * j + 1] = 0;
        fft.transform(spec, z);
        for (let f = 0; f < s; f++) {
          const g = (s - f) & mask;
          const ar = spec[2 * f]!;
          const ai = spec[2 * f + 1]!;
          const br = spec[2 * g]!;
          const bi = -spec[2 * g + 1]!;
          const ur = 0.5 * (ar + br);
          const ui = 0.5 * (ai + bi);
          const vr = 0.5 * (ai - bi);
          const vi = -0.5 * (ar - br);
          acc[2 * f] += ur * vr + ui * vi;
          acc[2 * f + 1] += ur * vi - ui * vr;
        }
      }
    }
    fft.inverseTransform(out, acc);
    const r = new Float64Array(maxLag + 1);
    const kMax = Math.min(maxLag, n - start - 1);
    for (let k = 0; k <= kMax; k++) r[k] = out[2 * k]!;
    result[seg] = r;
  }
  return result;
}

/**
 * Whole-series autocorrelation sums Σ_series Σ_i x_i x_{i+k} with real-input packing: a real
 * sequence r of even length s is transformed as the complex sequence r_{2j} + i·r_{2j+1} of
 * length m = s/2, and X_f = E_f + e^{−2πif/s}·O_f with E_f = (Z_f + Z*_{m−f})/2,
 * O_f = (Z_f − Z*_{m−f})/(2i) (Numerical Recipes §12.3). The inverse of the real, even power
 * spectrum P is packed the same way: Y_f = E_f + i·O_f with E_f = (P_f + P_{m−f})/2 and
 * O_f = (P_f − P_{m−f})·e^{+2πif/s}/2, whose length-m inverse gives r_{2j} + i·r_{2j+1}.
 */
function wholeAutoSums(series: Float64Array[], maxLag: number, s: number): Float64Array {
  const m = s / 2;
  const n = series[0]!.length;
  const cached = m <= CACHE_MAX_SIZE ? workspace(m) : null;
  const fft = cached ? cached.fft : new FFT(m);
  const z = cached ? cached.a : new Float64Array(2 * m);
  const spec = cached ? cached.b : new Float64Array(2 * m);
  const power = new Float64Array(m + 1);
  for (const x of series) {
    for (let i = 0; i < n; i++) z[i] = x[i]!; // interleaved complex = the real sequence itself
    z.fill(0, n);
    fft.transform(spec, z);
    for (let f = 0; f <= m; f++) {
      const fi = f === m ? 0 : f;
      const gi = f === 0 ? 0 : m - f;
      const zr = spec[2 * fi]!;
      const zi = spec[2 * fi + 1]!;
      const cr = spec[2 * gi]!;
      const ci = -spec[2 * gi + 1]!;
      const er = 0.5 * (zr + cr);
      const ei = 0.5 * (zi + ci);
      const or = 0.5 * (zi - ci);
      const oi = -0.5 * (zr - cr);
      const th = (2 * Math.PI * f) / s;
      const c = Math.cos(th);
      const sn = -Math.sin(th);
      const xr = er + c * or - sn * oi;
      const xi = ei + c * oi + sn * or;
      power[f] += xr * xr + xi * xi;
    }
  }
  for (let f = 0; f < m; f++) {
    const p = power[f]!;
    const q = power[m - f]!;
    const e = 0.5 * (p + q);
    const d = 0.5 * (p - q);
    const th = (2 * Math.PI * f) / s;
    z[2 * f] = e - d * Math.sin(th);
    z[2 * f + 1] = d * Math.cos(th);
  }
  fft.inverseTransform(spec, z);
  const r = new Float64Array(maxLag + 1);
  for (let k = 0; k <= maxLag; k++) r[k] = spec[k]!; // spec holds r_0, r_1, r_2, ... interleaved
  return r;
}

/** Copy of x minus its arithmetic mean. */
function centred(x: Float64Array): Float64Array {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += x[i]!;
  const m = s / x.length;
  const c = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) c[i] = x[i]! - m;
  return c;
}

/** Divide lagged sums by the number of pairs: C(k) = R(k)/(N−k). */
function unbias(r: Float64Array, n: number): Float64Array {
  for (let k = 0; k < r.length; k++) r[k] = r[k]! / (n - k);
  return r;
}

/**
 * Autocorrelation C(k) = 1/(N−k) Σ_{i=0}^{N−k−1} x_i x_{i+k}, k = 0 … maxLag (unbiased, all time
 * origins), by zero-padded FFT (Wiener–Khinchin; Numerical Recipes §13.2). With subtractMean the
 * series' mean is removed first (autocovariance). O(N log N); memory in the module comment.
 */
export function autocorrelation(x: Float64Array, opts: CorrelationOptions = {}): Float64Array {
  return sumOfAutocorrelations([x], opts);
}

/**
 * Cross-correlation C_xy(k) = 1/(N−k) Σ_{i=0}^{N−k−1} x_i y_{i+k}, k = 0 … maxLag, by FFT
 * (correlation theorem, Numerical Recipes §13.2). Note the order: y is the later one.
 * With subtractMean each series' own mean is removed first.
 */
export function crossCorrelation(
  x: Float64Array,
  y: Float64Array,
  opts: CorrelationOptions = {},
): Float64Array {
  const n = x.length;
  if (n === 0) throw new AnalysisError('cannot correlate an empty series');
  if (y.length !== n) throw new AnalysisError(`series lengths differ (${n} and ${y.length})`);
  const maxLag = opts.maxLag ?? n - 1;
  checkMaxLag(maxLag, n);
  const xs = opts.subtractMean ? centred(x) : x;
  const ys = opts.subtractMean ? centred(y) : y;
  return unbias(laggedProductSums([[xs, ys]], [0], maxLag)[0]!, n);
}

/**
 * Sum of the autocorrelations of several equally long series, Σ_c C_c(k) with C as in
 * `autocorrelation` (e.g. the x, y, z components of a velocity). The power spectra are added
 * before one inverse transform, so d components cost d forward transforms plus one inverse.
 */
export function sumOfAutocorrelations(
  series: readonly Float64Array[],
  opts: CorrelationOptions = {},
): Float64Array {
  if (series.length === 0) throw new UsageError('sumOfAutocorrelations: no series given');
  const n = series[0]!.length;
  if (n === 0) throw new AnalysisError('cannot correlate an empty series');
  const maxLag = opts.maxLag ?? n - 1;
  checkMaxLag(maxLag, n);
  const used = series.map((x) => {
    if (x.length !== n) throw new AnalysisError(`series lengths differ (${x.length}, expected ${n})`);
    return opts.subtractMean ? centred(x) : x;
  });
  return unbias(laggedProductSums(used.map((x) => [x, x] as const), [0], maxLag)[0]!, n);
}

/**
 * Direct O(N·maxLag) cross-correlation C_xy(k) = 1/(N−k) Σ_{i} x_i y_{i+k}; the reference the FFT
 * versions are tested against. Same options and result as `crossCorrelation`.
 */
export function directCrossCorrelation(
  x: Float64Array,
  y: Float64Array,
  opts: CorrelationOptions = {},
): Float64Array {
  const n = x.length;
  if (n === 0) throw new AnalysisError('cannot correlate an empty series');
  if (y.length !== n) throw new AnalysisError(`series lengths differ (${n} and ${y.length})`);
  const maxLag = opts.maxLag ?? n - 1;
  checkMaxLag(maxLag, n);
  const xs = opts.subtractMean ? centred(x) : x;
  const ys = opts.subtractMean ? centred(y) : y;
  const c = new Float64Array(maxLag + 1);
  for (let k = 0; k <= maxLag; k++) {
    let s = 0;
    for (let i = 0; i + k < n; i++) s += xs[i]! * ys[i + k]!;
    c[k] = s / (n - k);
  }
  return c;
}

/** Direct O(N·maxLag) autocorrelation, the test reference for `autocorrelation`. */
export function directAutocorrelation(x: Float64Array, opts: CorrelationOptions = {}): Float64Array {
  return directCrossCorrelation(x, x, opts);
}

/**
 * Autocovariances of the tail regions x[o, N) for several origins o at once, each region centred
 * on its own mean m_o:
 *   C_o(k) = 1/(n−k) Σ_{i=o}^{N−1−k} (x_i − m_o)(x_{i+k} − m_o),  n = N − o, k = 0 … maxLag
 * (NaN where k ≥ n). The series is first centred on its global mean c (x' = x − c, which keeps
 * the raw sums well conditioned); then with R = Σ x'_i x'_{i+k}, A = Σ_{i=o}^{N−1−k} x'_i,
 * B = Σ_{i=o+k}^{N−1} x'_i and m = mean of x' over the region, the centred sum is
 * R − m(A + B) + (n−k)m² (algebraic expansion). Raw sums come from `laggedProductSums`.
 */
export function regionAutocovariances(
  x: Float64Array,
  origins: readonly number[],
  maxLag: number,
): Float64Array[] {
  const n = x.length;
  const xc = centred(x);
  const raw = laggedProductSums([[xc, xc]], origins, maxLag);
  // Sums of the last k values, E(k) = Σ_{i=N−k}^{N−1} x'_i.
  const last = new Float64Array(maxLag + 1);
  for (let k = 1; k <= maxLag; k++) last[k] = last[k - 1]! + xc[n - k]!;
  // Tail sums T(o) = Σ_{i=o}^{N−1} x'_i for each origin (one backward pass).
  const tail = new Float64Array(origins.length);
  let acc = 0;
  let j = origins.length - 1;
  for (let i = n - 1; i >= 0 && j >= 0; i--) {
    acc += xc[i]!;
    while (j >= 0 && origins[j] === i) tail[j--] = acc;
  }
  return origins.map((o, idx) => {
    const len = n - o;
    const t = tail[idx]!;
    const m = t / len;
    const r = raw[idx]!;
    const c = new Float64Array(maxLag + 1);
    let head = 0; // Σ_{i=o}^{o+k−1} x'_i
    for (let k = 0; k <= maxLag; k++) {
      if (k >= len) {
        c[k] = NaN;
        continue;
      }
      const a = t - last[k]!;
      const b = t - head;
      c[k] = (r[k]! - m * (a + b) + (len - k) * m * m) / (len - k);
      head += xc[o + k]!;
    }
    return c;
  });
}
