import { describe, expect, it } from 'vitest';
import {
  autocorrelation,
  blockPairProductSums,
  crossCorrelation,
  directAutocorrelation,
  directCrossCorrelation,
  laggedProductSums,
  nextPowerOfTwo,
  regionAutocovariances,
  sumOfAutocorrelations,
} from '../src/correlate.js';
import { AnalysisError, UsageError } from '../src/errors.js';
import { Random, ar1Series } from '../src/random.js';

/** Largest |a−b| divided by the largest |b| (a relative error that ignores near-zero entries). */
function relErr(a: Float64Array, b: Float64Array): number {
  expect(a.length).toBe(b.length);
  let num = 0;
  let den = 0;
  for (let i = 0; i < a.length; i++) {
    num = Math.max(num, Math.abs(a[i]! - b[i]!));
    den = Math.max(den, Math.abs(b[i]!));
  }
  return den > 0 ? num / den : num; // all-zero reference (e.g. one centred sample): absolute error
}

function noise(n: number, seed: number, offset = 0): Float64Array {
  return new Random(seed).fillNormal(new Float64Array(n), offset, 1);
}

// Tolerance 1e-10 (relative to the largest entry): FFT round-off grows like ε·log₂S ≈ 1e-14 for
// the sizes used here, so 1e-10 leaves four orders of margin while still catching any indexing,
// padding or normalisation error (those give O(1) errors). Required by the project brief.
const FFT_TOL = 1e-10;

describe('autocorrelation by FFT against the direct O(N²) sum', () => {
  // The direct sum is the definition C(k) = 1/(N−k) Σ x_i x_{i+k} itself (common practice, no source).
  it.each([1, 2, 3, 4, 5, 7, 8, 9, 17, 100, 257, 1000, 4099])('all lags, N = %i', (n) => {
    const x = noise(n, n, 0.3);
    expect(relErr(autocorrelation(x), directAutocorrelation(x))).toBeLessThan(FFT_TOL);
  });

  it.each([
    [5000, 10],
    [10000, 300],
    [20000, 1],
    [3000, 0],
    [70000, 2000],
  ])('segmented path: N = %i, maxLag = %i', (n, maxLag) => {
    const x = noise(n, 7 + n, -1.5);
    const fft = autocorrelation(x, { maxLag, subtractMean: true });
    const dir = directAutocorrelation(x, { maxLag, subtractMean: true });
    expect(fft.length).toBe(maxLag + 1);
    expect(relErr(fft, dir)).toBeLessThan(FFT_TOL);
  });

  it('linear ramp x_i = i matches the closed form', () => {
    // Σ_{i=0}^{m−1} i(i+k) = (m−1)m(2m−1)/6 + k(m−1)m/2 with m = N−k (sums of powers, closed form).
    const n = 3001;
    const x = Float64Array.from({ length: n }, (_, i) => i);
    const c = autocorrelation(x);
    for (const k of [0, 1, 2, 500, 2999, 3000]) {
      const m = n - k;
      const exact = ((m - 1) * m * (2 * m - 1)) / 6 + (k * (m - 1) * m) / 2;
      // Tolerance 1e-10 relative to C(0) ≈ 3e6: same FFT round-off argument as FFT_TOL.
      expect(Math.abs(c[k]! - exact / m)).toBeLessThan(FFT_TOL * c[0]!);
    }
  });

  it('geometric series x_i = r^i matches the closed form (segmented path)', () => {
    // Σ_{i=0}^{m−1} r^i r^{i+k} = r^k (1 − r^{2m})/(1 − r²) (geometric sum, closed form).
    const n = 40000;
    const r = 0.999;
    const x = Float64Array.from({ length: n }, (_, i) => r ** i);
    const c = autocorrelation(x, { maxLag: 200 });
    for (const k of [0, 1, 50, 200]) {
      const m = n - k;
      const exact = (r ** k * (1 - r ** (2 * m))) / (1 - r * r) / m;
      // Tolerance: FFT round-off relative to C(0), as FFT_TOL.
      expect(Math.abs(c[k]! - exact)).toBeLessThan(FFT_TOL * c[0]!);
    }
  });

  it('AR(1) autocorrelation follows φ^k within Bartlett standard errors', () => {
    // ρ(k) = φ^k (Priestley 1981); var ρ̂(k) ≈ (1/N)[(1+φ²)(1−φ^{2k})/(1−φ²) − 2kφ^{2k}]
    // (M. S. Bartlett, J. R. Statist. Soc. Suppl. 8, 27 (1946), specialised to AR(1)).
    // Tolerance 5 standard errors: a false failure has probability < 1e-6 per lag.
    const n = 1 << 17;
    const phi = 0.8;
    const x = ar1Series(n, phi, 11);
    const c = autocorrelation(x, { maxLag: 10, subtractMean: true });
    for (let k = 1; k <= 10; k++) {
      const p2k = phi ** (2 * k);
      const v = ((1 + phi * phi) * (1 - p2k)) / (1 - phi * phi) / n - (2 * k * p2k) / n;
      expect(Math.abs(c[k]! / c[0]! - phi ** k)).toBeLessThan(5 * Math.sqrt(v));
    }
  });
});

