/**
 * The best-focus surface over the field (optics.md §4, way 2: each zone's signed best focus from
 * its focus curve, then a plane plus a paraboloid over the field):
 *   F(u, v) = f0 + gx u + gy v + c (u^2 + v^2),
 * u, v = (x - cx, y - cy) / S in half-diagonals S about the frame centre (a corner is at
 * u^2 + v^2 = 1), by weighted least squares with the zones' errors, scaled up by the reduced
 * chi^2. Curvature about an optical axis off the frame centre looks exactly like tilt plus
 * centred curvature (optics.md §4, "Separating tilt, curvature and decentring"), so the tilt
 * found here includes any decentring of the axis.
 *
 * Derived numbers (corner moves, the focus that is best on average, the one that keeps the worst
 * point sharpest) and their errors come from draws of the parameters from their covariance.
 */
import { weightedSolve } from '../field/lsq.ts';
import { gauss, rng } from '../field/stats.ts';

export interface SurfacePoint { x: number; y: number; focus: number; err: number }

export interface FocusSurface {
  centrePx: { x: number; y: number };
  scalePx: number;
  /** f0, gx, gy, c (positions' units). */
  coef: [number, number, number, number];
  cov: number[];
  /** Curvature fitted (false with fewer than five zones: a plane only). */
  curvature: boolean;
  chi2: number;
  dof: number;
  errorScale: number;
  zones: number;
}

export function fitSurface(points: readonly SurfacePoint[], width: number, height: number): FocusSurface | null {
  const pts = points.filter((p) => Number.isFinite(p.focus) && p.err > 0);
  const cx = (width - 1) / 2, cy = (height - 1) / 2;
  const S = 0.5 * Math.hypot(width, height);
  const curvature = pts.length >= 5;
  const p = curvature ? 4 : 3;
  if (pts.length < p) return null;
  const A = new Float64Array(pts.length * p);
  pts.forEach((q, i) => {
    const u = (q.x - cx) / S, v = (q.y - cy) / S;
    A[i * p] = 1; A[i * p + 1] = u; A[i * p + 2] = v;
    if (curvature) A[i * p + 3] = u * u + v * v;
  });
  const y = Float64Array.from(pts, (q) => q.focus);
  const w = Float64Array.from(pts, (q) => 1 / (q.err * q.err));
  const sol = weightedSolve(A, y, w, p);
  if (!sol) return null;
  let chi2 = 0;
  pts.forEach((_, i) => {
    let f = 0;
    for (let k = 0; k < p; k++) f += A[i * p + k] * sol.coef[k];
    chi2 += w[i] * (y[i] - f) ** 2;
  });
  const dof = pts.length - p;
  const scale2 = dof > 0 ? Math.max(1, chi2 / dof) : 1;
  const coef: [number, number, number, number] = [sol.coef[0], sol.coef[1], sol.coef[2], curvature ? sol.coef[3] : 0];
  const cov = new Array(16).fill(0);
  for (let a = 0; a < p; a++) for (let b = 0; b < p; b++) cov[a * 4 + b] = sol.covUnit[a * p + b] * scale2;
  return { centrePx: { x: cx, y: cy }, scalePx: S, coef, cov, curvature, chi2, dof, errorScale: Math.sqrt(scale2), zones: pts.length };
}

/** The surface's value at a pixel position for parameters c. */
export function surfaceAt(s: Pick<FocusSurface, 'centrePx' | 'scalePx'>, c: readonly number[], x: number, y: number): number {
  const u = (x - s.centrePx.x) / s.scalePx, v = (y - s.centrePx.y) / s.scalePx;
  return c[0] + c[1] * u + c[2] * v + c[3] * (u * u + v * v);
}

/** Parameter draws from the fit's covariance (Cholesky factor; seeded, so results repeat). */
export function drawParameters(s: FocusSurface, n = 2000, seed = 7): number[][] {
  const L = new Float64Array(16);
  for (let i = 0; i < 4; i++) {
    for (let j = 0; j <= i; j++) {
      let v = s.cov[i * 4 + j];
      for (let k = 0; k < j; k++) v -= L[i * 4 + k] * L[j * 4 + k];
      if (i === j) L[i * 4 + i] = v > 0 ? Math.sqrt(v) : 0;
      else L[i * 4 + j] = L[j * 4 + j] > 0 ? v / L[j * 4 + j] : 0;
    }
  }
  const rand = rng(seed);
  const out: number[][] = [];
  for (let d = 0; d < n; d++) {
    const z = [gauss(rand), gauss(rand), gauss(rand), gauss(rand)];
    out.push(s.coef.map((c, i) => c + L[i * 4] * z[0] + L[i * 4 + 1] * z[1] + L[i * 4 + 2] * z[2] + L[i * 4 + 3] * z[3]));
  }
  return out;
}

/** Lowest and highest value of the surface over the frame (a 33 x 33 grid of its area, edges included). */
export function surfaceRange(s: Pick<FocusSurface, 'centrePx' | 'scalePx'>, c: readonly number[], width: number, height: number): { lo: number; hi: number } {
  let lo = Infinity, hi = -Infinity;
  for (let i = 0; i <= 32; i++) {
    for (let j = 0; j <= 32; j++) {
      const v = surfaceAt(s, c, -0.5 + (width * i) / 32, -0.5 + (height * j) / 32);
      if (v < lo) lo = v;
      if (v > hi) hi = v;
    }
  }
  return { lo, hi };
}

export function meanStd(v: readonly number[]): { mean: number; std: number } {
  const n = v.length;
  const mean = v.reduce((a, b) => a + b, 0) / n;
  const std = Math.sqrt(v.reduce((a, b) => a + (b - mean) ** 2, 0) / Math.max(1, n - 1));
  return { mean, std };
}
