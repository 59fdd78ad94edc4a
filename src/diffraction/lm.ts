/**
 * A small Levenberg–Marquardt least-squares solver with box bounds and the parameter covariance.
 */

/** Options of levenbergMarquardt. */
export interface LmOptions {
  /** Lower bounds per parameter (default −∞). */
  lower?: ArrayLike<number>;
  /** Upper bounds per parameter (default +∞). */
  upper?: ArrayLike<number>;
  /** Weights per data point, 1/σ² (default 1). */
  weights?: ArrayLike<number>;
  /** Maximum iterations (default 200). */
  maxIterations?: number;
  /** Stop when the relative decrease of χ² falls below this (default 1e-10). */
  tolerance?: number;
  /** Also stop when the absolute decrease of χ² falls below this (default 0: off); with true 1/σ² weights, 10⁻³ is far below what moves a parameter by a tenth of its uncertainty. */
  chi2Tolerance?: number;
  /** Relative step of the forward-difference Jacobian (default 1e-6). */
  jacobianStep?: number;
  /** Scale the covariance by the reduced χ² (true when the weights are not true 1/σ²; default true). */
  scaleCovariance?: boolean;
  /**
   * Writes the Jacobian ∂f(p)ᵢ/∂pⱼ at p into `out` (row-major, points × parameters), given the
   * model values `f` at p; default: forward differences of the whole model.
   */
  jacobian?: (p: Float64Array, f: Float64Array, out: Float64Array) => void;
}

/** Result of levenbergMarquardt. */
export interface LmResult {
  /** Best-fit parameters. */
  params: Float64Array;
  /** Covariance matrix, row-major n×n (scaled by the reduced χ² when asked). */
  covariance: Float64Array;
  /** Standard uncertainties √diag(covariance). */
  sigmas: Float64Array;
  /** Weighted sum of squared residuals. */
  chi2: number;
  /** χ² / (points − free parameters). */
  reducedChi2: number;
  /** Iterations used. */
  iterations: number;
  /** True when the tolerance was reached before maxIterations. */
  converged: boolean;
}

/** Solves A x = b for a symmetric positive (semi)definite A by Gaussian elimination with pivoting; null if singular. */
export function solveLinear(a: Float64Array, b: Float64Array, n: number): Float64Array | null {
  const m = Float64Array.from(a);
  const x = Float64Array.from(b);
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(m[r * n + c]) > Math.abs(m[p * n + c])) p = r;
    if (Math.abs(m[p * n + c]) < 1e-300) return null;
    if (p !== c) {
      for (let k = 0; k < n; k++) [m[c * n + k], m[p * n + k]] = [m[p * n + k], m[c * n + k]];
      [x[c], x[p]] = [x[p], x[c]];
    }
    for (let r = c + 1; r < n; r++) {
      const f = m[r * n + c] / m[c * n + c];
      if (f === 0) continue;
      for (let k = c; k < n; k++) m[r * n + k] -= f * m[c * n + k];
      x[r] -= f * x[c];
    }
  }
  for (let r = n - 1; r >= 0; r--) {
    let s = x[r];
    for (let k = r + 1; k < n; k++) s -= m[r * n + k] * x[k];
    x[r] = s / m[r * n + r];
  }
  return x;
}

/** Inverse of an n×n matrix (row-major) by solving for each unit vector; null if singular. */
export function invert(a: Float64Array, n: number): Float64Array | null {
  const inv = new Float64Array(n * n);
  for (let c = 0; c < n; c++) {
    const e = new Float64Array(n);
    e[c] = 1;
    const col = solveLinear(a, e, n);
    if (!col) return null;
    for (let r = 0; r < n; r++) inv[r * n + c] = col[r];
  }
  return inv;
}

/**
 * Minimises Σ wᵢ (yᵢ − f(p)ᵢ)² by the Levenberg–Marquardt method (damped Gauss–Newton with
 * Marquardt's diagonal scaling), projecting each step onto the box bounds.
 *
 * @param model writes the model values for parameters `p` into `out` (length of `y`)
 * @param y observed values
 * @param p0 starting parameters
 * @param options bounds, weights, stopping rules
 * @returns best parameters, covariance (JᵀWJ)⁻¹ (× reduced χ² unless told otherwise), χ²
 *
 * Notes: the Jacobian is by forward differences; parameters pinned at a bound keep their
 * covariance from the unconstrained curvature, which understates nothing but may overstate.
 * Reference: Marquardt, J. Soc. Ind. Appl. Math. 11, 431 (1963); Levenberg, Q. Appl. Math. 2, 164 (1944).
 */
