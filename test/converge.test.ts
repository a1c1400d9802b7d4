import { describe, expect, it } from 'vitest';
import {
  analyseSeries,
  blockingAnalysis,
  detectEquilibration,
  driftTest,
  extraTime,
  formatMeasurement,
  geyerInefficiency,
  halvesTest,
  inefficiency,
  inefficiencyScan,
  meanWithError,
  mser,
  normalisedAutocorrelation,
  seriesMean,
  seriesStandardDeviation,
  sokalWindow,
  suggestedStartLag,
  windowFractionFor,
  windowRelativeError,
  blockingPlateau,
  chiSquaredUpperPoint,
  combineStandardErrors,
  MIN_SAMPLES,
  PLATEAU_MIN_BLOCKS,
} from '../analyses/converge.js';
import { AnalysisError, InputError, UsageError } from '../src/errors.js';
import { ar1Series, ornsteinUhlenbeck, Random } from '../src/random.js';

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

describe('integrated autocorrelation time', () => {
  it("Sokal's window on an exact geometric autocorrelation (hand computation)", () => {
    // ρ(k) = 0.5^k: τ_int(M) = 1 − 2^−M. Criterion M ≥ 5(1/2 + τ_int(M)): M = 7 gives
    // 5·(1.5 − 1/128) = 7.46 > 7, M = 8 gives 5·(1.5 − 1/256) = 7.48 ≤ 8 → window 8,
    // g = 1 + 2(1 − 1/256) = 2.9921875 (hand computation). Tolerance 1e-12: only round-off.
    const rho = Float64Array.from({ length: 50 }, (_, k) => 0.5 ** k);
    const w = sokalWindow(rho);
    expect(w.window).toBe(8);
    expect(w.resolved).toBe(true);
    expect(Math.abs(w.g - 2.9921875)).toBeLessThan(1e-12);
  });

  it("Geyer's estimator on exact AR(1) autocovariances gives (1+φ)/(1−φ)", () => {
    // γ(k) = φ^k/(1−φ²): Γ_m = φ^{2m}(1+φ)/(1−φ²) > 0 for all m and decreasing, so the
    // estimator sums everything: −1 + 2(1+φ)/(1−φ²)·Σφ^{2m}·(1−φ²) = (1+φ)/(1−φ) (closed form,
    // Geyer 1992 applied to AR(1)). 400 lags leave 0.9^400 ≈ 5e-19: tolerance 1e-9 relative.
    const phi = 0.9;
    const gamma = Float64Array.from({ length: 401 }, (_, k) => phi ** k / (1 - phi * phi));
    const gy = geyerInefficiency(gamma);
    expect(Math.abs(gy.g / gAr1(phi) - 1)).toBeLessThan(1e-9);
    // φ = −0.5 gives g = 1/3 exactly; the estimator floors g at 1 (documented, conservative).
    const anti = Float64Array.from({ length: 401 }, (_, k) => (-0.5) ** k / 0.75);
    expect(geyerInefficiency(anti).g).toBe(1);
  });

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

describe('negative early correlation: slow AR(1) plus differenced white noise', () => {
  // x_t = a_t + (e_t − e_{t−1}): a is AR(1) with φ = 0.99 and unit innovations, e is independent
  // white noise of variance s² = 200. Closed form of g (Priestley 1981, spectral density at zero
  // frequency: n·var(x̄) → 2π f_x(0) = Σ_k γ_x(k), and g = Σ_k γ_x(k)/γ_x(0)):
  // - a: γ_a(k) = γ_a(0)φ^|k| with γ_a(0) = 1/(1−φ²) = 50.2513, Σ_k γ_a(k) = γ_a(0)(1+φ)/(1−φ).
  // - d = e_t − e_{t−1}: γ_d(0) = 2s², γ_d(±1) = −s², 0 beyond, so Σ_k γ_d(k) = 0 — its spectral
  //   density s²|1 − e^{−iω}|²/2π = s²(2 − 2cos ω)/2π vanishes at ω = 0: differenced noise adds
  //   variance but nothing to the variance of a long mean.
  // - a and d are independent, so γ_x = γ_a + γ_d and
  //   g = γ_a(0)·(1+φ)/(1−φ) / (γ_a(0) + 2s²) = 50.2513·199/450.2513 = 22.2098,
  //   while ρ(1) = (φγ_a(0) − s²)/γ_x(0) = −0.3337 and ρ(k) = γ_a(0)φ^k/γ_x(0) for k ≥ 2.
  const PHI = 0.99;
  const S2 = 200;
  const GA0 = 1 / (1 - PHI * PHI);
  const GX0 = GA0 + 2 * S2;
  const G_EXACT = (GA0 * gAr1(PHI)) / GX0;
  const exactGamma = (k: number): number => (k === 0 ? GX0 : k === 1 ? PHI * GA0 - S2 : GA0 * PHI ** k);
  const mixed = (n: number, seed: number): Float64Array => {
    const x = ar1Series(n, PHI, seed);
    const rng = new Random(seed + 1000);
    const s = Math.sqrt(S2);
    let prev = s * rng.normal();
    for (let i = 0; i < n; i++) {
      const e = s * rng.normal();
      x[i] += e - prev;
      prev = e;
    }
    return x;
  };

  it("on the exact autocovariances Geyer's estimator gives the closed-form g; Sokal's window stops at lag 1", () => {
    // Γ_0 = γ_a(0)(1+φ) + s² and Γ_m = γ_a(0)φ^{2m}(1+φ) (m ≥ 1) are positive and decreasing, so
    // the initial monotone sequence sums them all: −γ_x(0) + 2ΣΓ = γ_a(0)(1+φ)/(1−φ) (geometric
    // series; Geyer 1992). 4000 lags leave φ^4000 ≈ 3e-18: tolerance 1e-9 relative (round-off).
    const gamma = Float64Array.from({ length: 4001 }, (_, k) => exactGamma(k));
    expect(Math.abs(geyerInefficiency(gamma).g / G_EXACT - 1)).toBeLessThan(1e-9);
    // Sokal's criterion at M = 1: 1 ≥ 5·(1/2 + ρ(1)) = 5·0.1663 = 0.83, so it stops there with
    // g = max(1, 1 + 2ρ(1)) = 1 (hand computation): the failure the primary estimator avoids.
    const rho = gamma.map((v) => v / GX0);
    const w = sokalWindow(rho);
    expect(w.window).toBe(1);
    expect(w.g).toBe(1);
  });

  it('simulated, 2^20 samples: g, the standard error and the blocking plateau against the closed form', () => {
    const n = 1 << 20;
    const x = mixed(n, 3);
    // g's relative standard error ≈ √(2(2M+1)/n) with M the last lag summed (Sokal 1997), ≈ 4.4 %
    // here; over 12 seeds we measured a spread of 5.5 %, so 4 × formula + 1 % is ≈ 3.4 measured
    // standard deviations (false failure < 0.1 %).
    const est = inefficiency(x);
    const tol = 4 * windowRelativeError(est.window, n) + 0.01;
    expect(Math.abs(est.g / G_EXACT - 1)).toBeLessThan(tol);
    // The full report (production region [t0, n)): same tolerance for g; the SE ∝ √g, so half of
    // it for σ_x√(g/n') against the exact √(γ_x(0)·g/n').
    const r = analyseSeries('mixed', x, { dt: null });
    const np = n - r.equilibrationIndex;
    const tolR = 4 * windowRelativeError(inefficiency(x.subarray(r.equilibrationIndex)).window, np) + 0.01;
    expect(Math.abs(r.statisticalInefficiency / G_EXACT - 1)).toBeLessThan(tolR);
    expect(Math.abs(r.standardError / Math.sqrt((GX0 * G_EXACT) / np) - 1)).toBeLessThan(tolR / 2);
    expect(r.standardErrorSource).toBe('autocorrelation');
    // Block averaging: not at single samples (ρ(1) = −0.33 is rejected by the two-sided test), and
    // the plateau SE matches the exact SE for its block size m: var of the mean of m consecutive x
    // is (γ_a(0)F_a(m) + 2s²/m)/m, F_a from blockFactorAr1 (the mean of m values of d telescopes to
    // (e_last − e_first−1)/m). Tolerance 4 of the plateau's own standard errors (Flyvbjerg &
    // Petersen 1989); and the report must find the two estimates in agreement.
    const b = blockingAnalysis(x.subarray(r.equilibrationIndex));
    const p = b.plateau!;
    expect(p.size).toBeGreaterThan(1);
    const exactAtM = Math.sqrt((GA0 * blockFactorAr1(PHI, p.size) + (2 * S2) / p.size) / np);
    expect(Math.abs(p.standardError - exactAtM)).toBeLessThan(4 * p.error);
    expect(r.blocking.plateau!.size).toBe(p.size);
    expect(r.blocking.agreesWithAutocorrelation).toBe(true);
    expect(r.reliable).toBe(true);
  });
});

describe('block averaging', () => {
  it('linear ramp: closed-form standard error and lag-1 correlation at every level', () => {
    // x_i = i, n = 2^12. Level l has n_b = n/2^l block means forming an arithmetic progression
    // with spacing h = 2^l, so SE² = var/n_b = h²(n_b+1)/12 and the lag-1 autocorrelation is
    // r₁ = 1 − 3/n_b (sums of powers, closed form). Tolerance 1e-9 relative: round-off only.
    const n = 1 << 12;
    const x = Float64Array.from({ length: n }, (_, i) => i);
    const b = blockingAnalysis(x);
    expect(b.sizes.length).toBe(12); // levels with ≥ 2 blocks: 4096 … 2 blocks
    for (let l = 0; l < b.sizes.length; l++) {
      const nb = n / 2 ** l;
      expect(b.blocks[l]).toBe(nb);
      const exact = 2 ** l * Math.sqrt((nb + 1) / 12);
      expect(Math.abs(b.standardErrors[l]! / exact - 1)).toBeLessThan(1e-9);
      expect(Math.abs(b.errorsOfStandardErrors[l]! - exact / Math.sqrt(2 * (nb - 1)))).toBeLessThan(1e-9 * exact);
      if (nb >= 3) expect(Math.abs(b.lagOneCorrelations[l]! - (1 - 3 / nb))).toBeLessThan(1e-9);
    }
    // A ramp never looks independent, so the plateau rule finds nothing.
    expect(b.plateau).toBeNull();
  });

  it('odd lengths drop the last block at each level (Flyvbjerg & Petersen 1989)', () => {
    // 1000 → 500 → 250 → 125 → 62 → 31 → 15 → 7 → 3 → 1: levels with ≥ 2 blocks (hand computation).
    const b = blockingAnalysis(ar1Series(1000, 0, 4));
    expect(b.blocks).toEqual([1000, 500, 250, 125, 62, 31, 15, 7, 3]);
    expect(b.sizes).toEqual([1, 2, 4, 8, 16, 32, 64, 128, 256]);
  });

  it('AR(1) φ = 0.9: plateau SE matches the exact block variance and the autocorrelation estimate', () => {
    // Exact SE at block size m: σ_x·√(F(m)/n) with σ_x² = 1/(1−φ²) and F from blockFactorAr1
    // (closed form). The plateau level's SE has standard error SE/√(2(n_b−1)) (Flyvbjerg &
    // Petersen 1989): tolerance 4 of those.
    const n = 1 << 18;
    const phi = 0.9;
    const x = ar1Series(n, phi, 21);
    const b = blockingAnalysis(x);
    expect(b.plateau).not.toBeNull();
    const p = b.plateau!;
    const sx2 = 1 / (1 - phi * phi);
    const exactAtM = Math.sqrt((sx2 * blockFactorAr1(phi, p.size)) / n);
    expect(Math.abs(p.standardError - exactAtM)).toBeLessThan(4 * p.error);
    // Against the asymptotic SE σ_x√(g/n): the same statistical tolerance plus the closed-form
    // bias of blocks of that size, 1 − √(F(m)/g).
    const exact = Math.sqrt((sx2 * gAr1(phi)) / n);
    const bias = 1 - Math.sqrt(blockFactorAr1(phi, p.size) / gAr1(phi));
    expect(Math.abs(p.standardError / exact - 1)).toBeLessThan(4 * (p.error / p.standardError) + bias);
    // Against the autocorrelation estimate σ√(g/n): tolerance 4 combined standard errors
    // (blocking: SE/√(2(n_b−1)); autocorrelation: half of g's relative error √(2(2M+1)/n),
    // Sokal 1997) plus the same closed-form blocking bias.
    const report = analyseSeries('ar1', x, { dt: null });
    const seAcf = report.standardError;
    const est = inefficiency(x.subarray(report.equilibrationIndex));
    const dAcf = (seAcf * windowRelativeError(est.window, n - report.equilibrationIndex)) / 2;
    expect(Math.abs(p.standardError - seAcf)).toBeLessThan(4 * Math.hypot(p.error, dAcf) + bias * seAcf);
    expect(report.blocking.agreesWithAutocorrelation).toBe(true);
  });

  it('white noise: the plateau is at or near single samples and equals σ/√n', () => {
    // Independent N(0,1) samples: SE = 1/√n exactly in expectation (common practice, no source).
    // Tolerance 4 standard errors of the plateau SE (Flyvbjerg & Petersen 1989).
    const n = 100_000;
    const b = blockingAnalysis(ar1Series(n, 0, 5));
    const p = b.plateau!;
    expect(p.size).toBeLessThanOrEqual(4);
    expect(Math.abs(p.standardError - 1 / Math.sqrt(n))).toBeLessThan(4 * p.error);
  });
});

describe('blocking plateau rule and the reported standard error', () => {
  it('cumulative two-sided χ² test of the lag-1 correlations (hand computation, Jonsson 2018)', () => {
    // Seven levels with n_b = 1024 … 16 blocks and chosen z_l = (r₁ + 1/n_b)√n_b =
    // −4, 1, 2.4, 2.4, 2.4, 0, 0. z² = 16, 1, 5.76, 5.76, 5.76, 0, 0; suffix sums M_j = 34.28,
    // 18.28, 17.28, 11.52, 5.76, 0, 0. Upper 1 % points of χ² (standard table, e.g. Abramowitz &
    // Stegun 1964, Table 26.8): 6 d.o.f. 16.81, 5 d.o.f. 15.09, 4 d.o.f. 13.28, 1 d.o.f. 6.63.
    // Level 0 fails on its own (|z| = 4, negative r₁: the test is two-sided); levels 1 and 2 pass
    // on their own but M_1 = 18.28 > 16.81 and M_2 = 17.28 > 15.09 (later levels jointly
    // correlated); level 3: M_3 = 11.52 < 13.28 and z² = 5.76 < 6.63 → plateau at level 3.
    const blocks = [1024, 512, 256, 128, 64, 32, 16];
    const z = [-4, 1, 2.4, 2.4, 2.4, 0, 0];
    const table = {
      sizes: blocks.map((_, l) => 2 ** l),
      blocks,
      standardErrors: blocks.map((_, l) => 0.01 * (l + 1)),
      errorsOfStandardErrors: blocks.map((nb, l) => (0.01 * (l + 1)) / Math.sqrt(2 * (nb - 1))),
      lagOneCorrelations: blocks.map((nb, l) => z[l]! / Math.sqrt(nb) - 1 / nb),
    };
    const p = blockingPlateau(table)!;
    expect(p.level).toBe(3);
    expect(p.size).toBe(8);
    expect(p.standardError).toBe(0.04);
    // With the later levels quiet (z = −4, 1, 0, 0, 0, 0, 0) level 1 passes both tests:
    // z² = 1 < 6.63 and M_1 = 1 < 16.81.
    const quiet = { ...table, lagOneCorrelations: blocks.map((nb, l) => (l === 0 ? z[0]! : l === 1 ? 1 : 0) / Math.sqrt(nb) - 1 / nb) };
    expect(blockingPlateau(quiet)!.level).toBe(1);
    // Levels with fewer than PLATEAU_MIN_BLOCKS = 16 blocks are not candidates: z = 3, 3 (z² = 9 >
    // 6.63 each) at 1024 and 512 blocks, then a level of 8 blocks → no plateau.
    expect(PLATEAU_MIN_BLOCKS).toBe(16);
    const short = {
      sizes: [1, 2, 4],
      blocks: [1024, 512, 8],
      standardErrors: [1, 1, 1],
      errorsOfStandardErrors: [1, 1, 1],
      lagOneCorrelations: [3 / Math.sqrt(1024) - 1 / 1024, 3 / Math.sqrt(512) - 1 / 512, 0],
    };
    expect(blockingPlateau(short)).toBeNull();
  });

  it('χ² upper 1 % points beyond the table: Wilson–Hilferty within 0.1 % of published values', () => {
    // χ²_{0.99} for 31, 35 and 45 degrees of freedom: 52.191, 57.342, 69.957 (standard χ² table,
    // from memory). Wilson & Hilferty (1931) is accurate to better than 0.1 % at these k.
    expect(Math.abs(chiSquaredUpperPoint(31) / 52.191 - 1)).toBeLessThan(1e-3);
    expect(Math.abs(chiSquaredUpperPoint(35) / 57.342 - 1)).toBeLessThan(1e-3);
    expect(Math.abs(chiSquaredUpperPoint(45) / 69.957 - 1)).toBeLessThan(1e-3);
    // Tabulated k: the table's 2-decimal entry for 1 d.o.f., 6.63 (6.6349 exactly, 2.5758²).
    expect(Math.abs(chiSquaredUpperPoint(1) - 2.5758 ** 2)).toBeLessThan(0.01);
  });

  it('reported SE: autocorrelation when they agree, the larger when they do not (hand computation)', () => {
    // Agreement: |0.0105 − 0.0100| = 0.0005 ≤ 2.5758·√(0.0004² + 0.0005²) = 0.00165 → SE_acf.
    const acf = { standardError: 0.01, error: 0.0005 };
    const withPlateau = (se: number) => ({
      blocks: [64, 32, 16],
      standardErrors: [0.008, se, se],
      errorsOfStandardErrors: [0.0002, 0.0004, 0.0006],
      plateau: { level: 1, size: 2, standardError: se, error: 0.0004 },
    });
    expect(combineStandardErrors(acf, withPlateau(0.0105))).toEqual({ standardError: 0.01, error: 0.0005, source: 'autocorrelation', agrees: true });
    // Blocking larger by 0.004 > 0.00165: the larger, i.e. the plateau's, with its own error.
    expect(combineStandardErrors(acf, withPlateau(0.014))).toEqual({ standardError: 0.014, error: 0.0004, source: 'blocking plateau', agrees: false });
    // Blocking smaller by 0.004: the larger is the autocorrelation estimate.
    expect(combineStandardErrors(acf, withPlateau(0.006))).toEqual({ standardError: 0.01, error: 0.0005, source: 'autocorrelation', agrees: false });
    // An autocorrelation estimate that is only a lower bound gives way to a larger plateau even
    // when they agree.
    expect(combineStandardErrors({ ...acf, lowerBound: true }, withPlateau(0.0105)).source).toBe('blocking plateau');
    // No plateau: the largest SE among levels with ≥ 16 blocks (0.015 at 16 blocks, not 0.03 at 8).
    const none = { blocks: [64, 32, 16, 8], standardErrors: [0.01, 0.012, 0.015, 0.03], errorsOfStandardErrors: [1e-4, 2e-4, 3e-4, 1e-3], plateau: null };
    expect(combineStandardErrors(acf, none)).toEqual({ standardError: 0.015, error: 3e-4, source: 'largest blocks', agrees: false });
  });
});

describe('equilibration detection', () => {
  // AR(1), φ = 0.9, plus an initial transient 20σ·e^{−t/500}. Bounds (common practice, no source):
  // at t = 2·500 the transient is still 20e^{−2} = 2.7σ, far above the noise, so a sound cut must
  // come later; by t = N/4 = 10 decay times it is 20e^{−10} ≈ 1e-3σ, negligible, so cutting
  // later than that only wastes data.
  const n = 20_000;
  const tau = 500;
  const transient = (seed: number): Float64Array => {
    const phi = 0.9;
    const x = ar1Series(n, phi, seed);
    const sd = Math.sqrt(1 / (1 - phi * phi));
    for (let i = 0; i < n; i++) x[i] += 20 * sd * Math.exp(-i / tau);
    return x;
  };

  it.each([1, 2, 3])('decaying start (seed %i): t0 after 2 decay times and before N/4', (seed) => {
    const x = transient(seed);
    const eq = detectEquilibration(x);
    expect(eq.index).toBeGreaterThan(2 * tau);
    expect(eq.index).toBeLessThan(n / 4);
    const m = mser(x);
    expect(m.index).toBeGreaterThan(2 * tau);
    expect(m.index).toBeLessThan(n / 4);
  });

  it.each([11, 12, 13])('equilibrated AR(1) (seed %i): t0 within the first 5 %', (seed) => {
    // A later origin wins only if g(t0) fluctuates below g(0) by more than the data discarded;
    // g's relative standard error is √(2(2M+1)/n) ≈ 1.8 % here (Sokal 1997), so a spurious
    // maximum beyond ≈ 3 × 1.8 % ≈ 5 % of the run has probability well below 1 %.
    const x = ar1Series(100_000, 0.5, seed);
    expect(detectEquilibration(x).index).toBeLessThanOrEqual(5000);
    expect(mser(x).index).toBeLessThanOrEqual(5000);
  });

  it('MSER-5 on a step: truncates exactly at the end of the step', () => {
    // 100 samples at 7 then 900 at 0: MSER(d) = 0 for every d ≥ 20 batches and > 0 before, the
    // earliest minimum is d = 20 → t0 = 100 (hand computation, White 1997 definition).
    const x = new Float64Array(1000);
    x.fill(7, 0, 100);
    expect(mser(x).index).toBe(100);
  });
});

describe('stationarity checks', () => {
  it('a linear drift is flagged and its slope recovered', () => {
    // AR(1) φ = 0.5 plus 0.5σ_x drift over the run. OLS slope standard error (with √g
    // inflation) ≈ σ√(12g/n³) (least squares, Priestley 1981), so the drift is ≈ 12 standard
    // errors: flagged; the slope must lie within 4 of its standard errors of the truth.
    const n = 20_000;
    const phi = 0.5;
    const sx = Math.sqrt(1 / (1 - phi * phi));
    const slope = (0.5 * sx) / (n * 0.002); // per ps with dt = 0.002 ps
    const x = ar1Series(n, phi, 31);
    for (let i = 0; i < n; i++) x[i] += slope * i * 0.002;
    const d = driftTest(x, 0.002);
    expect(d.significant).toBe(true);
    expect(Math.abs(d.slope - slope)).toBeLessThan(4 * d.standardError);
    const r = analyseSeries('drifting', x, { dt: 0.002, unit: 'K' });
    expect(r.drift.significant).toBe(true);
    expect(r.drift.unit).toBe('K/ps');
    expect(r.reliable).toBe(false);
  });

  it('stationary series: at most 2 of 20 flagged by the drift test or the halves test', () => {
    // Each test has nominal false-positive rate 1 % (two-sided, z = 2.576); with g estimated
    // we measured ≈ 2 % over 200 seeds. P(≥ 3 of 20 | 2 %) ≈ 0.7 %: a false failure is unlikely.
    let drift = 0;
    let halves = 0;
    for (let seed = 1; seed <= 20; seed++) {
      const x = ar1Series(20_000, 0.5, 500 + seed);
      if (driftTest(x).significant) drift++;
      if (!halvesTest(x).consistent) halves++;
    }
    expect(drift).toBeLessThanOrEqual(2);
    expect(halves).toBeLessThanOrEqual(2);
  });

  it('a shift between halves is flagged', () => {
    // Step of 1σ_x at the middle of an AR(1) φ = 0.5 series: each half's SE ≈ σ_x√(3/10⁴) =
    // 0.017σ_x, so the step is ≈ 40 combined errors (closed-form g = 3, Priestley 1981).
    const x = ar1Series(20_000, 0.5, 41);
    const sx = Math.sqrt(1 / 0.75);
    for (let i = 10_000; i < 20_000; i++) x[i] += sx;
    const h = halvesTest(x);
    expect(h.consistent).toBe(false);
    // The estimated difference lies within 4 combined errors of the true step.
    expect(Math.abs(h.difference - sx)).toBeLessThan(4 * h.combinedError);
  });
});

describe('report', () => {
  it('extra time: T_needed = T_prod·(SE/target)² (hand computation)', () => {
    // 10 ps with SE 0.2 and target 0.1: 10·(0.2/0.1)² = 40 ps needed, 30 ps more. Exact.
    expect(extraTime(10, 0.2, 0.1)).toEqual({ needed: 40, extra: 30 });
    expect(extraTime(10, 0.05, 0.1)).toEqual({ needed: 2.5, extra: 0 });
  });

  it('stationary AR(1) report: fields, units, target arithmetic', () => {
    const n = 50_000;
    const phi = 0.8;
    const dt = 0.004;
    const x = ar1Series(n, phi, 61);
    for (let i = 0; i < n; i++) x[i] += -512;
    const r = analyseSeries('E', x, { dt, unit: 'kJ/mol', target: { relative: 1e-5 } });
    // Mean −512 within 4 standard errors (the SE is the test's own uncertainty).
    expect(Math.abs(r.mean.value + 512)).toBeLessThan(4 * r.standardError);
    // SE against the closed form σ_x√(g/n) (Priestley 1981): relative tolerance 4·√(2(2M+1)/n)/2
    // (Sokal 1997) with M ≈ 5g/2 = 23, plus 1 % for the window bias (< 0.4 % of the SE for ρ = φ^k).
    const exactSe = Math.sqrt(((1 / (1 - phi * phi)) * gAr1(phi)) / n);
    expect(Math.abs(r.standardError / exactSe - 1)).toBeLessThan(2 * Math.sqrt((2 * 47) / n) + 0.01);
    // τ_int in ps = (g − 1)/2·dt (definition); equilibration time = index·dt (definition).
    expect(r.integratedAutocorrelationTime.unit).toBe('ps');
    expect(Math.abs(r.integratedAutocorrelationTime.value - ((r.statisticalInefficiency - 1) / 2) * dt)).toBeLessThan(1e-12);
    expect(r.equilibrationTime!.value).toBeCloseTo(r.equilibrationIndex * dt, 12);
    expect(r.effectiveSamples).toBeCloseTo((n - r.equilibrationIndex) / r.statisticalInefficiency, 9);
    // Target 1e-5·512 = 0.00512 kJ/mol; T_prod = (n − t0)·dt; T_needed = T_prod(SE/target)² (hand formula).
    const tProd = (n - r.equilibrationIndex) * dt;
    const target = 1e-5 * Math.abs(r.mean.value);
    const needed = tProd * (r.standardError / target) ** 2;
    expect(r.extraTimeNeeded!.unit).toBe('ps');
    expect(Math.abs(r.extraTimeNeeded!.value - Math.max(0, needed - tProd))).toBeLessThan(1e-9 * needed);
    expect(r.reliable).toBe(r.standardError <= target);
    expect(r.verdict).toMatch(/effective samples/);
    // Without a target: n/g ≈ 50000/9 ≈ 5600 effective samples expected (closed-form g), far above 50.
    const plain = analyseSeries('E', x, { dt, unit: 'kJ/mol' });
    expect(plain.extraTimeNeeded).toBeNull();
    expect(plain.effectiveSamples).toBeGreaterThan(50);
  });

  it('a decaying start is cut off and reported in ps and samples', () => {
    // Same transient as in the equilibration tests (bounds explained there): 20σ·e^{−t/500}.
    const n = 20_000;
    const phi = 0.9;
    const x = ar1Series(n, phi, 81);
    const sd = Math.sqrt(1 / (1 - phi * phi));
    for (let i = 0; i < n; i++) x[i] += 20 * sd * Math.exp(-i / 500);
    const r = analyseSeries('T', x, { dt: 0.01, unit: 'K' });
    expect(r.equilibrationIndex).toBeGreaterThan(1000);
    expect(r.equilibrationIndex).toBeLessThan(n / 4);
    // equilibration time = index·dt (definition).
    expect(r.equilibrationTime!.value).toBeCloseTo(r.equilibrationIndex * 0.01, 10);
    expect(r.verdict).toContain(`(sample ${r.equilibrationIndex})`);
    // Expected production mean: AR(1) mean 0 plus the leftover transient averaged over
    // [t0, n): 20σ·e^{−t0/500}(1 − e^{−(n−t0)/500}) / ((1 − e^{−1/500})(n − t0)) (geometric sum,
    // closed form). Tolerance 4 standard errors.
    const t0 = r.equilibrationIndex;
    const leftover = (20 * sd * Math.exp(-t0 / 500) * -Math.expm1(-(n - t0) / 500)) / (-Math.expm1(-1 / 500) * (n - t0));
    expect(Math.abs(r.mean.value - leftover)).toBeLessThan(4 * r.standardError);
  });

  it('too few effective samples make the verdict unreliable', () => {
    // 2000 samples with g = 199 (φ = 0.99, Priestley 1981) leave ≈ 10 effective samples < 50.
    const r = analyseSeries('slow', ar1Series(2000, 0.99, 71), { dt: 1 });
    expect(r.reliable).toBe(false);
    expect(r.verdict).toMatch(/not reliable/);
  });

  it('constant series: g = 1, SE 0, and the verdict says so', () => {
    // No fluctuations: exact values by definition.
    const r = analyseSeries('V', new Float64Array(200).fill(1000), { dt: 0.5, unit: 'A^3', target: { relative: 0.01 } });
    expect(r.statisticalInefficiency).toBe(1);
    expect(r.standardError).toBe(0);
    expect(r.mean.value).toBe(1000);
    expect(r.extraTimeNeeded!.value).toBe(0);
    expect(r.verdict).toMatch(/constant/);
    expect(r.reliable).toBe(true);
  });

  it('bad input and usage errors', () => {
    const ok = ar1Series(100, 0.3, 1);
    expect(() => analyseSeries('short', ar1Series(MIN_SAMPLES - 1, 0.3, 1), { dt: 1 })).toThrow(AnalysisError);
    const withNaN = ok.slice();
    withNaN[17] = NaN;
    expect(() => analyseSeries('nan', withNaN, { dt: 1 })).toThrow(InputError);
    expect(() => analyseSeries('x', ok, { dt: 0 })).toThrow(UsageError);
    expect(() => analyseSeries('x', ok, { dt: 1, target: { relative: 0.01, absolute: 1 } })).toThrow(UsageError);
    expect(() => analyseSeries('x', ok, { dt: 1, target: { relative: -1 } })).toThrow(UsageError);
    expect(() => analyseSeries('x', new Float64Array(100).fill(0), { dt: 1, target: { relative: 0.01 } })).toThrow(UsageError);
  });

  it('formatting: two significant digits on the error (common practice, no source)', () => {
    // Hand-rounded strings; exact.
    expect(formatMeasurement(-512.3456, 0.4123)).toBe('-512.35 ± 0.41');
    expect(formatMeasurement(1234.5, 37)).toBe('1235 ± 37');
    expect(formatMeasurement(123456, 340)).toBe('123460 ± 340');
    expect(formatMeasurement(0.0012342, 0.000067)).toBe('0.001234 ± 0.000067');
  });
});
