/**
 * The reported standard error of a correlated mean (src/numerics/standard-error.ts): the rule
 * between the autocorrelation and block-averaging estimates, by hand computation.
 */
import { describe, expect, it } from 'vitest';
import { combineStandardErrors } from '../src/numerics/standard-error.js';

/** Two-sided 1 % point of the standard normal, Φ⁻¹(0.995) = 2.5758 (standard normal table). */
const Z = 2.5758;

describe('combineStandardErrors', () => {
  it('reported SE: autocorrelation when they agree, the larger when they do not (hand computation)', () => {
    // Agreement: |0.0105 − 0.0100| = 0.0005 ≤ 2.5758·√(0.0004² + 0.0005²) = 0.00165 → SE_acf.
    const acf = { standardError: 0.01, error: 0.0005 };
    const withPlateau = (se: number) => ({
      blocks: [64, 32, 16],
      standardErrors: [0.008, se, se],
      errorsOfStandardErrors: [0.0002, 0.0004, 0.0006],
      plateau: { level: 1, size: 2, standardError: se, error: 0.0004 },
    });
    expect(combineStandardErrors(acf, withPlateau(0.0105), Z)).toEqual({ standardError: 0.01, error: 0.0005, source: 'autocorrelation', agrees: true });
    // Blocking larger by 0.004 > 0.00165: the larger, i.e. the plateau's, with its own error.
    expect(combineStandardErrors(acf, withPlateau(0.014), Z)).toEqual({ standardError: 0.014, error: 0.0004, source: 'blocking plateau', agrees: false });
    // Blocking smaller by 0.004: the larger is the autocorrelation estimate.
    expect(combineStandardErrors(acf, withPlateau(0.006), Z)).toEqual({ standardError: 0.01, error: 0.0005, source: 'autocorrelation', agrees: false });
    // An autocorrelation estimate that is only a lower bound gives way to a larger plateau even
    // when they agree.
    expect(combineStandardErrors({ ...acf, lowerBound: true }, withPlateau(0.0105), Z).source).toBe('blocking plateau');
    // No plateau: the largest SE among levels with ≥ 16 blocks (0.015 at 16 blocks, not 0.03 at 8).
    const none = { blocks: [64, 32, 16, 8], standardErrors: [0.01, 0.012, 0.015, 0.03], errorsOfStandardErrors: [1e-4, 2e-4, 3e-4, 1e-3], plateau: null };
    expect(combineStandardErrors(acf, none, Z)).toEqual({ standardError: 0.015, error: 3e-4, source: 'largest blocks', agrees: false });
  });
});
