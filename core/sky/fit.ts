/**
 * Least-squares refinement of the lens model against matched stars (Levenberg-Marquardt, Marquardt
 * 1963, SIAM J. Appl. Math. 11, 431), and the matching of catalogue stars to field stars under a
 * model. Residuals are in pixels, each weighted by its own error; parameter errors come from the
 * covariance (J^T J)^-1, scaled by the reduced chi^2 when that exceeds 1.
 */
import type { Catalogue } from './catalogue.ts';
import { starsInCone } from './catalogue.ts';
import { maxFieldAngle, pixelToSky, skyToPixel, type LensModel } from './lens.ts';
import { angleBetween, matMul, orthonormalize, rotationFromVector, type Vec3 } from './sphere.ts';

export interface Match {
  /** Field star index and catalogue star index. */
  star: number;
  cat: number;
}

export interface FitFree {
  k1: boolean;
  k2: boolean;
  centre: boolean;
}

export interface FitResult {
  model: LensModel;
  chi2: number;
  /** Degrees of freedom: 2 per match less the free parameters. */
  dof: number;
  /** Errors (1 sigma, scaled by sqrt(reduced chi^2) when above 1). */
  err: { fPx: number; k1: number | null; k2: number | null; cx: number | null; cy: number | null; rotationRad: number };
  /** Covariance of (k1, k2) in that scaling, or null. */
  covK: [number, number, number] | null;
  /** Residuals (model - measured), px, per match. */
  dx: Float64Array;
  dy: Float64Array;
  rmsPx: number;
  converged: boolean;
}

export interface FitData {
  /** Field star positions and 1-sigma position errors, px. */
  x: Float64Array;
  y: Float64Array;
  sigma: Float64Array;
  /** Sky directions (3 per entry) that Match.cat indexes: a catalogue's xyz. */
  xyz: Float64Array;
}

function applyParams(m0: LensModel, p: Float64Array, free: FitFree): LensModel {
  const rot = matMul(rotationFromVector([p[0], p[1], p[2]]), m0.rot);
  let i = 4;
  const k1 = free.k1 ? p[i++] : m0.k1;
  const k2 = free.k2 ? p[i++] : m0.k2;
  const cx = free.centre ? p[i++] : m0.cx;
  const cy = free.centre ? p[i++] : m0.cy;
  return { ...m0, rot, fPx: m0.fPx * Math.exp(p[3]), k1, k2, cx, cy };
}

function initialParams(m0: LensModel, free: FitFree): Float64Array {
  const v = [0, 0, 0, 0];
  if (free.k1) v.push(m0.k1);
  if (free.k2) v.push(m0.k2);
  if (free.centre) v.push(m0.cx, m0.cy);
  return Float64Array.from(v);
}

/** Weighted residuals; a star the model cannot image gets a large residual. */
const v3 = new Float64Array(3);
function residuals(m: LensModel, d: FitData, matches: readonly Match[], out: Float64Array): number {
  const pt: [number, number] = [0, 0];
  let chi2 = 0;
  for (let k = 0; k < matches.length; k++) {
    const { star, cat } = matches[k];
    v3[0] = d.xyz[3 * cat]; v3[1] = d.xyz[3 * cat + 1]; v3[2] = d.xyz[3 * cat + 2];
    const r = skyToPixel(m, v3, pt);
    const s = d.sigma[star];
    const ex = r ? (r[0] - d.x[star]) / s : 1e3, ey = r ? (r[1] - d.y[star]) / s : 1e3;
    out[2 * k] = ex; out[2 * k + 1] = ey;
    chi2 += ex * ex + ey * ey;
  }
  return chi2;
}

/** Solve the symmetric positive system A x = b by Cholesky; null when not positive definite. */
export function choleskySolve(A: Float64Array, b: Float64Array, n: number): Float64Array | null {
  const L = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = A[i * n + j];
      for (let k = 0; k < j; k++) s -= L[i * n + k] * L[j * n + k];
      if (i === j) {
        if (!(s > 0)) return null;
        L[i * n + i] = Math.sqrt(s);
      } else L[i * n + j] = s / L[j * n + j];
    }
  }
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    let s = b[i];
    for (let k = 0; k < i; k++) s -= L[i * n + k] * y[k];
    y[i] = s / L[i * n + i];
  }
  const x = new Float64Array(n);
  for (let i = n - 1; i >= 0; i--) {
    let s = y[i];
    for (let k = i + 1; k < n; k++) s -= L[k * n + i] * x[k];
    x[i] = s / L[i * n + i];
  }
  return x;
}

