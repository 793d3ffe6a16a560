/**
 * Spin-2 and spin-1 field fits with complex linear least squares (optics.md sections 3 and 6):
 * M(z) = A z^2 + B z + C has its symmetry centre at z0 = -B / (2A); c(z) = alpha z + beta has
 * z0 = -beta / alpha. z = (x - cx + i (y - cy)) / halfDiagonal.
 */
import type { Geometry } from './geometry.ts';
import type { StarColumns } from './quantities.ts';
import { robustLinearFit, weightedSolve, choleskyInverse, levenbergMarquardt, medianOf, type LinearFit } from './lsq.ts';
import { rng, std } from './stats.ts';
import type { Spin1Field, Spin2Field, XY } from './types.ts';
import { adaptiveComaMoments, comaDefocusMoments, comaFromMeasured, coreForComa, coreForComaDefocus } from './coma-calibration.ts';
import { clippedMean } from './stats.ts';

const BOOTSTRAP = 200;

/** Two real rows per star for a complex model sum_k P_k f_k(z) with complex P_k and basis f_k. */
export function complexDesign(zr: Float64Array, zi: Float64Array, basis: (re: number, im: number) => [number, number][]): { A: Float64Array; p: number } {
  const n = zr.length;
  const k = basis(0, 0).length;
  const p = 2 * k;
  const A = new Float64Array(2 * n * p);
  for (let s = 0; s < n; s++) {
    const f = basis(zr[s], zi[s]);
    const o1 = 2 * s * p;
    const o2 = o1 + p;
    for (let j = 0; j < k; j++) {
      const [fr, fi] = f[j];
      // (Pr + i Pi)(fr + i fi) = (Pr fr - Pi fi) + i (Pr fi + Pi fr)
      A[o1 + 2 * j] = fr; A[o1 + 2 * j + 1] = -fi;
      A[o2 + 2 * j] = fi; A[o2 + 2 * j + 1] = fr;
    }
  }
  return { A, p };
}

function normCoords(c: StarColumns, g: Geometry): { zr: Float64Array; zi: Float64Array } {
  const zr = new Float64Array(c.n);
  const zi = new Float64Array(c.n);
  for (let i = 0; i < c.n; i++) {
    zr[i] = (c.x[i] - g.cx) / g.scale;
    zi[i] = (c.y[i] - g.cy) / g.scale;
  }
  return { zr, zi };
}

export function interleave(a: Float64Array, b: Float64Array): Float64Array {
  const o = new Float64Array(2 * a.length);
  for (let i = 0; i < a.length; i++) { o[2 * i] = a[i]; o[2 * i + 1] = b[i]; }
  return o;
}

export function twice(a: Float64Array): Float64Array {
  return interleave(a, a);
}

/** sqrt of the 2-dof chi^2 of the complex coefficient at column pair j. */
function pairSignificance(fit: LinearFit, j: number): number {
  const p = fit.p;
  const a = fit.coef[2 * j];
  const b = fit.coef[2 * j + 1];
  const C = new Float64Array([fit.cov[2 * j * p + 2 * j], fit.cov[2 * j * p + 2 * j + 1], fit.cov[(2 * j + 1) * p + 2 * j], fit.cov[(2 * j + 1) * p + 2 * j + 1]]);
  const inv = choleskyInverse(C, 2);
  if (!inv) return 0;
  const chi2 = a * a * inv[0] + 2 * a * b * inv[1] + b * b * inv[3];
  return Math.sqrt(Math.max(0, chi2));
}

function errOf(fit: LinearFit, k: number): number {
  return Math.sqrt(Math.max(0, fit.cov[k * fit.p + k]));
}

