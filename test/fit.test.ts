/**
 * Window, segment, plateau and sampling rules (src/fit.ts, src/plateau.ts) and the window option
 * parsing, against hand computations and closed-form curves. The numerics they use are tested in
 * test/numerics-*.test.ts.
 */
import { describe, expect, it } from 'vitest';
import {
  diffusiveWindow,
  maxLagIndex,
  planSegments,
  segmentedDiffusiveWindow,
  segmentUncertaintyFactor,
  windowFromTimes,
} from '../src/fit.js';
import { correlationSamplingProblem, plateauDriftCheck } from '../src/plateau.js';
import { ONE_SIGMA_LEVEL } from '../src/numerics/student-t.js';
import { UsageError } from '../src/errors.js';
import { readOptionValue, readOptionValues, SHARED, windowValues } from '../src/engine/options.js';
import { MSD_WINDOW_OPTIONS } from '../analyses/msd-analysis.js';

/** The window options from option texts, as the msd command reads them. */
const windowOptions = (raw: Record<string, string>) => windowValues(readOptionValues(MSD_WINDOW_OPTIONS, raw));
const parseSegments = (text: string) => readOptionValue(SHARED.segments(), text);

describe('window rules', () => {
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

describe('automatic window inside a segment', () => {
  // Curve y = t² up to t_c, then 2 t_c t − t_c² (lags as time, Δt = 1): β = d ln y/d ln t =
  // 2t/(2t − t_c) for t > t_c (closed form), within 1 ± 0.1 from t = 5.5 t_c on. With t_c = 20 the
  // diffusive regime starts near lag 110. T = 1000 frames: a segment of M = 5 holds lags up to
  // ⌊0.5·(200 − 1)⌋ = 99, of M = 4 up to ⌊0.5·(250 − 1)⌋ = 124 (arithmetic of the f_max rule).
  const tc = 20;
  const t = Float64Array.from({ length: 500 }, (_, i) => i);
  const y = t.map((v) => (v <= tc ? v * v : 2 * tc * v - tc * tc));

  it('searches only the lags a segment holds and reduces M until a window fits', () => {
    const w = segmentedDiffusiveWindow(t, y, 1000, { segments: 5 });
    // No diffusive lag below 99, so 5 segments cannot hold a window; 4 segments hold lags ≤ 124,
    // and 110 … 124 is 15 ≥ 8 lags. The entry lag is 5.5·t_c = 110 up to the stencil half-width
    // (lags t/1.25 … 1.25t): tolerance ±10 %.
    expect(w.found).toBe(true);
    expect(w.segments).toBe(4);
    expect(w.segmentFrames).toBe(250);
    expect(w.window.to).toBe(124);
    expect(Math.abs(w.window.from - 5.5 * tc)).toBeLessThan(0.1 * 5.5 * tc);
    expect(w.notes.join(' ')).toMatch(/4 segments instead of 5/);
    // The whole-run search (the old rule) would have taken lags up to ⌊0.5·999⌋ = 499, a window
    // no segment of 4 can evaluate.
    expect(diffusiveWindow(t, y, 1000).to).toBe(499);
  });

  it('a run too short for any segment window gives no uncertainty', () => {
    // T = 40: segments of 8, 10, 13 frames hold lags ≤ 3, 4, 6, fewer than the 8 a window needs.
    const w = segmentedDiffusiveWindow(t, t, 40, { segments: 5 });
    expect(w.ok).toBe(false);
    expect(w.segments).toBe(0);
    expect(w.notes.join(' ')).toMatch(/does not fit in 3 independent segments/);
  });
});

describe('Student-t factor for few segments', () => {
  it('segmentUncertaintyFactor is t_{0.8413, M−1} below 5 segments and 1 from 5 on', () => {
    // ν = 2 closed-form quantile: u = 2p − 1, t = u·√(2/(1 − u²)) (inverse of the CDF above);
    // ν = 1: t = tan(π(p − 1/2)). M = 3 → 1.3213, M = 2 → 1.8373. Tolerance 1e-10 (bisection).
    const u = 2 * ONE_SIGMA_LEVEL - 1;
    expect(Math.abs(segmentUncertaintyFactor(3) - u * Math.sqrt(2 / (1 - u * u)))).toBeLessThan(1e-10);
    expect(Math.abs(segmentUncertaintyFactor(2) - Math.tan(Math.PI * (ONE_SIGMA_LEVEL - 0.5)))).toBeLessThan(1e-10);
    expect(segmentUncertaintyFactor(5)).toBe(1);
    expect(segmentUncertaintyFactor(4)).toBeGreaterThan(1);
  });
});

describe('sampling of a correlation for the trapezoid rule', () => {
  it('flags a correlation that loses more than half its value within one step', () => {
    // Threshold r = C(h)/C(0) = 0.5, where the trapezoid bias on an exponential is 4 %
    // (test/numerics-trapezoid.test.ts).
    const exp = (h: number, tau: number) => Float64Array.from({ length: 50 }, (_, k) => Math.exp((-k * h) / tau));
    // h/τ = 0.5 (r = 0.61) passes; h/τ = 2.86 (r = 0.057, the demo's stress would need h = 0.2 ps at
    // τ = 0.07 ps) fails, and the message states the closed-form overestimate, 100·(x coth x − 1).
    expect(correlationSamplingProblem(exp(0.035, 0.07), 0.035, 'C')).toBeNull();
    const msg = correlationSamplingProblem(exp(0.2, 0.07), 0.2, 'C');
    expect(msg).toMatch(/too coarsely sampled/);
    const x = 0.2 / 0.07 / 2;
    expect(msg).toContain(`${(100 * (x / Math.tanh(x) - 1)).toFixed(0)} % too large`);
    // A correlation that changes sign within one step: flagged too.
    expect(correlationSamplingProblem([1, -0.2, 0.05], 0.1, 'C')).toMatch(/too coarsely sampled/);
  });
});

describe('drift after the plateau', () => {
  // Running integrals on a grid of h = 0.01: I(t) = a(1 − e^{−t/τ₁}) + b·t with a = 1, τ₁ = 0.1
  // (closed form of a decayed correlation plus a slow linear creep b). Segment curves add
  // fixed offsets ε_k·√t·s, a deterministic stand-in for segment noise whose paired difference
  // has a standard error computable by hand.
  const h = 0.01;
  const n = 2001;
  const curve = (b: number) => Float64Array.from({ length: n }, (_, k) => 1 - Math.exp((-k * h) / 0.1) + b * k * h);
  const eps = [-1.2, -0.4, 0, 0.5, 1.1];
  const segs = (b: number, s: number) => eps.map((e) => curve(b).map((v, k) => v + e * s * Math.sqrt(k * h)));

  it('a flat plateau passes; a creep larger than the segment uncertainty is flagged', () => {
    const win = { from: 100, to: 200 };
    // b = 0: the later mean differs from the plateau mean only by the decayed tail, < e^{−10}.
    const flat = plateauDriftCheck(curve(0), segs(0, 0.002), win, 999, 0.02);
    expect(flat.checked).toBe(true);
    expect(flat.from).toBe(201);
    expect(flat.to).toBe(600); // 3 × the plateau end, inside the cap 999
    expect(flat.drifting).toBe(false);
    // b = 0.01/ps: the later window (2.01–6 ps, mean 4.005 ps) lies above the plateau (1–2 ps,
    // mean 1.5 ps) by b·2.505 = 0.02505 (closed form) plus the tail difference (< 1e-4) —
    // above the 2 % tolerance of the plateau value ≈ 1.015, and far above t_{0.975,4}·SE
    // (SE of the paired offsets ε_k·s·(⟨√t⟩_later − ⟨√t⟩_plateau) = SD(ε)·s·0.759/√5 ≈ 6e-4 with
    // s = 0.002, SD(ε) = 0.875; hand arithmetic).
    const creep = plateauDriftCheck(curve(0.01), segs(0.01, 0.002), win, 999, 0.02);
    expect(Math.abs(creep.drift - 0.01 * 2.505)).toBeLessThan(1e-4);
    expect(creep.drifting).toBe(true);
    expect(creep.reason).toMatch(/running integral keeps drifting/);
    // The same creep inside large segment scatter (s = 0.05: SE ≈ 0.015, t_{0.975,4}·SE ≈ 0.041) is not
    // significant: no flag.
    expect(plateauDriftCheck(curve(0.01), segs(0.01, 0.05), win, 999, 0.02).drifting).toBe(false);
  });

  it('a plateau at the end of the lags a segment holds cannot be checked', () => {
    // Cap 203: only 3 later lags (< 5).
    const r = plateauDriftCheck(curve(0), segs(0, 0.002), { from: 100, to: 200 }, 203, 0.02);
    expect(r.checked).toBe(false);
    expect(r.reason).toMatch(/cannot check/);
  });
});
