/**
 * Viscosity analysis (analyses/viscosity.ts) and its command helpers, checked against closed
 * forms: the Ornstein–Uhlenbeck stress model, exact fitting functions, trapezoid error bounds
 * and the algebra of the traceless pressure tensor.
 */
import { describe, it, expect } from 'vitest';
import {
  analyseViscosity,
  defaultSegmentCount,
  greenKuboPrefactor,
  maxLagFor,
  shearComponents,
  type StressColumns,
} from '../analyses/viscosity.js';
import { cutoffIndex, doubleExponentialProblem, plateauRise } from '../analyses/viscosity-fit.js';
import { doubleExponential, fitDoubleExponential } from '../src/numerics/exponential-fits.js';
import { pickStressColumns, tensorKeyOf } from '../src/commands/viscosity.js';
import { ornsteinUhlenbeck, Random } from '../src/random.js';
import { BOLTZMANN } from '../src/units.js';
import { UsageError } from '../src/errors.js';
import { runCaptured } from './helpers/batch-runs.js';
import { CAUTION } from '../src/caution.js';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

// Synthetic stress: Ornstein–Uhlenbeck shear components, σ = 300 bar, τ = 50 fs, every 2 fs,
// V = 27 nm³, T = 300 K. The OU autocorrelation is σ² e^{−t/τ} (Uhlenbeck & Ornstein, Phys. Rev.
// 36, 823 (1930)), so Green–Kubo gives η = V σ² τ / (k_B T) in closed form.
const DT = 0.002;
const TAU = 0.05;
const SIGMA_BAR = 300;
const V = 27000;
const T = 300;
const ETA_OU = (V * 1e-30 * (SIGMA_BAR * 1e5) ** 2 * TAU * 1e-12) / (BOLTZMANN * T); // Pa s

/** Five OU shear components turned into a full isotropic tensor with a fluctuating pressure. */
function isotropicTensor(n: number, seed: number): Required<StressColumns> {
  const s = [0, 1, 2, 3, 4].map((i) => ornsteinUhlenbeck(n, DT, TAU, SIGMA_BAR, seed + i));
  const p = ornsteinUhlenbeck(n, DT, 0.1, 800, seed + 9);
  const r3 = Math.sqrt(3);
  const xx = new Float64Array(n);
  const yy = new Float64Array(n);
  const zz = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const a = s[3][i];
    const c = s[4][i];
    const pr = 1.01325 + p[i];
    xx[i] = pr + a - c / r3;
    yy[i] = pr - a - c / r3;
    zz[i] = pr + (2 * c) / r3;
  }
  return { xy: s[0], xz: s[1], yz: s[2], xx, yy, zz };
}