export function invertSymmetric(A: Float64Array, n: number): Float64Array | null {
  const inv = new Float64Array(n * n);
  for (let c = 0; c < n; c++) {
    const e = new Float64Array(n);
    e[c] = 1;
    const x = choleskySolve(A, e, n);
    if (!x) return null;
    for (let r = 0; r < n; r++) inv[r * n + c] = x[r];
  }
  return inv;
}

/** Fit the free parameters of the model to the matches. */
export function fitLens(m0: LensModel, d: FitData, matches: readonly Match[], free: FitFree, maxIter = 30): FitResult {
  let p = initialParams(m0, free);
  const np = p.length;
  const nr = 2 * matches.length;
  let r = new Float64Array(nr);
  let model = applyParams(m0, p, free);
  let chi2 = residuals(model, d, matches, r);
  const J = new Float64Array(nr * np);
  const rt = new Float64Array(nr);
  const steps = (i: number) => (i < 3 ? 1e-7 : i === 3 ? 1e-7 : free.centre && i >= np - 2 ? 1e-3 : 1e-6);
  let lambda = 1e-3;
  let converged = false;
  const JTJ = new Float64Array(np * np), JTr = new Float64Array(np);
  const jacobian = () => {
    for (let j = 0; j < np; j++) {
      const h = steps(j);
      const q = Float64Array.from(p);
      q[j] += h;
      residuals(applyParams(m0, q, free), d, matches, rt);
      for (let k = 0; k < nr; k++) J[k * np + j] = (rt[k] - r[k]) / h;
    }
    JTJ.fill(0); JTr.fill(0);
    for (let k = 0; k < nr; k++) {
      for (let i = 0; i < np; i++) {
        const ji = J[k * np + i];
        JTr[i] += ji * r[k];
        for (let j = 0; j <= i; j++) JTJ[i * np + j] += ji * J[k * np + j];
      }
    }
    for (let i = 0; i < np; i++) for (let j = 0; j < i; j++) JTJ[j * np + i] = JTJ[i * np + j];
  };
  if (nr >= np) {
    jacobian();
    for (let it = 0; it < maxIter; it++) {
      const A = Float64Array.from(JTJ);
      for (let i = 0; i < np; i++) A[i * np + i] *= 1 + lambda;
      const neg = Float64Array.from(JTr, (v) => -v);
      const delta = choleskySolve(A, neg, np);
      if (!delta) { lambda *= 10; if (lambda > 1e10) break; continue; }
      const q = Float64Array.from(p, (v, i) => v + delta[i]);
      const rn = new Float64Array(nr);
      const mn = applyParams(m0, q, free);
      const c2 = residuals(mn, d, matches, rn);
      if (c2 <= chi2) {
        const small = chi2 - c2 < 1e-9 * (1 + chi2);
        p = q; r = rn; chi2 = c2; model = mn;
        lambda = Math.max(1e-9, lambda / 10);
        jacobian();
        if (small) { converged = true; break; }
      } else {
        lambda *= 10;
        if (lambda > 1e10) { converged = true; break; }
      }
    }
  }
  // fold the rotation update into the model, so later fits start from it
  model = { ...model, rot: orthonormalize(model.rot) };
  const dof = nr - np;
  const scale = dof > 0 ? Math.max(1, chi2 / dof) : 1;
  const cov = nr >= np ? invertSymmetric(JTJ, np) : null;
  const e = (i: number) => (cov ? Math.sqrt(cov[i * np + i] * scale) : NaN);
  let i = 4;
  const k1i = free.k1 ? i++ : -1;
  const k2i = free.k2 ? i++ : -1;
  const ci = free.centre ? i : -1;
  const dx = new Float64Array(matches.length), dy = new Float64Array(matches.length);
  let ss = 0;
  for (let k = 0; k < matches.length; k++) {
    const s = d.sigma[matches[k].star];
    dx[k] = r[2 * k] * s; dy[k] = r[2 * k + 1] * s;
    ss += dx[k] * dx[k] + dy[k] * dy[k];
  }
  let covK: [number, number, number] | null = null;
  if (cov && k1i >= 0) {
    const v11 = cov[k1i * np + k1i] * scale;
    covK = k2i >= 0 ? [v11, cov[k1i * np + k2i] * scale, cov[k2i * np + k2i] * scale] : [v11, 0, 0];
  }
  return {
    model, chi2, dof,
    err: {
      fPx: e(3) * model.fPx,
      k1: k1i >= 0 ? e(k1i) : null,
      k2: k2i >= 0 ? e(k2i) : null,
      cx: ci >= 0 ? e(ci) : null,
      cy: ci >= 0 ? e(ci + 1) : null,
      rotationRad: e(2),
    },
    covK,
    dx, dy,
    rmsPx: matches.length ? Math.sqrt(ss / (2 * matches.length)) : NaN,
    converged,
  };
}

