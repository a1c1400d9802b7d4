/**
 * Levenberg–Marquardt minimisation of a sum of squared residuals ½ Σ r_i(p)², for the small,
 * dense problems of the fits (a handful of parameters, up to a few thousand residuals).
 *
 * Formula: each step solves (JᵀJ + λ diag(JᵀJ)) δ = −Jᵀr (J = ∂r/∂p, analytic or by central
 * differences); a step that lowers the cost is accepted and λ divided by 10, otherwise λ is
 * multiplied by 10 (Levenberg, Q. Appl. Math. 2, 164 (1944); Marquardt, J. SIAM 11, 431 (1963);
 * Press et al., Numerical Recipes, 3rd ed. (2007), §15.5.2). The normal equations are solved by
 * Gaussian elimination with partial pivoting.
 *
 * Cost per iteration: O(m n²) for JᵀJ, plus O(n³) per trial step, plus m·n residual evaluations
 * (2n residual calls with central differences), for m residuals and n parameters.
 */

/** Options of `levenbergMarquardt`. */
export interface LmOptions {
  maxIterations?: number;
  /** Stop when every step component satisfies |δ_i| ≤ xtol (|p_i| + xtol). */
  xtol?: number;
  /** Stop when an accepted step lowers the cost by less than ftol relative. */
  ftol?: number;
  /** Initial damping λ. */
  lambda?: number;
}

/** Outcome of `levenbergMarquardt`. */
export interface LmResult {
  params: Float64Array;
  /** ½ Σ r_i² at the solution. */
  cost: number;
  iterations: number;
  converged: boolean;
  message: string;
}

/** Solve the small dense system M x = v (Gaussian elimination with partial pivoting); null if singular. */
function solveSmall(M: Float64Array, v: Float64Array, n: number): Float64Array | null {
  const a = Float64Array.from(M);
  const b = Float64Array.from(v);
  for (let col = 0; col < n; col++) {
    let piv = col;
    for (let r = col + 1; r < n; r++) if (Math.abs(a[r * n + col]) > Math.abs(a[piv * n + col])) piv = r;
    if (!(Math.abs(a[piv * n + col]) > 0)) return null;
    if (piv !== col) {
      for (let c = 0; c < n; c++) [a[col * n + c], a[piv * n + c]] = [a[piv * n + c], a[col * n + c]];
      [b[col], b[piv]] = [b[piv], b[col]];
    }
    for (let r = col + 1; r < n; r++) {
      const f = a[r * n + col] / a[col * n + col];
      if (f === 0) continue;
      for (let c = col; c < n; c++) a[r * n + c] -= f * a[col * n + c];
      b[r] -= f * b[col];
    }
  }
  const x = new Float64Array(n);
  for (let r = n - 1; r >= 0; r--) {
    let s = b[r];
    for (let c = r + 1; c < n; c++) s -= a[r * n + c] * x[c];
    x[r] = s / a[r * n + r];
  }
  return x;
}

/**
 * Levenberg–Marquardt minimisation of ½ Σ r_i(p)² (Levenberg, Q. Appl. Math. 2, 164 (1944);
 * Marquardt, J. SIAM 11, 431 (1963); Numerical Recipes §15.5.2): each step solves
 * (JᵀJ + λ diag(JᵀJ)) δ = −Jᵀr, with J by central differences; a step that lowers the cost is
 * accepted and λ divided by 10, otherwise λ is multiplied by 10. `residual(p, out)` fills the m
 * residuals; `opts.jacobian(p, J)`, when given, fills ∂r_i/∂p_j row-major (else central differences).
 */