/** Bootstrap the centre -num/(den) from resampled solves with the full fit's weights. */
function bootstrapCentre(
  A: Float64Array, y: Float64Array, w: Float64Array, p: number, nStars: number,
  centreOf: (coef: Float64Array) => [number, number] | null, seed: number,
): { sx: number; sy: number } | null {
  const rand = rng(seed);
  const xs: number[] = [];
  const ys: number[] = [];
  const rowsPerStar = y.length / nStars;
  const Ab = new Float64Array(A.length);
  const yb = new Float64Array(y.length);
  const wb = new Float64Array(w.length);
  for (let b = 0; b < BOOTSTRAP; b++) {
    for (let s = 0; s < nStars; s++) {
      const src = Math.floor(rand() * nStars);
      for (let r = 0; r < rowsPerStar; r++) {
        const from = src * rowsPerStar + r;
        const to = s * rowsPerStar + r;
        yb[to] = y[from];
        wb[to] = w[from];
        for (let j = 0; j < p; j++) Ab[to * p + j] = A[from * p + j];
      }
    }
    const sol = weightedSolve(Ab, yb, wb, p);
    if (!sol) continue;
    const c = centreOf(sol.coef);
    if (c && Number.isFinite(c[0]) && Number.isFinite(c[1])) { xs.push(c[0]); ys.push(c[1]); }
  }
  if (xs.length < BOOTSTRAP / 2) return null;
  // Robust spread: the ratio estimator has heavy tails when A is weak; use the 16-84% range.
  return { sx: halfRange(xs), sy: halfRange(ys) };
}

function halfRange(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  const q = (f: number) => s[Math.min(s.length - 1, Math.max(0, Math.round(f * (s.length - 1))))];
  const hr = 0.5 * (q(0.8413) - q(0.1587));
  return Number.isFinite(hr) ? hr : std(v);
}

function finalWeights(fit: LinearFit, sigma: Float64Array): Float64Array {
  const w = new Float64Array(sigma.length);
  for (let r = 0; r < sigma.length; r++) w[r] = fit.robust[r] / (sigma[r] * sigma[r] + fit.scatter * fit.scatter);
  return w;
}

const MAX_CENTRE_OFFSET = 1.5; // half-diagonals: beyond this a symmetry centre is not located

export function fitSpin2(c: StarColumns, g: Geometry, seed = 12345): Spin2Field | null {
  if (c.n < 12) return null;
  const { zr, zi } = normCoords(c, g);
  const { A, p } = complexDesign(zr, zi, (re, im) => [[re * re - im * im, 2 * re * im], [re, im], [1, 0]]);
  const y = interleave(c.M1, c.M2);
  const sig = twice(c.sigM);
  const fit = robustLinearFit(A, y, sig, p, { mode: 'floor' });
  if (!fit) return null;
  const [ar, ai, , , cr, ci] = fit.coef;
  const aSig = pairSignificance(fit, 0);
  const centreOf = (coef: Float64Array): [number, number] | null => {
    const Ar = coef[0], Ai = coef[1], Br = coef[2], Bi = coef[3];
    const d = Ar * Ar + Ai * Ai;
    if (!(d > 0)) return null;
    // z0 = -B / (2A) = -B conj(A) / (2|A|^2)
    const zr0 = -(Br * Ar + Bi * Ai) / (2 * d);
    const zi0 = -(Bi * Ar - Br * Ai) / (2 * d);
    return [g.cx + zr0 * g.scale, g.cy + zi0 * g.scale];
  };
  let centrePx: XY | null = null;
  let centreErrPx: XY | null = null;
  let constant = { re: cr, im: ci };
  let constantErr = { re: errOf(fit, 4), im: errOf(fit, 5) };
  let cSig = pairSignificance(fit, 2);
  const z0 = centreOf(fit.coef);
  let farCentrePx: XY | null = null;
  if (aSig >= 4 && z0 && Math.hypot(z0[0] - g.cx, z0[1] - g.cy) <= MAX_CENTRE_OFFSET * g.scale) {
    const e = bootstrapCentre(A, y, finalWeights(fit, sig), p, c.n, centreOf, seed);
    if (e) {
      centrePx = { x: z0[0], y: z0[1] };
      centreErrPx = { x: e.sx, y: e.sy };
    }
  } else if (aSig >= 4 && z0 && Math.hypot(z0[0] - g.cx, z0[1] - g.cy) <= 6 * g.scale) {
    farCentrePx = { x: z0[0], y: z0[1] };
  }
  // The uniform part is the constant after removing A (z - z0)^2: C = c - A z0^2 at the located centre.
  if (centrePx) {
    const zr0 = (centrePx.x - g.cx) / g.scale;
    const zi0 = (centrePx.y - g.cy) / g.scale;
    const z2r = zr0 * zr0 - zi0 * zi0;
    const z2i = 2 * zr0 * zi0;
    const fixed = fitFixedCentre(c, g, centrePx);
    if (fixed) {
      constant = fixed.c;
      constantErr = fixed.cErr;
      cSig = fixed.cSig;
    } else {
      constant = { re: cr - (ar * z2r - ai * z2i), im: ci - (ar * z2i + ai * z2r) };
    }
  }
  const about = centrePx ?? farCentrePx ?? { x: g.cx, y: g.cy };
  const excess = excessRatio(c, g, { re: ar, im: ai }, about, aSig);
  const flat = aSig >= 4 ? minorAxisFlat(c, g, about, Math.hypot(ar, ai)) : null;
  return {
    a: { re: ar, im: ai },
    aErr: { re: errOf(fit, 0), im: errOf(fit, 1) },
    aSignificance: aSig,
    c: constant,
    cErr: constantErr,
    cSignificance: cSig,
    centrePx,
    centreErrPx,
    farCentrePx,
    excessRatio: excess?.ratio ?? null,
    excessRatioErr: excess?.err ?? null,
    minorAxisFlat: flat,
  };
}

