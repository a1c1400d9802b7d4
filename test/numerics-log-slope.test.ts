/**
 * Local log-log slope (src/numerics/log-slope.ts) against exact power laws.
 */
import { describe, expect, it } from 'vitest';
import { logLogSlopes } from '../src/numerics/log-slope.js';

describe('logLogSlopes', () => {
  it('logLogSlopes of a power law t^1.5 is 1.5 everywhere', () => {
    // Truth: ln(t^p) is linear in ln t with slope p, so any two-point log difference is exact.
    // Tolerance 1e-12: round-off of logarithms.
    const t = Float64Array.from({ length: 200 }, (_, i) => i * 0.01);
    const y = t.map((v) => v ** 1.5);
    const b = logLogSlopes(t, y);
    expect(Number.isNaN(b[0])).toBe(true);
    for (const i of [1, 2, 50, 199]) expect(Math.abs(b[i] - 1.5)).toBeLessThan(1e-12);
  });

  it('between the lags i/1.25 and 1.25·i: a curve turning from t² to 2t − 1, NaN where y is not positive', () => {
    // Truth: y = t² for t ≤ 1 and 2t − 1 after (t = i·0.01). At i = 40 both stencil lags (32, 50)
    // lie on t², whose two-point log slope is exactly 2; at i = 2000 the stencil lags are
    // ⌊2000/1.25⌋ = 1600 and ⌈2000·1.25⌉ = 2500, so β = ln(49/31)/ln(25/16) (algebra).
    // Tolerance 1e-12: round-off of logarithms. A zero value makes the slope undefined (NaN).
    const t = Float64Array.from({ length: 5001 }, (_, i) => i * 0.01);
    const y = t.map((v) => (v <= 1 ? v * v : 2 * v - 1));
    const b = logLogSlopes(t, y);
    expect(Math.abs(b[40] - 2)).toBeLessThan(1e-12);
    expect(Math.abs(b[2000] - Math.log(49 / 31) / Math.log(25 / 16))).toBeLessThan(1e-12);
    const z = Float64Array.from(y);
    z[8] = 0;
    expect(logLogSlopes(t, z)[10]).toBeNaN();
  });
});
