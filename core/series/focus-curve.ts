/**
 * Focus curves: a star's width against focuser position P follows the hyperbola of a defocused
 * cone convolved with the in-focus core,
 *   w(P)^2 = w0^2 + k^2 (P - F)^2,
 * because the cone's blur grows linearly with the focus error (blur diameter = |δ| / N, optics.md
 * §3) and second-moment sizes add in quadrature under convolution (exact for moments, optics.md
 * §4; for HFD and FWHM the usual V-curve model, common practice: e.g. the lost-infinity.com
 * article "V-curve fitting with a hyperbolic function"). In w^2 it is a parabola,
 *   w^2 = A + B x + C x^2,  x = P - P0,  F = P0 - B / (2C),  k = sqrt(C),  w0^2 = A - B^2 / (4C),
 * fitted by linear least squares as in focus-sequence practice (a parabola of the squared width
 * against focuser position, Tokovinin & Heathcote 2006, PASP 118, 1165, introduction).
 *
 * All zones are fitted together, each with its own A, B, C, plus one term per frame shared by all
 * zones (the seeing of that exposure adds the same w^2 everywhere); those frame terms are kept
 * orthogonal to 1, x and x^2 over the frames, so they take up only the exposure-to-exposure jitter
 * and never move a zone's curve.
 */
import { weightedSolve } from '../field/lsq.ts';

export interface CurveInput {
  /** Focuser positions per frame. */
  readonly positions: readonly number[];
  /** Per zone, per frame: w^2 and its 1-sigma error (NaN = no value). */
  readonly y: readonly (readonly number[])[];
  readonly sig: readonly (readonly number[])[];
  /** Fit the shared per-frame terms (needs 4 or more frames and 2 or more zones). Default true. */
  readonly frameTerms?: boolean;
}

export interface ZoneCurve {
  /** Coefficients A, B, C about P0, and their covariance (row-major 3 x 3). */
  readonly coef: readonly [number, number, number];
  readonly cov: readonly number[];
  readonly p0: number;
  /** Frames with a value. */
  readonly frames: number;
}

export interface CurveFit {
  readonly zones: (ZoneCurve | null)[];
  /** The shared per-frame w^2 terms (0 when not fitted). */
  readonly frameTerms: number[];
  readonly chi2: number;
  readonly dof: number;
  /** Errors were scaled up by this factor (sqrt of the reduced chi^2, at least 1). */
  readonly errorScale: number;
}

/** Orthonormal basis of the frame vectors orthogonal to 1, x and x^2 (Gram-Schmidt). */
function jitterBasis(x: readonly number[]): number[][] {
  const n = x.length;
  const basis: number[][] = [];
  const span: number[][] = [];
  const add = (v: number[], into: number[][]) => {
    const u = [...v];
    for (const b of [...span, ...basis]) {
      let d = 0;
      for (let i = 0; i < n; i++) d += u[i] * b[i];
      for (let i = 0; i < n; i++) u[i] -= d * b[i];
    }
    const norm = Math.hypot(...u);
    if (norm > 1e-8) into.push(u.map((v) => v / norm));
  };
  const s = Math.max(1e-12, Math.max(...x.map(Math.abs)));
  add(x.map(() => 1), span);
  add(x.map((v) => v / s), span);
  add(x.map((v) => (v / s) ** 2), span);
  for (let k = 0; k < n && basis.length < n - span.length; k++) add(x.map((_, i) => (i === k ? 1 : 0)), basis);
  return basis;
}

export function fitCurves(input: CurveInput): CurveFit | null {
  const P = input.positions;
  const nf = P.length;
  const nz = input.y.length;
  const p0 = P.reduce((a, b) => a + b, 0) / nf;
  const x = P.map((v) => v - p0);
  const useFrames = (input.frameTerms ?? true) && nf >= 4 && nz >= 2;
  const J = useFrames ? jitterBasis(x) : [];
  // Zones with at least three frames at three different positions.
  const ok = input.y.map((row, z) => {
    const at = new Set<number>();
    row.forEach((v, f) => { if (Number.isFinite(v) && input.sig[z][f] > 0) at.add(P[f]); });
    return at.size >= 3;
  });
  const zoneCol: number[] = [];
  let p = 0;
  for (let z = 0; z < nz; z++) { zoneCol.push(ok[z] ? p : -1); if (ok[z]) p += 3; }
  if (p === 0) return null;
  const jCol = p;
  p += J.length;
  const rows: number[][] = [];
  const yv: number[] = [];
  const sv: number[] = [];
  for (let z = 0; z < nz; z++) {
    if (!ok[z]) continue;
    for (let f = 0; f < nf; f++) {
      const v = input.y[z][f], s = input.sig[z][f];
      if (!Number.isFinite(v) || !(s > 0)) continue;
      const r = new Array(p).fill(0);
      const c = zoneCol[z];
      r[c] = 1; r[c + 1] = x[f]; r[c + 2] = x[f] * x[f];
      J.forEach((b, m) => { r[jCol + m] = b[f]; });
      rows.push(r); yv.push(v); sv.push(s);
    }
  }
  const n = rows.length;
  if (n < p + 1) {
    if (J.length) return fitCurves({ ...input, frameTerms: false });
    if (n < p) return null;
  }
  const A = new Float64Array(n * p);
  rows.forEach((r, i) => r.forEach((v, k) => { A[i * p + k] = v; }));
  const w = Float64Array.from(sv, (v) => 1 / (v * v));
  const sol = weightedSolve(A, Float64Array.from(yv), w, p);
  if (!sol) return J.length ? fitCurves({ ...input, frameTerms: false }) : null;
  let chi2 = 0;
  for (let i = 0; i < n; i++) {
    let f = 0;
    for (let k = 0; k < p; k++) f += A[i * p + k] * sol.coef[k];
    chi2 += w[i] * (yv[i] - f) ** 2;
  }
  const dof = n - p;
  // Errors scaled up when the points scatter more than their errors say (never down).
  const scale2 = dof > 0 ? Math.max(1, chi2 / dof) : 1;
  const fit = { coef: sol.coef, cov: sol.covUnit.map((v) => v * scale2) };
  const zones: (ZoneCurve | null)[] = [];
  for (let z = 0; z < nz; z++) {
    const c = zoneCol[z];
    if (c < 0) { zones.push(null); continue; }
    const cov: number[] = [];
    for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) cov.push(fit.cov[(c + a) * p + c + b]);
    const frames = input.y[z].filter((v, f) => Number.isFinite(v) && input.sig[z][f] > 0).length;
    zones.push({ coef: [fit.coef[c], fit.coef[c + 1], fit.coef[c + 2]], cov, p0, frames });
  }
  const frameTerms = x.map((_, f) => J.reduce((s, b, m) => s + fit.coef[jCol + m] * b[f], 0));
  return { zones, frameTerms, chi2, dof, errorScale: Math.sqrt(scale2) };
}

