import { describe, expect, it } from 'vitest';
import {
  analyseSeries,
  detectEquilibration,
  driftTest,
  extraTime,
  formatMeasurement,
  halvesTest,
  mser,
  MIN_SAMPLES,
} from '../analyses/converge.js';
import { blockingAnalysis } from '../src/numerics/blocking.js';
import { inefficiency } from '../src/numerics/inefficiency.js';
import { windowRelativeError } from '../src/numerics/sokal.js';
import { AnalysisError, InputError, UsageError } from '../src/errors.js';
import { ar1Series, Random } from '../src/random.js';

/** g of an AR(1) process, (1+φ)/(1−φ) (Priestley, Spectral Analysis and Time Series, 1981). */
const gAr1 = (phi: number): number => (1 + phi) / (1 - phi);

/**
 * Exact variance of the mean of m consecutive AR(1) values (unit innovations), times m/σ²:
 * g − 2φ(1−φ^m)/(m(1−φ)²) (closed form: Σ_{|k|<m}(1−|k|/m)φ^|k| summed as geometric series).
 */
const blockFactorAr1 = (phi: number, m: number): number =>
  gAr1(phi) - (2 * phi * (1 - phi ** m)) / (m * (1 - phi) ** 2);

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

describe('block averaging against the reported standard error', () => {
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
