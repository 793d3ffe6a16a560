/**
 * Weighted least squares: linear (normal equations, Cholesky), robust iteratively reweighted
 * with an intrinsic-scatter floor, and a small Levenberg-Marquardt for the nonlinear fits.
 * Design matrices are row-major Float64Arrays (n rows x p columns).
 */

/** Cholesky solve of the symmetric positive-definite p x p system M x = b; returns inv(M) too. */
import { median } from '../image/stats.ts';
export function choleskyInverse(M: Float64Array, p: number): Float64Array | null {
  // Scale to unit diagonal for conditioning.
  const d = new Float64Array(p);
  for (let i = 0; i < p; i++) {
    const v = M[i * p + i];
    if (!(v > 0) || !Number.isFinite(v)) return null;
    d[i] = 1 / Math.sqrt(v);
  }
  const L = new Float64Array(p * p);
  for (let i = 0; i < p; i++) {
    for (let j = 0; j <= i; j++) {
      let s = M[i * p + j] * d[i] * d[j];
      for (let k = 0; k < j; k++) s -= L[i * p + k] * L[j * p + k];
      if (i === j) {
        if (!(s > 1e-13)) return null;
        L[i * p + i] = Math.sqrt(s);
      } else {
        L[i * p + j] = s / L[j * p + j];
      }
    }
  }
  // inv(L), then inv(M_scaled) = inv(L)^T inv(L).
  const Li = new Float64Array(p * p);
  for (let i = 0; i < p; i++) {
    Li[i * p + i] = 1 / L[i * p + i];
    for (let j = 0; j < i; j++) {
      let s = 0;
      for (let k = j; k < i; k++) s += L[i * p + k] * Li[k * p + j];
      Li[i * p + j] = -s / L[i * p + i];
    }
  }
  const inv = new Float64Array(p * p);
  for (let i = 0; i < p; i++) {
    for (let j = 0; j <= i; j++) {
      let s = 0;
      for (let k = i; k < p; k++) s += Li[k * p + i] * Li[k * p + j];
      inv[i * p + j] = inv[j * p + i] = s * d[i] * d[j];
    }
  }
  return inv;
}

export interface LinearFit {
  readonly coef: Float64Array;
  /** Covariance of coef, scaled by max(1, reduced chi^2). */
  readonly cov: Float64Array;
  readonly p: number;
  readonly n: number;
  readonly chi2: number;
  readonly chi2Red: number;
  /** Extra per-row scatter added in quadrature to the given sigmas ('floor' mode). */
  readonly scatter: number;
  /** Final robust weights per row (0 = rejected). */
  readonly robust: Float64Array;
}

/** One weighted solve. w are inverse variances. */
export function weightedSolve(A: Float64Array, y: Float64Array, w: Float64Array, p: number): { coef: Float64Array; covUnit: Float64Array } | null {
  const n = y.length;
  const M = new Float64Array(p * p);
  const b = new Float64Array(p);
  for (let r = 0; r < n; r++) {
    const wr = w[r];
    if (!(wr > 0)) continue;
    const o = r * p;
    for (let i = 0; i < p; i++) {
      const ai = A[o + i] * wr;
      b[i] += ai * y[r];
      for (let j = 0; j <= i; j++) M[i * p + j] += ai * A[o + j];
    }
  }
  for (let i = 0; i < p; i++) for (let j = 0; j < i; j++) M[j * p + i] = M[i * p + j];
  const inv = choleskyInverse(M, p);
  if (!inv) return null;
  const coef = new Float64Array(p);
  for (let i = 0; i < p; i++) {
    let s = 0;
    for (let j = 0; j < p; j++) s += inv[i * p + j] * b[j];
    coef[i] = s;
  }
  return { coef, covUnit: inv };
}

/** Median of chi^2 with one degree of freedom. */
const CHI2_1_MEDIAN = 0.454936;

