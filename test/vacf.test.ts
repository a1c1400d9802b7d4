/**
 * VACF analysis (analyses/vacf.ts) and the plateau/integration helpers of src/plateau.ts against
 * closed forms: the Ornstein–Uhlenbeck velocity autocorrelation, the Fourier transform of an
 * exponential (Lorentzian), exact integrals, and the speed of light.
 */
import { describe, expect, it } from 'vitest';
import type { Frame, PassContext, Topology } from '../src/types.js';
import { ornsteinUhlenbeck } from '../src/random.js';
import { plateauWindow, windowMean } from '../src/plateau.js';
import { convergenceNote } from '../src/estimate.js';
import { cosineSpectrum, plateauWithSegments, vacfPass, WAVENUMBER_PER_THZ, type VacfPassOptions, type VacfResult } from '../analyses/vacf.js';
import type { StorePartial } from '../src/store/store.js';
import { mergeStores } from '../src/store/merge.js';

const relDiff = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

function topology(n: number, label = 'P'): Topology {
  const labels = Array.from({ length: n }, () => label);
  return { atoms: n, labels, elements: labels, masses: new Float64Array(n).fill(20), charges: null, residues: null };
}

function context(topo: Topology, dt: number): PassContext {
  return { topology: topo, firstCell: null, frameInterval: dt, warnings: [] };
}

function partial(opts: VacfPassOptions, topo: Topology, pos: Float64Array[], vel: Float64Array[] | null, dt: number, from = 0, to = pos.length): StorePartial {
  const acc = vacfPass(opts).create(context(topo, dt));
  const pb = new Float64Array(3 * topo.atoms);
  const vb = new Float64Array(3 * topo.atoms);
  for (let t = from; t < to; t++) {
    pb.set(pos[t]);
    if (vel) vb.set(vel[t]);
    const f: Frame = { index: t, time: null, cell: null, positions: pb, velocities: vel ? vb : null, line: 1, topology: topo };
    acc.frame(f);
  }
  return acc.partial();
}

/** OU velocities per component and trapezoid-integrated positions. */
function ouSystem(n: number, frames: number, dt: number, gamma: number, sv: number, seed: number) {
  const vel: Float64Array[] = Array.from({ length: frames }, () => new Float64Array(3 * n));
  for (let k = 0; k < 3 * n; k++) {
    const v = ornsteinUhlenbeck(frames, dt, 1 / gamma, sv, seed + k);
    for (let t = 0; t < frames; t++) vel[t][k] = v[t];
  }
  const pos: Float64Array[] = [new Float64Array(3 * n)];
  for (let t = 1; t < frames; t++) pos.push(Float64Array.from(pos[t - 1], (x, k) => x + 0.5 * (vel[t - 1][k] + vel[t][k]) * dt));
  return { vel, pos };
}

describe('integration and plateau helpers', () => {
  it('plateauWindow starts where the relative change over the span first drops below the tolerance', () => {
    // Truth: for I(t) = 1 − e^{−t} sampled at t_i = i·h, the change over a span S·h from t is
    // e^{−t}(1 − e^{−Sh}) and must be ≤ tol·(1 − e^{−t}); solving gives
    // t* = ln[((1 − e^{−Sh}) + tol)/tol] (algebra). The rule picks the first lag at or after t*,
    // so the tolerance is one lag.
    const h = 0.01, last = 2000, tol = 0.02;
    const I = Float64Array.from({ length: last + 1 }, (_, i) => 1 - Math.exp(-i * h));
    const w = plateauWindow(I, { tolerance: tol, spanFraction: 0.1 });
    const S = Math.round(0.1 * last);
    const tStar = Math.log((1 - Math.exp(-S * h) + tol) / tol);
    expect(w.found).toBe(true);
    expect(w.to - w.from).toBe(S);
    expect(Math.abs(w.from * h - tStar)).toBeLessThanOrEqual(h);
    // The plateau mean then lies within tol of the limit 1 (the rule bounds the remaining change).
    expect(Math.abs(windowMean(I, w) - 1)).toBeLessThan(tol);
  });

  it('reports no plateau for a steadily growing integral', () => {
    // Truth: I(t) = t changes by S/i ≥ 10 % relative over any span at i ≤ 1000 (arithmetic), far
    // above a 2 % tolerance, so no window qualifies.
    const I = Float64Array.from({ length: 1001 }, (_, i) => i);
    const w = plateauWindow(I, { tolerance: 0.02 });
    expect(w.found).toBe(false);
    expect(w.reason).toMatch(/no plateau/);
  });
});

