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
 * Three code paths, chosen automatically:
 * - Whole-series path (maxLag comparable with N, S = 2^⌈log₂(N+maxLag)⌉ ≤ 2^22). One transform
 *   of length S. For autocorrelations the real input is packed into a complex array of half
 *   length and unpacked with the standard even/odd split (Numerical Recipes §12.3), for both the
 *   forward and the inverse transform: memory ≈ 28·S bytes (fft.js twiddle table 8·S, two
 *   complex buffers 16·S, power spectrum 4·S), at most ≈ 120 MB. Cross-correlations pack x and y
 *   as real and imaginary parts of one complex transform of length S: ≈ 80·S bytes.
 * - Block-pair path (the same, but S > 2^22, e.g. all lags of 10⁷ samples): see
 *   `blockPairProductSums`; memory ≈ 16·N bytes per series (160 MB for 10⁷ samples) plus the
 *   result; measured here ≈ 10 s for 10⁷ samples and all lags (memory-bound spectral products).
 * - Segmented path (maxLag ≪ N; whenever S_c ≤ S/2 below). The series is cut into
 *   chunks of length L = S_c − maxLag, S_c = 2^⌈log₂ max(4(maxLag+1), 1024)⌉; each chunk x[a, a+L)
 *   is correlated with y[a, a+L+maxLag) through one complex transform of length S_c (x and y
 *   packed as real and imaginary parts) and the cross spectra are summed, so one inverse
 *   transform gives the total (overlap–save, Numerical Recipes §13.1). Memory ≈ 80·S_c bytes,
 *   independent of N (≈ 80 kB for maxLag ≤ 255); cost O(N log S_c). The same machinery gives
 *   the lagged sums for many time origins at once (`laggedProductSums`), which the
 *   equilibration search needs.
 * Mean subtraction and detrending are applied on the fly while filling the transform buffers
 * (`Baseline`), never by copying the series. Measured here: 10⁷ samples, maxLag 64 → ≈ 0.25 s.
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
 * A straight line a + b·i subtracted from a series on the fly (i = sample index), so that
 * centring or detrending never needs a copy of a long series: first-touch of a fresh 80 MB
 * array costs more than the FFTs on some machines.
 */
export interface Baseline {
  intercept: number;
  slope: number;
}

const NO_BASELINE: Baseline = { intercept: 0, slope: 0 };

/** One product term Σ (x_i − bx_i)(y_{i+k} − by_{i+k}) of a lagged sum. */
interface Term {
  x: Float64Array;
  y: Float64Array;
  bx: Baseline;
  by: Baseline;
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
  return laggedSums(
    pairs.map(([x, y]) => ({ x, y, bx: NO_BASELINE, by: NO_BASELINE })),
    origins,
    maxLag,
  );
}

