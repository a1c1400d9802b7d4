/**
 * Geyer's initial monotone sequence estimator (src/numerics/geyer.ts) against closed forms of g
 * on exact autocovariances, beside Sokal's window where that one fails.
 */
import { describe, expect, it } from 'vitest';
import { geyerInefficiency } from '../src/numerics/geyer.js';
import { sokalWindow } from '../src/numerics/sokal.js';

/** g of an AR(1) process, (1+φ)/(1−φ) (Priestley, Spectral Analysis and Time Series, 1981). */
const gAr1 = (phi: number): number => (1 + phi) / (1 - phi);

describe("Geyer's estimator", () => {
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
});

describe('negative early correlation: slow AR(1) plus differenced white noise (exact autocovariances)', () => {
  // x_t = a_t + (e_t − e_{t−1}): a is AR(1) with φ = 0.99 and unit innovations, e is independent
  // white noise of variance s² = 200. Closed form of g (Priestley 1981, spectral density at zero
  // frequency): γ_a(k) = γ_a(0)φ^|k| with γ_a(0) = 1/(1−φ²); the differenced noise has γ_d(0) = 2s²,
  // γ_d(±1) = −s² and Σ_k γ_d(k) = 0, so g = γ_a(0)·(1+φ)/(1−φ) / (γ_a(0) + 2s²) = 22.2098 while
  // ρ(1) = (φγ_a(0) − s²)/γ_x(0) = −0.3337 (the full derivation is in test/converge.test.ts).
  const PHI = 0.99;
  const S2 = 200;
  const GA0 = 1 / (1 - PHI * PHI);
  const GX0 = GA0 + 2 * S2;
  const G_EXACT = (GA0 * gAr1(PHI)) / GX0;
  const exactGamma = (k: number): number => (k === 0 ? GX0 : k === 1 ? PHI * GA0 - S2 : GA0 * PHI ** k);

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
});
