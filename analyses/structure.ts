/**
 * Quantities computed from a g(r) curve: static structure factor S(q), Lennard-Jones energy and
 * virial pressure routes, and Kirkwood–Buff integrals.
 *
 * Input curves are histograms: g_k is constant on the bin [kΔr, (k+1)Δr), k = 0 … nbins−1, which
 * is what a pair-distance histogram measures (the shell average of g). Every integral below is
 * therefore done bin by bin with the closed-form antiderivative of its kernel, exact for such a
 * piecewise-constant g; no quadrature error is added to the binning.
 *
 * Units: lengths Å, number densities Å⁻³, q in Å⁻¹, energies kJ/mol, pressures Pa.
 */
import { AVOGADRO, BOLTZMANN, ELEMENTARY_CHARGE, GAS_CONSTANT, parseQuantity } from '../src/units.js';
import { AnalysisError, UsageError } from '../src/errors.js';
import { fitLine } from '../src/numerics/line-fit.js';

/** Window applied to (g − 1) before the Fourier transform. */
export type SqWindow = 'lorch' | 'none';

/**
 * Lorch modification function W(r) = sin(πr/R)/(πr/R), W(0) = 1, W(R) = 0 (E. Lorch, J. Phys. C 2,
 * 229 (1969)). It removes the truncation ripples of a transform cut at R, at the price of
 * broadening every peak of S(q) (resolution ≈ 2π/R).
 */
export function lorchWindow(r: number, R: number): number {
  const x = (Math.PI * r) / R;
  return x === 0 ? 1 : Math.sin(x) / x;
}

/** sin(x·r)/x with its limit r at x = 0 (series below |x r| = 1e-4, error < 1e-17 relative). */
function sinOver(x: number, r: number): number {
  const t = x * r;
  if (Math.abs(t) < 1e-4) return r * (1 - (t * t) / 6);
  return Math.sin(t) / x;
}

/**
 * Antiderivative of r² sin(qr)/(qr): (sin(qr) − qr cos(qr))/q³, by its Taylor series
 * r³/3 − q²r⁵/30 + q⁴r⁷/840 when qr < 0.01 to avoid cancellation (elementary calculus).
 */
export function sincShellPrimitive(q: number, r: number): number {
  const x = q * r;
  if (Math.abs(x) < 1e-2) {
    const r3 = r * r * r;
    return r3 / 3 - (q * q * r3 * r * r) / 30 + (q ** 4 * r3 * r3 * r) / 840;
  }
  return (Math.sin(x) - x * Math.cos(x)) / (q * q * q);
}

/**
 * Antiderivative of r² · sin(qr)/(qr) · sin(ar)/(ar) = sin(qr)sin(ar)/(qa), a = π/R (the Lorch
 * window): [sin((q−a)r)/(q−a) − sin((q+a)r)/(q+a)] / (2qa) (product-to-sum identity).
 */
export function lorchShellPrimitive(q: number, a: number, r: number): number {
  return (sinOver(q - a, r) - sinOver(q + a, r)) / (2 * q * a);
}

/**
 * Static structure factor from g(r): S(q) = 1 + 4πρ ∫_0^R r² (g(r) − 1) (sin qr / qr) W(r) dr,
 * R = nbins·Δr, with W the Lorch window or 1 (Hansen & McDonald, Theory of Simple Liquids, 4th ed.
 * 2013, §2.6 for the transform; Lorch 1969 for W). Exact bin-by-bin integration of the
 * piecewise-constant g. For a pair A–B, ρ is the density of B used to normalise g_AB, so this is
 * the one-component S(q) when A = B (not the Faber–Ziman partial of a mixture). q > 0, Å⁻¹.
 */
export function structureFactor(
  g: ArrayLike<number>, binWidth: number, density: number, q: ArrayLike<number>, window: SqWindow = 'lorch',
): Float64Array {
  const nb = g.length;
  const R = nb * binWidth;
  const a = Math.PI / R;
  const s = new Float64Array(q.length);
  for (let i = 0; i < q.length; i++) {
    const qi = q[i];
    if (!(qi > 0)) throw new RangeError(`structureFactor: q must be positive, got ${qi}`);
    const prim = window === 'lorch' ? (r: number) => lorchShellPrimitive(qi, a, r) : (r: number) => sincShellPrimitive(qi, r);
    let sum = 0;
    let lo = prim(0);
    for (let k = 0; k < nb; k++) {
      const hi = prim((k + 1) * binWidth);
      sum += (g[k] - 1) * (hi - lo);
      lo = hi;
    }
    s[i] = 1 + 4 * Math.PI * density * sum;
  }
  return s;
}