/** M = A (z - z0)^2 + C with the centre fixed: A and C with errors. */
export function fitFixedCentre(c: StarColumns, g: Geometry, centre: XY): {
  a: { re: number; im: number }; aErr: { re: number; im: number }; aSig: number;
  c: { re: number; im: number }; cErr: { re: number; im: number }; cSig: number; fit: LinearFit;
} | null {
  if (c.n < 8) return null;
  const zr = new Float64Array(c.n);
  const zi = new Float64Array(c.n);
  for (let i = 0; i < c.n; i++) {
    zr[i] = (c.x[i] - centre.x) / g.scale;
    zi[i] = (c.y[i] - centre.y) / g.scale;
  }
  const { A, p } = complexDesign(zr, zi, (re, im) => [[re * re - im * im, 2 * re * im], [1, 0]]);
  const fit = robustLinearFit(A, interleave(c.M1, c.M2), twice(c.sigM), p, { mode: 'floor' });
  if (!fit) return null;
  return {
    a: { re: fit.coef[0], im: fit.coef[1] }, aErr: { re: errOf(fit, 0), im: errOf(fit, 1) }, aSig: pairSignificance(fit, 0),
    c: { re: fit.coef[2], im: fit.coef[3] }, cErr: { re: errOf(fit, 2), im: errOf(fit, 3) }, cSig: pairSignificance(fit, 1),
    fit,
  };
}

/**
 * Rank-1 test: regress T on |A (z - z0)^2| (plus a constant and the isotropic z-terms a size
 * field may carry). A trail adds its moment to one axis only, so dT = |dM| (ratio 1); defocus
 * and astigmatism off a line focus grow both axes (ratio > 1). optics.md section 6.
 */
function excessRatio(c: StarColumns, g: Geometry, a: { re: number; im: number }, centre: XY, aSig: number): { ratio: number; err: number } | null {
  if (aSig < 4) return null;
  const amp = Math.hypot(a.re, a.im);
  const p = 2;
  const A = new Float64Array(c.n * p);
  for (let i = 0; i < c.n; i++) {
    const r2 = ((c.x[i] - centre.x) ** 2 + (c.y[i] - centre.y) ** 2) / (g.scale * g.scale);
    A[i * p] = 1;
    A[i * p + 1] = amp * r2;
  }
  const fit = robustLinearFit(A, c.T, c.sigT, p, { mode: 'floor' });
  if (!fit) return null;
  return { ratio: fit.coef[1], err: errOf(fit, 1) };
}

/**
 * diskPx: optional per-star defocus-disk diameters (px) from a defocus model; coma and defocus
 * rays add at the same pupil point, so a defocused star shows more spin-1 moment for the same
 * coma (coma-calibration.ts adaptiveComaDefocus).
 */
