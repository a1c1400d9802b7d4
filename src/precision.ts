/**
 * How many decimals a number read from text was written with, and a rounding step printed
 * without binary noise. Used to tell rounding in written times from uneven spacing.
 */

/**
 * The fewest decimals d (0–12) with which `v` is written: the smallest d for which v·10^d is a
 * whole number to within 10⁻⁹ of its size (a decimal read from text is the nearest double, so
 * v·10^d misses the integer by a few units in the last place; common practice, no source).
 * Numbers needing more than 12 decimals give 12.
 */
export function decimalsOf(v: number): number {
  if (!Number.isFinite(v)) return 0;
  for (let d = 0; d < 12; d++) {
    const x = v * 10 ** d;
    if (Math.abs(x - Math.round(x)) <= 1e-9 * Math.max(1, Math.abs(x))) return d;
  }
  return 12;
}

/**
 * The fewest decimals that write every value of `values` (the largest decimalsOf), for a column
 * of numbers written with a fixed number of decimals.
 */
export function columnDecimals(values: ArrayLike<number>): number {
  let d = 0;
  for (let i = 0; i < values.length && d < 12; i++) {
    const k = decimalsOf(values[i]!);
    if (k > d) d = k;
  }
  return d;
}

/** A small positive step (a rounding unit such as 1e-4) as short text: "0.0001", "1e-7". */
export function formatQuantum(q: number): string {
  return String(Number(q.toPrecision(3)));
}
