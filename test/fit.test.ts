/**
 * Line fits, window rules and block statistics (src/fit.ts), the estimate comparison of the
 * diffusion command and the window option parsing, against hand computations, a reference
 * statistics library (simple-statistics) and closed-form curves.
 */
import { describe, expect, it } from 'vitest';
import { linearRegression, sampleStandardDeviation } from 'simple-statistics';
import {
  blockStatistics,
  diffusiveWindow,
  fitLine,
  logLogSlopes,
  maxLagIndex,
  planSegments,
  windowFromTimes,
} from '../src/fit.js';
import { Random } from '../src/random.js';
import { UsageError } from '../src/errors.js';
import { quantity } from '../src/types.js';
import { compareEstimates } from '../src/commands/diffusion.js';
import { windowOptions, parseSegments } from '../src/commands/msd.js';

describe('fitLine', () => {
  it('unweighted: slope, intercept and standard errors by hand', () => {
    // Hand computation (formulas of Press et al., Numerical Recipes, 3rd ed., §15.2):
    // x = 0..4, y = 0, 2, 1, 4, 3: x̄ = 2, ȳ = 2, S_xx = 10, S_xy = 8 → b = 0.8, a = 0.4;
    // residuals −0.4, 0.8, −1.0, 1.2, −0.6 → RSS = 3.6, s² = 1.2; σ_b = √(1.2/10) = 0.346410,
    // σ_a = √(1.2·(1/5 + 4/10)) = √0.72 = 0.848528. Tolerance 1e-6 (hand values to 6 figures).
    const f = fitLine([0, 1, 2, 3, 4], [0, 2, 1, 4, 3]);
    expect(Math.abs(f.slope - 0.8)).toBeLessThan(1e-12);
    expect(Math.abs(f.intercept - 0.4)).toBeLessThan(1e-12);
    expect(Math.abs(f.slopeError - 0.34641)).toBeLessThan(1e-5);
    expect(Math.abs(f.interceptError - 0.848528)).toBeLessThan(1e-6);
  });

  it('agrees with simple-statistics linearRegression on noisy data (1e-10 relative)', () => {
    // Reference: simple-statistics 7.x linearRegression (ordinary least squares), an independent
    // implementation; both are exact formulas, so only round-off differs.
    const rng = new Random(3);
    const x = Array.from({ length: 200 }, (_, i) => 0.1 * i);
    const y = x.map((v) => 2.5 * v - 1 + rng.normal());
    const ref = linearRegression(x.map((v, i) => [v, y[i]]));
    const f = fitLine(x, y, { from: 20, to: 199 });
    const refSub = linearRegression(x.slice(20).map((v, i) => [v, y[20 + i]]));
    expect(Math.abs(f.slope - refSub.m) / Math.abs(refSub.m)).toBeLessThan(1e-10);
    expect(Math.abs(f.intercept - refSub.b) / Math.abs(refSub.b)).toBeLessThan(1e-10);
    expect(Math.abs(fitLine(x, y).slope - ref.m) / ref.m).toBeLessThan(1e-10);
  });

  it('weighted: equal weights 1/σ² give σ_b = σ/√S_xx', () => {
    // Closed form (Numerical Recipes §15.2): with w_i = 1/σ², Δ = w²(nΣx² − (Σx)²) = 50w² for
    // x = 0..4, so σ_b = √(5w/Δ) = σ/√10 = 0.316228 for σ = 1; the slope equals the unweighted 0.8.
    const f = fitLine([0, 1, 2, 3, 4], [0, 2, 1, 4, 3], { weights: [1, 1, 1, 1, 1] });
    expect(Math.abs(f.slope - 0.8)).toBeLessThan(1e-12);
    expect(Math.abs(f.slopeError - 0.316228)).toBeLessThan(1e-6);
  });
});