export interface RobustOptions {
  /** 'floor': add an intrinsic scatter in quadrature until the robust chi^2 is 1; 'scale': multiply. */
  mode?: 'floor' | 'scale';
  /** Huber threshold in normalised residuals. */
  huber?: number;
  /** Rows with |normalised residual| above this are dropped. */
  reject?: number;
  iterations?: number;
}

/**
 * Robust weighted linear fit: iteratively reweighted least squares with Huber weights
 * (Huber 1964) and an intrinsic scatter set from the median of the squared normalised residuals.
 */
export function robustLinearFit(A: Float64Array, y: Float64Array, sigma: Float64Array, p: number, opts: RobustOptions = {}): LinearFit | null {
  const n = y.length;
  const mode = opts.mode ?? 'floor';
  const huber = opts.huber ?? 2.5;
  const reject = opts.reject ?? 6;
  const iters = opts.iterations ?? 6;
  if (n < p + 1) return null;
  const robust = new Float64Array(n).fill(1);
  const w = new Float64Array(n);
  const res = new Float64Array(n);
  const zbuf = new Float64Array(n);
  let scatter = 0;
  let scale = 1;
  let sol: ReturnType<typeof weightedSolve> = null;
  const varOf = (r: number) => (mode === 'floor' ? sigma[r] * sigma[r] + scatter * scatter : sigma[r] * sigma[r] * scale * scale);
  for (let it = 0; it < iters; it++) {
    for (let r = 0; r < n; r++) w[r] = robust[r] / varOf(r);
    sol = weightedSolve(A, y, w, p);
    if (!sol) return null;
    for (let r = 0; r < n; r++) {
      let f = 0;
      const o = r * p;
      for (let i = 0; i < p; i++) f += A[o + i] * sol.coef[i];
      res[r] = y[r] - f;
    }
    // Scatter / scale so that the median normalised chi^2 matches chi^2_1.
    // (into one scratch array, median in place: called ~30 times per iteration by the bisection)
    const z2 = (extra: number, sc: number) => {
      for (let r = 0; r < n; r++) {
        const v = mode === 'floor' ? sigma[r] * sigma[r] + extra * extra : sigma[r] * sigma[r] * sc * sc;
        zbuf[r] = (res[r] * res[r]) / v;
      }
      return median(zbuf, n);
    };
    if (mode === 'floor') {
      if (z2(0, 1) <= CHI2_1_MEDIAN) scatter = 0;
      else {
        let lo = 0;
        let hi = Math.sqrt(medianOf(res.map((v) => v * v)) / CHI2_1_MEDIAN) + 1e-12;
        for (let k = 0; k < 30; k++) {
          const mid = 0.5 * (lo + hi);
          if (z2(mid, 1) > CHI2_1_MEDIAN) lo = mid;
          else hi = mid;
        }
        scatter = hi;
      }
    } else {
      scale = Math.max(1e-12, Math.sqrt(z2(0, 1) / CHI2_1_MEDIAN));
    }
    let changed = 0;
    for (let r = 0; r < n; r++) {
      const z = Math.abs(res[r]) / Math.sqrt(varOf(r));
      const nw = z > reject ? 0 : z > huber ? huber / z : 1;
      if (Math.abs(nw - robust[r]) > 1e-3) changed++;
      robust[r] = nw;
    }
    if (changed === 0 && it > 0) break;
  }
  if (!sol) return null;
  for (let r = 0; r < n; r++) w[r] = robust[r] / varOf(r);
  sol = weightedSolve(A, y, w, p);
  if (!sol) return null;
  let chi2 = 0;
  let neff = 0;
  for (let r = 0; r < n; r++) {
    let f = 0;
    const o = r * p;
    for (let i = 0; i < p; i++) f += A[o + i] * sol.coef[i];
    chi2 += w[r] * (y[r] - f) ** 2;
    if (robust[r] > 0) neff++;
  }
  const dof = Math.max(1, neff - p);
  const chi2Red = chi2 / dof;
  const cov = sol.covUnit.map((v) => v * Math.max(1, chi2Red));
  return { coef: sol.coef, cov, p, n, chi2, chi2Red, scatter: mode === 'floor' ? scatter : scale, robust };
}

