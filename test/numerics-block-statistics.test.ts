/**
 * Standard error over independent blocks (src/numerics/block-statistics.ts) against a hand
 * computation and an independent implementation (simple-statistics).
 */
import { describe, expect, it } from 'vitest';
import { mean, sampleStandardDeviation } from 'simple-statistics';
import { blockStatistics } from '../src/numerics/block-statistics.js';
import { Random } from '../src/random.js';

describe('blockStatistics', () => {
  it('blockStatistics: standard error SD/√M against simple-statistics', () => {
    // Hand computation: 1..5 → mean 3, s = √(10/4) = 1.581139, SE = s/√5 = 0.707107 (Frenkel & Smit,
    // 2nd ed., §4.4.1); s also from simple-statistics sampleStandardDeviation. Tolerance 1e-6.
    const b = blockStatistics([1, 2, 3, 4, 5]);
    expect(b.mean).toBe(3);
    expect(Math.abs(b.sd - sampleStandardDeviation([1, 2, 3, 4, 5]))).toBeLessThan(1e-12);
    expect(Math.abs(b.standardError - 0.707107)).toBeLessThan(1e-6);
  });

  it('noisy values: mean and SD match simple-statistics, SE = SD/√M; fewer than 2 blocks refused', () => {
    // Reference: simple-statistics mean and sampleStandardDeviation (independent implementations
    // of the same formulas); tolerance 1e-12 relative, round-off only.
    const rng = new Random(11);
    const v = Array.from({ length: 37 }, () => 4 + 0.3 * rng.normal());
    const b = blockStatistics(v);
    expect(Math.abs(b.mean - mean(v)) / mean(v)).toBeLessThan(1e-12);
    const sd = sampleStandardDeviation(v);
    expect(Math.abs(b.sd - sd) / sd).toBeLessThan(1e-12);
    expect(Math.abs(b.standardError - sd / Math.sqrt(37)) / sd).toBeLessThan(1e-12);
    expect(b.count).toBe(37);
    expect(() => blockStatistics([1])).toThrow(RangeError);
  });
});