export function fitSpin1(c: StarColumns, g: Geometry, seed = 54321, diskPx: Float64Array | null = null): Spin1Field | null {
  if (c.n < 10) return null;
  const { zr, zi } = normCoords(c, g);
  // 1) Centre and a first amplitude from the per-star coma-length vectors: S = alpha z + beta.
  const { A, p } = complexDesign(zr, zi, (re, im) => [[re, im], [1, 0]]);
  const y = interleave(c.sx, c.sy);
  const sig = twice(c.sigS);
  const fit = robustLinearFit(A, y, sig, p, { mode: 'scale' });
  if (!fit) return null;
  const centreOf = (coef: Float64Array): [number, number] | null => {
    const ar = coef[0], ai = coef[1], br = coef[2], bi = coef[3];
    const d = ar * ar + ai * ai;
    if (!(d > 0)) return null;
    const zr0 = -(br * ar + bi * ai) / d;
    const zi0 = -(bi * ar - br * ai) / d;
    return [g.cx + zr0 * g.scale, g.cy + zi0 * g.scale];
  };
  let centrePx: XY | null = null;
  let centreErrPx: XY | null = null;
  let alpha = { re: fit.coef[0], im: fit.coef[1] };
  let alphaErr = { re: errOf(fit, 0), im: errOf(fit, 1) };
  let alphaSig = pairSignificance(fit, 0);
  const z0 = centreOf(fit.coef);
  if (alphaSig >= 4 && z0 && Math.hypot(z0[0] - g.cx, z0[1] - g.cy) <= MAX_CENTRE_OFFSET * g.scale) {
    const w = new Float64Array(sig.length);
    for (let r = 0; r < sig.length; r++) w[r] = fit.robust[r] / (sig[r] * sig[r] * fit.scatter * fit.scatter);
    const e = bootstrapCentre(A, y, w, p, c.n, centreOf, seed);
    if (e) {
      centrePx = { x: z0[0], y: z0[1] };
      centreErrPx = { x: e.sx, y: e.sy };
    }
  }
  // 2) The per-star inversion is biased toward zero where noise dominates (small coma), so the
  // amplitude and centre are refined on the measured moments themselves, whose noise is linear:
  // c_i = c_adaptive(S_i, T_i), S_i = alpha (z_i - z0).
  if (alphaSig >= 4) {
    const r = refineComa(c, g, alpha, centrePx ?? { x: g.cx, y: g.cy }, diskPx);
    if (r && Math.hypot(r.centre.x - g.cx, r.centre.y - g.cy) <= MAX_CENTRE_OFFSET * g.scale) {
      alpha = r.alpha;
      alphaErr = r.alphaErr;
      alphaSig = r.significance;
      if (centrePx) {
        centrePx = r.centre;
        centreErrPx = { x: Math.max(0.1, r.centreErr.x), y: Math.max(0.1, r.centreErr.y) };
      }
    }
  }
  // 3) Coma that is the same everywhere: the mean measured vector (linear noise) and its size.
  const mx = clippedMean(c.cx);
  const my = clippedMean(c.cy);
  const uSig = Math.hypot(mx.mean / (mx.err || Infinity), my.mean / (my.err || Infinity));
  const Tm = clippedMean(c.T).mean;
  const uMag = Math.hypot(mx.mean, my.mean);
  // With a significant field the constant part is the centre offset, already in z0.
  const uS = uSig >= 4 && alphaSig < 4 ? comaFromMeasured(uMag, Tm).S : 0;
  const uErrS = comaFromMeasured(Math.hypot(mx.err, my.err) / Math.SQRT2, Tm).S;
  return {
    alpha,
    alphaErr,
    alphaSignificance: alphaSig,
    centrePx,
    centreErrPx,
    uniform: { x: uMag > 0 ? (uS * mx.mean) / uMag : 0, y: uMag > 0 ? (uS * my.mean) / uMag : 0 },
    uniformErr: uErrS,
    uniformSignificance: uSig,
  };
}

