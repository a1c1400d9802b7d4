/**
 * Statistical inefficiency and the standard error of a correlated mean
 * (src/numerics/inefficiency.ts) against hand computations, closed forms for AR(1) and
 * Ornstein–Uhlenbeck series, Bartlett's variance of ρ̂ and Sokal's error of a correlation sum.
 */
import { describe, expect, it } from 'vitest';
import { blockingAnalysis } from '../src/numerics/blocking.js';
import {
  inefficiency,
  inefficiencyScan,
  meanWithError,
  normalisedAutocorrelation,
  seriesMean,
  seriesStandardDeviation,
  suggestedStartLag,
  windowFractionFor,
} from '../src/numerics/inefficiency.js';
import { windowRelativeError } from '../src/numerics/sokal.js';
import { ar1Series, ornsteinUhlenbeck } from '../src/random.js';

/** g of an AR(1) process, (1+φ)/(1−φ) (Priestley, Spectral Analysis and Time Series, 1981). */
const gAr1 = (phi: number): number => (1 + phi) / (1 - phi);

/**
 * Exact variance of the mean of m consecutive AR(1) values (unit innovations), times m/σ²:
 * g − 2φ(1−φ^m)/(m(1−φ)²) (closed form: Σ_{|k|<m}(1−|k|/m)φ^|k| summed as geometric series).
 */
const blockFactorAr1 = (phi: number, m: number): number =>
  gAr1(phi) - (2 * phi * (1 - phi ** m)) / (m * (1 - phi) ** 2);

describe('basic statistics', () => {
  it('mean and sample standard deviation (hand computation)', () => {
    // [2,4,4,4,5,5,7,9]: mean 5, Σ(x−x̄)² = 32, sample SD √(32/7). Tolerance 1e-12: round-off.
    const x = Float64Array.from([2, 4, 4, 4, 5, 5, 7, 9]);
    expect(seriesMean(x)).toBe(5);
    expect(Math.abs(seriesStandardDeviation(x) - Math.sqrt(32 / 7))).toBeLessThan(1e-12);
  });

  it('normalised autocorrelation of AR(1): ρ(1) = φ within 5 Bartlett standard errors', () => {
    // var ρ̂(1) ≈ (1−φ²)/n (Bartlett 1946); 5σ: false failure < 1e-6.
    const n = 100_000;
    const rho = normalisedAutocorrelation(ar1Series(n, 0.6, 3), 2);
    expect(rho[0]).toBe(1);
    expect(Math.abs(rho[1]! - 0.6)).toBeLessThan(5 * Math.sqrt((1 - 0.36) / n));
  });

  it('mean with error for white noise: SE = σ/√n', () => {
    // Independent samples, SE = 1/√n (common practice, no source); g's relative error
    // √(2(2M+1)/n) with Geyer's sum ending at M ≤ 3 is < 1 %, so SE is within 1 % +
    // 4·(1/√(2(n−1))) of 1/√n.
    const n = 100_000;
    const r = meanWithError(ar1Series(n, 0, 9));
    expect(Math.abs(r.standardError * Math.sqrt(n) - 1)).toBeLessThan(0.01 + 4 / Math.sqrt(2 * (n - 1)));
    expect(Math.abs(r.mean)).toBeLessThan(4 / Math.sqrt(n));
  });
});

