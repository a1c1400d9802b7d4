/**
 * Time correlation functions by FFT, shared by MSD, velocity autocorrelation, Green–Kubo
 * (conductivity and viscosity) and the convergence statistics: the project's one entry point
 * for FFT correlations.
 *
 * Definition used everywhere (unbiased, all time origins):
 *   C_xy(k) = 1/(N−k) · Σ_{i=0}^{N−k−1} x_i · y_{i+k},   k = 0 … maxLag.
 * The sums are computed with the correlation theorem (Wiener–Khinchin): with zero padding to a
 * length S ≥ N + maxLag the circular correlation equals the linear one, and
 *   Σ_i x_i y_{i+k} = IDFT( conj(DFT x) · DFT y )_k
 * (W. H. Press et al., Numerical Recipes, 3rd ed., 2007, §13.2). Cost O(N log N).
 *
 * Three code paths; for one time origin the cheapest by a cost model of fft.js measured on the
 * development machine (`pathCost`; transforms beyond ≈ 2^17 points leave the CPU caches and cost
 * 2–3× more per point, so long lag ranges are cheaper in blocks):
 * - Whole-series path: one transform of length S = 2^⌈log₂(N+maxLag)⌉. For autocorrelations the
 *   real input is packed into a complex array of half length and unpacked with the standard
 *   even/odd split (Numerical Recipes §12.3), for both the forward and the inverse transform;
 *   the power spectra of all series are summed before one inverse. Cross-correlations pack x
 *   and y as real and imaginary parts of one complex transform of length S.
 * - Block-pair path (`blockPairProductSums`): x and y cut into blocks of B samples; the half
 *   spectra of the zero-padded blocks (real transforms of length 2B) are stored frequency-major,
 *   and for each frequency the products of all block pairs (b, b+d) are summed in cache, then
 *   one packed real inverse transform per lag block d gives lags dB … dB+B−1. Memory ≈ 16·N
 *   bytes per series (reused between calls), transforms of at most 2^18 points.
 * - Segmented path (overlap–save, Numerical Recipes §13.1; maxLag ≪ N, and for many time
 *   origins at once, `laggedProductSums`): chunks of length L = S_c − maxLag,
 *   S_c = 2^⌈log₂ max(4(maxLag+1), 1024)⌉; chunk x[a, a+L) is correlated with y[a, a+L+maxLag)
 *   through one complex transform of length S_c and the cross spectra are summed, so one inverse
 *   transform gives the total. Memory ≈ 64·S_c bytes, independent of N.
 * Mean subtraction and detrending are applied on the fly while filling the transform buffers
 * (`Baseline`), never by copying the series.
 *
 * Plans, twiddles and work buffers are cached per transform length with a bounded memory
 * policy (src/fft-plans.ts); the three paths live in src/correlation-paths.ts.
 */
import { AnalysisError, UsageError } from './errors.js';
import { blockPairSums, segmentedSums, wholeAutoSums, type Term } from './correlation-paths.js';

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

/**
 * Longest transform handed to fft.js in one piece (2^22 points). Beyond this fft.js builds its
 * twiddle table as a JavaScript array so long that V8 stores it in slow dictionary mode
 * (measured here: a 2^24-point transform pair took 25 s); longer problems use block pairs.
 */
const MAX_DIRECT_TRANSFORM = 1 << 22;
/** Block lengths the path choice considers for block pairs: 2^BLOCK_MIN_LOG … 2^BLOCK_MAX_LOG. */
const BLOCK_MIN_LOG = 7;
const BLOCK_MAX_LOG = 17;

/**
 * Estimated cost (ns) of one fft.js transform of n points, complex or real input: n·log₂n times
 * a per-point constant measured with fft.js 4.0.4 on Node 20 / x86-64 (the development
 * machine): complex 1.0 ns up to 2^16 points, 1.5 at 2^17, 2.0 up to 2^20, 2.4 beyond; real input
 * 0.65, 0.8, 1.1, 1.5. Only ratios matter (it chooses between paths).
 */