describe('Green–Kubo viscosity of Ornstein–Uhlenbeck stress (closed form η = Vσ²τ/k_BT)', () => {
  it('closed-form value itself: V σ² τ/(k_B T) = 0.29334 mPa s for these parameters', () => {
    // Hand computation: V = 2.7e-26 m³, σ² = (3e7 Pa)² = 9e14 Pa², τ = 5e-14 s,
    // k_B T = 4.141947e-21 J → 2.7e-26 × 9e14 × 5e-14 / 4.141947e-21 = 2.93340e-4 Pa s.
    // Tolerance: 6-figure hand arithmetic.
    expect(rel(ETA_OU, 2.9334e-4)).toBeLessThan(2e-5);
    // The prefactor used inside: V/(k_B T) · (1e5 Pa/bar)² · 1e-12 s/ps = 6.51867e-8 Pa s/(bar² ps)
    // (hand: 2.7e-26 / 4.141947e-21 = 6.51867e-6, × 1e10 × 1e-12). Tolerance: 6 figures.
    expect(rel(greenKuboPrefactor(V, T, 1e5), 6.51867e-8)).toBeLessThan(2e-5);
  });

  it('off-diagonal components only: recovers η within 3 reported standard uncertainties', () => {
    const n = 200_000;
    const cols = { xy: ornsteinUhlenbeck(n, DT, TAU, SIGMA_BAR, 101), xz: ornsteinUhlenbeck(n, DT, TAU, SIGMA_BAR, 102), yz: ornsteinUhlenbeck(n, DT, TAU, SIGMA_BAR, 103) };
    const { result: r } = analyseViscosity({ components: shearComponents(cols), dt: DT, volumeA3: V, temperatureK: T, pascalPerUnit: 1e5 });
    expect(r.converged).toBe(true);
    const u = r.viscosity.uncertainty!;
    // The uncertainty is the jackknife over 30 independent running integrals (10 segments × 3
    // components); over 40 seeds its z-scores had mean −0.1 and SD 1.0, so 3u is a 99.7 % band.
    expect(Math.abs(r.viscosity.value - ETA_OU)).toBeLessThan(3 * u);
    // …and the band is informative: for an exponential correlation the running integral from a
    // segment of length T scatters by ≈ 2√(t/T)·η at time t (variance of the correlation
    // estimate; cf. Zwanzig & Ailawadi, Phys. Rev. 182, 280 (1969), from memory), which for
    // 30 estimates of 40 ps each puts u near 10 %; refuse anything looser than 20 %.
    expect(u / ETA_OU).toBeLessThan(0.2);
    // Decisions are reported: 10 segments (default rule), cut-off where σ > 40 % of η.
    expect(r.segments).toBe(10);
    expect(r.cutoffFraction).toBe(0.4);
  });

  it('full tensor (Daivis–Evans five components): η within 3σ, Helfand agrees within 3σ', () => {
    const n = 200_000;
    const cols = isotropicTensor(n, 700);
    const comps = shearComponents(cols);
    // The diagonal gives two more equivalent components: five in all.
    expect(comps.length).toBe(5);
    const { result: r } = analyseViscosity({ components: comps, dt: DT, volumeA3: V, temperatureK: T, pascalPerUnit: 1e5 });
    expect(r.converged).toBe(true);
    const u = r.viscosity.uncertainty!;
    // Tolerance: 3 reported standard uncertainties (calibrated as above; 50 estimates here).
    expect(Math.abs(r.viscosity.value - ETA_OU)).toBeLessThan(3 * u);
    expect(u / ETA_OU).toBeLessThan(0.2);
    // Helfand route (Helfand, Phys. Rev. 119, 1 (1960)) on the same data: the slope of the
    // mean-squared Helfand moment equals 2 k_B T η/V, the same η in closed form.
    // Tolerance: 3 of its own standard errors (segment/component spread).
    const h = r.helfand!;
    expect(Math.abs(h.value - ETA_OU)).toBeLessThan(3 * h.uncertainty!);
    // Helfand vs Green–Kubo: same data, so the difference is smaller than the combined error;
    // 3 combined standard errors can only fail if one route is wrong.
    expect(Math.abs(h.value - r.viscosity.value)).toBeLessThan(3 * Math.hypot(h.uncertainty!, u));
    // The window of the Helfand fit is reported and starts after the correlation decayed
    // (the fit reaches 95 % at ≈ 3τ = 0.15 ps for one exponential: ln 20 ≈ 3.0).
    expect(r.helfandWindow!.from).toBeGreaterThan(0.05);
    expect(r.helfandWindow!.to).toBeGreaterThan(r.helfandWindow!.from);
  });

  it('stress sampled too coarsely for the trapezoid rule is flagged', () => {
    // OU stress with τ = 50 fs sampled every 100 fs: C(Δt)/C(0) = e^{−2} = 0.135 < 0.5, so the
    // trapezoid integral overestimates η by x coth x − 1 = 31 % (x = Δt/(2τ) = 1; closed form of
    // the geometric series): the result must be flagged not converged with that reason. The
    // stated overestimate uses the measured ratio, whose SD is ≈ √((1 − r²)/n) = 0.005 for
    // n = 2·20 000 samples (Bartlett 1946, lag 1; from memory): 4 SD → r in 0.115–0.155, i.e. a
    // stated bias between 28 % and 35 % (closed form at those r).
    const n = 20_000;
    const cols = { xy: ornsteinUhlenbeck(n, 0.1, TAU, SIGMA_BAR, 21), xz: ornsteinUhlenbeck(n, 0.1, TAU, SIGMA_BAR, 22) };
    const { result: r } = analyseViscosity({ components: shearComponents(cols), dt: 0.1, volumeA3: V, temperatureK: T, pascalPerUnit: 1e5 });
    expect(r.converged).toBe(false);
    const text = r.reasons.join(' ');
    expect(text).toMatch(/too coarsely sampled/);
    const stated = Number(/come out (\d+) % too large/.exec(text)![1]);
    const bias = (rr: number) => { const x = -Math.log(rr) / 2; return 100 * (x / Math.tanh(x) - 1); };
    expect(stated).toBeGreaterThanOrEqual(Math.floor(bias(0.155)));
    expect(stated).toBeLessThanOrEqual(Math.ceil(bias(0.115)));
  });

  it('a correlation that never decays within the run is flagged, not reported bare', () => {
    // τ = 20 ps in a 200 ps run: 10 segments of 20 ps cannot hold a decayed correlation
    // (segments must be ≫ τ; common practice, no source).
    const n = 100_000;
    const cols = { xy: ornsteinUhlenbeck(n, DT, 20, SIGMA_BAR, 5), xz: ornsteinUhlenbeck(n, DT, 20, SIGMA_BAR, 6) };
    const { result: r } = analyseViscosity({ components: shearComponents(cols), dt: DT, volumeA3: V, temperatureK: T, pascalPerUnit: 1e5 });
    expect(r.converged).toBe(false);
    expect(r.reasons.length).toBeGreaterThan(0);
  });
});