describe('cosineSpectrum', () => {
  it('transforms A e^{−γt} into the Lorentzian 2Aγ/(γ² + (2πν)²)', () => {
    // Truth: 2∫₀^∞ A e^{−γt} cos(2πνt) dt = 2Aγ/(γ² + 4π²ν²) (standard integral, e.g. Gradshteyn &
    // Ryzhik 3.893.2, from memory). Errors: trapezoid (γΔt)²/12 = 8e-6; the Hann taper over
    // t_max = 100/γ changes the integral by ~(π/(2γ t_max))²·2 ≈ 5e-4 relative; tolerance 2e-3
    // relative to the peak value 2A/γ.
    const A = 3, gamma = 10, dt = 0.001, M = 10000; // t_max = 10 ps = 100/γ
    const c = Float64Array.from({ length: M }, (_, j) => A * Math.exp(-gamma * j * dt));
    const { frequencyTHz, intensity } = cosineSpectrum(c, dt);
    const peak = (2 * A) / gamma;
    for (const target of [0, 0.5, 1.59, 3, 8]) {
      let k = 0;
      while (frequencyTHz[k] < target) k++;
      const nu = frequencyTHz[k];
      const exact = (2 * A * gamma) / (gamma * gamma + (2 * Math.PI * nu) ** 2);
      expect(Math.abs(intensity[k] - exact) / peak).toBeLessThan(2e-3);
    }
  });

  it('1 THz = 33.35641 cm⁻¹', () => {
    // Truth: ν̃ = ν/c with c = 299 792 458 m/s (exact, SI): 1e12/(2.99792458e10 cm/s) = 33.356410 cm⁻¹.
    // Tolerance 1e-7 relative: the quoted value has 7 significant figures.
    expect(relDiff(WAVENUMBER_PER_THZ, 33.35641)).toBeLessThan(1e-7);
  });
});