export interface Vertex {
  /** Best focus (position units) and its 1-sigma error; NaN when the curve opens downward. */
  focus: number;
  focusErr: number;
  /** Width at best focus, sqrt(A - B^2 / 4C) (NaN when negative), and the asymptotic slope sqrt(C). */
  w0: number;
  slope: number;
  /** The curve has a minimum (C significantly above 0). */
  hasMinimum: boolean;
}

/** The vertex of a zone's parabola in w^2 with its error (delta method on the covariance). */
export function vertexOf(z: ZoneCurve): Vertex {
  const [A, B, C] = z.coef;
  const vB = z.cov[4], vC = z.cov[8], cBC = z.cov[5];
  const hasMinimum = C > 0 && C > 2 * Math.sqrt(Math.max(0, vC));
  if (!(C > 0)) return { focus: NaN, focusErr: NaN, w0: NaN, slope: NaN, hasMinimum: false };
  const focus = z.p0 - B / (2 * C);
  const dB = -1 / (2 * C), dC = B / (2 * C * C);
  const v = dB * dB * vB + dC * dC * vC + 2 * dB * dC * cBC;
  const w02 = A - (B * B) / (4 * C);
  return { focus, focusErr: Math.sqrt(Math.max(0, v)), w0: w02 > 0 ? Math.sqrt(w02) : NaN, slope: Math.sqrt(C), hasMinimum };
}

/** The fitted w at a position (w^2 clipped at 0), for drawing. */
export function curveAt(z: ZoneCurve, P: number): number {
  const x = P - z.p0;
  return Math.sqrt(Math.max(0, z.coef[0] + z.coef[1] * x + z.coef[2] * x * x));
}

/**
 * One star's curve with the zone's C and the frame terms held: w^2 - s_f - C x^2 = A + B x, a
 * straight line; its best focus and error. Null with fewer than three frames.
 */
export function starVertex(P: readonly number[], w2: readonly number[], sig: readonly number[], C: number, p0: number, frameTerms: readonly number[]): { focus: number; focusErr: number } | null {
  let S = 0, Sx = 0, Sxx = 0, Sy = 0, Sxy = 0, n = 0;
  for (let f = 0; f < P.length; f++) {
    if (!Number.isFinite(w2[f]) || !(sig[f] > 0)) continue;
    const x = P[f] - p0;
    const y = w2[f] - frameTerms[f] - C * x * x;
    const w = 1 / (sig[f] * sig[f]);
    S += w; Sx += w * x; Sxx += w * x * x; Sy += w * y; Sxy += w * x * y; n++;
  }
  if (n < 3 || !(C > 0)) return null;
  const det = S * Sxx - Sx * Sx;
  if (!(det > 0)) return null;
  const B = (S * Sxy - Sx * Sy) / det;
  const vB = S / det;
  // Residual scatter scales the error when the star's points scatter more than their errors say.
  const Acoef = (Sxx * Sy - Sx * Sxy) / det;
  let chi2 = 0;
  for (let f = 0; f < P.length; f++) {
    if (!Number.isFinite(w2[f]) || !(sig[f] > 0)) continue;
    const x = P[f] - p0;
    chi2 += ((w2[f] - frameTerms[f] - C * x * x - Acoef - B * x) / sig[f]) ** 2;
  }
  const scale = n > 2 ? Math.max(1, chi2 / (n - 2)) : 1;
  return { focus: p0 - B / (2 * C), focusErr: Math.sqrt(vB * scale) / (2 * C) };
}