describe('shearComponents: the Daivis–Evans traceless-tensor identity', () => {
  it('Σ_αβ P°αβ(0) P°αβ(t) = 2 Σ over the five components (random tensors)', () => {
    // Daivis & Evans, J. Chem. Phys. 100, 541 (1994) use the symmetric traceless tensor
    // P° = P − (tr P/3)·1. Check the identity by computing P° directly from its definition.
    const rng = new Random(31);
    const n = 50;
    const cols: Required<StressColumns> = { xy: new Float64Array(n), xz: new Float64Array(n), yz: new Float64Array(n), xx: new Float64Array(n), yy: new Float64Array(n), zz: new Float64Array(n) };
    for (const k of Object.keys(cols) as (keyof StressColumns)[]) cols[k].forEach((_, i, a) => (a[i] = 3 * rng.normal() + (k.length === 2 && k[0] === k[1] ? 10 : 0)));
    const comps = shearComponents(cols); // centred copies
    const mean = (a: Float64Array) => a.reduce((s, v) => s + v, 0) / a.length;
    const c = (a: Float64Array) => a.map((v) => v - mean(a));
    const xx = c(cols.xx), yy = c(cols.yy), zz = c(cols.zz), xy = c(cols.xy), xz = c(cols.xz), yz = c(cols.yz);
    for (const [i, j] of [[0, 0], [3, 17], [10, 49]]) {
      const tr = (k: number) => (xx[k] + yy[k] + zz[k]) / 3;
      const d = (k: number) => [xx[k] - tr(k), yy[k] - tr(k), zz[k] - tr(k)];
      const di = d(i);
      const dj = d(j);
      const lhs = di[0] * dj[0] + di[1] * dj[1] + di[2] * dj[2] + 2 * (xy[i] * xy[j] + xz[i] * xz[j] + yz[i] * yz[j]);
      const rhs = 2 * comps.reduce((s, q) => s + q.values[i] * q.values[j], 0);
      // Tolerance: floating-point rounding of sums of O(100) numbers.
      expect(Math.abs(lhs - rhs)).toBeLessThan(1e-10 * Math.max(1, Math.abs(lhs)));
    }
  });

  it('without the diagonal, the three off-diagonal components are used and centred', () => {
    const x = Float64Array.from([1, 2, 3, 6]);
    const comps = shearComponents({ xy: x });
    // Mean 3 removed (definition of centring): values −2, −1, 0, 3.
    expect(comps.map((q) => q.name)).toEqual(['xy']);
    expect(comps[0].mean).toBe(3);
    expect(Array.from(comps[0].values)).toEqual([-2, -1, 0, 3]);
    expect(Array.from(x)).toEqual([1, 2, 3, 6]); // not in place by default
    expect(() => shearComponents({})).toThrow(UsageError);
  });
});

