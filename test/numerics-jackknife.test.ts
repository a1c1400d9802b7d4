/**
 * Jackknife standard error (src/numerics/jackknife.ts) against the classical identity for the
 * mean and a reference statistics library (simple-statistics).
 */
import { describe, expect, it } from 'vitest';
import { sampleStandardDeviation } from 'simple-statistics';
import { jackknifeStandardError } from '../src/numerics/jackknife.js';
import { Random } from '../src/random.js';

describe('jackknifeStandardError', () => {
  it('for the mean it equals the ordinary standard error s/√n', () => {
    // Truth: the leave-one-out means are θ_i = (n x̄ − x_i)/(n − 1), so θ_i − θ̄ = (x̄ − x_i)/(n − 1)
    // and (n − 1)/n Σ(θ_i − θ̄)² = Σ(x_i − x̄)²/(n(n − 1)) = s²/n exactly (Efron & Stein, Ann. Stat.
    // 9, 586 (1981)); s from simple-statistics sampleStandardDeviation. Tolerance 1e-12 relative:
    // round-off.
    const rng = new Random(21);
    const x = Array.from({ length: 40 }, () => 1.5 + 0.7 * rng.normal());
    const n = x.length;
    const total = x.reduce((a, v) => a + v, 0);
    const theta = x.map((v) => (total - v) / (n - 1));
    const se = sampleStandardDeviation(x) / Math.sqrt(n);
    expect(Math.abs(jackknifeStandardError(theta) - se) / se).toBeLessThan(1e-12);
    expect(jackknifeStandardError([3])).toBeNaN();
  });
});