/** Validation and path choice for `laggedProductSums` and the baseline-corrected variants. */
function laggedSums(terms: Term[], origins: readonly number[], maxLag: number): Float64Array[] {
  const n = terms[0]!.x.length;
  if (n === 0) throw new AnalysisError('cannot correlate an empty series');
  for (const { x, y } of terms) {
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
  const allAuto = terms.every((t) => t.x === t.y && t.bx === t.by);
  const single = origins.length === 1 && origins[0] === 0;
  if (single && sWhole <= 2 * sChunk) {
    if (sWhole > MAX_DIRECT_TRANSFORM) return [blockPairSums(terms, maxLag, blockPairLength(n))];
    if (allAuto) return [wholeAutoSums(terms, maxLag, Math.max(4, sWhole))];
    return segmentedSums(terms, origins, maxLag, sWhole, n);
  }
  const s = Math.min(sChunk, sWhole);
  if (single && s > MAX_DIRECT_TRANSFORM) return [blockPairSums(terms, maxLag, blockPairLength(n))];
  return segmentedSums(terms, origins, maxLag, s, n);
}

/**
 * Longest transform handed to fft.js in one piece (2^22 points). Beyond this fft.js builds its
 * twiddle table as a JavaScript array so long that V8 stores it in slow dictionary mode
 * (measured here: a 2^24-point transform pair took 25 s); longer problems use block pairs.
 */
const MAX_DIRECT_TRANSFORM = 1 << 22;

/** Block length for `blockPairSums`: about N/32, as a power of two in [2^12, 2^18]. */
function blockPairLength(n: number): number {
  return Math.min(1 << 18, Math.max(1 << 12, nextPowerOfTwo(Math.ceil(n / 32))));
}

/**
 * Lagged sums by block pairs, for lags too long for one transform (used automatically above;
 * exported for testing with small blocks): Σ_pairs Σ_{i=0}^{N−1−k} x_i y_{i+k}, k = 0 … maxLag.
 * x and y are cut into blocks of length B; the half spectra (real-input transforms of length
 * 2B, zero padded) of all blocks are stored, U_b for x and W_b for y. Lags k = dB + r, 0 ≤ r < B,
 * pair block b of x with blocks b+d and b+d+1 of y; since a shift by B in a length-2B transform
 * multiplies the spectrum by (−1)^f,
 *   R(dB + r) = IDFT_{2B}( Σ_b conj(U_b)·(W_{b+d} + (−1)^f W_{b+d+1}) )_r
 * with no wrap-around (block-convolution form of the correlation theorem, Numerical Recipes
 * §13.1–13.2). Cost: N/B forward transforms, one inverse per lag block and O(N·(maxLag/B))
 * spectral products; memory ≈ 16·N bytes per distinct series (10⁷ samples: 160 MB).
 */
export function blockPairProductSums(
  pairs: ReadonlyArray<readonly [Float64Array, Float64Array]>,
  maxLag: number,
  blockLength: number,
): Float64Array {
  if (pairs.length === 0) throw new UsageError('blockPairProductSums: no series given');
  if (blockLength < 2 || nextPowerOfTwo(blockLength) !== blockLength) {
    throw new UsageError(`block length must be a power of two ≥ 2, got ${blockLength}`);
  }
  const n = pairs[0]![0].length;
  if (n === 0) throw new AnalysisError('cannot correlate an empty series');
  for (const [x, y] of pairs) {
    if (x.length !== n || y.length !== n) {
      throw new AnalysisError(`series lengths differ (${x.length}, ${y.length}, expected ${n})`);
    }
  }
  checkMaxLag(maxLag, n);
  return blockPairSums(
    pairs.map(([x, y]) => ({ x, y, bx: NO_BASELINE, by: NO_BASELINE })),
    maxLag,
    blockLength,
  );
}

/** Half spectra (f = 0 … B) of all length-B blocks of x − baseline, zero padded to 2B. */
function blockSpectra(x: Float64Array, base: Baseline, b: number, fft: FFT, work: Float64Array, spec: Float64Array): Float64Array {
  const n = x.length;
  const blocks = Math.ceil(n / b);
  const stride = 2 * (b + 1);
  const all = new Float64Array(blocks * stride);
  for (let k = 0; k < blocks; k++) {
    const a0 = k * b;
    const len = Math.min(b, n - a0);
    const ia = base.intercept + base.slope * a0;
    const sl = base.slope;
    for (let j = 0; j < len; j++) work[j] = x[a0 + j]! - (ia + sl * j);
    work.fill(0, len);
    fft.realTransform(spec, work);
    all.set(spec.subarray(0, stride), k * stride);
  }
  return all;
}

function blockPairSums(terms: Term[], maxLag: number, b: number): Float64Array {
  const n = terms[0]!.x.length;
  const t = 2 * b;
  const cached = t <= CACHE_MAX_SIZE ? workspace(t) : null;
  const fft = cached ? cached.fft : new FFT(t);
  const work = new Float64Array(t);
  const spec = cached ? cached.a : new Float64Array(2 * t);
  const acc = cached ? cached.acc : new Float64Array(2 * t);
  const out = cached ? cached.out : new Float64Array(2 * t);
  const blocks = Math.ceil(n / b);
  const stride = 2 * (b + 1);
  const lagBlocks = Math.floor(maxLag / b) + 1;
  const result = new Float64Array(maxLag + 1);
  const spectra = terms.map((term) => {
    const u = blockSpectra(term.x, term.bx, b, fft, work, spec);
    const w = term.y === term.x && term.by === term.bx ? u : blockSpectra(term.y, term.by, b, fft, work, spec);
    return { u, w };
  });
  for (let d = 0; d < lagBlocks; d++) {
    acc.fill(0);
    for (const { u, w } of spectra) {
      for (let k = 0; k + d < blocks; k++) {
        const uo = k * stride;
        const w1 = (k + d) * stride;
        if (k + d + 1 < blocks) {
          // V = W_{k+d} + (−1)^f W_{k+d+1}; f in pairs (even: +, odd: −) to avoid a branch.
          const w2 = (k + d + 1) * stride;
          for (let p = 0; p <= 2 * b; p += 4) {
            let vr = w[w1 + p]! + w[w2 + p]!;
            let vi = w[w1 + p + 1]! + w[w2 + p + 1]!;
            let ur = u[uo + p]!;
            let ui = u[uo + p + 1]!;
            acc[p] += ur * vr + ui * vi;
            acc[p + 1] += ur * vi - ui * vr;
            if (p === 2 * b) break; // f = B is even: no odd partner
            vr = w[w1 + p + 2]! - w[w2 + p + 2]!;
            vi = w[w1 + p + 3]! - w[w2 + p + 3]!;
            ur = u[uo + p + 2]!;
            ui = u[uo + p + 3]!;
            acc[p + 2] += ur * vr + ui * vi;
            acc[p + 3] += ur * vi - ui * vr;
          }
        } else {
          for (let p = 0; p <= 2 * b; p += 2) {
            const vr = w[w1 + p]!;
            const vi = w[w1 + p + 1]!;
            const ur = u[uo + p]!;
            const ui = u[uo + p + 1]!;
            acc[p] += ur * vr + ui * vi;
            acc[p + 1] += ur * vi - ui * vr;
          }
        }
      }
    }
    // The correlation is real, so its spectrum is Hermitian: fill f = B+1 … 2B−1.
    for (let f = 1; f < b; f++) {
      acc[2 * (t - f)] = acc[2 * f]!;
      acc[2 * (t - f) + 1] = -acc[2 * f + 1]!;
    }
    fft.inverseTransform(out, acc);
    const base = d * b;
    const top = Math.min(b, maxLag - base + 1);
    for (let r = 0; r < top; r++) result[base + r] = out[2 * r]!;
  }
  return result;
}

/**
 * Segmented (overlap–save) lagged sums with transform length s: chunks x[a, a+L) (L = s−maxLag)
 * against y[a, a+L+maxLag), both packed into one complex transform z = u + i·v; the spectra are
 * separated with U_f = (Z_f + Z*_{−f})/2, V_f = (Z_f − Z*_{−f})/(2i) (Numerical Recipes §12.3)
 * and conj(U)·V is accumulated.
 */
function segmentedSums(
  terms: Term[],
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
      for (const { x, y, bx, by } of terms) {
        const xa = bx.intercept + bx.slope * a0;
        const xb = bx.slope;
        const ya = by.intercept + by.slope * a0;
        const yb = by.slope;
        for (let j = 0; j < len; j++) z[2 * j] = x[a0 + j]! - (xa + xb * j);
        for (let j = len; j < s; j++) z[2 * j] = 0;
        for (let j = 0; j < vLen; j++) z[2 * j + 1] = y[a0 + j]! - (ya + yb * j);
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
function wholeAutoSums(terms: Term[], maxLag: number, s: number): Float64Array {
  const m = s / 2;
  const n = terms[0]!.x.length;
  const cached = m <= CACHE_MAX_SIZE ? workspace(m) : null;
  const fft = cached ? cached.fft : new FFT(m);
  const z = cached ? cached.a : new Float64Array(2 * m);
  const spec = cached ? cached.b : new Float64Array(2 * m);
  const power = new Float64Array(m + 1);
  const { cos, sin } = twiddles(s);
  for (const { x, bx } of terms) {
    // Interleaved complex r_{2j} + i·r_{2j+1} is the real sequence itself, zero padded.
    const { intercept, slope } = bx;
    for (let i = 0; i < n; i++) z[i] = x[i]! - (intercept + slope * i);
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
      const c = cos[f]!;
      const sn = -sin[f]!;
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
    z[2 * f] = e - d * sin[f]!;
    z[2 * f + 1] = d * cos[f]!;
  }
  fft.inverseTransform(spec, z);
  const r = new Float64Array(maxLag + 1);
  for (let k = 0; k <= maxLag; k++) r[k] = spec[k]!; // spec holds r_0, r_1, r_2, ... interleaved
  return r;
}

const twiddleCache = new Map<number, { cos: Float64Array; sin: Float64Array }>();

/** cos(2πf/s) and sin(2πf/s) for f = 0 … s/2, cached per transform length s. */
function twiddles(s: number): { cos: Float64Array; sin: Float64Array } {
  let t = twiddleCache.get(s);
  if (!t) {
    const m = s / 2;
    const cos = new Float64Array(m + 1);
    const sin = new Float64Array(m + 1);
    for (let f = 0; f <= m; f++) {
      const th = (2 * Math.PI * f) / s;
      cos[f] = Math.cos(th);
      sin[f] = Math.sin(th);
    }
    t = { cos, sin };
    if (s <= CACHE_MAX_SIZE * 2) twiddleCache.set(s, t);
  }
  return t;
}

/** Arithmetic mean (plain summation; the correlations only need it as a centring constant). */
function meanOf(x: Float64Array): number {
  let s = 0;
  for (let i = 0; i < x.length; i++) s += x[i]!;
  return s / x.length;
}

/** Baseline for subtractMean: the series' mean, or nothing. */
function meanBaseline(x: Float64Array, subtract: boolean | undefined): Baseline {
  return subtract ? { intercept: meanOf(x), slope: 0 } : NO_BASELINE;
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
  const term: Term = { x, y, bx: meanBaseline(x, opts.subtractMean), by: meanBaseline(y, opts.subtractMean) };
  return unbias(laggedSums([term], [0], maxLag)[0]!, n);
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
  const terms = series.map((x): Term => {
    if (x.length !== n) throw new AnalysisError(`series lengths differ (${x.length}, expected ${n})`);
    const b = meanBaseline(x, opts.subtractMean);
    return { x, y: x, bx: b, by: b };
  });
  return unbias(laggedSums(terms, [0], maxLag)[0]!, n);
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
  const mx = opts.subtractMean ? meanOf(x) : 0;
  const my = opts.subtractMean ? meanOf(y) : 0;
  const c = new Float64Array(maxLag + 1);
  for (let k = 0; k <= maxLag; k++) {
    let s = 0;
    for (let i = 0; i + k < n; i++) s += (x[i]! - mx) * (y[i + k]! - my);
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
 *   C_o(k) = 1/(n−k) Σ_{i=o}^{N−1−k} (v_i − m_o)(v_{i+k} − m_o),  n = N − o, k = 0 … maxLag
 * (NaN where k ≥ n), where v_i = x_i, or v_i = x_i − (a + b·i) when a baseline (e.g. a fitted
 * line, to work on residuals) is given. The values are first shifted by their global mean c
 * (v' = v − c, keeping the raw sums well conditioned); then with R = Σ v'_i v'_{i+k},
 * A = Σ_{i=o}^{N−1−k} v'_i, B = Σ_{i=o+k}^{N−1} v'_i and m = mean of v' over the region, the
 * centred sum is R − m(A + B) + (n−k)m² (algebraic expansion). Raw sums come from the same FFT
 * machinery as `laggedProductSums`; no copy of x is made.
 */
export function regionAutocovariances(
  x: Float64Array,
  origins: readonly number[],
  maxLag: number,
  opts: { baseline?: Baseline } = {},
): Float64Array[] {
  const n = x.length;
  if (n === 0) throw new AnalysisError('cannot correlate an empty series');
  const base = opts.baseline ?? NO_BASELINE;
  const a0 = base.intercept;
  const b0 = base.slope;
  let total = 0;
  for (let i = 0; i < n; i++) total += x[i]! - (a0 + b0 * i);
  const shift: Baseline = { intercept: a0 + total / n, slope: b0 };
  const sh = shift.intercept;
  const v = (i: number): number => x[i]! - (sh + b0 * i);
  const raw = laggedSums([{ x, y: x, bx: shift, by: shift }], origins, maxLag);
  // Sums of the last k values, E(k) = Σ_{i=N−k}^{N−1} v'_i.
  const last = new Float64Array(maxLag + 1);
  for (let k = 1; k <= maxLag; k++) last[k] = last[k - 1]! + v(n - k);
  // Tail sums T(o) = Σ_{i=o}^{N−1} v'_i for each origin (one backward pass).
  const tail = new Float64Array(origins.length);
  let acc = 0;
  let j = origins.length - 1;
  for (let i = n - 1; i >= 0 && j >= 0; i--) {
    acc += x[i]! - (sh + b0 * i);
    while (j >= 0 && origins[j] === i) tail[j--] = acc;
  }
  return origins.map((o, idx) => {
    const len = n - o;
    const t = tail[idx]!;
    const m = t / len;
    const r = raw[idx]!;
    const c = new Float64Array(maxLag + 1);
    let head = 0; // Σ_{i=o}^{o+k−1} v'_i
    for (let k = 0; k <= maxLag; k++) {
      if (k >= len) {
        c[k] = NaN;
        continue;
      }
      const a = t - last[k]!;
      const b = t - head;
      c[k] = (r[k]! - m * (a + b) + (len - k) * m * m) / (len - k);
      head += v(o + k);
    }
    return c;
  });
}
