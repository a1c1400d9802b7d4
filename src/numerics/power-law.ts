/**
 * Power law y = A·t^b fitted as a straight line ln y = ln A + b ln t.
 *
 * Formula: unweighted least squares of ln y on ln t over the points with t > 0 and y > 0
 * (Press et al., Numerical Recipes, 3rd ed. (2007), §15.2); Zhang, Otani & Maginn,
 * J. Chem. Theory Comput. 11, 3537 (2015) fit the spread σ(t) of running integrals this way.
 *
 * Cost: O(n) time and memory (the logarithms are kept for the line fit).
 */
import { AnalysisError } from '../errors.js';
import { fitLine } from './line-fit.js';

/**
 * Power law σ(t) = A t^b by a straight-line least-squares fit of ln σ on ln t over the points
 * with t > 0 and σ > 0 (Zhang, Otani & Maginn 2015 fit σ(t) this way; line fit: Numerical
 * Recipes §15.2).
 */
export function fitPowerLaw(t: ArrayLike<number>, s: ArrayLike<number>): { A: number; b: number } {
  const x: number[] = [];
  const y: number[] = [];
  for (let i = 0; i < t.length; i++) {
    if (t[i] > 0 && s[i] > 0) {
      x.push(Math.log(t[i]));
      y.push(Math.log(s[i]));
    }
  }
  if (x.length < 3) throw new AnalysisError('too few positive points to fit σ(t) = A t^b');
  const f = fitLine(x, y);
  return { A: Math.exp(f.intercept), b: f.slope };
}