/** Median (the mean of the two middle values for an even count); does not modify the input. */
export function medianOf(a: Float64Array): number {
  return median(Float64Array.from(a), a.length);
}

export interface LmProblem {
  /** Number of data rows. */
  readonly n: number;
  readonly y: Float64Array;
  /** Inverse-variance weights per row. */
  readonly w: Float64Array;
  /** Model value at row i; also fills the Jacobian row (length p) when jac is given. */
  model(params: Float64Array, i: number, jac: Float64Array | null): number;
  /**
   * Optional batched form: chi^2 and, when M and g are given, the normal matrix J^T W J (lower
   * triangle is enough) and gradient J^T W r accumulated into them (zeroed by the caller).
   */
  batch?(params: Float64Array, M: Float64Array | null, g: Float64Array | null): number;
}

export interface LmResult {
  readonly params: Float64Array;
  readonly chi2: number;
  /** inv(J^T W J) at the solution (unscaled). */
  readonly covUnit: Float64Array | null;
  readonly iterations: number;
}

/** Levenberg-Marquardt (Marquardt 1963) with multiplicative damping of the diagonal. */
export function levenbergMarquardt(problem: LmProblem, start: ArrayLike<number>, maxIter = 100): LmResult {
  const p = start.length;
  let params = Float64Array.from(start);
  const jac = new Float64Array(p);
  const evaluate = (pr: Float64Array, wantJ: boolean) => {
    const M = new Float64Array(p * p);
    const g = new Float64Array(p);
    if (problem.batch) {
      const chi2 = problem.batch(pr, wantJ ? M : null, wantJ ? g : null);
      if (wantJ) for (let a = 0; a < p; a++) for (let b = 0; b < a; b++) M[b * p + a] = M[a * p + b];
      return { chi2, M, g };
    }
    let chi2 = 0;
    for (let i = 0; i < problem.n; i++) {
      const wi = problem.w[i];
      if (!(wi > 0)) continue;
      const f = problem.model(pr, i, wantJ ? jac : null);
      const r = problem.y[i] - f;
      chi2 += wi * r * r;
      if (wantJ) {
        for (let a = 0; a < p; a++) {
          const ja = jac[a] * wi;
          g[a] += ja * r;
          for (let b = 0; b <= a; b++) M[a * p + b] += ja * jac[b];
        }
      }
    }
    if (wantJ) for (let a = 0; a < p; a++) for (let b = 0; b < a; b++) M[b * p + a] = M[a * p + b];
    return { chi2, M, g };
  };
  let cur = evaluate(params, true);
  let lambda = 1e-3;
  let it = 0;
  let done = false;
  for (; it < maxIter && !done; it++) {
    let improved = false;
    for (let tries = 0; tries < 10; tries++) {
      const Md = Float64Array.from(cur.M);
      for (let a = 0; a < p; a++) Md[a * p + a] = cur.M[a * p + a] * (1 + lambda) + 1e-12;
      const inv = choleskyInverse(Md, p);
      if (!inv) {
        lambda *= 10;
        continue;
      }
      const step = new Float64Array(p);
      for (let a = 0; a < p; a++) {
        let s = 0;
        for (let b = 0; b < p; b++) s += inv[a * p + b] * cur.g[b];
        step[a] = s;
      }
      const trial = params.map((v, k) => v + step[k]);
      // chi2 alone for the trial; the normal equations only once it is accepted (taking them
      // with every trial was measured no faster on 24 MP and 10 % slower on the demo frame)
      const next = evaluate(trial, false);
      if (next.chi2 < cur.chi2) {
        const rel = (cur.chi2 - next.chi2) / Math.max(1e-300, cur.chi2);
        params = trial;
        cur = evaluate(params, true);
        lambda = Math.max(1e-9, lambda / 10);
        improved = true;
        if (rel < 1e-7) done = true;
        break;
      }
      lambda *= 10;
    }
    if (!improved) break;
  }
  return { params, chi2: cur.chi2, covUnit: choleskyInverse(cur.M, p), iterations: it };
}
