import { describe, expect, it } from 'vitest';
import {
  BOLTZMANN, ELEMENTARY_CHARGE, AVOGADRO, GAS_CONSTANT, FARADAY, parseQuantity, reducedUnitScales, A2_PER_PS,
} from '../src/units.js';
import { UsageError } from '../src/errors.js';

describe('CODATA 2018 constants', () => {
  it('exact defining constants of the 2019 SI', () => {
    // CODATA 2018 (Tiesinga et al., Rev. Mod. Phys. 93, 025010 (2021)): exact values.
    expect(BOLTZMANN).toBe(1.380649e-23);
    expect(ELEMENTARY_CHARGE).toBe(1.602176634e-19);
    expect(AVOGADRO).toBe(6.02214076e23);
  });
  it('derived R and F match the CODATA 2018 listed values', () => {
    // CODATA 2018 lists R = 8.314 462 618... J mol⁻¹ K⁻¹ and F = 96 485.332 12... C mol⁻¹
    // (exact, truncated in the table): agreement to the 12 digits listed.
    expect(GAS_CONSTANT).toBeCloseTo(8.314462618, 9);
    expect(FARADAY).toBeCloseTo(96485.33212, 5);
  });
});

describe('quantity parser', () => {
  it('converts each unit to the internal unit', () => {
    // Unit definitions: SI brochure (BIPM, 9th ed. 2019) and exact conventional definitions
    // (1 atm = 101 325 Pa, 1 bar = 1e5 Pa, 1 cP = 1 mPa s). Exact up to one rounding.
    const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);
    expect(parseQuantity('0.05ps', 'time', 't')).toBe(0.05);
    expect(rel(parseQuantity('50fs', 'time', 't'), 0.05)).toBeLessThan(1e-15);
    expect(parseQuantity('2 ns', 'time', 't')).toBe(2000);
    expect(parseQuantity('27nm^3', 'volume', 'v')).toBe(27000);
    expect(parseQuantity('3nm', 'length', 'l')).toBe(30);
    expect(parseQuantity('250pm', 'length', 'l')).toBe(2.5);
    expect(parseQuantity('2.5Å', 'length', 'l')).toBe(2.5);
    expect(parseQuantity('1atm', 'pressure', 'p')).toBe(101325);
    expect(parseQuantity('1.5bar', 'pressure', 'p')).toBe(1.5e5);
    expect(parseQuantity('0.89cP', 'viscosity', 'e')).toBeCloseTo(0.89e-3, 18);
    expect(parseQuantity('0.89mPa.s', 'viscosity', 'e')).toBeCloseTo(0.89e-3, 18);
    expect(rel(parseQuantity('2.3e-5cm^2/s', 'diffusion', 'd'), 2.3e-9)).toBeLessThan(1e-15);
    // 1 Å²/ps = 1e-20 m² / 1e-12 s = 1e-8 m²/s.
    expect(A2_PER_PS).toBeCloseTo(1e-8, 22);
    expect(parseQuantity('300K', 'temperature', 'T')).toBe(300);
  });
  it('rejects unknown units and bare numbers with a usage error naming the accepted units', () => {
    expect(() => parseQuantity('3 furlongs', 'length', '--box')).toThrow(UsageError);
    expect(() => parseQuantity('3 furlongs', 'length', '--box')).toThrow(/accepted: A, Å, nm, pm, m/);
    expect(() => parseQuantity('0.05', 'time', '--frame-interval')).toThrow(/has no unit/);
    expect(parseQuantity('0.05', 'time', '--frame-interval', 'ps')).toBe(0.05);
    expect(() => parseQuantity('abc', 'time', 't')).toThrow(UsageError);
  });
});

describe('Lennard-Jones reduced units', () => {
  it('argon: τ = σ√(m/ε) ≈ 2.15 ps', () => {
    // Argon LJ parameters σ = 3.405 Å, ε/k_B = 119.8 K, m = 39.948 g/mol give τ ≈ 2.15 ps
    // (Rahman, Phys. Rev. 136, A405 (1964) parameters; τ value is common practice, no source).
    // Tolerance 0.5 %: the textbook value is quoted to three figures.
    const s = reducedUnitScales(3.405, 119.8 * BOLTZMANN, 39.948);
    expect(Math.abs(s.time - 2.15) / 2.15).toBeLessThan(0.005);
    expect(s.temperature).toBeCloseTo(119.8, 10);
  });
});
