/**
 * Block averaging, its plateau rule and the χ² points (src/numerics/blocking.ts) against closed
 * forms, hand computations and published tables.
 */
import { describe, expect, it } from 'vitest';
import { blockingAnalysis, blockingPlateau, chiSquaredUpperPoint, PLATEAU_MIN_BLOCKS } from '../src/numerics/blocking.js';
import { ar1Series } from '../src/random.js';

describe('block averaging', () => {
  it('linear ramp: closed-form standard error and lag-1 correlation at every level', () => {
    // x_i = i, n = 2^12. Level l has n_b = n/2^l block means forming an arithmetic progression
    // with spacing h = 2^l, so SE² = var/n_b = h²(n_b+1)/12 and the lag-1 autocorrelation is
    // r₁ = 1 − 3/n_b (sums of powers, closed form). Tolerance 1e-9 relative: round-off only.
    const n = 1 << 12;
    const x = Float64Array.from({ length: n }, (_, i) => i);
    const b = blockingAnalysis(x);
    expect(b.sizes.length).toBe(12); // levels with ≥ 2 blocks: 4096 … 2 blocks
    for (let l = 0; l < b.sizes.length; l++) {
      const nb = n / 2 ** l;
      expect(b.blocks[l]).toBe(nb);
      const exact = 2 ** l * Math.sqrt((nb + 1) / 12);
      expect(Math.abs(b.standardErrors[l]! / exact - 1)).toBeLessThan(1e-9);
      expect(Math.abs(b.errorsOfStandardErrors[l]! - exact / Math.sqrt(2 * (nb - 1)))).toBeLessThan(1e-9 * exact);
      if (nb >= 3) expect(Math.abs(b.lagOneCorrelations[l]! - (1 - 3 / nb))).toBeLessThan(1e-9);
    }
    // A ramp never looks independent, so the plateau rule finds nothing.
    expect(b.plateau).toBeNull();
  });

  it('odd lengths drop the last block at each level (Flyvbjerg & Petersen 1989)', () => {
    // 1000 → 500 → 250 → 125 → 62 → 31 → 15 → 7 → 3 → 1: levels with ≥ 2 blocks (hand computation).
    const b = blockingAnalysis(ar1Series(1000, 0, 4));
    expect(b.blocks).toEqual([1000, 500, 250, 125, 62, 31, 15, 7, 3]);
    expect(b.sizes).toEqual([1, 2, 4, 8, 16, 32, 64, 128, 256]);
  });

  it('white noise: the plateau is at or near single samples and equals σ/√n', () => {
    // Independent N(0,1) samples: SE = 1/√n exactly in expectation (common practice, no source).
    // Tolerance 4 standard errors of the plateau SE (Flyvbjerg & Petersen 1989).
    const n = 100_000;
    const b = blockingAnalysis(ar1Series(n, 0, 5));
    const p = b.plateau!;
    expect(p.size).toBeLessThanOrEqual(4);
    expect(Math.abs(p.standardError - 1 / Math.sqrt(n))).toBeLessThan(4 * p.error);
  });
});

describe('blocking plateau rule', () => {
  it('cumulative two-sided χ² test of the lag-1 correlations (hand computation, Jonsson 2018)', () => {
    // Seven levels with n_b = 1024 … 16 blocks and chosen z_l = (r₁ + 1/n_b)√n_b =
    // −4, 1, 2.4, 2.4, 2.4, 0, 0. z² = 16, 1, 5.76, 5.76, 5.76, 0, 0; suffix sums M_j = 34.28,
    // 18.28, 17.28, 11.52, 5.76, 0, 0. Upper 1 % points of χ² (standard table, e.g. Abramowitz &
    // Stegun 1964, Table 26.8): 6 d.o.f. 16.81, 5 d.o.f. 15.09, 4 d.o.f. 13.28, 1 d.o.f. 6.63.
    // Level 0 fails on its own (|z| = 4, negative r₁: the test is two-sided); levels 1 and 2 pass
    // on their own but M_1 = 18.28 > 16.81 and M_2 = 17.28 > 15.09 (later levels jointly
    // correlated); level 3: M_3 = 11.52 < 13.28 and z² = 5.76 < 6.63 → plateau at level 3.
    const blocks = [1024, 512, 256, 128, 64, 32, 16];
    const z = [-4, 1, 2.4, 2.4, 2.4, 0, 0];
    const table = {
      sizes: blocks.map((_, l) => 2 ** l),
      blocks,
      standardErrors: blocks.map((_, l) => 0.01 * (l + 1)),
      errorsOfStandardErrors: blocks.map((nb, l) => (0.01 * (l + 1)) / Math.sqrt(2 * (nb - 1))),
      lagOneCorrelations: blocks.map((nb, l) => z[l]! / Math.sqrt(nb) - 1 / nb),
    };
    const p = blockingPlateau(table)!;
    expect(p.level).toBe(3);
    expect(p.size).toBe(8);
    expect(p.standardError).toBe(0.04);
    // With the later levels quiet (z = −4, 1, 0, 0, 0, 0, 0) level 1 passes both tests:
    // z² = 1 < 6.63 and M_1 = 1 < 16.81.
    const quiet = { ...table, lagOneCorrelations: blocks.map((nb, l) => (l === 0 ? z[0]! : l === 1 ? 1 : 0) / Math.sqrt(nb) - 1 / nb) };
    expect(blockingPlateau(quiet)!.level).toBe(1);
    // Levels with fewer than PLATEAU_MIN_BLOCKS = 16 blocks are not candidates: z = 3, 3 (z² = 9 >
    // 6.63 each) at 1024 and 512 blocks, then a level of 8 blocks → no plateau.
    expect(PLATEAU_MIN_BLOCKS).toBe(16);
    const short = {
      sizes: [1, 2, 4],
      blocks: [1024, 512, 8],
      standardErrors: [1, 1, 1],
      errorsOfStandardErrors: [1, 1, 1],
      lagOneCorrelations: [3 / Math.sqrt(1024) - 1 / 1024, 3 / Math.sqrt(512) - 1 / 512, 0],
    };
    expect(blockingPlateau(short)).toBeNull();
  });

  it('χ² upper 1 % points beyond the table: Wilson–Hilferty within 0.1 % of published values', () => {
    // χ²_{0.99} for 31, 35 and 45 degrees of freedom: 52.191, 57.342, 69.957 (standard χ² table,
    // from memory). Wilson & Hilferty (1931) is accurate to better than 0.1 % at these k.
    expect(Math.abs(chiSquaredUpperPoint(31) / 52.191 - 1)).toBeLessThan(1e-3);
    expect(Math.abs(chiSquaredUpperPoint(35) / 57.342 - 1)).toBeLessThan(1e-3);
    expect(Math.abs(chiSquaredUpperPoint(45) / 69.957 - 1)).toBeLessThan(1e-3);
    // Tabulated k: the table's 2-decimal entry for 1 d.o.f., 6.63 (6.6349 exactly, 2.5758²).
    expect(Math.abs(chiSquaredUpperPoint(1) - 2.5758 ** 2)).toBeLessThan(0.01);
  });
});