/**
 * The q grid of S(q) for a g(r) known up to r_max: the multiples k·Δq of the step (k ≥ 1) from the
 * first one at or above q_min = 2π/r_max up to q_max. Below q_min the transform of a g(r) cut at
 * r_max is set by the truncation, not by the structure: a range R resolves features in q no finer
 * than about 2π/R (the same Fourier resolution the Lorch window trades for its smoothing; Lorch,
 * J. Phys. C 2, 229 (1969)), and the q → 0 limit needs the long-range part of g beyond R.
 * Returns the grid (possibly empty when q_max < q_min) and q_min, both in Å⁻¹.
 */
export function structureFactorGrid(qMax: number, qStep: number, rMax: number): { q: Float64Array; qMin: number } {
  if (!(qStep > 0) || !(rMax > 0)) throw new RangeError('structureFactorGrid: q step and r-max must be positive');
  const qMin = (2 * Math.PI) / rMax;
  const first = Math.max(1, Math.ceil(qMin / qStep - 1e-9));
  const last = Math.floor(qMax / qStep + 1e-9);
  const q = new Float64Array(Math.max(0, last - first + 1));
  for (let i = 0; i < q.length; i++) q[i] = (first + i) * qStep;
  return { q, qMin };
}

/** Lennard-Jones 12-6 parameters: ε (kJ/mol), σ (Å), cutoff r_c (Å) or null = r-max. */
export interface LennardJones {
  epsilon: number;
  sigma: number;
  cutoff: number | null;
}

/** Factors converting the accepted ε units to kJ/mol. */
export const ENERGY_FACTORS: Record<string, number> = {
  'kJ/mol': 1,
  'J/mol': 1e-3,
  // thermochemical calorie, 4.184 J exactly (NIST SP 811, 2008, B.8)
  'kcal/mol': 4.184,
  // ε/k_B in kelvin: ε = R·T per mole (CODATA 2018 exact constants)
  K: GAS_CONSTANT / 1000,
  // electronvolt: e·N_A J/mol (CODATA 2018 exact constants)
  eV: (ELEMENTARY_CHARGE * AVOGADRO) / 1000,
};

/**
 * Parse "epsilon,sigma[,cutoff]", e.g. "0.996kJ/mol,3.405A,8.5A" or "119.8K,3.405A": ε with one
 * of kJ/mol, J/mol, kcal/mol, K (ε/k_B) or eV; σ and r_c as lengths. Usage errors name the part.
 */
export function parseLennardJones(text: string): LennardJones {
  const parts = text.split(',').map((s) => s.trim());
  if (parts.length < 2 || parts.length > 3) {
    throw new UsageError(`--lj: expected epsilon,sigma[,cutoff] such as 0.996kJ/mol,3.405A,8.5A; got "${text}"`);
  }
  const m = /^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*)$/.exec(parts[0]);
  const accepted = Object.keys(ENERGY_FACTORS).join(', ');
  if (!m) throw new UsageError(`--lj: epsilon "${parts[0]}" is not a number with a unit (${accepted})`);
  const factor = ENERGY_FACTORS[m[2]];
  if (factor === undefined) throw new UsageError(`--lj: epsilon "${parts[0]}" needs one of the units ${accepted}`);
  const epsilon = Number(m[1]) * factor;
  const sigma = parseQuantity(parts[1], 'length', '--lj sigma');
  const cutoff = parts.length === 3 ? parseQuantity(parts[2], 'length', '--lj cutoff') : null;
  if (!(epsilon > 0) || !(sigma > 0) || (cutoff !== null && !(cutoff > 0))) {
    throw new UsageError(`--lj: epsilon, sigma and cutoff must be positive, got "${text}"`);
  }
  return { epsilon, sigma, cutoff };
}

/** LJ 12-6 pair potential u(r) = 4ε[(σ/r)¹² − (σ/r)⁶] (Allen & Tildesley 2017, §1.3). */
export function ljPotential(r: number, epsilon: number, sigma: number): number {
  const s6 = (sigma / r) ** 6;
  return 4 * epsilon * (s6 * s6 - s6);
}

/** Antiderivative of r²u(r): 4ε[−σ¹²/(9r⁹) + σ⁶/(3r³)]. */
function ljEnergyPrimitive(r: number, e: number, s: number): number {
  const s3 = s ** 3 / r ** 3;
  return 4 * e * s ** 3 * (-(s3 * s3 * s3) / 9 + s3 / 3);
}

/** Antiderivative of r³u'(r): 4ε[(4/3)σ¹²/r⁹ − 2σ⁶/r³]. */
function ljVirialPrimitive(r: number, e: number, s: number): number {
  const s3 = s ** 3 / r ** 3;
  return 4 * e * s ** 3 * ((4 / 3) * s3 * s3 * s3 - 2 * s3);
}

