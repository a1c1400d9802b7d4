/**
 * Transport relations (src/transport.ts) checked against handbook tables, closed forms and
 * hand computations done outside the code.
 */
import { describe, it, expect } from 'vitest';
import {
  YEH_HUMMER_XI,
  yehHummerCorrection,
  nernstEinsteinConductivity,
  nernstEinsteinUncertainty,
  stokesEinsteinRadius,
  stokesEinsteinDiffusion,
  stokesFactor,
  limitingMolarConductivity,
  waldenProduct,
  waldenToConventional,
  stokesSummary,
} from '../src/transport.js';
import { crystalRadius, normaliseIonName } from '../src/radii.js';
import { parseUncertainValue } from '../src/commands/stokes.js';
import { UNIT_FACTORS } from '../src/units.js';
import { UsageError } from '../src/errors.js';
import { AVOGADRO } from '../src/units.js';
import { Random } from '../src/random.js';

const T25 = 298.15; // 25 °C in K (ITS-90 definition of 0 °C = 273.15 K)

/** Relative difference |a − b| / |b|. */
const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('limitingMolarConductivity (Nernst–Einstein for one ion)', () => {
  // CRC Handbook of Chemistry and Physics, "Ionic conductivity and diffusion at infinite dilution"
  // (P. Vanýsek), aqueous, 25 °C: λ in 10^-4 S m^2/mol (= S cm^2/mol), D in 10^-9 m^2/s.
  // K+, Li+ and Ca2+ rows verified against a copy of the table; Na+ and Cl- rows from memory.
  const rows: Array<{ ion: string; z: number; D: number; lambdaPerCharge: number; source: string }> = [
    { ion: 'K+', z: 1, D: 1.957, lambdaPerCharge: 73.48, source: 'CRC table (checked)' },
    { ion: 'Li+', z: 1, D: 1.029, lambdaPerCharge: 38.66, source: 'CRC table (checked)' },
    { ion: 'Na+', z: 1, D: 1.334, lambdaPerCharge: 50.08, source: 'CRC table, from memory' },
    { ion: 'Cl-', z: -1, D: 2.032, lambdaPerCharge: 76.31, source: 'CRC table, from memory' },
    // The table lists 1/2 Ca2+ (per unit charge); the molar λ of Ca2+ is twice that.
    { ion: 'Ca2+', z: 2, D: 0.792, lambdaPerCharge: 59.47, source: 'CRC table (checked)' },
  ];
  for (const r of rows) {
    it(`${r.ion}: D° → λ° matches the handbook (${r.source})`, () => {
      const lambda = limitingMolarConductivity(r.z, r.D * 1e-9, T25); // S m^2/mol
      const expected = Math.abs(r.z) * r.lambdaPerCharge * 1e-4; // molar λ, S m^2/mol
      // Tolerance: both columns are rounded to the printed digits, so the relative half-step
      // of D (0.0005/D) plus that of λ (half of the last printed digit / λ) bounds the mismatch.
      // Every row here prints D to 0.001 and λ to 0.01.
      const tol = 0.0005 / r.D + 0.005 / r.lambdaPerCharge;
      expect(rel(lambda, expected)).toBeLessThan(tol);
    });
  }
});

