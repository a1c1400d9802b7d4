/**
 * First-order propagation of standard uncertainties through products, powers and ratios of
 * independent inputs.
 *
 * Formula: for y = Π x_i^p_i, u_r(y) = √(Σ_i (p_i u(x_i)/x_i)²) and u(y) = |y|·u_r (JCGM 100:2008,
 * "GUM", eq. 12); a ratio a/b is the case p = (1, −1).
 *
 * Missing uncertainties: an input whose uncertainty is null is "unknown" (it could not be
 * estimated), never silently exact, so the output's uncertainty is unknown too (null); an input
 * that is exact says so (`exact: true`, or an uncertainty of 0).
 *
 * Cost: O(number of factors).
 */
import { quantity, type Quantity } from '../types.js';

/**
 * One factor x^p of a product, with its standard uncertainty. "Unknown" and "exact" are kept
 * apart: `uncertainty: null` means the uncertainty could not be estimated (an unconverged
 * analysis, say) unless `exact` is set; `exact: true` means the factor has no uncertainty at all
 * (a defined constant, or a number the user gave without ± and asked to be taken as exact).
 */
export interface ProductTerm {
  value: number;
  /** Standard uncertainty u(x); null = unknown, unless `exact` is true. */
  uncertainty: number | null;
  /** The factor is exact: it contributes nothing and its `uncertainty` is not read. */
  exact?: boolean;
  /** Exponent p (default 1; −1 for a divisor). */
  power?: number;
}

/** True when a factor's uncertainty is unknown: null and not marked exact (see `ProductTerm`). */
export function uncertaintyUnknown(t: Pick<ProductTerm, 'uncertainty' | 'exact'>): boolean {
  return t.exact !== true && t.uncertainty === null;
}

/**
 * Relative standard uncertainty of a product of independent factors Π x_i^p_i, to first order:
 * u_r = √(Σ_i (p_i u(x_i)/x_i)²) (JCGM 100:2008, GUM, eq. 12). Multiply by |product| for the
 * absolute uncertainty. Exact factors (`exact: true`) contribute nothing. When any factor's
 * uncertainty is unknown (null and not exact) the product's is unknown too and the result is NaN
 * — never a smaller number computed from the other factors alone; NaN stays NaN through any
 * arithmetic, prints without "±" and is written as null in JSON. `productUncertainty` returns
 * null instead.
 */
export function relativeErrorProduct(terms: readonly ProductTerm[]): number {
  let sq = 0;
  for (const t of terms) {
    if (t.exact === true) continue;
    if (t.uncertainty === null) return NaN;
    if (t.uncertainty === 0) continue;
    const r = ((t.power ?? 1) * t.uncertainty) / t.value;
    sq += r * r;
  }
  return Math.sqrt(sq);
}

/**
 * Absolute standard uncertainty |y|·u_r of y = Π x_i^p_i (u_r from `relativeErrorProduct`, GUM
 * eq. 12), or null when any factor's uncertainty is unknown. Exact factors contribute nothing, so
 * a product of exact factors has uncertainty 0.
 */
export function productUncertainty(value: number, terms: readonly ProductTerm[]): number | null {
  if (terms.some(uncertaintyUnknown)) return null;
  return Math.abs(value) * relativeErrorProduct(terms);
}

/**
 * Ratio a/b of two independent quantities with its first-order uncertainty
 * u = |a/b|·√((u_a/a)² + (u_b/b)²) (JCGM 100:2008, GUM, eq. 12).
 *
 * Missing uncertainties: when both are null the ratio's is null. When exactly one is null the
 * ratio's is unknown as well: null by default (`oneUnknown: 'null'`); `oneUnknown: 'nan'` gives NaN
 * instead, the value `relativeErrorProduct` uses for "unknown" (NaN is written as null in JSON and
 * printed without ±), which keeps the conductivity analysis's present output bit for bit. Never
 * the other input's relative uncertainty alone.
 */
export function ratioWithUncertainty(a: Quantity, b: Quantity, unit: string, opts: { oneUnknown?: 'null' | 'nan' } = {}): Quantity {
  const r = a.value / b.value;
  const terms: ProductTerm[] = [{ value: a.value, uncertainty: a.uncertainty }, { value: b.value, uncertainty: b.uncertainty, power: -1 }];
  if (opts.oneUnknown === 'nan') {
    const unc = a.uncertainty === null && b.uncertainty === null ? null : Math.abs(r) * relativeErrorProduct(terms);
    return quantity(r, unc, unit);
  }
  return quantity(r, productUncertainty(r, terms), unit);
}