/** Σ_k g_k [P(min(hi, rc)) − P(lo)] over bins below rc; bins with g_k = 0 contribute nothing. */
function binIntegral(g: ArrayLike<number>, binWidth: number, rc: number, prim: (r: number) => number): number {
  let sum = 0;
  for (let k = 0; k < g.length; k++) {
    const lo = k * binWidth;
    if (lo >= rc) break;
    if (g[k] === 0) continue;
    if (lo === 0) throw new AnalysisError('pairs closer than one bin width: the Lennard-Jones integral diverges at r = 0');
    const hi = Math.min((k + 1) * binWidth, rc);
    sum += g[k] * (prim(hi) - prim(lo));
  }
  return sum;
}

/**
 * Long-range energy correction per particle for a 12-6 potential truncated at r_c, with g = 1
 * beyond: (8/3)πρεσ³[(1/3)(σ/r_c)⁹ − (σ/r_c)³] (Allen & Tildesley 2017, §2.8).
 */
export function ljEnergyTail(density: number, epsilon: number, sigma: number, cutoff: number): number {
  const x3 = (sigma / cutoff) ** 3;
  return (8 / 3) * Math.PI * density * epsilon * sigma ** 3 * (x3 * x3 * x3 / 3 - x3);
}

/**
 * Long-range pressure correction (in density² · energy · length³ units) for a truncated 12-6
 * potential: (16/3)πρ²εσ³[(2/3)(σ/r_c)⁹ − (σ/r_c)³] (Allen & Tildesley 2017, §2.8).
 */
export function ljPressureTail(density2: number, epsilon: number, sigma: number, cutoff: number): number {
  const x3 = (sigma / cutoff) ** 3;
  return (16 / 3) * Math.PI * density2 * epsilon * sigma ** 3 * ((2 / 3) * x3 * x3 * x3 - x3);
}

/**
 * Energy route: U/N = 2πρ ∫_0^{r_c} u(r) g(r) r² dr + tail (Allen & Tildesley 2017, §2.8), in
 * kJ/mol with ε in kJ/mol, ρ in Å⁻³ (the pair density that normalises g: (N−1)/V for one
 * species), exact per bin for a histogram g.
 */
export function lennardJonesEnergy(
  g: ArrayLike<number>, binWidth: number, density: number, lj: LennardJones & { cutoff: number },
): { integral: number; tail: number; total: number } {
  const { epsilon: e, sigma: s, cutoff: rc } = lj;
  const integral = 2 * Math.PI * density * binIntegral(g, binWidth, rc, (r) => ljEnergyPrimitive(r, e, s));
  const tail = ljEnergyTail(density, e, s, rc);
  return { integral, tail, total: integral + tail };
}

/** 1 kJ/mol per Å³ in Pa: 10³ J / N_A / 10⁻³⁰ m³. */
export const KJ_PER_MOL_A3_TO_PA = 1e3 / AVOGADRO / 1e-30;

/**
 * Virial route: P = ρk_BT − (2π/3) ρ ρ_p ∫_0^{r_c} r³ u'(r) g(r) dr + (16/3)π ρ ρ_p εσ³[(2/3)(σ/r_c)⁹ −
 * (σ/r_c)³] (Allen & Tildesley 2017, §2.8), in Pa. ρ = N/V is the number density (ideal term), ρ_p
 * the pair density normalising g ((N−1)/V), so that ρρ_p·V = N(N−1)/V as in the pair sum.
 */
export function lennardJonesPressure(
  g: ArrayLike<number>, binWidth: number, pairDensity: number, numberDensity: number, temperature: number,
  lj: LennardJones & { cutoff: number },
): { ideal: number; virial: number; tail: number; total: number } {
  const { epsilon: e, sigma: s, cutoff: rc } = lj;
  const ideal = numberDensity * 1e30 * BOLTZMANN * temperature;
  const virial = -(2 * Math.PI / 3) * numberDensity * pairDensity * binIntegral(g, binWidth, rc, (r) => ljVirialPrimitive(r, e, s)) * KJ_PER_MOL_A3_TO_PA;
  const tail = ljPressureTail(numberDensity * pairDensity, e, s, rc) * KJ_PER_MOL_A3_TO_PA;
  return { ideal, virial, tail, total: ideal + virial + tail };
}

/**
 * Running Kirkwood–Buff integral at the upper bin edges R_k = (k+1)Δr:
 * G(R_k) = 4π ∫_0^{R_k} (g − 1) r² dr = Σ_{m≤k} (g_m − 1)·(4π/3)(r_{m+1}³ − r_m³)
 * (J. G. Kirkwood & F. P. Buff, J. Chem. Phys. 19, 774 (1951)). Å³.
 */