describe('Ornstein–Uhlenbeck velocities', () => {
  // Truth (Uhlenbeck & Ornstein, Phys. Rev. 36, 823 (1930)): per component ⟨v(0)v(t)⟩ = (k_BT/m)
  // e^{−γt}; here σ_v² = k_BT/m = 4 Å²/ps², γ = 10/ps, so C(t) = 12 e^{−γt} Å²/ps² (3 axes) and
  // D = k_BT/(mγ) = 0.4 Å²/ps = 4e-9 m²/s. Drift is kept: these are independent free particles.
  const n = 128, frames = 10000, dt = 0.002, gamma = 10, sv = 2;
  const { vel, pos } = ouSystem(n, frames, dt, gamma, sv, 500);
  const topo = topology(n);
  const ctx = context(topo, dt);
  const pass = vacfPass({ keepDrift: true });
  const fromFile: VacfResult = pass.finish(partial({ keepDrift: true }, topo, pos, vel, dt), ctx);

  it('normalised VACF follows e^{−γt} within Bartlett\'s standard error', () => {
    // Tolerance: Bartlett's variance of an estimated autocorrelation of an AR(1) series with
    // coefficient a = e^{−γΔt} from n samples, var ρ̂_k ≈ [(1+a²)(1−a^{2k})/(1−a²) − 2k a^{2k}]/n
    // (M. S. Bartlett, J. R. Stat. Soc. Suppl. 8, 27 (1946); form from memory), n = 3·N·T;
    // 4 standard errors.
    const g = fromFile.groups[0];
    expect(fromFile.velocitySource).toBe('file');
    const a = Math.exp(-gamma * dt);
    const nS = 3 * n * frames;
    for (const k of [10, 50, 100, 200]) {
      const v = ((1 + a * a) * (1 - a ** (2 * k))) / (1 - a * a) - 2 * k * a ** (2 * k);
      const se = Math.sqrt(v / nS);
      expect(Math.abs(g.normalized[k] - Math.exp(-gamma * k * dt))).toBeLessThan(4 * se);
    }
    // C(0) = 3σ_v² = 12 Å²/ps². A mean of v² over n = 3·N·T Gaussian samples whose v² series has
    // autocorrelation a^{2k} has relative variance (2/n)·(1+a²)/(1−a²) (statistical inefficiency of an
    // AR(1) square; Priestley, Spectral Analysis and Time Series (1981), §5.3, from memory):
    // (2/3.84e6)·50.5 → SD 0.0051; 4 SD.
    const sdC0 = Math.sqrt((2 / nS) * ((1 + a * a) / (1 - a * a)));
    expect(relDiff(g.vacf[0], 12)).toBeLessThan(4 * sdC0);
  });

  it('D from the running-integral plateau equals k_BT/(mγ)', () => {
    // Tolerance: the running integral up to t is ⟨v(0)·Δr(t)⟩/3; by Isserlis' theorem one sample of
    // v_x(0)Δx(t) has variance ≈ σ_v²·2Dt for t ≫ 1/γ and origins 2/γ apart are nearly independent,
    // so the relative SD is √(4t/(3·N·T_run)) (derivation in the test source). At the plateau end
    // t_b this bounds the statistical error; the rule itself can stop early by at most the
    // tolerance (2 %). Tolerance = 0.02 + 4·√(4 t_b/(3 N T_run)).
    const g = fromFile.groups[0];
    expect(g.plateau.found).toBe(true);
    const tol = 0.02 + 4 * Math.sqrt((4 * g.plateau.to) / (3 * n * frames * dt));
    expect(relDiff(g.diffusion.value, 4e-9)).toBeLessThan(tol);
    expect(g.diffusion.uncertainty).not.toBeNull();
    expect(g.converged).toBe(true);
  });

  it('central differences of positions give the same D when the file has no velocities', () => {
    // Truth: the running integral of the VACF of differenced positions telescopes to the MSD growth,
    // so its plateau is the same D = k_BT/(mγ) (Uhlenbeck & Ornstein 1930); same tolerance as above.
    const warnings: string[] = [];
    const c2 = { ...context(topo, dt), warnings };
    const r = pass.finish(partial({ keepDrift: true }, topo, pos, null, dt), c2);
    expect(r.velocitySource).toBe('central differences');
    expect(warnings.join(' ')).toMatch(/central differences/);
    const g = r.groups[0];
    const tol = 0.02 + 4 * Math.sqrt((4 * g.plateau.to) / (3 * n * frames * dt));
    expect(relDiff(g.diffusion.value, 4e-9)).toBeLessThan(tol);
    // Central differences of trapezoid-integrated positions are (v(t−1) + 2v(t) + v(t+1))/4 (algebra), so
    // C_cd(0) = [6C(0) + 8C(Δt) + 2C(2Δt)]/16 in terms of the file-velocity VACF of the same path, up to
    // the two end frames the differences lose (relative effect ~ 2/T = 2e-4): tolerance 1e-3.
    const f = fromFile.groups[0].vacf;
    expect(relDiff(g.vacf[0], (6 * f[0] + 8 * f[1] + 2 * f[2]) / 16)).toBeLessThan(1e-3);
  });

  it('merging two partials equals the single run', () => {
    // Truth: the single uninterrupted run; velocities are concatenated, so the VACF is identical up
    // to round-off (1e-9 relative).
    const a = partial({ keepDrift: true }, topo, pos, vel, dt, 0, 4321);
    const b = partial({ keepDrift: true }, topo, pos, vel, dt, 4321, frames);
    const merged = pass.finish(mergeStores(a, b), ctx);
    for (const k of [0, 17, 400]) expect(relDiff(merged.groups[0].vacf[k], fromFile.groups[0].vacf[k])).toBeLessThan(1e-9);
  });
});