describe('statistical inefficiency of a series', () => {
  it.each([
    [0, 200_000],
    [0.5, 200_000],
    [0.9, 200_000],
  ])('AR(1) φ = %f: g within 4 standard errors of (1+φ)/(1−φ)', (phi, n) => {
    // Sokal (1997): var(τ̂)/τ² ≈ 2(2M+1)/n for a sum over lags 1 … M, so g has relative standard
    // error √(2(2M+1)/n) (≈ 3 % here for φ = 0.9). The primary g is Geyer's, whose sum ends at
    // its `window`; Sokal's window bias for ρ = φ^k is below e^{-5} ≈ 0.7 % of g. Tolerance:
    // 4 standard errors + 1 % (a false failure has probability < 1e-4).
    const x = ar1Series(n, phi, 100 + Math.round(phi * 10));
    const est = inefficiency(x);
    const tol = 4 * windowRelativeError(est.window, n) + 0.01;
    expect(est.resolved).toBe(true);
    expect(Math.abs(est.g / gAr1(phi) - 1)).toBeLessThan(tol);
    expect(est.g).toBe(est.geyer.g);
    // Sokal's window (second opinion) with its own window M in the same formula.
    expect(est.sokal.resolved).toBe(true);
    const tolS = 4 * windowRelativeError(est.sokal.window, n) + 0.01;
    expect(Math.abs(est.sokal.g / gAr1(phi) - 1)).toBeLessThan(tolS);
    // τ_int = (g − 1)/2 by the convention g = 1 + 2τ_int (Chodera 2016).
    expect(Math.abs(est.tauInt - (est.g - 1) / 2)).toBeLessThan(1e-12);
  });

  it('Ornstein–Uhlenbeck: g = coth(dt/2τ)', () => {
    // ρ_k = e^{−k·dt/τ} → g = (1 + e^{−a})/(1 − e^{−a}) = coth(a/2), a = dt/τ (geometric series,
    // closed form). dt/τ = 0.2 → g = 10.03. Tolerance as in the AR(1) test (Sokal 1997), 4σ + 1 %.
    const n = 200_000;
    const x = ornsteinUhlenbeck(n, 0.01, 0.05, 3, 8);
    const est = inefficiency(x);
    const exact = 1 / Math.tanh(0.1);
    expect(Math.abs(est.g / exact - 1)).toBeLessThan(4 * windowRelativeError(est.window, n) + 0.01);
  });

  it('window cap from the effective-sample threshold (hand computation)', () => {
    // c/(2·minEffective): 5/100 = 0.05; 5/20 = 0.25; 5/10 = 0.5 → capped at 0.25. Exact.
    expect(windowFractionFor(50)).toBe(0.05);
    expect(windowFractionFor(10)).toBe(0.25);
    expect(windowFractionFor(1000)).toBe(0.0025);
  });

  it('start-lag hint from blocking ≈ 1.5·c·F(m)/2 for AR(1) (closed-form block variance)', () => {
    // (SE_plateau/SE_1)² estimates F(m) = m·var(block mean)/σ² at the plateau size m (closed
    // form above, AR(1)). Its relative error is ≈ 2(δ_p/SE_p) + 2(δ_1/SE_1) (error propagation,
    // δ from Flyvbjerg & Petersen 1989): tolerance 4 of those.
    const n = 1 << 17;
    const phi = 0.9;
    const b = blockingAnalysis(ar1Series(n, phi, 12));
    const p = b.plateau!;
    const expected = (1.5 * 5 * blockFactorAr1(phi, p.size)) / 2;
    const rel = 2 * (p.error / p.standardError) + 2 * (b.errorsOfStandardErrors[0]! / b.standardErrors[0]!);
    expect(Math.abs(suggestedStartLag(b) / expected - 1)).toBeLessThan(4 * rel + 1 / expected);
  });

  it('scan over origins: white-noise tail after a correlated head has g ≈ 1', () => {
    // First half AR(1) φ = 0.9 (g = 19), second half independent N(0,1) (g = 1, closed form).
    // Tolerance for the tail: 4 × √(2(2M+1)/n) with the largest lag Geyer's sum used (Sokal 1997) + 1 %.
    const half = 50_000;
    const x = new Float64Array(2 * half);
    x.set(ar1Series(half, 0.9, 14), 0);
    x.set(ar1Series(half, 0, 15), half);
    const [head, tail] = inefficiencyScan(x, [0, half]);
    expect(Math.abs(tail!.g - 1)).toBeLessThan(4 * windowRelativeError(tail!.window, half) + 0.01);
    // Whole series: independent halves, so n·var(mean) = (σ₁²g₁ + σ₂²g₂)/2 and the pooled
    // variance is (σ₁² + σ₂²)/2, giving g = (5.263·19 + 1)/(5.263 + 1) = 16.13 (closed form,
    // σ₁² = 1/(1−φ²)). The ρ of the mix is a weighted e^{−k/τ} plus the white half's spike at
    // lag 0, so the truncation bias stays ≈ 2 %: tolerance 4 × √(2(2M+1)/n) (Sokal 1997) + 3 %.
    const s1 = 1 / (1 - 0.81);
    const gMix = (s1 * gAr1(0.9) + 1) / (s1 + 1);
    expect(Math.abs(head!.g / gMix - 1)).toBeLessThan(4 * windowRelativeError(head!.window, 2 * half) + 0.03);
  });

  it('a constant series has ρ = (1, 0, 0, …) and g = 1', () => {
    // Convention stated in the module (no fluctuations); exact values.
    const x = new Float64Array(100).fill(-3.5);
    expect(Array.from(normalisedAutocorrelation(x, 3))).toEqual([1, 0, 0, 0]);
    expect(inefficiency(x).g).toBe(1);
  });
});
