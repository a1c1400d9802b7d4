/**
 * Time correlation functions by FFT, shared by MSD, velocity autocorrelation, Green–Kubo
 * (conductivity and viscosity) and the convergence statistics: the one FFT correlation module
 * of the project.
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
 * Caching policy (memory stays bounded; first use of fresh memory is expensive, so plans and
 * buffers are reused): fft.js plans with their twiddle tables, our own twiddle tables and the
 * work buffers are kept per transform length. Lengths up to 2^16 complex points are always kept
 * (all of them together < 16 MB). Of the longer ones (up to 2^22) only the LARGE_PLANS_KEPT = 2
 * most recently used lengths are kept, and only while their buffers total at most
 * LARGE_PLAN_BYTES = 192 MB; the least recently used is released first. The block-pair spectra
 * buffer (16·N bytes) is kept while it is at most SCRATCH_BYTES_KEPT = 96 MB. Not re-entrant
 * across worker threads' shared memory (each worker has its own module instance).
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

// ---------------------------------------------------------------------------------------------
// Plan cache

/** An fft.js plan of one transform length with its twiddles and lazily made work buffers. */
interface Plan {
  size: number;
  fft: FFT;
  /** cos(2πf/(2·size)) and sin(2πf/(2·size)), f = 0 … size: the split twiddles of a real
   * transform of length 2·size packed into this complex one (made on first use). */
  cos: Float64Array | null;
  sin: Float64Array | null;
  buffers: Map<string, Float64Array>;
  bytes: number;
}

/** Complex lengths up to this are always kept. */
const SMALL_PLAN = 1 << 16;
/** Number of longer lengths kept (least recently used released first). */
const LARGE_PLANS_KEPT = 2;
/** Bytes the longer lengths may hold together (the most recent one is kept regardless). */
const LARGE_PLAN_BYTES = 192 * 2 ** 20;
/** Largest block-pair spectra buffer kept between calls. */
const SCRATCH_BYTES_KEPT = 96 * 2 ** 20;

const plans = new Map<number, Plan>();
/** Longer lengths in order of use, most recent last. */
const largeOrder: number[] = [];

/** fft.js plan for a complex transform length, from the cache (policy in the module comment). */
function planFor(size: number): Plan {
  let p = plans.get(size);
  if (!p) {
    // fft.js keeps a twiddle array of 2·size numbers and a bit-reversal table of ≤ size/2.
    p = { size, fft: new FFT(size), cos: null, sin: null, buffers: new Map(), bytes: 20 * size };
    plans.set(size, p);
  }
  if (size > SMALL_PLAN) {
    const i = largeOrder.indexOf(size);
    if (i >= 0) largeOrder.splice(i, 1);
    largeOrder.push(size);
    trimLargePlans();
  }
  return p;
}

/** Release least recently used long plans beyond the count or byte limit. */
function trimLargePlans(): void {
  let bytes = 0;
  for (const s of largeOrder) bytes += plans.get(s)!.bytes;
  while (largeOrder.length > 1 && (largeOrder.length > LARGE_PLANS_KEPT || bytes > LARGE_PLAN_BYTES)) {
    const s = largeOrder.shift()!;
    bytes -= plans.get(s)!.bytes;
    plans.delete(s);
  }
}

/** A work buffer of `length` doubles owned by a plan (contents undefined). */
function planBuffer(p: Plan, name: string, length: number): Float64Array {
  let b = p.buffers.get(name);
  if (!b || b.length < length) {
    if (b) p.bytes -= b.byteLength;
    b = new Float64Array(length);
    p.buffers.set(name, b);
    p.bytes += b.byteLength;
    if (p.size > SMALL_PLAN) trimLargePlans();
  }
  return b.length === length ? b : b.subarray(0, length);
}