describe('cross-correlation and sums', () => {
  it.each([
    [1, 0],
    [6, 5],
    [999, 998],
    [12000, 40],
  ])('cross-correlation equals the direct sum (N = %i, maxLag = %i)', (n, maxLag) => {
    const x = noise(n, 3 * n + 1, 2);
    const y = noise(n, 5 * n + 2, -1);
    const fft = crossCorrelation(x, y, { maxLag });
    expect(relErr(fft, directCrossCorrelation(x, y, { maxLag }))).toBeLessThan(FFT_TOL);
    const fftC = crossCorrelation(x, y, { maxLag, subtractMean: true });
    expect(relErr(fftC, directCrossCorrelation(x, y, { maxLag, subtractMean: true }))).toBeLessThan(FFT_TOL);
  });

  it('order convention ⟨x_i y_{i+k}⟩: x = 1, y_i = i gives k + (N−k−1)/2', () => {
    // (1/m) Σ_{i=0}^{m−1} (i + k) = k + (m−1)/2, m = N−k (arithmetic series, closed form).
    const n = 500;
    const x = new Float64Array(n).fill(1);
    const y = Float64Array.from({ length: n }, (_, i) => i);
    const c = crossCorrelation(x, y);
    for (const k of [0, 1, 100, 499]) {
      // Tolerance: FFT round-off relative to the largest entry (~500), as FFT_TOL.
      expect(Math.abs(c[k]! - (k + (n - k - 1) / 2))).toBeLessThan(FFT_TOL * 500);
    }
  });

  it('sum of autocorrelations equals the sum of direct ones (3 components, both paths)', () => {
    for (const [n, maxLag] of [
      [777, 776],
      [30000, 100],
    ] as const) {
      const comps = [noise(n, 1, 0.5), noise(n, 2, -0.2), noise(n, 3, 0)];
      const sum = sumOfAutocorrelations(comps, { maxLag });
      const ref = new Float64Array(maxLag + 1);
      for (const c of comps) {
        const d = directAutocorrelation(c, { maxLag });
        for (let k = 0; k <= maxLag; k++) ref[k] += d[k]!;
      }
      expect(relErr(sum, ref)).toBeLessThan(FFT_TOL);
    }
  });

  it('lagged sums for many origins equal direct sums over each tail', () => {
    const n = 9000;
    const x = noise(n, 99, 0.1);
    const origins = [0, 1, 1000, 4321, 8990, 8999];
    const maxLag = 50;
    const r = laggedProductSums([[x, x]], origins, maxLag);
    origins.forEach((o, j) => {
      const ref = new Float64Array(maxLag + 1);
      for (let k = 0; k <= maxLag; k++) {
        let s = 0;
        for (let i = o; i + k < n; i++) s += x[i]! * x[i + k]!;
        ref[k] = s;
      }
      // Tolerance FFT_TOL relative to the largest sum (same round-off argument).
      expect(relErr(r[j]!, ref)).toBeLessThan(FFT_TOL);
    });
  });

  it('region autocovariances equal the centred direct autocorrelation of each tail', () => {
    // A slow drift makes each tail's own mean differ from the global one, exercising the correction.
    const n = 6000;
    const x = noise(n, 5, 0);
    for (let i = 0; i < n; i++) x[i] += 20 * Math.exp(-i / 500);
    const origins = [0, 250, 3000, 5900];
    const maxLag = 120;
    const c = regionAutocovariances(x, origins, maxLag);
    origins.forEach((o, j) => {
      const sub = x.slice(o);
      const ref = directAutocorrelation(sub, { maxLag: Math.min(maxLag, sub.length - 1), subtractMean: true });
      // Tolerance FFT_TOL: exact algebra plus FFT round-off.
      expect(relErr(c[j]!.subarray(0, ref.length), ref)).toBeLessThan(FFT_TOL);
    });
  });
});