describe('trust in the double-exponential fit', () => {
  it('a slow time beyond t_max/3 ends on the bound and is reported, not trusted', () => {
    // Data: the Zhang–Otani–Maginn form with A = 2, α = 0.8, τ₁ = 0.1, τ₂ = 8 on t ∈ (0, 6]:
    // τ₂ exceeds the bound t_max/3 = 2 (closed form of the generating parameters), so the fit
    // cannot reach it and τ₂ must end on the bound (within 1 %).
    const t = Array.from({ length: 300 }, (_, i) => (i + 1) * 0.02);
    const y = t.map((x) => doubleExponential(x, { A: 2, alpha: 0.8, tau1: 0.1, tau2: 8 }));
    const f = fitDoubleExponential(t, y, t.map((x) => 1 / Math.sqrt(x)));
    expect(f.tauBounds.upper).toBeCloseTo(2, 12);
    expect(f.tau2).toBeGreaterThan(0.99 * 2);
    expect(doubleExponentialProblem(f)).toMatch(/upper bound/);
  });

  it('a negative slow amplitude (α > 1) is reported', () => {
    // Data: A = 2, α = 1.2, τ₁ = 0.1, τ₂ = 0.8 on (0, 6] (τ₂ well inside the bound 2): the slow
    // amplitude A(1 − α)τ₂ = −0.32 < 0 (closed form); exact data are fitted exactly (1e-5), and the
    // check names α outside [0, 1]. A well-posed fit (α = 0.7, τ₂ = 1.5 < 2) passes it.
    const t = Array.from({ length: 300 }, (_, i) => (i + 1) * 0.02);
    const w = t.map((x) => 1 / Math.sqrt(x));
    const f = fitDoubleExponential(t, t.map((x) => doubleExponential(x, { A: 2, alpha: 1.2, tau1: 0.1, tau2: 0.8 })), w);
    expect(rel(f.alpha, 1.2)).toBeLessThan(1e-5);
    expect(doubleExponentialProblem(f)).toMatch(/outside \[0, 1\]/);
    const ok = fitDoubleExponential(t, t.map((x) => doubleExponential(x, { A: 2, alpha: 0.7, tau1: 0.1, tau2: 1.5 })), w);
    expect(doubleExponentialProblem(ok)).toBeNull();
  });

});