describe('window rules', () => {
  it('logLogSlopes of a power law t^1.5 is 1.5 everywhere', () => {
    // Truth: ln(t^p) is linear in ln t with slope p, so any two-point log difference is exact.
    // Tolerance 1e-12: round-off of logarithms.
    const t = Float64Array.from({ length: 200 }, (_, i) => i * 0.01);
    const y = t.map((v) => v ** 1.5);
    const b = logLogSlopes(t, y);
    expect(Number.isNaN(b[0])).toBe(true);
    for (const i of [1, 2, 50, 199]) expect(Math.abs(b[i] - 1.5)).toBeLessThan(1e-12);
  });

  it('maxLagIndex is ⌊f·(T−1)⌋', () => {
    // Arithmetic: ⌊0.5·1000⌋ = 500, ⌊0.5·1001⌋ = 500.
    expect(maxLagIndex(1001)).toBe(500);
    expect(maxLagIndex(1002)).toBe(500);
  });

  it('a linear curve is diffusive at every lag up to half the run', () => {
    // Truth: y = t has d ln y/d ln t = 1 exactly, so the window spans lags 1 … ⌊(T−1)/2⌋ = 499.
    const T = 1000;
    const t = Float64Array.from({ length: 600 }, (_, i) => i * 0.002);
    const w = diffusiveWindow(t, t, T);
    expect(w.found).toBe(true);
    expect(w.from).toBe(1);
    expect(w.to).toBe(499);
  });

  it('skips the ballistic start: y = t² then 2t − 1 enters the window near t = 5.5', () => {
    // Closed form: for t > 1, β = d ln y/d ln t = 2t/(2t − 1), and |β − 1| ≤ 0.1 ⇔ t ≥ 5.5. The
    // discrete centred log-difference (lags t/1.25 … 1.25t) shifts the entry by less than the
    // stencil half-width; tolerance ±0.6 (10 %).
    const dt = 0.01;
    const t = Float64Array.from({ length: 5001 }, (_, i) => i * dt);
    const y = t.map((v) => (v <= 1 ? v * v : 2 * v - 1));
    const w = diffusiveWindow(t, y, 10001);
    expect(w.found).toBe(true);
    expect(Math.abs(w.from * dt - 5.5)).toBeLessThan(0.6);
    expect(w.to).toBe(5000);
  });

  it('stops where noise throws the slope off', () => {
    // Truth: y = t for lags ≤ 300, then y·(1 ± 0.3) alternating: the local slope jumps by
    // ±ln(1.3/0.7)/ln(r) ≫ 0.1 once the stencil (up to 1.25·i) reaches lag 301, i.e. from
    // i ≈ 301/1.25 = 241 on; the window must end between 235 and 300.
    const t = Float64Array.from({ length: 1000 }, (_, i) => i * 0.01);
    const y = t.map((v, i) => (i <= 300 ? v : v * (1 + 0.3 * (i % 2 ? 1 : -1))));
    const w = diffusiveWindow(t, y, 2001);
    expect(w.found).toBe(true);
    expect(w.to).toBeGreaterThanOrEqual(235);
    expect(w.to).toBeLessThanOrEqual(300);
  });

  it('reports no window for a ballistic curve', () => {
    // Truth: y = t² has β = 2 everywhere, never within 1 ± 0.1.
    const t = Float64Array.from({ length: 500 }, (_, i) => i);
    const w = diffusiveWindow(t, t.map((v) => v * v), 1000);
    expect(w.found).toBe(false);
    expect(w.reason).toMatch(/no run/);
  });

  it('windowFromTimes rounds inward on the lag grid and refuses bad windows', () => {
    // Arithmetic: 0.05 ps/0.01 ps = 5 and 0.2/0.01 = 20 (despite binary round-off of the quotients).
    expect(windowFromTimes(0.05, 0.2, 0.01, 1000)).toEqual({ from: 5, to: 20 });
    expect(() => windowFromTimes(0.2, 0.05, 0.01, 1000)).toThrow(UsageError);
    expect(() => windowFromTimes(0.05, 20, 0.01, 1000)).toThrow(UsageError);
  });
});

describe('segments', () => {
  it('planSegments shrinks an automatic window, or reduces M for a user window', () => {
    // Arithmetic of the rule: T = 1000, M = 5 → L = 200, limit ⌊0.5·199⌋ = 99; window [10, 200]
    // shrinks to [10, 99]. Without shrinking: M = 4 → limit 124, M = 3 → limit 166 < 200 → no plan;
    // window [10, 150] fits with M = 3.
    const p = planSegments(1000, { from: 10, to: 200 });
    expect(p).toMatchObject({ ok: true, segments: 5, segmentFrames: 200, window: { from: 10, to: 99 } });
    expect(planSegments(1000, { from: 10, to: 200 }, { mayShrink: false }).ok).toBe(false);
    expect(planSegments(1000, { from: 10, to: 150 }, { mayShrink: false })).toMatchObject({ ok: true, segments: 3 });
  });

  it('blockStatistics: standard error SD/√M against simple-statistics', () => {
    // Hand computation: 1..5 → mean 3, s = √(10/4) = 1.581139, SE = s/√5 = 0.707107 (Frenkel & Smit,
    // 2nd ed., §4.4.1); s also from simple-statistics sampleStandardDeviation. Tolerance 1e-6.
    const b = blockStatistics([1, 2, 3, 4, 5]);
    expect(b.mean).toBe(3);
    expect(Math.abs(b.sd - sampleStandardDeviation([1, 2, 3, 4, 5]))).toBeLessThan(1e-12);
    expect(Math.abs(b.standardError - 0.707107)).toBeLessThan(1e-6);
  });
});

describe('comparison of two estimates (diffusion command)', () => {
  it('agree at 2σ, disagree at 3σ of the combined uncertainty', () => {
    // Truth: σ_Δ = √(0.03² + 0.04²) = 0.05 (3-4-5 triangle; JCGM 100:2008 eq. 10); Δ = 0.1 → 2σ (agree,
    // the threshold is inclusive), Δ = 0.15 → 3σ (disagree). Tolerance 1e-12: arithmetic.
    const a = quantity(1.0, 0.03, 'm^2/s');
    const ok = compareEstimates(a, quantity(0.9, 0.04, 'm^2/s'));
    expect(Math.abs(ok.sigmas! - 2)).toBeLessThan(1e-12);
    expect(ok.agree).toBe(true);
    const bad = compareEstimates(a, quantity(0.85, 0.04, 'm^2/s'));
    expect(Math.abs(bad.sigmas! - 3)).toBeLessThan(1e-12);
    expect(bad.agree).toBe(false);
    expect(compareEstimates(a, quantity(0.9, null, 'm^2/s')).agree).toBeNull();
  });
});

describe('window options', () => {
  it('parses times with units and rejects half windows and bad segment counts', () => {
    // Truth: 20 ps and 0.2 ns = 200 ps (SI prefixes); --segments must be an integer ≥ 2.
    const w = windowOptions({ fitFrom: '20ps', fitTo: '0.2ns', segments: '4' });
    expect(w.fitFrom).toBe(20);
    expect(Math.abs(w.fitTo! - 200)).toBeLessThan(1e-12);
    expect(w.segments).toBe(4);
    expect(() => windowOptions({ fitFrom: '20ps' })).toThrow(UsageError);
    expect(() => parseSegments('1')).toThrow(UsageError);
    expect(() => parseSegments('2.5')).toThrow(UsageError);
  });
});