describe('nernstEinsteinConductivity', () => {
  it('1 mol/m^3 KCl at infinite dilution gives κ = c (λ_K + λ_Cl) from the handbook', () => {
    // One K+ and one Cl- in V = 1/(N_A · 1 mol/m^3) m^3 is c = 1 mol/m^3 (= 1 mmol/L).
    // Kohlrausch's independent migration: κ = c (λ°_K + λ°_Cl) = 1 × (73.48 + 76.31)e-4 S/m
    // = 0.014979 S/m (CRC "Ionic conductivity and diffusion at infinite dilution"; Cl- row from memory).
    const volumeA3 = (1 / AVOGADRO) * 1e30;
    const sigma = nernstEinsteinConductivity(
      [
        { count: 1, charge: 1, diffusion: 1.957e-9 },
        { count: 1, charge: -1, diffusion: 2.032e-9 },
      ],
      volumeA3,
      T25,
    );
    // Tolerance: table rounding, 0.0005/1.957 + 0.0005/2.032 + 0.005/73.48 ≈ 5.6e-4 relative (bound).
    expect(rel(sigma, (73.48 + 76.31) * 1e-4)).toBeLessThan(5.6e-4);
  });

  it('a 2:1 salt (CaCl2) weighs the charge squared', () => {
    // c(CaCl2) = 1 mol/m^3: κ = c (2·59.47 + 2·76.31)e-4 S/m (CRC table: 1/2 Ca2+ 59.47, D 0.792;
    // Cl- 76.31, D 2.032 from memory).
    const volumeA3 = (1 / AVOGADRO) * 1e30;
    const sigma = nernstEinsteinConductivity(
      [
        { count: 1, charge: 2, diffusion: 0.792e-9 },
        { count: 2, charge: -1, diffusion: 2.032e-9 },
      ],
      volumeA3,
      T25,
    );
    // Tolerance: table rounding of D for both ions (0.0005/0.792 + 0.0005/2.032) ≈ 8.8e-4 relative.
    expect(rel(sigma, (2 * 59.47 + 2 * 76.31) * 1e-4)).toBeLessThan(8.8e-4);
  });

  it('uncertainty of a single species is σ · δD/D (closed form of linear propagation)', () => {
    // One species: σ ∝ D, so δσ/σ = δD/D exactly (JCGM 100:2008 eq. 10 with one input).
    const sp = { count: 10, charge: 1, diffusion: 1.5e-9, diffusionError: 0.06e-9 };
    const s = nernstEinsteinConductivity([sp], 30000, 300);
    const u = nernstEinsteinUncertainty([sp], 30000, 300);
    // Tolerance: floating-point rounding only.
    expect(rel(u / s, 0.04)).toBeLessThan(1e-12);
  });

  it('uncertainty of two species agrees with a Monte-Carlo propagation (JCGM 101:2008)', () => {
    // GUM Supplement 1 (JCGM 101:2008): sample the inputs, take the SD of the output. σ is
    // linear in the D_i, so the linear propagation is exact and only sampling noise remains.
    const sp = [
      { count: 20, charge: 1, diffusion: 1.3e-9, diffusionError: 0.1e-9 },
      { count: 20, charge: -1, diffusion: 2.0e-9, diffusionError: 0.2e-9 },
    ];
    const V = 27000;
    const u = nernstEinsteinUncertainty(sp, V, 300);
    const rng = new Random(20240611);
    const n = 40000;
    let s1 = 0;
    let s2 = 0;
    for (let i = 0; i < n; i++) {
      const s = nernstEinsteinConductivity(
        sp.map((x) => ({ ...x, diffusion: x.diffusion + x.diffusionError * rng.normal() })),
        V,
        300,
      );
      s1 += s;
      s2 += s * s;
    }
    const sd = Math.sqrt((s2 - (s1 * s1) / n) / (n - 1));
    // Tolerance: the relative standard error of a sample SD is 1/√(2(n−1)) ≈ 0.35 %; allow 4×.
    expect(rel(sd, u)).toBeLessThan(0.014);
  });
});

