/**
 * The three ways src/correlate.ts computes lagged product sums Σ_i (x_i − bx_i)(y_{i+k} − by_{i+k})
 * by the correlation theorem (W. H. Press et al., Numerical Recipes, 3rd ed., 2007, §12.3,
 * §13.1–13.2): the whole series in one transform (autocorrelations, real-input packing), the
 * segmented overlap–save path (many time origins, or maxLag ≪ N) and the block-pair path (long
 * lag ranges). Which one runs is decided by the cost model in src/correlate.ts; all three give
 * the same sums up to round-off. Plans and buffers come from src/fft-plans.ts.
 */
import type { Baseline } from './correlate.js';
import { planBuffer, planFor, scratch, splitTwiddles, inverseRealHalf, type Plan } from './fft-plans.js';

/** One product term Σ (x_i − bx_i)(y_{i+k} − by_{i+k}) of a lagged sum. */
export interface Term {
  x: Float64Array;
  y: Float64Array;
  bx: Baseline;
  by: Baseline;
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

/**
 * Block-pair lagged sums Σ_terms Σ_{i=0}^{N−1−k} (x_i − bx_i)(y_{i+k} − by_{i+k}), k = 0 … maxLag,
 * with blocks of b samples: R(dB + r) = IDFT_{2B}( Σ_b conj(U_b)·(W_{b+d} + (−1)^f W_{b+d+1}) )_r
 * (formula and cost at `blockPairProductSums` in src/correlate.ts; Numerical Recipes §13.1–13.2).
 */
export function blockPairSums(terms: Term[], maxLag: number, b: number): Float64Array {
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
export function segmentedSums(
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
export function wholeAutoSums(terms: Term[], maxLag: number, s: number): Float64Array {
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