describe('block-pair path for very long lag ranges', () => {
  it.each([
    [2, 1002],
    [16, 1002],
    [64, 500],
    [128, 0],
    [1024, 1002],
  ])('block length %i, maxLag %i: equals the direct sums (cross + auto terms)', (block, maxLag) => {
    const n = 1003;
    const x = noise(n, 201, 0.4);
    const y = noise(n, 202, -0.7);
    const r = blockPairProductSums([[x, y], [y, y]], maxLag, block);
    const d1 = directCrossCorrelation(x, y, { maxLag });
    const d2 = directAutocorrelation(y, { maxLag });
    const ref = Float64Array.from({ length: maxLag + 1 }, (_, k) => (d1[k]! + d2[k]!) * (n - k));
    // Tolerance FFT_TOL (FFT round-off argument above).
    expect(relErr(r, ref)).toBeLessThan(FFT_TOL);
  });

  it('all lags of 2.2·10⁶ samples (automatic block-pair path) match direct sums at spot lags', () => {
    // N + maxLag > 2^22 selects the block-pair path. Direct O(N) sums at four lags are the
    // reference (definition); tolerance FFT_TOL relative to C(0).
    const n = 2_200_000;
    const x = ar1Series(n, 0.7, 77);
    const c = autocorrelation(x);
    for (const k of [0, 1, 1_000_003, n - 1]) {
      let s = 0;
      for (let i = 0; i + k < n; i++) s += x[i]! * x[i + k]!;
      expect(Math.abs(c[k]! - s / (n - k))).toBeLessThan(FFT_TOL * c[0]!);
    }
  });
});

describe('helpers and errors', () => {
  it('nextPowerOfTwo', () => {
    // Powers of two by definition (common practice, no source); tolerance: exact integers.
    expect([1, 2, 3, 1024, 1025].map(nextPowerOfTwo)).toEqual([2, 2, 4, 1024, 2048]);
  });

  it('rejects bad lags and mismatched series', () => {
    const x = new Float64Array(10);
    expect(() => autocorrelation(x, { maxLag: 10 })).toThrow(UsageError);
    expect(() => autocorrelation(x, { maxLag: -1 })).toThrow(UsageError);
    expect(() => crossCorrelation(x, new Float64Array(9))).toThrow(AnalysisError);
    expect(() => autocorrelation(new Float64Array(0))).toThrow(AnalysisError);
  });

  it('a 10^6-sample series with 1000 lags stays fast', () => {
    // Speed bound, not a numerical truth: O(N log S) with S = 4096 should take well under a second;
    // 5 s tolerates a loaded 2-core machine. Correctness is checked on a spot lag against the
    // direct sum (FFT_TOL, same argument as above).
    const n = 1_000_000;
    const x = ar1Series(n, 0.5, 3);
    const t = performance.now();
    const c = autocorrelation(x, { maxLag: 1000, subtractMean: true });
    const seconds = (performance.now() - t) / 1000;
    expect(seconds).toBeLessThan(5);
    let mean = 0;
    for (let i = 0; i < n; i++) mean += x[i]!;
    mean /= n;
    let s = 0;
    for (let i = 0; i + 700 < n; i++) s += (x[i]! - mean) * (x[i + 700]! - mean);
    expect(Math.abs(c[700]! - s / (n - 700))).toBeLessThan(FFT_TOL * c[0]!);
  });
});