describe('Stokes–Einstein', () => {
  it('Li+ in water at 25 °C has a stick radius of about 2.38 Å, far above its crystal radius', () => {
    // D(Li+) = 1.029e-9 m^2/s (CRC infinite-dilution table, checked); η(water, 25 °C, 0.1 MPa)
    // = 0.8900 mPa s (IAPWS 2008 viscosity formulation, from memory: 890.0 μPa s).
    // Hand computation: k_B T = 1.380649e-23 × 298.15 = 4.116405e-21 J;
    // 6π η D = 6 × 3.141593 × 0.8900e-3 × 1.029e-9 = 1.726261e-11 → r = 2.38458e-10 m.
    const r = stokesEinsteinRadius(1.029e-9, 0.89e-3, T25, 'stick');
    // Tolerance: the hand computation was carried to 5 significant figures → 1e-4 relative.
    expect(rel(r * 1e10, 2.38458)).toBeLessThan(1e-4);
    // Shannon (Acta Cryst. A32, 751 (1976)) 6-coordinate Li+ radius 0.76 Å: r_H/r_c > 3.
    expect(r * 1e10 / 0.76).toBeGreaterThan(3);
  });

  it('agrees with the Robinson–Stokes working formula r = 0.820 |z| / (λ° η) Å', () => {
    // Robinson & Stokes, Electrolyte Solutions (1959): Stokes radius r = 0.820|z|/(λ° η) Å with
    // λ° in S cm^2 mol^-1 and η in poise (from memory). For Na+: λ° = 50.08 (CRC, from memory),
    // η = 0.008900 P. Route: D from λ via D = RTλ/(z²F²) is what the handbook itself uses, so take
    // D° = 1.334e-9 m^2/s from the same table.
    const r = stokesEinsteinRadius(1.334e-9, 0.89e-3, T25, 'stick') * 1e10;
    const rRS = 0.82 / (50.08 * 0.0089);
    // Tolerance: the constant 0.820 has 3 significant figures (±0.06 %) and D, λ are rounded
    // (±0.05 %): allow 0.2 %.
    expect(rel(r, rRS)).toBeLessThan(2e-3);
  });

  it('slip radius is 6/4 of the stick radius (Stokes vs Basset drag 6πηr vs 4πηr)', () => {
    const stick = stokesEinsteinRadius(1e-9, 1e-3, 300, 'stick');
    const slip = stokesEinsteinRadius(1e-9, 1e-3, 300, 'slip');
    // Closed form: r_slip / r_stick = 6/4 (common practice, no source beyond the drag laws).
    // Tolerance: floating-point rounding only.
    expect(rel(slip / stick, 1.5)).toBeLessThan(1e-14);
    expect(stokesFactor('slip')).toBe(4);
  });

  it('D from a radius reproduces the hand value for a 1 nm sphere in water', () => {
    // k_B T/(6π η r) at 298.15 K, η = 0.89e-3 Pa s, r = 1e-9 m:
    // 4.116405e-21 / (6π × 0.89e-3 × 1e-9) = 4.116405e-21 / 1.677610e-11 = 2.45373e-10 m^2/s.
    const D = stokesEinsteinDiffusion(1e-9, 0.89e-3, T25, 'stick');
    // Tolerance: hand computation carried to 6 significant figures → 2e-5 relative.
    expect(rel(D, 2.45373e-10)).toBeLessThan(2e-5);
  });
});

describe('yehHummerCorrection', () => {
  it('matches a hand computation for water-like η in a 40 Å box', () => {
    // ΔD = k_B T ξ / (6π η L), Yeh & Hummer, J. Phys. Chem. B 108, 15873 (2004), ξ = 2.837297.
    // T = 300 K, η = 0.85e-3 Pa s, L = 40e-10 m:
    // k_B T = 4.141947e-21 J; × ξ = 1.175193e-20; 6π η L = 6.408849e-11 → ΔD = 1.83370e-10 m^2/s.
    const d = yehHummerCorrection(300, 0.85e-3, 40);
    // Tolerance: 6-figure hand arithmetic → 3e-5 relative.
    expect(rel(d, 1.8337e-10)).toBeLessThan(3e-5);
    // ξ as printed in Yeh & Hummer (2004).
    expect(YEH_HUMMER_XI).toBe(2.837297);
  });
});

describe('Walden product', () => {
  it('KCl at infinite dilution in water, 25 °C: Λ°η ≈ 1.33 S cm^2 mol^-1 P', () => {
    // Λ°(KCl) = 73.48 + 76.31 = 149.79 S cm^2/mol (CRC; Cl- from memory), η = 0.8900 mPa s
    // = 0.008900 P (IAPWS 2008, from memory): Λη = 149.79 × 0.0089 = 1.33313 S cm^2 mol^-1 P.
    const w = waldenProduct(149.79e-4, 0.89e-3);
    // Tolerance: hand product to 6 figures → 1e-5 relative.
    expect(rel(waldenToConventional(w), 1.33313)).toBeLessThan(1e-5);
  });
});