describe('small pieces', () => {
  it('cutoffIndex finds the first time σ exceeds 40 % of η', () => {
    // η = 1, σ = 0.1 √k: σ > 0.4 first at k = 17 (0.1·√16 = 0.4 is not above), so the cut is the
    // last index before it, 16 (definition as in Zhang, Otani & Maginn 2015).
    const mean = new Float64Array(100).fill(1);
    const sd = Float64Array.from({ length: 100 }, (_, k) => 0.1 * Math.sqrt(k));
    expect(cutoffIndex(mean, sd, 0.4)).toEqual({ index: 16, reached: true });
    expect(cutoffIndex(mean, new Float64Array(100), 0.4)).toEqual({ index: 99, reached: false });
  });

  it('defaultSegmentCount follows the stated rule (10 at most, 3 at least, ≥ 200 τ each)', () => {
    // Rule (common practice, no source): N = min(10, ⌊n/(200 τ)⌋), at least 3.
    expect(defaultSegmentCount(1_000_000, 5)).toBe(10);
    expect(defaultSegmentCount(7000, 5)).toBe(7);
    expect(defaultSegmentCount(1000, 5)).toBe(3);
  });

  it('maxLagFor: a quarter segment when the transform has room, what fits otherwise', () => {
    // m = 200000: FFT length 2^18 = 262144 ≥ 1.04 m and 262144 − m = 62144 > m/4 = 50000 → 50000.
    expect(maxLagFor(200_000)).toBe(50_000);
    // m = 1e6: 2^20 = 1048576 ≥ 1.04e6, room 48576 < 250000 → 48576 (4.9 % of the segment).
    expect(maxLagFor(1_000_000)).toBe(48_576);
  });

  it('plateauRise: mean and standard error of η(k) − η(k/2) over estimates', () => {
    // Curves whose rise over [5, 10] is 1, 2, 3: mean 2, SD 1, SE 1/√3 (block statistics,
    // Frenkel & Smit §4.4.1). Tolerance: rounding only (12 decimals).
    const curves = [1, 2, 3].map((r) => Float64Array.from({ length: 11 }, (_, k) => (k >= 10 ? r : 0)));
    const p = plateauRise(curves, 10)!;
    expect(p.mean).toBeCloseTo(2, 12);
    expect(p.standardError).toBeCloseTo(1 / Math.sqrt(3), 12);
  });
});

describe('pressure column names', () => {
  it('recognises the usual spellings and the symmetric partner', () => {
    // Convention of the tool (common practice, no source).
    expect(tensorKeyOf('pxy')).toBe('xy');
    expect(tensorKeyOf('P_xz')).toBe('xz');
    expect(tensorKeyOf('Pres-YZ')).toBe('yz');
    expect(tensorKeyOf('pyx')).toBe('xy');
    expect(tensorKeyOf('pzz')).toBe('zz');
    expect(tensorKeyOf('temperature')).toBeNull();
    const m = pickStressColumns(['time', 'Pxx', 'Pyy', 'Pzz', 'Pxy', 'Pxz', 'Pyz', 'etot'], undefined);
    expect([...m.entries()].sort()).toEqual([['xx', 'Pxx'], ['xy', 'Pxy'], ['xz', 'Pxz'], ['yy', 'Pyy'], ['yz', 'Pyz'], ['zz', 'Pzz']]);
    expect(() => pickStressColumns(['time', 'etot'], undefined)).toThrow(UsageError);
    expect(() => pickStressColumns(['a'], 'a,b')).toThrow(UsageError);
  });
});