/** Split twiddles of a plan: cos and sin of 2πf/(2·size), f = 0 … size. */
function splitTwiddles(p: Plan): { cos: Float64Array; sin: Float64Array } {
  if (!p.cos || !p.sin) {
    const m = p.size;
    const cos = new Float64Array(m + 1);
    const sin = new Float64Array(m + 1);
    for (let f = 0; f <= m; f++) {
      const th = (Math.PI * f) / m;
      cos[f] = Math.cos(th);
      sin[f] = Math.sin(th);
    }
    p.cos = cos;
    p.sin = sin;
    p.bytes += 16 * (m + 1);
  }
  return { cos: p.cos, sin: p.sin };
}

let scratchArray: Float64Array | null = null;

/** Module scratch of `length` doubles for the block spectra (kept while ≤ SCRATCH_BYTES_KEPT). */
function scratch(length: number): Float64Array {
  if (scratchArray && scratchArray.length >= length) return scratchArray.subarray(0, length);
  const a = new Float64Array(length);
  scratchArray = a.byteLength <= SCRATCH_BYTES_KEPT ? a : null;
  return a;
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

/**
 * Half spectra (f = 0 … B) of all length-B blocks of x − baseline, zero padded to 2B, stored
 * frequency-major: entry (f, block k) at 2(f·blocks + k) of `all`. Blocks are transformed in
 * groups of up to 4 so that each frequency's entries of a group are written together.
 */
function blockSpectra(x: Float64Array, base: Baseline, b: number, p: Plan, all: Float64Array): void {
  const n = x.length;
  const blocks = Math.ceil(n / b);
  const stride = 2 * blocks;
  const sl = base.slope;
  const work = planBuffer(p, 'work', 2 * b);
  const specs = [0, 1, 2, 3].map((g) => planBuffer(p, `spec${g}`, 4 * b));
  for (let k0 = 0; k0 < blocks; k0 += 4) {
    const group = Math.min(4, blocks - k0);
    for (let g = 0; g < group; g++) {
      const a0 = (k0 + g) * b;
      const len = Math.min(b, n - a0);
      const ia = base.intercept + sl * a0;
      if (ia === 0 && sl === 0) work.set(x.subarray(a0, a0 + len));
      else for (let j = 0; j < len; j++) work[j] = x[a0 + j]! - (ia + sl * j);
      work.fill(0, len);
      p.fft.realTransform(specs[g]!, work);
    }
    for (let g = 0; g < group; g++) {
      const spec = specs[g]!;
      let o = 2 * (k0 + g);
      for (let f = 0; f <= 2 * b; f += 2, o += stride) {
        all[o] = spec[f]!;
        all[o + 1] = spec[f + 1]!;
      }
    }
  }
}

/**
 * Real sequence r of even length s = 2m from its Hermitian half spectrum X_f (f = 0 … m,
 * interleaved re/im in `half`), by one complex inverse transform of length m: with
 * E_f = (X_f + X_{f+m})/2, O_f = (X_f − X_{f+m})·e^{+2πif/s}/2 and X_{f+m} = conj(X_{m−f}),
 * IDFT_m(E + i·O) = r_{2j} + i·r_{2j+1} (Numerical Recipes §12.3). Writes r_0 … r_{s−1} to out
 * (length 2m); z is a work array of 2m.
 */
function inverseRealHalf(half: Float64Array, p: Plan, z: Float64Array, out: Float64Array): void {
  const m = p.size;
  const { cos, sin } = splitTwiddles(p);
  for (let f = 0; f < m; f++) {
    const g = m - f;
    const xr = half[2 * f]!;
    const xi = half[2 * f + 1]!;
    const cr = half[2 * g]!;
    const ci = -half[2 * g + 1]!;
    const er = 0.5 * (xr + cr);
    const ei = 0.5 * (xi + ci);
    const dr = 0.5 * (xr - cr);
    const di = 0.5 * (xi - ci);
    const c = cos[f]!;
    const s = sin[f]!;
    const or = dr * c - di * s;
    const oi = dr * s + di * c;
    z[2 * f] = er - oi;
    z[2 * f + 1] = ei + or;
  }
  p.fft.inverseTransform(out, z);
}

/**
 * Spectral products of the block-pair path for one term, frequency by frequency:
 * acc_d(f) += Σ_k conj(U_k(f))·Y_{k+d}(f), Y_j = W_j + (−1)^f W_{j+1} (W_blocks = 0), for lag
 * blocks d < lagBlocks; u and w frequency-major (see `blockSpectra`), y a work array of
 * 2·blocks doubles, acc lagBlocks half spectra of 2(b+1) doubles. Two partial sums per product
 * shorten the floating-point dependency chain.
 */
function blockProducts(u: Float64Array, w: Float64Array, y: Float64Array, acc: Float64Array, blocks: number, lagBlocks: number, b: number): void {
  const stride = 2 * blocks;
  const hs = 2 * (b + 1);
  for (let f = 0; f <= b; f++) {
    const base = f * stride;
    const sign = (f & 1) === 0 ? 1 : -1;
    for (let j = 0; j < stride - 2; j += 2) {
      y[j] = w[base + j]! + sign * w[base + j + 2]!;
      y[j + 1] = w[base + j + 1]! + sign * w[base + j + 3]!;
    }
    y[stride - 2] = w[base + stride - 2]!;
    y[stride - 1] = w[base + stride - 1]!;
    for (let d = 0; d < lagBlocks; d++) {
      let sr0 = 0;
      let si0 = 0;
      let sr1 = 0;
      let si1 = 0;
      const n = 2 * (blocks - d);
      const yd = 2 * d;
      let k = 0;
      for (; k + 4 <= n; k += 4) {
        const ur = u[base + k]!;
        const ui = u[base + k + 1]!;
        const vr = y[yd + k]!;
        const vi = y[yd + k + 1]!;
        sr0 += ur * vr + ui * vi;
        si0 += ur * vi - ui * vr;
        const ur1 = u[base + k + 2]!;
        const ui1 = u[base + k + 3]!;
        const vr1 = y[yd + k + 2]!;
        const vi1 = y[yd + k + 3]!;
        sr1 += ur1 * vr1 + ui1 * vi1;
        si1 += ur1 * vi1 - ui1 * vr1;
      }
      if (k < n) {
        const ur = u[base + k]!;
        const ui = u[base + k + 1]!;
        const vr = y[yd + k]!;
        const vi = y[yd + k + 1]!;
        sr0 += ur * vr + ui * vi;
        si0 += ur * vi - ui * vr;
      }
      const o = d * hs + 2 * f;
      acc[o] += sr0 + sr1;
      acc[o + 1] += si0 + si1;
    }
  }
}

function blockPairSums(terms: Term[], maxLag: number, b: number): Float64Array {
  const n = terms[0]!.x.length;
  const t = 2 * b;
  const fwd = planFor(t);
  const inv = planFor(b);
  const blocks = Math.ceil(n / b);
  const lagBlocks = Math.floor(maxLag / b) + 1;
  const hs = 2 * (b + 1); // one half spectrum, interleaved
  const acc = new Float64Array(lagBlocks * hs);
  const cross = terms.some((term) => term.x !== term.y || term.bx !== term.by);
  const all = scratch((cross ? 4 : 2) * blocks * (b + 1) + 2 * blocks);
  const u = all.subarray(0, 2 * blocks * (b + 1));
  const w = cross ? all.subarray(2 * blocks * (b + 1), 4 * blocks * (b + 1)) : u;
  const y = all.subarray(all.length - 2 * blocks); // Y_j at one frequency (blockProducts)
  for (const term of terms) {
    blockSpectra(term.x, term.bx, b, fwd, u);
    if (w !== u) {
      if (term.y === term.x && term.by === term.bx) w.set(u);
      else blockSpectra(term.y, term.by, b, fwd, w);
    }
    blockProducts(u, w, y, acc, blocks, lagBlocks, b);
  }
  const z = planBuffer(inv, 'z', t);
  const out = planBuffer(inv, 'out', t);
  const result = new Float64Array(maxLag + 1);
  for (let d = 0; d < lagBlocks; d++) {
    inverseRealHalf(acc.subarray(d * hs, (d + 1) * hs), inv, z, out);
    const base = d * b;
    const top = Math.min(b, maxLag - base + 1);
    for (let r = 0; r < top; r++) result[base + r] = out[r]!;
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
  const p = planFor(s);
  const fft = p.fft;
  const z = planBuffer(p, 'a', 2 * s);
  const spec = planBuffer(p, 'b', 2 * s);
  const acc = planBuffer(p, 'acc', 2 * s);
  const out = planBuffer(p, 'out', 2 * s);
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
 * O_f = (Z_f − Z*_{m−f})/(2i) (Numerical Recipes §12.3); the pair f, m−f is unpacked together.
 * The inverse of the summed real, even power spectrum is packed the same way
 * (`inverseRealHalf`).
 */
function wholeAutoSums(terms: Term[], maxLag: number, s: number): Float64Array {
  const m = s / 2;
  const n = terms[0]!.x.length;
  const p = planFor(m);
  const fft = p.fft;
  const z = planBuffer(p, 'a', 2 * m);
  const spec = planBuffer(p, 'b', 2 * m);
  const power = planBuffer(p, 'power', 2 * (m + 1));
  power.fill(0);
  const { cos, sin } = splitTwiddles(p);
  for (const { x, bx } of terms) {
    // Interleaved complex r_{2j} + i·r_{2j+1} is the real sequence itself, zero padded.
    const { intercept, slope } = bx;
    if (slope === 0 && intercept === 0) z.set(x);
    else for (let i = 0; i < n; i++) z[i] = x[i]! - (intercept + slope * i);
    z.fill(0, n);
    fft.transform(spec, z);
    // f = 0 and f = m: X_0 = Re Z_0 + Im Z_0, X_m = Re Z_0 − Im Z_0 (both real).
    const x0 = spec[0]! + spec[1]!;
    const xm = spec[0]! - spec[1]!;
    power[0] += x0 * x0;
    power[2 * m] += xm * xm;
    // 0 < f ≤ m/2 together with g = m − f: Z*_{m−f} for f is conj of Z_g and vice versa.
    for (let f = 1; 2 * f <= m; f++) {
      const g = m - f;
      const zr = spec[2 * f]!;
      const zi = spec[2 * f + 1]!;
      const wr = spec[2 * g]!;
      const wi = spec[2 * g + 1]!;
      // For f: E = (Z_f + conj Z_g)/2, O = (Z_f − conj Z_g)/(2i).
      let er = 0.5 * (zr + wr);
      let ei = 0.5 * (zi - wi);
      let or = 0.5 * (zi + wi);
      let oi = -0.5 * (zr - wr);
      let c = cos[f]!;
      let sn = -sin[f]!;
      let xr = er + c * or - sn * oi;
      let xi = ei + c * oi + sn * or;
      power[2 * f] += xr * xr + xi * xi;
      if (g === f) continue;
      // For g: E = (Z_g + conj Z_f)/2, O = (Z_g − conj Z_f)/(2i).
      er = 0.5 * (wr + zr);
      ei = 0.5 * (wi - zi);
      or = 0.5 * (wi + zi);
      oi = -0.5 * (wr - zr);
      c = cos[g]!;
      sn = -sin[g]!;
      xr = er + c * or - sn * oi;
      xi = ei + c * oi + sn * or;
      power[2 * g] += xr * xr + xi * xi;
    }
  }
  // The power spectrum is real: power holds it as a half spectrum with zero imaginary parts.
  const out = spec;
  inverseRealHalf(power, p, z, out);
  const r = new Float64Array(maxLag + 1);
  for (let k = 0; k <= maxLag; k++) r[k] = out[k]!; // out holds r_0, r_1, r_2, ... interleaved
  return r;
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
