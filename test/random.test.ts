import { describe, expect, it } from 'vitest';
import { errorFunction } from 'simple-statistics';
import { Random, ar1Series, ornsteinUhlenbeck, splitmix64 } from '../src/random.js';

describe('generator core against published reference outputs', () => {
  it('xoshiro128** from state (0, 1, 2, 3)', () => {
    // Reference outputs of the authors' C code xoshiro128starstar.c (Blackman & Vigna) for state
    // {0, 1, 2, 3}, as published in public test suites of ports. The first one is also a hand
    // check: rotl(1·5, 7)·9 = 640·9 = 5760. Exact integers: tolerance zero.
    const r = Random.fromState(0, 1, 2, 3);
    const got = Array.from({ length: 8 }, () => r.nextUint32());
    expect(got).toEqual([5760, 17280, 2966400, 32451840, 2604340873, 3891234569, 1254043636, 216095511]);
  });

  it('SplitMix64 from state 0', () => {
    // Published first outputs of splitmix64.c (Steele, Lea & Flood 2014; prng.di.unimi.it) for
    // seed 0. Exact integers: tolerance zero.
    let st = 0n;
    const out: bigint[] = [];
    for (let i = 0; i < 3; i++) {
      const [v, next] = splitmix64(st);
      out.push(v);
      st = next;
    }
    expect(out).toEqual([0xe220a8397b1dcdafn, 0x6e789e6aa1b965f4n, 0x06c45d188009454fn]);
  });

  it('same seed, same stream; different seed, different stream', () => {
    // Determinism is the point of a seeded generator (common practice, no source); a chance
    // coincidence of 5 consecutive 53-bit doubles has probability ~2^-265.
    const a = new Random(42);
    const b = new Random(42);
    const c = new Random(43);
    const xa = Array.from({ length: 5 }, () => a.uniform());
    const xb = Array.from({ length: 5 }, () => b.uniform());
    const xc = Array.from({ length: 5 }, () => c.uniform());
    expect(xa).toEqual(xb);
    expect(xa).not.toEqual(xc);
  });
});

describe('distribution moments', () => {
  const n = 1_000_000;

  it('uniform: mean 1/2 and variance 1/12 within 5σ', () => {
    // U(0,1): mean 1/2, variance 1/12, fourth central moment 1/80 (closed form). SE of the mean
    // √(1/12/n); SE of the sample variance √((μ₄ − σ⁴)/n) = √((1/80 − 1/144)/n). 5σ: a false
    // failure has probability < 1e-6.
    const r = new Random(2024);
    let s = 0;
    let s2 = 0;
    let lo = 1;
    let hi = 0;
    for (let i = 0; i < n; i++) {
      const u = r.uniform();
      s += u;
      s2 += u * u;
      lo = Math.min(lo, u);
      hi = Math.max(hi, u);
    }
    const mean = s / n;
    const variance = s2 / n - mean * mean;
    expect(Math.abs(mean - 0.5)).toBeLessThan(5 * Math.sqrt(1 / 12 / n));
    expect(Math.abs(variance - 1 / 12)).toBeLessThan(5 * Math.sqrt((1 / 80 - 1 / 144) / n));
    expect(lo).toBeGreaterThanOrEqual(0);
    expect(hi).toBeLessThan(1);
  });

  it('normal: mean 0, variance 1, skewness 0, excess kurtosis 0 within 5σ', () => {
    // N(0,1) sample moments have standard errors √(1/n), √(2/n), √(6/n), √(24/n) (large-sample
    // results, e.g. Kendall & Stuart, The Advanced Theory of Statistics, vol. 1). 5σ as above.
    const r = new Random(7);
    let m1 = 0;
    let m2 = 0;
    let m3 = 0;
    let m4 = 0;
    for (let i = 0; i < n; i++) {
      const z = r.normal();
      m1 += z;
      m2 += z * z;
      m3 += z * z * z;
      m4 += z * z * z * z;
    }
    m1 /= n;
    m2 /= n;
    m3 /= n;
    m4 /= n;
    expect(Math.abs(m1)).toBeLessThan(5 * Math.sqrt(1 / n));
    expect(Math.abs(m2 - 1)).toBeLessThan(5 * Math.sqrt(2 / n));
    expect(Math.abs(m3)).toBeLessThan(5 * Math.sqrt(6 / n));
    expect(Math.abs(m4 - 3)).toBeLessThan(5 * Math.sqrt(24 / n));
  });

  it('normal: Kolmogorov–Smirnov distance to Φ below the 0.1 % critical value', () => {
    // Φ(z) = (1 + erf(z/√2))/2 with erf from simple-statistics (independent reference; its
    // Chebyshev fit, Numerical Recipes' erfc, has fractional error < 1.2e-7). Critical value of
    // √n·D at α = 0.001 is 1.95 (Kolmogorov distribution, standard tables): a false failure has
    // probability 0.001.
    const m = 20000;
    const r = new Random(99);
    const z = Float64Array.from({ length: m }, () => r.normal()).sort();
    let d = 0;
    for (let i = 0; i < m; i++) {
      const f = 0.5 * (1 + errorFunction(z[i]! / Math.SQRT2));
      d = Math.max(d, Math.abs(f - i / m), Math.abs(f - (i + 1) / m));
    }
    expect(d).toBeLessThan(1.95 / Math.sqrt(m));
  });
});