describe('a correlation that never decays', () => {
  it('ballistic particles: VACF constant, running integral never plateaus → flagged', () => {
    // Truth: with constant velocities C(t) = ⟨v²⟩ for all t (closed form), so D(t) = ⟨v²⟩t/3 grows
    // without bound; over any span S the relative change is S/i ≥ 10 % of the lags searched, far
    // above the 2 % tolerance. C(0) must equal the mean |v|² of the fixed velocities, summed directly
    // (every origin sees the same velocities, so only round-off differs: tolerance 1e-9 relative).
    const n = 20, frames = 500, dt = 0.01;
    const v = Float64Array.from({ length: 3 * n }, (_, k) => 0.5 * Math.sqrt(3) * (2 * ((k * 0.6180339887) % 1) - 1));
    let v2 = 0;
    for (const x of v) v2 += x * x;
    v2 /= n;
    const pos = Array.from({ length: frames }, (_, t) => Float64Array.from(v, (x) => x * t * dt));
    const vel = Array.from({ length: frames }, () => v);
    const topo = topology(n);
    const r = vacfPass({ keepDrift: true }).finish(partial({ keepDrift: true }, topo, pos, vel, dt), context(topo, dt));
    const g = r.groups[0];
    expect(relDiff(g.vacf[0], v2)).toBeLessThan(1e-9);
    expect(g.plateau.found).toBe(false);
    expect(g.converged).toBe(false);
    expect(g.notes.join(' ')).toMatch(/no plateau/);
    // The same, coded (src/estimate.ts): the Estimate of D carries the verdict and the code.
    expect(g.diffusion.verdict).toBe('not-converged');
    expect(g.diffusion.reasons.map((x) => x.code)).toContain('plateau.not-found');
    // Notes and reasons stay one for one (each note is its reason in the "not converged: " form).
    expect(g.notes).toEqual(g.reasons.map(convergenceNote));
  });
});

describe('a VACF sampled too coarsely for the trapezoid rule', () => {
  it('OU velocities every 2/γ: D comes out (γΔt/2)·coth(γΔt/2) too large, and is flagged', () => {
    // Truth (Uhlenbeck & Ornstein 1930): sampled every Δt the VACF is exactly 3σ_v² r^k with
    // r = e^{−γΔt}; its trapezoid integral is Δt(1/2 + r/(1 − r))·3σ_v² (geometric series), i.e.
    // the exact D = σ_v²/γ times x·coth x with x = γΔt/2 = 1: 1.3130 (closed form). Tolerance: the
    // statistical SD of the running integral √(4t_b/(3·N·T_run)) (as in the OU test above) at the
    // plateau end t_b, 4 SD, plus the plateau rule's 2 %.
    const n = 128, frames = 4000, dt = 0.2, gamma = 10, sv = 2;
    const { vel, pos } = ouSystem(n, frames, dt, gamma, sv, 9100);
    const topo = topology(n);
    const r = vacfPass({ keepDrift: true }).finish(partial({ keepDrift: true }, topo, pos, vel, dt), context(topo, dt));
    const g = r.groups[0];
    const Dtrue = (sv * sv) / gamma * 1e-8;
    const x = (gamma * dt) / 2;
    const biased = Dtrue * x / Math.tanh(x);
    const tol = 0.02 + 4 * Math.sqrt((4 * g.plateau.to) / (3 * n * frames * dt));
    expect(relDiff(g.diffusion.value, biased)).toBeLessThan(tol);
    expect(relDiff(g.diffusion.value, Dtrue)).toBeGreaterThan(0.2); // the bias the segments cannot see
    // C(Δt)/C(0) = e^{−2} = 0.135 < 0.5: not converged, with the reason.
    expect(Math.abs(g.normalized[1] - Math.exp(-gamma * dt))).toBeLessThan(0.01);
    expect(g.samplingOk).toBe(false);
    expect(g.converged).toBe(false);
    expect(g.notes.join(' ')).toMatch(/too coarsely sampled/);
    expect(g.diffusion.reasons.find((x) => x.code === 'vacf.coarse-sampling')?.verdict).toBe('not-converged');
  });
});