/**
 * Levenberg-Marquardt on (alpha, z0) of the measured coma vectors c_i = c_ad(|S_i|, T_i) S_i/|S_i|,
 * S_i = alpha (z_i - z0), with the adaptive-moment model of coma-calibration.ts; rows
 * interleaved (x, y), numerical derivatives, one Huber reweighting.
 */
function refineComa(c: StarColumns, g: Geometry, alpha0: { re: number; im: number }, cz: XY, diskPx: Float64Array | null): {
  alpha: { re: number; im: number }; alphaErr: { re: number; im: number }; significance: number; centre: XY; centreErr: XY;
} | null {
  const n = c.n;
  const xs = Float64Array.from(c.x, (v) => (v - g.cx) / g.scale);
  const ys = Float64Array.from(c.y, (v) => (v - g.cy) / g.scale);
  const y = interleave(c.cx, c.cy);
  const w = new Float64Array(2 * n);
  for (let i = 0; i < n; i++) w[2 * i] = w[2 * i + 1] = 1 / (c.sigC[i] * c.sigC[i]);
  const predict = (p: ArrayLike<number>, i: number, out: Float64Array) => {
    const a = xs[i] - p[2];
    const b = ys[i] - p[3];
    const sx = p[0] * a - p[1] * b;
    const sy = p[0] * b + p[1] * a;
    const S = Math.hypot(sx, sy);
    if (!(S > 0)) { out[0] = 0; out[1] = 0; return; }
    const d = diskPx ? diskPx[i] : 0;
    const s2 = d > 0 ? coreForComaDefocus(S, d, c.T[i]) : coreForComa(S, c.T[i]);
    const cm = d > 0 ? comaDefocusMoments(S, d, s2).c : adaptiveComaMoments(S, s2).c;
    out[0] = (cm * sx) / S;
    out[1] = (cm * sy) / S;
  };
  const tmp = new Float64Array(2);
  const tmp2 = new Float64Array(2);
  const q = new Float64Array(4);
  const problem = {
    n: 2 * n, y, w,
    model(p: Float64Array, row: number, jac: Float64Array | null): number {
      const i = row >> 1;
      const k = row & 1;
      predict(p, i, tmp);
      if (jac) {
        for (let j = 0; j < 4; j++) {
          const h = j < 2 ? 1e-4 * (1 + Math.abs(p[j])) : 1e-5;
          q.set(p);
          q[j] += h;
          predict(q, i, tmp2);
          jac[j] = (tmp2[k] - tmp[k]) / h;
        }
      }
      return tmp[k];
    },
  };
  let r = levenbergMarquardt(problem, [alpha0.re, alpha0.im, (cz.x - g.cx) / g.scale, (cz.y - g.cy) / g.scale], 40);
  const res = new Float64Array(2 * n);
  for (let row = 0; row < 2 * n; row++) res[row] = (y[row] - problem.model(r.params, row, null)) * Math.sqrt(w[row]);
  const scale = Math.sqrt(medianOf(res.map((v) => v * v)) / 0.454936) || 1;
  for (let row = 0; row < 2 * n; row++) {
    const z = Math.abs(res[row]) / scale;
    w[row] *= z > 6 ? 0 : z > 2.5 ? 2.5 / z : 1;
  }
  r = levenbergMarquardt(problem, Array.from(r.params), 40);
  if (!r.covUnit) return null;
  let chi2 = 0;
  let neff = 0;
  for (let row = 0; row < 2 * n; row++) if (w[row] > 0) { neff++; chi2 += w[row] * (y[row] - problem.model(r.params, row, null)) ** 2; }
  const sc = Math.max(1, chi2 / Math.max(1, neff - 4));
  const cov = r.covUnit;
  const cv = (a: number, b: number) => cov[a * 4 + b] * sc;
  const inv = choleskyInverse(new Float64Array([cv(0, 0), cv(0, 1), cv(1, 0), cv(1, 1)]), 2);
  const [ar, ai] = [r.params[0], r.params[1]];
  const sig = inv ? Math.sqrt(Math.max(0, ar * ar * inv[0] + 2 * ar * ai * inv[1] + ai * ai * inv[3])) : 0;
  return {
    alpha: { re: ar, im: ai },
    alphaErr: { re: Math.sqrt(Math.max(0, cv(0, 0))), im: Math.sqrt(Math.max(0, cv(1, 1))) },
    significance: sig,
    centre: { x: g.cx + r.params[2] * g.scale, y: g.cy + r.params[3] * g.scale },
    centreErr: { x: Math.sqrt(Math.max(0, cv(2, 2))) * g.scale, y: Math.sqrt(Math.max(0, cv(3, 3))) * g.scale },
  };
}

