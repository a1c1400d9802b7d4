/**
 * All-origins mean-squared displacement of a series (src/numerics/mean-squared-displacement.ts):
 * the FFT form against the definition and against closed forms.
 */
import { describe, expect, it } from 'vitest';
import { addSelfTerm, directMsdOfSeries, msdOfSeries, msdSumFft } from '../src/numerics/mean-squared-displacement.js';
import { Random } from '../src/random.js';

const relDiff = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('MSD of one series: FFT form against the definition', () => {
  it('equals the direct O(T²) all-origins average to 1e-9 relative', () => {
    // Truth: MSD(m) = 1/(T−m) Σ_t [x(t+m) − x(t)]², evaluated directly; the FFT route is an exact
    // algebraic identity (Kneller et al., Comput. Phys. Commun. 91, 191 (1995)), so only round-off
    // separates them: 1e-9 relative leaves a 1e4 margin over double-precision sums of 1500 terms.
    const rng = new Random(11);
    const x = new Float64Array(1500);
    for (let t = 1; t < x.length; t++) x[t] = x[t - 1] + rng.normal() + 0.05; // walk with drift: large |x|
    const fft = msdOfSeries(x);
    const direct = directMsdOfSeries(x);
    expect(fft[0]).toBe(0);
    let worst = 0;
    for (let m = 1; m < x.length; m++) worst = Math.max(worst, relDiff(fft[m], direct[m]));
    expect(worst).toBeLessThan(1e-9);
  });

  it('self term S1(m) matches its definition', () => {
    // Truth: S1(m) = 1/(T−m) Σ_{t<T−m} [x(t)² + x(t+m)²] summed directly (definition in Kneller et al. 1995).
    // Tolerance 1e-12 relative: the recursion subtracts at most 40 terms of O(1) numbers.
    const x = Float64Array.from({ length: 40 }, (_, i) => Math.sin(i) + 0.3 * i);
    const acc = new Float64Array(40);
    addSelfTerm(x, 39, acc);
    for (const m of [0, 1, 7, 39]) {
      let s = 0;
      for (let t = 0; t + m < 40; t++) s += x[t] ** 2 + x[t + m] ** 2;
      expect(relDiff(acc[m], s / (40 - m))).toBeLessThan(1e-12);
    }
  });
});

describe('closed forms', () => {
  it('uniform motion x = a·t + b: MSD(m) = a²m² at every lag, summed over series', () => {
    // Truth: x(t+m) − x(t) = a·m for every origin (algebra). Two series with a = 0.3 and −1.2 sum to
    // (0.09 + 1.44) m². Tolerance 1e-9 relative: the FFT route cancels sums of size Σx² ≈ 1e5 here.
    const T = 400;
    const a = [0.3, -1.2];
    const series = a.map((ai, k) => Float64Array.from({ length: T }, (_, t) => ai * t + 5 * k));
    const out = msdSumFft(series, 200);
    expect(out[0]).toBe(0);
    for (const m of [1, 17, 200]) expect(relDiff(out[m], (0.09 + 1.44) * m * m)).toBeLessThan(1e-9);
    expect(directMsdOfSeries(Float64Array.from({ length: 10 }, (_, t) => 2 * t), 3)[3]).toBe(36);
  });
});
