/**
 * Plans and work memory of the FFT correlations (src/correlate.ts, src/correlation-paths.ts):
 * fft.js plans with their twiddle tables, our own split twiddles and the work buffers, kept per
 * transform length, and the packed real inverse transform the paths share.
 *
 * Caching policy (memory stays bounded; first use of fresh memory is expensive, so plans and
 * buffers are reused): lengths up to 2^16 complex points are always kept (all of them together
 * < 16 MB). Of the longer ones (up to 2^22) only the LARGE_PLANS_KEPT = 2 most recently used
 * lengths are kept, and only while their buffers total at most LARGE_PLAN_BYTES = 192 MB; the
 * least recently used is released first. The block-pair spectra buffer (16·N bytes) is kept
 * while it is at most SCRATCH_BYTES_KEPT = 96 MB. Not re-entrant across worker threads' shared
 * memory (each worker has its own module instance).
 */
import FFT from 'fft.js';

/** An fft.js plan of one transform length with its twiddles and lazily made work buffers. */
export interface Plan {
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
export function planFor(size: number): Plan {
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
export function planBuffer(p: Plan, name: string, length: number): Float64Array {
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
export function splitTwiddles(p: Plan): { cos: Float64Array; sin: Float64Array } {
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
export function scratch(length: number): Float64Array {
  if (scratchArray && scratchArray.length >= length) return scratchArray.subarray(0, length);
  const a = new Float64Array(length);
  scratchArray = a.byteLength <= SCRATCH_BYTES_KEPT ? a : null;
  return a;
}

/**
 * Real sequence r of even length s = 2m from its Hermitian half spectrum X_f (f = 0 … m,
 * interleaved re/im in `half`), by one complex inverse transform of length m: with
 * E_f = (X_f + X_{f+m})/2, O_f = (X_f − X_{f+m})·e^{+2πif/s}/2 and X_{f+m} = conj(X_{m−f}),
 * IDFT_m(E + i·O) = r_{2j} + i·r_{2j+1} (Numerical Recipes §12.3). Writes r_0 … r_{s−1} to out
 * (length 2m); z is a work array of 2m.
 */
export function inverseRealHalf(half: Float64Array, p: Plan, z: Float64Array, out: Float64Array): void {
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