/** Coma length vector (px) of the fitted field at a pixel position. */
export function comaLengthAt(s1: Spin1Field, g: Geometry, x: number, y: number): XY {
  const cz = s1.centrePx ?? { x: g.cx, y: g.cy };
  const ur = (x - cz.x) / g.scale;
  const ui = (y - cz.y) / g.scale;
  return { x: s1.alpha.re * ur - s1.alpha.im * ui + s1.uniform.x, y: s1.alpha.re * ui + s1.alpha.im * ur + s1.uniform.y };
}

/**
 * |M| of a smooth spin-2 model about a centre, A2 (z - z0)^2 + A4 (z - z0)^2 |z - z0|^2 + B (z - z0) + C,
 * per star: for a rank-1 pattern (trail, rotation) the size it adds. The linear and constant terms
 * absorb an imprecise or distant centre.
 */
export function patternMagnitude(c: StarColumns, g: Geometry, centre: XY): Float64Array {
  const zr = Float64Array.from(c.x, (v) => (v - centre.x) / g.scale);
  const zi = Float64Array.from(c.y, (v) => (v - centre.y) / g.scale);
  const { A, p } = complexDesign(zr, zi, (re, im) => {
    const z2r = re * re - im * im;
    const z2i = 2 * re * im;
    const r2 = re * re + im * im;
    return [[z2r, z2i], [z2r * r2, z2i * r2], [re, im], [1, 0]];
  });
  const fit = robustLinearFit(A, interleave(c.M1, c.M2), twice(c.sigM), p, { mode: 'floor' });
  const out = new Float64Array(c.n);
  if (!fit) return out;
  for (let i = 0; i < c.n; i++) {
    let m1 = 0;
    let m2 = 0;
    for (let j = 0; j < p; j++) { m1 += A[2 * i * p + j] * fit.coef[j]; m2 += A[(2 * i + 1) * p + j] * fit.coef[j]; }
    out[i] = Math.hypot(m1, m2);
  }
  return out;
}

/**
 * Rank-1 test across the field (optics.md 6): a trail or field rotation adds to one axis only,
 * so the across-pattern width T - |M| (twice the minor-axis variance; exact for adaptive moments
 * too, since the trail and the weight separate along the trail axes) is the same everywhere.
 * Regressed on rho^2 and rho^4 about the centre; flat when its change at rho = 0.5, 0.7, 1
 * stays within 3 sigma or a tenth of the pattern amplitude there.
 */
export function minorAxisFlat(c: StarColumns, g: Geometry, centre: XY, aMag: number, mAbs = patternMagnitude(c, g, centre)): boolean {
  const n = c.n;
  const A = new Float64Array(n * 3);
  const y = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const r2 = ((c.x[i] - centre.x) ** 2 + (c.y[i] - centre.y) ** 2) / (g.scale * g.scale);
    A[3 * i] = 1;
    A[3 * i + 1] = r2;
    A[3 * i + 2] = r2 * r2;
    y[i] = c.T[i] - mAbs[i];
  }
  const fit = robustLinearFit(A, y, c.sigT, 3, { mode: 'floor' });
  if (!fit) return false;
  for (const rho of [0.5, 0.7, 1]) {
    const a = rho * rho;
    const b = a * a;
    const d = fit.coef[1] * a + fit.coef[2] * b;
    const v = a * a * fit.cov[4] + b * b * fit.cov[8] + 2 * a * b * fit.cov[5];
    if (Math.abs(d) > Math.max(3 * Math.sqrt(Math.max(0, v)), 0.1 * aMag * a)) return false;
  }
  return true;
}