/** The sky direction of the frame centre and the angle to the farthest corner the model can image. */
export function fieldCone(m: LensModel, width: number, height: number): { centre: Vec3; radius: number } | null {
  const c = pixelToSky(m, (width - 1) / 2, (height - 1) / 2);
  if (!c) return null;
  let radius = 0;
  for (const [x, y] of [[0, 0], [width - 1, 0], [0, height - 1], [width - 1, height - 1], [(width - 1) / 2, 0], [0, (height - 1) / 2], [width - 1, (height - 1) / 2], [(width - 1) / 2, height - 1]]) {
    const v = pixelToSky(m, x, y);
    radius = Math.max(radius, v ? angleBetween(c, v) : maxFieldAngle(m.projection));
  }
  return { centre: c, radius: Math.min(Math.PI, radius * 1.02 + 1e-4) };
}

export interface Projected {
  cat: Int32Array;
  x: Float64Array;
  y: Float64Array;
  n: number;
}

/** The brightest `limit` catalogue stars the model puts inside the frame, with their positions. */
export function projectCatalogue(cat: Catalogue, m: LensModel, width: number, height: number, limit: number, marginPx = 2, candidates?: readonly number[]): Projected {
  const ids: number[] = [];
  const xs: number[] = [];
  const ys: number[] = [];
  let list = candidates;
  if (!list) {
    const cone = fieldCone(m, width, height);
    list = cone ? starsInCone(cat, cone.centre, cone.radius) : [];
  }
  {
    const pt: [number, number] = [0, 0];
    for (const i of list) {
      const r = skyToPixel(m, [cat.xyz[3 * i], cat.xyz[3 * i + 1], cat.xyz[3 * i + 2]], pt);
      if (!r || r[0] < -marginPx || r[1] < -marginPx || r[0] > width - 1 + marginPx || r[1] > height - 1 + marginPx) continue;
      ids.push(i); xs.push(r[0]); ys.push(r[1]);
      if (ids.length >= limit) break;
    }
  }
  return { cat: Int32Array.from(ids), x: Float64Array.from(xs), y: Float64Array.from(ys), n: ids.length };
}

/**
 * Mutual nearest neighbours between projected catalogue stars and field stars, within
 * `radius(x, y)` px of the prediction; only field stars for which `use` is true.
 */
export function matchProjected(p: Projected, fx: Float64Array, fy: Float64Array, nField: number, radius: (x: number, y: number) => number, use: (i: number) => boolean): Match[] {
  // bucket the field stars
  let rmax = 1;
  for (let k = 0; k < p.n; k++) rmax = Math.max(rmax, radius(p.x[k], p.y[k]));
  const cell = Math.max(4, rmax);
  const buckets = new Map<number, number[]>();
  const key = (x: number, y: number) => Math.floor(x / cell) * 100003 + Math.floor(y / cell);
  for (let i = 0; i < nField; i++) {
    if (!use(i)) continue;
    const k = key(fx[i], fy[i]);
    let b = buckets.get(k);
    if (!b) buckets.set(k, (b = []));
    b.push(i);
  }
  const bestField = new Int32Array(p.n).fill(-1);
  const bestFieldD = new Float64Array(p.n).fill(Infinity);
  const bestCat = new Map<number, { k: number; d: number }>();
  for (let k = 0; k < p.n; k++) {
    const rr = radius(p.x[k], p.y[k]);
    const gx = Math.floor(p.x[k] / cell), gy = Math.floor(p.y[k] / cell);
    for (let ix = gx - 1; ix <= gx + 1; ix++) {
      for (let iy = gy - 1; iy <= gy + 1; iy++) {
        const b = buckets.get(ix * 100003 + iy);
        if (!b) continue;
        for (const i of b) {
          const d = Math.hypot(fx[i] - p.x[k], fy[i] - p.y[k]);
          if (d > rr) continue;
          if (d < bestFieldD[k]) { bestFieldD[k] = d; bestField[k] = i; }
          const c = bestCat.get(i);
          if (!c || d < c.d) bestCat.set(i, { k, d });
        }
      }
    }
  }
  const out: Match[] = [];
  for (let k = 0; k < p.n; k++) {
    const i = bestField[k];
    if (i >= 0 && bestCat.get(i)?.k === k) out.push({ star: i, cat: p.cat[k] });
  }
  return out;
}