describe('stokesSummary (one ion, with uncertainties)', () => {
  it('Li+ in water: r_H, its propagated uncertainty, r_H/r_crystal, λ and the Walden product', () => {
    // Inputs: D = (1.029 ± 0.020)e-9 m^2/s (CRC value, uncertainty invented for the test),
    // η = 0.890 ± 0.010 mPa s, T = 298.15 K, Λ = 38.66 ± 0.30 S cm^2/mol.
    const r = stokesSummary({
      diffusion: { value: 1.029e-9, uncertainty: 0.02e-9, unit: 'm^2/s' },
      viscosity: { value: 0.89e-3, uncertainty: 0.01e-3, unit: 'Pa s' },
      temperatureK: T25,
      boundary: 'stick',
      species: 'li+',
      molarConductivity: { value: 38.66e-4, uncertainty: 0.3e-4, unit: 'S m^2/mol' },
    });
    // r_H = 2.38458 Å (hand computation above); u_r/r = √((0.02/1.029)² + (0.01/0.89)²)
    // = 0.022450 (GUM eq. 12) → u = 0.053535 Å. Tolerance: 5-figure hand arithmetic.
    expect(rel(r.hydrodynamicRadius.value, 2.38458)).toBeLessThan(1e-4);
    expect(rel(r.hydrodynamicRadius.uncertainty!, 0.053535)).toBeLessThan(1e-4);
    // Shannon (1976) six-coordinate Li+ radius 0.76 Å; ratio 2.38458/0.76 = 3.13760.
    expect(r.crystalRadius!.value).toBe(0.76);
    expect(rel(r.radiusRatio!.value, 3.1376)).toBeLessThan(1e-4);
    // λ from D: the CRC table pairs D = 1.029 with λ = 38.66 S cm^2/mol (rounding: 6e-4 rel).
    expect(rel(r.limitingMolarConductivity!.value * 1e4, 38.66)).toBeLessThan(6.2e-4);
    // Walden Λη = 38.66 × 0.00890 = 0.344074 S cm^2 mol^-1 P; u = 0.344074 ×
    // √((0.30/38.66)² + (0.01/0.89)²) = 0.0046984 (hand). Tolerance: 5 figures.
    expect(rel(r.waldenProductConventional!.value, 0.344074)).toBeLessThan(1e-5);
    expect(rel(r.waldenProductConventional!.uncertainty!, 0.0046984)).toBeLessThan(1e-4);
  });

  it('an input without ±: taken as exact when asked (the stokes command), unknown otherwise', () => {
    // D = (1.029 ± 0.020)e-9 m^2/s, η = 0.890 mPa s without uncertainty, Λ = 38.66 ± 0.30 S cm^2/mol.
    const input = {
      diffusion: { value: 1.029e-9, uncertainty: 0.02e-9, unit: 'm^2/s' },
      viscosity: { value: 0.89e-3, uncertainty: null, unit: 'Pa s' },
      temperatureK: T25,
      boundary: 'stick' as const,
      species: 'Li+',
      molarConductivity: { value: 38.66e-4, uncertainty: 0.3e-4, unit: 'S m^2/mol' },
    };
    // η exact: u(r)/r = 0.020/1.029 = 0.0194363 → u = 2.38458 × 0.0194363 = 0.046347 Å;
    // Walden u = 0.344074 × 0.30/38.66 = 0.0026700 S cm^2 mol^-1 P (GUM eq. 12, hand
    // arithmetic). Tolerance: 5-figure hand arithmetic.
    const exact = stokesSummary({ ...input, missingUncertainty: 'exact' });
    expect(rel(exact.hydrodynamicRadius.uncertainty!, 0.046347)).toBeLessThan(1e-4);
    expect(rel(exact.radiusRatio!.uncertainty!, 0.046347 / 0.76)).toBeLessThan(1e-4);
    expect(rel(exact.waldenProductConventional!.uncertainty!, 0.00267)).toBeLessThan(1e-4);
    expect(exact.inputsWithoutUncertainty).toEqual(['viscosity']);
    expect(exact.missingUncertainty).toBe('exact');
    // η unknown (the default): every output that depends on η has no uncertainty; λ = z²F²D/(RT)
    // does not involve η and keeps u(λ)/λ = u(D)/D = 0.0194363 (tolerance: round-off of the hand
    // value).
    const unknown = stokesSummary(input);
    expect(unknown.missingUncertainty).toBe('unknown');
    expect(unknown.hydrodynamicRadius.uncertainty).toBeNull();
    expect(unknown.radiusRatio!.uncertainty).toBeNull();
    expect(unknown.waldenProduct!.uncertainty).toBeNull();
    expect(unknown.waldenProductConventional!.uncertainty).toBeNull();
    const lambda = unknown.limitingMolarConductivity!;
    expect(rel(lambda.uncertainty! / lambda.value, 0.0194363)).toBeLessThan(1e-5);
    // Values do not depend on the reading of the uncertainties.
    expect(unknown.hydrodynamicRadius.value).toBe(exact.hydrodynamicRadius.value);
  });

  it('the reverse (D from a radius) inverts the forward relation', () => {
    // D = k_B T/(6π η r) for r = 2.38458 Å must give back 1.029e-9 m^2/s (same closed form).
    const r = stokesSummary({ radius: { value: 2.38458, uncertainty: null, unit: 'A' }, viscosity: { value: 0.89e-3, uncertainty: null, unit: 'Pa s' }, temperatureK: T25, boundary: 'stick' });
    // Tolerance: 6-figure radius → 5e-6 relative.
    expect(rel(r.diffusion.value, 1.029e-9)).toBeLessThan(5e-6);
    expect(r.diffusion.uncertainty).toBeNull();
    expect(r.computed).toBe('diffusion');
  });
});

