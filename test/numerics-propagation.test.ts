/**
 * First-order propagation of uncertainties (src/numerics/propagation.ts) against the GUM's
 * formula by hand, a Monte-Carlo propagation (JCGM 101:2008) and the stated missing-uncertainty
 * rules.
 */
import { describe, expect, it } from 'vitest';
import { productUncertainty, ratioWithUncertainty, relativeErrorProduct, uncertaintyUnknown } from '../src/numerics/propagation.js';
import { Random } from '../src/random.js';
import { quantity } from '../src/types.js';

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('relativeErrorProduct', () => {
  it('first-order relative uncertainty of x·y^-1 matches Monte-Carlo (JCGM 101:2008)', () => {
    const x = { value: 2, uncertainty: 0.02 };
    const y = { value: 5, uncertainty: 0.1, power: -1 };
    const ur = relativeErrorProduct([x, y]);
    // Closed form (GUM eq. 12): √(0.01² + 0.02²) = 0.0223607.
    // Tolerance: arithmetic rounding of the printed figures.
    expect(rel(ur, 0.0223607)).toBeLessThan(2e-6);
    const rng = new Random(77);
    const n = 40000;
    let s1 = 0;
    let s2 = 0;
    for (let i = 0; i < n; i++) {
      const q = (x.value + x.uncertainty * rng.normal()) / (y.value + y.uncertainty * rng.normal());
      s1 += q;
      s2 += q * q;
    }
    const mean = s1 / n;
    const sd = Math.sqrt((s2 - n * mean * mean) / (n - 1));
    // Tolerance: sample-SD noise 1/√(2n) ≈ 0.35 % (×4) plus the second-order term ≈ u_r² ≈ 0.05 %.
    expect(rel(sd / 0.4, ur)).toBeLessThan(0.015);
  });

  it('exact factors contribute nothing and powers scale the term', () => {
    // r = k T /(c π η D): u_r(r) from u(D)/D = 3 % and η exact is 3 % (GUM eq. 12, p = −1).
    // Tolerance: floating-point rounding only.
    expect(rel(relativeErrorProduct([{ value: 1e-9, uncertainty: 3e-11, power: -1 }, { value: 1e-3, uncertainty: null, exact: true }]), 0.03)).toBeLessThan(1e-12);
    // An uncertainty of 0 is also exact.
    expect(rel(relativeErrorProduct([{ value: 1e-9, uncertainty: 3e-11, power: -1 }, { value: 1e-3, uncertainty: 0 }]), 0.03)).toBeLessThan(1e-12);
    // x² with 1 % gives 2 % (GUM eq. 12 with p = 2).
    expect(rel(relativeErrorProduct([{ value: 4, uncertainty: 0.04, power: 2 }]), 0.02)).toBeLessThan(1e-12);
  });

  it('an unknown uncertainty (null, not marked exact) makes the product\'s unknown, not smaller', () => {
    // The same r = kT/(cπηD) with u(η) unknown: GUM eq. 12 needs u(η), so there is no u_r — not
    // the 3 % from D alone. relativeErrorProduct says NaN, productUncertainty null.
    const d = { value: 1e-9, uncertainty: 3e-11, power: -1 };
    const etaUnknown = { value: 1e-3, uncertainty: null, power: -1 };
    expect(uncertaintyUnknown(etaUnknown)).toBe(true);
    expect(uncertaintyUnknown({ ...etaUnknown, exact: true })).toBe(false);
    expect(Number.isNaN(relativeErrorProduct([d, etaUnknown]))).toBe(true);
    expect(productUncertainty(2.5, [d, etaUnknown])).toBeNull();
    // Hand computation: |2.5| × 3 % = 0.075 with η exact; a product of exact factors has u = 0.
    expect(rel(productUncertainty(2.5, [d, { ...etaUnknown, exact: true }])!, 0.075)).toBeLessThan(1e-12);
    expect(productUncertainty(2.5, [{ value: 1, uncertainty: null, exact: true }])).toBe(0);
  });
});

describe('ratioWithUncertainty', () => {
  it('default rule: 0.5 ± 0.025 by hand, none when either input has none (the report\'s ionicity)', () => {
    // (2 ± 0.06)/(4 ± 0.16): u/r = √(0.03² + 0.04²) = 0.05 → 0.5 ± 0.025 (GUM eq. 12, 3-4-5).
    const r = ratioWithUncertainty(quantity(2, 0.06, 'S/m'), quantity(4, 0.16, 'S/m'), '1');
    expect(r.value).toBe(0.5);
    expect(Math.abs(r.uncertainty! - 0.025)).toBeLessThan(1e-15);
    expect(ratioWithUncertainty(quantity(2, null, 'S/m'), quantity(4, 0.16, 'S/m'), '1').uncertainty).toBeNull();
    expect(ratioWithUncertainty(quantity(2, 0.06, 'S/m'), quantity(4, null, 'S/m'), '1').uncertainty).toBeNull();
  });

  it('adds relative uncertainties in quadrature (the conductivity analysis\'s ratios)', () => {
    // Truth: JCGM 100:2008 (GUM) eq. 12 for a quotient of independent inputs: 3% and 4% relative
    // give 5% (3-4-5 triangle); 2/4 = 0.5 ± 0.025. Tolerance 1e-12: arithmetic only.
    const r = ratioWithUncertainty(quantity(2, 0.06, 'S/m'), quantity(4, 0.16, 'S/m'), '1', { oneUnknown: 'nan' });
    expect(Math.abs(r.value - 0.5)).toBeLessThan(1e-12);
    expect(Math.abs(r.uncertainty! - 0.025)).toBeLessThan(1e-12);
  });

  it("one unknown input: null by default, NaN with oneUnknown: 'nan'; both unknown: null either way", () => {
    // The rule stated in the module: a null uncertainty is unknown, never exact, so the ratio's is
    // unknown too; never the other input's 3 % alone (GUM eq. 12 needs both).
    const a = quantity(2, 0.06, 'S/m');
    const bUnknown = quantity(4, null, 'S/m');
    expect(ratioWithUncertainty(a, bUnknown, '1').uncertainty).toBeNull();
    expect(ratioWithUncertainty(a, bUnknown, '1', { oneUnknown: 'nan' }).uncertainty).toBeNaN();
    expect(ratioWithUncertainty(quantity(2, null, 'S/m'), bUnknown, '1').uncertainty).toBeNull();
    expect(ratioWithUncertainty(quantity(2, null, 'S/m'), bUnknown, '1', { oneUnknown: 'nan' }).uncertainty).toBeNull();
    expect(ratioWithUncertainty(a, bUnknown, '1').value).toBe(0.5);
  });
});
