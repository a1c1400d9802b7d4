/**
 * Levenberg–Marquardt (src/numerics/levenberg-marquardt.ts) against a function with a known
 * minimum and a certified nonlinear least-squares problem.
 */
import { describe, expect, it } from 'vitest';
import { levenbergMarquardt } from '../src/numerics/levenberg-marquardt.js';

const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('levenbergMarquardt', () => {
  it('minimises the Rosenbrock function to its known minimum (1, 1)', () => {
    // Rosenbrock, Comput. J. 3, 175 (1960): f = 100(y − x²)² + (1 − x)², minimum 0 at (1, 1),
    // written as residuals r = [10(y − x²), 1 − x]; start at the classic (−1.2, 1).
    const res = levenbergMarquardt((p, out) => { out[0] = 10 * (p[1] - p[0] * p[0]); out[1] = 1 - p[0]; }, 2, [-1.2, 1]);
    expect(res.converged).toBe(true);
    // Tolerance: the minimum is exact; stop criteria (xtol 1e-10) allow ~1e-8.
    expect(Math.abs(res.params[0] - 1)).toBeLessThan(1e-6);
    expect(Math.abs(res.params[1] - 1)).toBeLessThan(1e-6);
  });

  it('Misra1a: reaches the certified parameters and residual sum of squares', () => {
    // NIST Statistical Reference Datasets, nonlinear regression, "Misra1a" (Misra 1978): the 14
    // (x, y) points below and the model y = b1(1 − e^{−b2 x}); certified b1 = 2.3894212918E+02,
    // b2 = 5.5015643181E-04, residual sum of squares 1.2455138894E-01 (the certified file's
    // values; data and values checked against a copy of the file). Start 2 of the file,
    // (250, 5e-4). Tolerance 1e-6 relative on the parameters (the optimiser stops on a relative
    // cost change of 1e-14, so the parameters are good to about 1e-7), 1e-9 on the sum of
    // squares (flat at the minimum). Both with central-difference and with analytic Jacobians.
    const x = [77.6, 114.9, 141.1, 190.8, 239.9, 289.0, 332.8, 378.4, 434.8, 477.3, 536.8, 593.1, 689.1, 760.0];
    const y = [10.07, 14.73, 17.94, 23.93, 29.61, 35.18, 40.02, 44.82, 50.76, 55.05, 61.01, 66.4, 75.47, 81.78];
    const residual = (p: Float64Array, out: Float64Array) => {
      for (let i = 0; i < x.length; i++) out[i] = y[i] - p[0] * -Math.expm1(-p[1] * x[i]);
    };
    const jacobian = (p: Float64Array, J: Float64Array) => {
      for (let i = 0; i < x.length; i++) {
        J[2 * i] = Math.expm1(-p[1] * x[i]);
        J[2 * i + 1] = -p[0] * x[i] * Math.exp(-p[1] * x[i]);
      }
    };
    for (const opts of [{}, { jacobian }]) {
      const res = levenbergMarquardt(residual, x.length, [250, 5e-4], opts);
      expect(res.converged).toBe(true);
      expect(rel(res.params[0], 2.3894212918e2)).toBeLessThan(1e-6);
      expect(rel(res.params[1], 5.5015643181e-4)).toBeLessThan(1e-6);
      // cost is ½ Σ r².
      expect(rel(2 * res.cost, 1.2455138894e-1)).toBeLessThan(1e-9);
    }
  });

  it('residuals that are not finite at the start are reported, not iterated', () => {
    // Truth: ½ Σ r² of a NaN residual is NaN; no step can lower it.
    const res = levenbergMarquardt((p, out) => { out[0] = Math.sqrt(p[0]); }, 1, [-1]);
    expect(res.converged).toBe(false);
    expect(res.message).toMatch(/not finite/);
  });
});