function transformCost(n: number, real: boolean): number {
  const k = n <= 1 << 16 ? 0 : n <= 1 << 17 ? 1 : n <= 1 << 20 ? 2 : 3;
  const perPoint = real ? [0.65, 0.8, 1.1, 1.5][k]! : [1.0, 1.5, 2.0, 2.4][k]!;
  return n * Math.log2(n) * perPoint + 2 * n; // + filling and unpacking the buffers
}

/** Cost model of one single-origin path (see `transformCost`); Infinity when not applicable. */
function pathCost(path: 'whole' | 'segmented' | 'blocks', n: number, maxLag: number, terms: number, allAuto: boolean, size: number): number {
  if (path === 'whole') {
    if (size > MAX_DIRECT_TRANSFORM) return Infinity;
    return allAuto ? (terms + 1) * transformCost(size / 2, false) : (terms + 1) * transformCost(size, false);
  }
  if (path === 'segmented') {
    if (size > MAX_DIRECT_TRANSFORM) return Infinity;
    const chunks = Math.ceil(n / (size - maxLag));
    return (terms * chunks + 1) * transformCost(size, false);
  }
  const b = size;
  const nb = Math.ceil(n / b);
  const lb = Math.floor(maxLag / b) + 1;
  const products = (b + 1) * (nb * lb - (lb * (lb - 1)) / 2);
  return terms * ((allAuto ? 1 : 2) * nb * transformCost(2 * b, true) + 2 * products) + lb * transformCost(b, false);
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
  const sWhole = Math.max(4, nextPowerOfTwo(n + maxLag));
  const allAuto = terms.every((t) => t.x === t.y && t.bx === t.by);
  const single = origins.length === 1 && origins[0] === 0;
  if (!single) return segmentedSums(terms, origins, maxLag, Math.min(sChunk, sWhole), n);
  // One origin: the cheapest path by the cost model. Small problems stay cache-resident whole.
  if (sWhole <= 1 << 16) return [allAuto ? wholeAutoSums(terms, maxLag, sWhole) : segmentedSums(terms, origins, maxLag, sWhole, n)[0]!];
  const nt = terms.length;
  let best: { path: 'whole' | 'segmented' | 'blocks'; size: number; cost: number } = {
    path: 'whole',
    size: sWhole,
    cost: pathCost('whole', n, maxLag, nt, allAuto, sWhole),
  };
  if (sChunk < sWhole) {
    const c = pathCost('segmented', n, maxLag, nt, allAuto, sChunk);
    if (c < best.cost) best = { path: 'segmented', size: sChunk, cost: c };
  }
  for (let lg = BLOCK_MIN_LOG; lg <= BLOCK_MAX_LOG && 1 << lg < 2 * n; lg++) {
    const c = pathCost('blocks', n, maxLag, nt, allAuto, 1 << lg);
    if (c < best.cost) best = { path: 'blocks', size: 1 << lg, cost: c };
  }
  if (best.path === 'blocks') return [blockPairSums(terms, maxLag, best.size)];
  if (best.path === 'segmented') return segmentedSums(terms, origins, maxLag, best.size, n);
  return [allAuto ? wholeAutoSums(terms, maxLag, sWhole) : segmentedSums(terms, origins, maxLag, sWhole, n)[0]!];
}

/**
 * Lagged sums by block pairs, for long lag ranges (chosen automatically above; exported for
 * testing with small blocks): Σ_pairs Σ_{i=0}^{N−1−k} x_i y_{i+k}, k = 0 … maxLag.
 * x and y are cut into blocks of length B; the half spectra (real-input transforms of length
 * 2B, zero padded) of all blocks are formed, U_b for x and W_b for y. Lags k = dB + r, 0 ≤ r < B,
 * pair block b of x with blocks b+d and b+d+1 of y; since a shift by B in a length-2B transform
 * multiplies the spectrum by (−1)^f,
 *   R(dB + r) = IDFT_{2B}( Σ_b conj(U_b)·(W_{b+d} + (−1)^f W_{b+d+1}) )_r
 * with no wrap-around (block-convolution form of the correlation theorem, Numerical Recipes
 * §13.1–13.2). Cost: N/B real transforms per distinct series, one packed real inverse per lag
 * block and O(N·(maxLag/B)) spectral products done frequency by frequency in cache; memory
 * ≈ 16·N bytes per distinct series of one term (reused between calls, see the module comment).
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