export function kirkwoodBuffRunning(g: ArrayLike<number>, binWidth: number): Float64Array {
  const out = new Float64Array(g.length);
  let acc = 0;
  for (let k = 0; k < g.length; k++) {
    const lo = k * binWidth, hi = (k + 1) * binWidth;
    acc += (g[k] - 1) * (4 * Math.PI / 3) * (hi ** 3 - lo ** 3);
    out[k] = acc;
  }
  return out;
}

/**
 * Geometric weight of a spherical subvolume of diameter L: w(x) = 1 − 3x/2 + x³/2, x = r/L ≤ 1 —
 * the overlap volume of two such spheres whose centres are r apart, over the sphere volume
 * (P. Krüger, S. K. Schnell, D. Bedeaux, S. Kjelstrup, T. J. H. Vlugt, J.-M. Simon, J. Phys. Chem.
 * Lett. 4, 235 (2013)).
 */
export function sphereOverlapWeight(x: number): number {
  return 1 - 1.5 * x + 0.5 * x * x * x;
}

/**
 * Finite-volume Kirkwood–Buff integral of Krüger, Schnell et al. (2013) for a sphere of diameter
 * L = (k+1)Δr, at every upper bin edge: G_V(L) = 4π ∫_0^L (g − 1) r² w(r/L) dr with w as in
 * sphereOverlapWeight; per bin exact with ∫ r² w dr = r³/3 − 3r⁴/(8L) + r⁶/(12L³). Å³. O(nbins²).
 * This is the integral of a finite subvolume, not the infinite-system value: see
 * `kirkwoodBuffExtrapolation`.
 */
export function kirkwoodBuffFiniteVolume(g: ArrayLike<number>, binWidth: number): Float64Array {
  const n = g.length;
  const out = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const L = (k + 1) * binWidth;
    const prim = (r: number) => (r ** 3) / 3 - (3 * r ** 4) / (8 * L) + (r ** 6) / (12 * L ** 3);
    let acc = 0;
    let lo = 0;
    for (let m = 0; m <= k; m++) {
      const hi = prim((m + 1) * binWidth);
      acc += (g[m] - 1) * (hi - lo);
      lo = hi;
    }
    out[k] = 4 * Math.PI * acc;
  }
  return out;
}

/** Default start of the linear range of the 1/L extrapolation, as a fraction of r_max. */
export const KB_EXTRAPOLATION_FROM = 0.5;

/** Result of `kirkwoodBuffExtrapolation`. */
export interface KirkwoodBuffExtrapolation {
  /** G∞, the infinite-system integral (Å³): the slope of L·G_V(L) against L. */
  infinite: number;
  /** Least-squares standard error of that slope from the residuals (Å³). */
  fitError: number;
  /** The surface term F (Å⁴): the intercept of L·G_V(L) = L·G∞ + F. */
  surface: number;
  /** The linear range of L (Å, upper bin edges) and the number of points in it. */
  from: number;
  to: number;
  points: number;
}

/**
 * Infinite-system Kirkwood–Buff integral from the finite-volume ones (Krüger, Schnell, Bedeaux,
 * Kjelstrup, Vlugt & Simon, J. Phys. Chem. Lett. 4, 235 (2013)): for subvolumes larger than the
 * correlation length G_V(L) = G∞ + F/L, i.e. L·G_V(L) = L·G∞ + F is linear in L; G∞ is the slope
 * of a least-squares line (Numerical Recipes §15.2, src/fit.ts `fitLine`) through L·G_V(L) at the
 * upper bin edges L ∈ [fromFraction·r_max, r_max] (default the upper half, fromFraction = 0.5;
 * r_max is at most half the cell, beyond which the finite-volume integrals are not used). The
 * slope error from the residuals measures how far the points depart from a line; the statistical
 * error of G∞ comes from repeating the extrapolation on independent time blocks (rdf.ts).
 */
export function kirkwoodBuffExtrapolation(
  g: ArrayLike<number>,
  binWidth: number,
  fromFraction = KB_EXTRAPOLATION_FROM,
  finiteVolume?: ArrayLike<number>,
): KirkwoodBuffExtrapolation {
  const n = g.length;
  const gv = finiteVolume ?? kirkwoodBuffFiniteVolume(g, binWidth);
  const rMax = n * binWidth;
  const first = Math.max(0, Math.ceil((fromFraction * rMax) / binWidth - 1 - 1e-9));
  const points = n - first;
  if (points < 3) throw new AnalysisError(`Kirkwood–Buff extrapolation: only ${points} bin(s) in the linear range; need at least 3`);
  const L = new Float64Array(points);
  const LG = new Float64Array(points);
  for (let i = 0; i < points; i++) {
    L[i] = (first + i + 1) * binWidth;
    LG[i] = L[i] * gv[first + i];
  }
  const f = fitLine(L, LG);
  return { infinite: f.slope, fitError: f.slopeError, surface: f.intercept, from: L[0], to: L[points - 1], points };
}