describe('correlated series', () => {
  it('AR(1): stationary variance 1/(1−φ²) and lag-1 correlation φ', () => {
    // x_t = φx_{t−1} + ε_t, var ε = 1: var x = 1/(1−φ²), ρ(1) = φ (Priestley 1981). Standard
    // errors: var ρ̂(1) ≈ (1−φ²)/n (Bartlett 1946); var of the sample variance ≈
    // (2σ⁴/n)(1+φ²)/(1−φ²) (Bartlett 1946, Σρ(k)² for AR(1)). Tolerance 5σ.
    const n = 400_000;
    const phi = 0.9;
    const x = ar1Series(n, phi, 5);
    let s = 0;
    for (let i = 0; i < n; i++) s += x[i]!;
    const mean = s / n;
    let c0 = 0;
    let c1 = 0;
    for (let i = 0; i < n; i++) {
      const d = x[i]! - mean;
      c0 += d * d;
      if (i + 1 < n) c1 += d * (x[i + 1]! - mean);
    }
    const variance = c0 / n;
    const sigma2 = 1 / (1 - phi * phi);
    expect(Math.abs(variance - sigma2)).toBeLessThan(5 * sigma2 * Math.sqrt(((2 / n) * (1 + phi * phi)) / (1 - phi * phi)));
    expect(Math.abs(c1 / c0 - phi)).toBeLessThan(5 * Math.sqrt((1 - phi * phi) / n));
  });

  it('Ornstein–Uhlenbeck: variance σ² and lag-1 correlation e^{−dt/τ}', () => {
    // Exact discretisation (Gillespie 1996) is an AR(1) with φ = e^{−dt/τ} and stationary
    // variance σ²; tolerances as in the AR(1) test (Bartlett 1946), 5σ.
    const n = 400_000;
    const dt = 0.01;
    const tau = 0.05;
    const sigma = 2;
    const x = ornsteinUhlenbeck(n, dt, tau, sigma, 17);
    const phi = Math.exp(-dt / tau);
    let s = 0;
    for (let i = 0; i < n; i++) s += x[i]!;
    const mean = s / n;
    let c0 = 0;
    let c1 = 0;
    for (let i = 0; i < n; i++) {
      const d = x[i]! - mean;
      c0 += d * d;
      if (i + 1 < n) c1 += d * (x[i + 1]! - mean);
    }
    const s2 = sigma * sigma;
    expect(Math.abs(c0 / n - s2)).toBeLessThan(5 * s2 * Math.sqrt(((2 / n) * (1 + phi * phi)) / (1 - phi * phi)));
    expect(Math.abs(c1 / c0 - phi)).toBeLessThan(5 * Math.sqrt((1 - phi * phi) / n));
  });

  it('Ornstein–Uhlenbeck with σ = 0 decays exactly as x0·e^{−t/τ}', () => {
    // Deterministic limit of the exact update (closed form). Tolerance 1e-12 relative: 1000
    // multiplications accumulate ≈ 1000 ε ≈ 2e-13.
    const x = ornsteinUhlenbeck(1001, 0.002, 0.5, 0, 1, { x0: 3 });
    for (const i of [0, 1, 10, 1000]) {
      const exact = 3 * Math.exp((-i * 0.002) / 0.5);
      expect(Math.abs(x[i]! - exact)).toBeLessThan(1e-12 * 3);
    }
  });
});