describe('command line: sojourn viscosity and sojourn stokes', () => {
  const run = runCaptured;

  it('a pressure table in kPa with a time column: JSON η matches the closed form', async () => {
    // Same OU model as above, written in kPa (1 bar = 100 kPa): η = Vσ²τ/(k_B T) = 0.29334 mPa s
    // regardless of the unit the table uses. Tolerance: 3 reported standard uncertainties.
    const n = 100_000;
    const cols = isotropicTensor(n, 4100);
    const dir = mkdtempSync(join(tmpdir(), 'sojourn-visc-'));
    try {
      const lines = ['time,Pxx,Pyy,Pzz,Pxy,Pxz,Pyz'];
      for (let i = 0; i < n; i++) {
        lines.push([(i * DT).toFixed(3), ...(['xx', 'yy', 'zz', 'xy', 'xz', 'yz'] as const).map((k) => (cols[k][i] * 100).toFixed(3))].join(','));
      }
      const file = join(dir, 'stress.csv');
      writeFileSync(file, lines.join('\n') + '\n');
      const csv = join(dir, 'eta.csv');
      const j = await run(['viscosity', file, '--temperature', '300K', '--volume', '27nm^3', '--pressure-unit', 'kPa', '--json', '--csv', csv]);
      expect(j.code).toBe(0);
      const r = JSON.parse(j.out).results;
      expect(r.viscosity.unit).toBe('Pa s');
      expect(Math.abs(r.viscosity.value - ETA_OU)).toBeLessThan(3 * r.viscosity.uncertainty);
      expect(r.components.length).toBe(5);
      // The CSV's header and its first data row (t = 0, η = 0 by definition of the integral).
      const first = readFileSync(csv, 'utf8').split('\n').slice(0, 2);
      expect(first[0]).toBe('time_ps,eta_Pa_s,sigma_Pa_s,fit_Pa_s');
      expect(first[1].startsWith('0,0,0,')).toBe(true);
      // Human mode ends with the project caution.
      const h = await run(['viscosity', file, '--temperature', '300K', '--volume', '27nm^3', '--pressure-unit', 'kPa', '--quiet']);
      expect(h.code).toBe(0);
      expect(h.out.trimEnd().endsWith(CAUTION)).toBe(true);
      // Usage errors exit with 2: both volume sources; no volume at all.
      expect((await run(['viscosity', file, '--temperature', '300K'])).code).toBe(2);
      // Bad input exits with 1 and names file:line:column.
      const bad = join(dir, 'bad.csv');
      writeFileSync(bad, 'time,pxy\n0,1\n0.002,oops\n');
      const b = await run(['viscosity', bad, '--temperature', '300K', '--volume', '1nm^3']);
      expect(b.code).toBe(1);
      expect(b.err).toContain('bad.csv:3:');
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('sojourn stokes: Li+ stick radius 2.38 Å from CRC D and the IAPWS viscosity', async () => {
    // D(Li+, 25 °C) = 1.029e-9 m^2/s (CRC), η = 0.8900 mPa s (IAPWS 2008, from memory):
    // r_H = k_B T/(6π η D) = 2.38458 Å (hand computation in test/transport.test.ts).
    const j = await run(['stokes', '--diffusion', '1.029e-5cm^2/s', '--viscosity', '0.8900±0.0089mPa s', '--temperature', '298.15K', '--species', 'Li+', '--json']);
    expect(j.code).toBe(0);
    const r = JSON.parse(j.out).results;
    // Tolerance: 5-figure hand value.
    expect(rel(r.hydrodynamicRadius.value, 2.38458)).toBeLessThan(1e-4);
    // Only η carries an uncertainty (1 %), so r_H carries 1 % (GUM eq. 12, p = −1).
    expect(rel(r.hydrodynamicRadius.uncertainty / r.hydrodynamicRadius.value, 0.01)).toBeLessThan(1e-9);
    expect(r.crystalRadius).toEqual({ value: 0.76, uncertainty: null, unit: 'A' });
    expect(r.waldenProduct).toBeNull();
    expect((await run(['stokes', '--viscosity', '1cP', '--temperature', '300K'])).code).toBe(2);
  });
});

describe('constant stress', () => {
  it('is refused with a clear message instead of a NaN viscosity', async () => {
    // A constant P_xy has zero autocorrelation, so η = V/(k_BT)·∫0 dt is undefined as a
    // fluctuation result (common practice, no source): the analysis must refuse it.
    const { analyseViscosity } = await import('../analyses/viscosity.js');
    const values = new Float64Array(5000).fill(3.5);
    expect(() =>
      analyseViscosity({ components: [{ name: 'xy', values }], dt: 0.002, volumeA3: 27000, temperatureK: 300, pascalPerUnit: 1e5 } as never),
    ).toThrow(/constant: no fluctuations/);
  });
});