export function levenbergMarquardt(
  residual: (p: Float64Array, out: Float64Array) => void,
  m: number,
  p0: ArrayLike<number>,
  opts: LmOptions & { jacobian?: (p: Float64Array, J: Float64Array) => void } = {},
): LmResult {
  const n = p0.length;
  const maxIt = opts.maxIterations ?? 200;
  const xtol = opts.xtol ?? 1e-10;
  const ftol = opts.ftol ?? 1e-14;
  let lambda = opts.lambda ?? 1e-3;
  let p = Float64Array.from(p0);
  const r = new Float64Array(m);
  const rTry = new Float64Array(m);
  const rp = new Float64Array(m);
  const rm = new Float64Array(m);
  const J = new Float64Array(m * n);
  const cost = (v: Float64Array) => {
    let s = 0;
    for (let i = 0; i < m; i++) s += v[i] * v[i];
    return 0.5 * s;
  };
  residual(p, r);
  let c = cost(r);
  if (!Number.isFinite(c)) return { params: p, cost: c, iterations: 0, converged: false, message: 'residuals not finite at the start' };
  for (let it = 1; it <= maxIt; it++) {
    // Jacobian: analytic when given (row-major m×n), else central differences.
    if (opts.jacobian) opts.jacobian(p, J);
    else for (let j = 0; j < n; j++) {
      const h = 1e-6 * Math.max(Math.abs(p[j]), 1e-3);
      const pj = p[j];
      p[j] = pj + h;
      residual(p, rp);
      p[j] = pj - h;
      residual(p, rm);
      p[j] = pj;
      for (let i = 0; i < m; i++) J[i * n + j] = (rp[i] - rm[i]) / (2 * h);
    }
    const A = new Float64Array(n * n);
    const g = new Float64Array(n);
    for (let i = 0; i < m; i++) {
      for (let a = 0; a < n; a++) {
        const ja = J[i * n + a];
        g[a] += ja * r[i];
        for (let b = a; b < n; b++) A[a * n + b] += ja * J[i * n + b];
      }
    }
    for (let a = 0; a < n; a++) for (let b = 0; b < a; b++) A[a * n + b] = A[b * n + a];
    let gmax = 0;
    for (let a = 0; a < n; a++) gmax = Math.max(gmax, Math.abs(g[a]));
    if (gmax === 0) return { params: p, cost: c, iterations: it, converged: true, message: 'zero gradient' };
    let diagMax = 0;
    for (let a = 0; a < n; a++) diagMax = Math.max(diagMax, A[a * n + a]);
    let accepted = false;
    while (!accepted) {
      const M = Float64Array.from(A);
      for (let a = 0; a < n; a++) M[a * n + a] += lambda * Math.max(A[a * n + a], 1e-12 * diagMax);
      const neg = g.map((x) => -x);
      const delta = solveSmall(M, neg, n);
      if (delta === null) {
        lambda *= 10;
        if (lambda > 1e16) return { params: p, cost: c, iterations: it, converged: false, message: 'normal equations singular' };
        continue;
      }
      const pTry = new Float64Array(n);
      for (let a = 0; a < n; a++) pTry[a] = p[a] + delta[a];
      residual(pTry, rTry);
      const cTry = cost(rTry);
      if (Number.isFinite(cTry) && cTry < c) {
        accepted = true;
        const small = delta.every((d, a) => Math.abs(d) <= xtol * (Math.abs(p[a]) + xtol));
        const relDrop = (c - cTry) / Math.max(c, Number.MIN_VALUE);
        p = pTry;
        r.set(rTry);
        c = cTry;
        lambda = Math.max(lambda / 10, 1e-15);
        if (small || relDrop < ftol) return { params: p, cost: c, iterations: it, converged: true, message: small ? 'step below xtol' : 'cost change below ftol' };
      } else {
        lambda *= 10;
        if (lambda > 1e16) {
          // No downhill step at any damping: a minimum to machine precision.
          return { params: p, cost: c, iterations: it, converged: true, message: 'no further decrease possible' };
        }
      }
    }
  }
  return { params: p, cost: c, iterations: maxIt, converged: false, message: `no convergence in ${maxIt} iterations` };
}