describe('Shannon radii table (src/radii.ts)', () => {
  it('holds the six-coordinate effective radii of Shannon (1976)', () => {
    // Shannon, Acta Cryst. A32, 751 (1976), CN 6 (checked against a reprint for Cs+, Mg2+,
    // Ca2+, F-, Cl-, Br-; Li+, Na+, K+ checked as crystal radius − 0.14 Å; Rb+, I- from memory).
    // Tolerance: exact table entries.
    const want: Record<string, number> = { 'Li+': 0.76, 'Na+': 1.02, 'K+': 1.38, 'Rb+': 1.52, 'Cs+': 1.67, 'Mg2+': 0.72, 'Ca2+': 1.0, 'F-': 1.33, 'Cl-': 1.81, 'Br-': 1.96, 'I-': 2.2 };
    for (const [ion, r] of Object.entries(want)) expect(crystalRadius(ion)?.radiusA).toBe(r);
  });

  it('reads the usual ways of writing an ion', () => {
    // Convention of the tool (common practice, no source).
    expect(normaliseIonName('Mg++')).toBe('Mg2+');
    expect(normaliseIonName('mg+2')).toBe('Mg2+');
    expect(normaliseIonName('Cl−')).toBe('Cl-');
    expect(normaliseIonName('NA')).toBe('Na');
    expect(crystalRadius('Na')?.name).toBe('Na+');
    expect(crystalRadius('Xx+')).toBeNull();
    expect(normaliseIonName('Mg+-')).toBeNull();
  });
});

describe('parseUncertainValue ("VALUE[±UNC]UNIT")', () => {
  it('reads the three written forms into SI', () => {
    // Unit factors: 1 cm^2/s = 1e-4 m^2/s, 1 mPa s = 1e-3 Pa s (SI definitions).
    const a = parseUncertainValue('1.0e-9±0.05e-9m^2/s', UNIT_FACTORS.diffusion, '--diffusion');
    expect(a.value).toBeCloseTo(1e-9, 24);
    expect(a.uncertainty).toBeCloseTo(5e-11, 24);
    const b = parseUncertainValue('(1.03 +- 0.05)e-5 cm^2/s', UNIT_FACTORS.diffusion, '--diffusion');
    // Tolerance: binary rounding of decimal inputs (1e-15 relative).
    expect(rel(b.value, 1.03e-9)).toBeLessThan(1e-15);
    expect(rel(b.uncertainty!, 0.05e-9)).toBeLessThan(1e-15);
    const c = parseUncertainValue('0.89 mPa s', UNIT_FACTORS.viscosity, '--viscosity');
    expect(rel(c.value, 0.89e-3)).toBeLessThan(1e-15);
    expect(c.uncertainty).toBeNull();
    expect(() => parseUncertainValue('0.89', UNIT_FACTORS.viscosity, '--viscosity')).toThrow(UsageError);
    expect(() => parseUncertainValue('0.89±-1 cP', UNIT_FACTORS.viscosity, '--viscosity')).toThrow(UsageError);
  });
});