export function levenbergMarquardt(
  model: (p: Float64Array, out: Float64Array) => void,
  y: ArrayLike<number>,
  p0: ArrayLike<number>,
  options: LmOptions = {},
): LmResult {
  const n = p0.length;
  const m = y.length;
  if (n < 1) throw new RangeError('levenbergMarquardt: no parameters');
  if (m < n) throw new RangeError(`levenbergMarquardt: ${m} points cannot fix ${n} parameters`);
  const lower = options.lower ?? new Array(n).fill(-Infinity);
  const upper = options.upper ?? new Array(n).fill(Infinity);
  const w = options.weights ?? new Array(m).fill(1);
  if (w.length !== m) throw new RangeError(`weights length ${w.length} differs from data length ${m}`);
  const maxIt = options.maxIterations ?? 200;
  const tol = options.tolerance ?? 1e-10;
  const hRel = options.jacobianStep ?? 1e-6;
  const clamp = (p: Float64Array) => {
    for (let i = 0; i < n; i++) p[i] = Math.min(upper[i], Math.max(lower[i], p[i]));
  };
  let p = Float64Array.from(p0);
  clamp(p);
  const f = new Float64Array(m);
  const f2 = new Float64Array(m);
  const jac = new Float64Array(m * n);
  const chi2Of = (vals: Float64Array) => {
    let s = 0;
    for (let i = 0; i < m; i++) {
      const r = y[i] - vals[i];
      s += w[i] * r * r;
    }
    return s;
  };
  const jacobian = (pp: Float64Array, base: Float64Array) => {
    if (options.jacobian) {
      options.jacobian(pp, base, jac);
      return;
    }
    for (let j = 0; j < n; j++) {
      const old = pp[j];
      let h = hRel * Math.max(Math.abs(old), 1e-2);
      if (old + h > upper[j]) h = -h;
      pp[j] = old + h;
      model(pp, f2);
      pp[j] = old;
      for (let i = 0; i < m; i++) jac[i * n + j] = (f2[i] - base[i]) / h;
    }
  };
  const normal = () => {
    const a = new Float64Array(n * n);
    const g = new Float64Array(n);
    // only the non-zero entries of each row (a sum of local profiles has a sparse Jacobian)
    const nz = new Int32Array(n);
    for (let i = 0; i < m; i++) {
      const r = y[i] - f[i];
      let cnt = 0;
      const row = i * n;
      for (let j = 0; j < n; j++) if (jac[row + j] !== 0) nz[cnt++] = j;
      for (let u = 0; u < cnt; u++) {
        const j = nz[u];
        const jw = jac[row + j] * w[i];
        g[j] += jw * r;
        for (let v = u; v < cnt; v++) {
          const k = nz[v];
          a[j * n + k] += jw * jac[row + k];
        }
      }
    }
    for (let j = 0; j < n; j++) for (let k = 0; k < j; k++) a[j * n + k] = a[k * n + j];
    return { a, g };
  };
  model(p, f);
  let chi2 = chi2Of(f);
  let lambda = 1e-3;
  let it = 0;
  let converged = false;
  for (; it < maxIt; it++) {
    jacobian(p, f);
    const { a, g } = normal();
    let improved = false;
    for (let tries = 0; tries < 30; tries++) {
      const aa = Float64Array.from(a);
      for (let j = 0; j < n; j++) aa[j * n + j] += lambda * (a[j * n + j] || 1e-12);
      const step = solveLinear(aa, g, n);
      if (!step) {
        lambda *= 10;
        continue;
      }
      const trial = new Float64Array(n);
      for (let j = 0; j < n; j++) trial[j] = p[j] + step[j];
      clamp(trial);
      model(trial, f2);
      const c2 = chi2Of(f2);
      if (Number.isFinite(c2) && c2 <= chi2) {
        const rel = (chi2 - c2) / Math.max(chi2, 1e-300);
        const drop = chi2 - c2;
        p = trial;
        f.set(f2);
        chi2 = c2;
        lambda = Math.max(lambda / 10, 1e-12);
        improved = true;
        if (rel < tol || drop < (options.chi2Tolerance ?? 0)) converged = true;
        break;
      }
      lambda *= 10;
    }
    if (!improved) {
      converged = true;
      break;
    }
    if (converged) break;
  }
  jacobian(p, f);
  const { a } = normal();
  const dof = Math.max(1, m - n);
  const reducedChi2 = chi2 / dof;
  let cov = invert(a, n);
  if (!cov) {
    // a parameter without curvature (e.g. the position of a profile whose area went to zero): a
    // tiny ridge gives it an infinite-like variance and leaves the others their own
    const ridged = Float64Array.from(a);
    let top = 0;
    for (let j = 0; j < n; j++) top = Math.max(top, Math.abs(a[j * n + j]));
    for (let j = 0; j < n; j++) ridged[j * n + j] += 1e-12 * (a[j * n + j] || top || 1) + 1e-300;
    cov = invert(ridged, n);
  }
  if (!cov) cov = new Float64Array(n * n).fill(NaN);
  if (options.scaleCovariance ?? true) for (let i = 0; i < n * n; i++) cov[i] *= reducedChi2;
  const sigmas = new Float64Array(n);
  for (let j = 0; j < n; j++) sigmas[j] = Math.sqrt(Math.max(0, cov[j * n + j]));
  return { params: p, covariance: cov, sigmas, chi2, reducedChi2, iterations: it + 1, converged };
}