describe('plateau checked against later lags', () => {
  // Running integral of a two-exponential correlation, closed form
  //   I(t) = a₁τ₁(1 − e^{−t/τ₁}) + a₂τ₂(1 − e^{−t/τ₂}),
  // with a small, slow second relaxation: over one plateau span it changes by less than the 2 %
  // tolerance (so the plateau rule accepts an early window), but it keeps rising afterwards.
  // Segments: the same curve plus fixed offsets ε_k·s·√t (deterministic stand-in for noise).
  const h = 0.01, samples = 20000;
  const maxLag = 1999; // ⌊0.5·(4000 − 1)⌋ for 5 segments of 4000 samples
  const I = (a2: number) => (k: number) => 0.4 * (1 - Math.exp((-k * h) / 0.1)) + a2 * 20 * (1 - Math.exp((-k * h) / 20));
  const eps = [-1.2, -0.4, 0, 0.5, 1.1];
  const run = (a2: number, s: number) => {
    const full = Float64Array.from({ length: maxLag + 1 }, (_, k) => I(a2)(k));
    return plateauWithSegments(full, samples, { plateauSpan: 0.05 }, (start, count, lag) => {
      const e = eps[Math.round(start / count)];
      return Float64Array.from({ length: lag + 1 }, (_, k) => I(a2)(k) + e * s * Math.sqrt(k * h));
    });
  };

  it('a decayed correlation passes; a slow tail is caught as "running integral keeps drifting"', () => {
    // a₂ = 0: nothing changes after the plateau (closed form), converged.
    const flat = run(0, 0.001);
    expect(flat.found).toBe(true);
    expect(flat.drift.checked).toBe(true);
    expect(flat.converged).toBe(true);
    // a₂ = 0.006 per ps²: over a 1 ps span the slow part grows by ≤ 0.006·1 = 0.006, 1.5 % of 0.4 —
    // inside the 2 % tolerance, so a plateau is found; up to 3× its end the integral rises by
    // a₂·20·[e^{−t_p/20} − e^{−t_l/20}] averaged, several % of 0.4 (closed form, evaluated below),
    // far beyond the segment scatter (s = 0.001 → SE ≈ 3e-4).
    const tail = run(0.006, 0.001);
    expect(tail.found).toBe(true);
    const w = tail.window;
    const d = tail.drift;
    let later = 0, plat = 0;
    for (let k = d.from; k <= d.to; k++) later += I(0.006)(k) / (d.to - d.from + 1);
    for (let k = w.from; k <= w.to; k++) plat += I(0.006)(k) / (w.to - w.from + 1);
    expect(Math.abs(d.drift - (later - plat))).toBeLessThan(1e-12);
    expect((later - plat) / tail.value).toBeGreaterThan(0.02);
    expect(d.drifting).toBe(true);
    expect(tail.converged).toBe(false);
    expect(tail.notes.join(' ')).toMatch(/running integral keeps drifting/);
    expect(tail.reasons.map((x) => x.code)).toContain('plateau.drifting');
  });
});
