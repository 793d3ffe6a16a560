/**
 * Adaptive (elliptical-Gaussian-weighted) moments, Bernstein & Jarvis 2002 (AJ 123, 583),
 * as in the HSM adaptive moments of Hirata & Seljak 2003 (MNRAS 343, 459): the weight's
 * centre and covariance are iterated until they match the object's. At convergence, for a
 * Gaussian object, the weight covariance equals the object covariance and the weighted
 * moments are half of it.
 *
 * Reported second moments are the converged weight covariance W (= 2 x the weighted
 * central second moments at convergence), i.e. the object's own covariance for a Gaussian
 * star, pixel box included (+1/12 px^2 per axis for pixel-integrated data).
 */

import { lazyKernel } from '../wasm/instantiate.ts';
import { MOMENTS_WASM_BASE64 } from './wasm/moments.wasm.ts';

export interface AdaptiveMoments {
  x: number;
  y: number;
  ixx: number;
  iyy: number;
  ixy: number;
  e1: number;
  e2: number;
  flux: number;
  comaX: number;
  comaY: number;
  converged: boolean;
  iterations: number;
}

const MAX_ITER = 60;
/** Weight truncated where the Gaussian exponent exceeds QMAX/2 (exp(-12.5) = 4e-6). */
const QMAX = 25;

/** Sums of one weighted pass (module-level, no allocation). */
const S = new Float64Array(12);
let WGT = new Float64Array(0); // weight per stamp pixel of the last gaussianWeights() call
let COLW = new Float64Array(0);
/** Bounding box of the last gaussianWeights() call. */
const BOX = new Int32Array(4);

/**
 * Fill WGT with the elliptical Gaussian weight exp(-Q/2), Q = d^T M d, M = [[ia, ib], [ib, ic]],
 * about (xc, yc) inside the bounding box of Q <= QMAX (0 beyond). Evaluated separably:
 * exp(-ia dx^2/2) per column, and along each row exp(-(ic dy^2 + 2 ib dx dy)/2) as a
 * geometric sequence in x (one multiply per pixel instead of one exp), unless the cross
 * term could overflow. Returns false for an empty box.
 */
function gaussianWeights(w: number, h: number, xc: number, yc: number, ia: number, ib: number, ic: number, wxx: number, wyy: number): boolean {
  if (WGT.length < w * h) WGT = new Float64Array(Math.max(w * h, 2 * WGT.length));
  if (COLW.length < w) COLW = new Float64Array(Math.max(w, 2 * COLW.length));
  // Bounding box of the ellipse d^T W^-1 d = QMAX: half-widths sqrt(QMAX * Wxx), sqrt(QMAX * Wyy).
  const rx = Math.sqrt(QMAX * wxx), ry = Math.sqrt(QMAX * wyy);
  const x0 = Math.max(0, Math.ceil(xc - rx)), x1 = Math.min(w - 1, Math.floor(xc + rx));
  const y0 = Math.max(0, Math.ceil(yc - ry)), y1 = Math.min(h - 1, Math.floor(yc + ry));
  BOX[0] = x0; BOX[1] = x1; BOX[2] = y0; BOX[3] = y1;
  if (!(x1 >= x0 && y1 >= y0)) return false;
  const wg = WGT, cw = COLW;
  // |cross exponent| <= |ib| max|dx| max|dy|: keep the running factor far from overflow.
  const separable = Math.abs(ib) * Math.max(Math.abs(x0 - xc), Math.abs(x1 - xc)) * Math.max(Math.abs(y0 - yc), Math.abs(y1 - yc)) < 300;
  for (let x = x0; x <= x1; x++) { const dx = x - xc; cw[x] = Math.exp(-0.5 * ia * dx * dx); }
  for (let y = y0; y <= y1; y++) {
    const dy = y - yc;
    const row = y * w;
    let t = separable ? Math.exp(-0.5 * (ic * dy * dy + 2 * ib * (x0 - xc) * dy)) : 0;
    const ratio = separable ? Math.exp(-ib * dy) : 0;
    for (let x = x0; x <= x1; x++, t *= ratio) {
      const dx = x - xc;
      const q = dx * (ia * dx + 2 * ib * dy) + ic * dy * dy;
      wg[row + x] = q > QMAX ? 0 : separable ? cw[x] * t : Math.exp(-0.5 * q);
    }
  }
  return true;
}

/**
 * One weighted pass about (xc, yc) with weight exp(-0.5 d^T W^-1 d).
 * S: [0] sum wI, [1] sum wI dx, [2] sum wI dy, [3] dx^2, [4] dy^2, [5] dx dy,
 * [6] sum wI dx r^2, [7] sum wI dy r^2 (r^2 = dx^2 + dy^2), [8] pixels used.
 * Returns false when the weight covariance is not positive definite.
 */
function pass(stamp: Float32Array, w: number, h: number, xc: number, yc: number, wxx: number, wyy: number, wxy: number, third: boolean): boolean {
  const det = wxx * wyy - wxy * wxy;
  if (!(det > 0) || !(wxx > 0)) return false;
  if (!gaussianWeights(w, h, xc, yc, wyy / det, -wxy / det, wxx / det, wxx, wyy)) return false;
  const x0 = BOX[0], x1 = BOX[1], y0 = BOX[2], y1 = BOX[3];
  const wg = WGT;
  let s0 = 0, sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0, cx = 0, cy = 0, np = 0;
  for (let y = y0; y <= y1; y++) {
    const dy = y - yc;
    const row = y * w;
    for (let x = x0; x <= x1; x++) {
      const v = stamp[row + x];
      const g = wg[row + x];
      if (v !== v || g === 0) continue; // NaN: missing
      const dx = x - xc;
      const wi = g * v;
      s0 += wi;
      const wdx = wi * dx, wdy = wi * dy;
      sx += wdx; sy += wdy;
      sxx += wdx * dx; syy += wdy * dy; sxy += wdx * dy;
      if (third) {
        const r2 = dx * dx + dy * dy;
        cx += wdx * r2; cy += wdy * r2;
      }
      np++;
    }
  }
  S[0] = s0; S[1] = sx; S[2] = sy; S[3] = sxx; S[4] = syy; S[5] = sxy; S[6] = cx; S[7] = cy; S[8] = np;
  return true;
}

/**
 * Adaptive moments of a background-subtracted stamp (NaN = missing pixel, skipped),
 * starting at (x0, y0) with a round weight of sigma sigma0. Coordinates relative to stamp
 * pixel (0,0), pixel centres at integers.
 *
 * - ixx, iyy, ixy: converged weight covariance = the object's moments for a Gaussian (px^2).
 * - e1 = (ixx - iyy)/T, e2 = 2 ixy/T, T = ixx + iyy (distortion, optics.md §1.3).
 * - flux = 2 sum(w I): the total flux of a Gaussian star (for which sum(w I) = F/2 with the
 *   matched weight of peak 1).
 * - comaX + i comaY = <|z|^2 z>_w / (T/2)^(3/2): the spin-1 third moment (Piff
 *   calculate_moments definition, optics.md §1.5) with the converged adaptive weight, about
 *   the converged centre, <.>_w normalised by sum(w I), divided by sigma^3 of the round star
 *   with the same T. It points toward the flare (for a geometric coma spot the unweighted
 *   <|z|^2 z> is +S^3/3 along the direction from the sharp tip to the flare).
 *
 * Update rule: for a Gaussian object C and weight W the weighted covariance is
 * M = (C^-1 + W^-1)^-1, so C = (M^-1 - W^-1)^-1 and the centre moves by C M^-1 mu (one-step
 * exact for Gaussians); when that is not positive definite or jumps by more than 3x, the
 * plain fixed-point step W <- 2M, x <- x + 2 mu is used. Both have the fixed point W = 2M.
 * Stops when the centre moves by < 1e-4 px and W by < 1e-5 of its trace (at most 60 steps).
 * converged = false also when the weight sigma exceeds half the distance from the centre to
 * the nearest stamp edge (the stamp cannot hold the object). Never throws: failure gives
 * converged = false (NaN where undefined).
 */
export function adaptiveMoments(stamp: Float32Array, w: number, h: number, x0: number, y0: number, sigma0: number): AdaptiveMoments {
  const k = momentsKernel();
  if (!k || !(w > 0 && h > 0 && w * h <= k.stamp.length)) return adaptiveMomentsJs(stamp, w, h, x0, y0, sigma0);
  k.stamp.set(stamp.subarray(0, w * h));
  k.moments(w, h, x0, y0, sigma0);
  const o = k.out;
  return { x: o[0], y: o[1], ixx: o[2], iyy: o[3], ixy: o[4], e1: o[5], e2: o[6], flux: o[7], comaX: o[8], comaY: o[9], converged: o[10] === 1, iterations: o[11] };
}

interface MomentsKernel {
  stamp: Float32Array;
  variance: Float32Array;
  out: Float64Array;
  moments: (w: number, h: number, x0: number, y0: number, sigma0: number) => void;
  fixed: (w: number, h: number, x: number, y: number, ixx: number, iyy: number, ixy: number) => void;
  errors: (w: number, h: number, varMode: number, constVar: number, x: number, y: number, ixx: number, iyy: number, ixy: number) => void;
}
/** adaptiveMomentsJs and adaptiveMomentErrorsJs compiled to WebAssembly (wasm/moments.as.ts), once per thread. */
const momentsKernel = lazyKernel<MomentsKernel>(MOMENTS_WASM_BASE64, 'moments', (m) => {
  const cap = m.int('capacity');
  return { stamp: m.f32('stampPtr', cap), variance: m.f32('variancePtr', cap), out: m.f64('outPtr', 16), moments: m.fn('moments'), fixed: m.fn('fixedMoments'), errors: m.fn('momentErrors') };
});

/** adaptiveMoments in TypeScript: the reference for the WebAssembly kernel, and the fallback. */
export function adaptiveMomentsJs(stamp: Float32Array, w: number, h: number, x0: number, y0: number, sigma0: number): AdaptiveMoments {
  let xc = x0, yc = y0;
  const s0 = Number.isFinite(sigma0) && sigma0 > 0.3 ? sigma0 : 1.5;
  let wxx = s0 * s0, wyy = s0 * s0, wxy = 0;
  const maxVar = 0.25 * Math.max(w, h) * Math.max(w, h); // weight sigma up to half the stamp
  let converged = false;
  let it = 0;
  let ok = true;
  for (; it < MAX_ITER; it++) {
    if (!pass(stamp, w, h, xc, yc, wxx, wyy, wxy, false) || !(S[0] > 0) || S[8] < 4) { ok = false; break; }
    const m0 = S[0];
    const mux = S[1] / m0, muy = S[2] / m0;
    const mxx = S[3] / m0 - mux * mux, myy = S[4] / m0 - muy * muy, mxy = S[5] / m0 - mux * muy;
    const mdet = mxx * myy - mxy * mxy;
    if (!(mxx > 0 && myy > 0 && mdet > 0)) { ok = false; break; }
    // Newton-like (Gaussian-exact) update.
    const wdet = wxx * wyy - wxy * wxy;
    const pa = myy / mdet - wyy / wdet, pb = -mxy / mdet + wxy / wdet, pc = mxx / mdet - wxx / wdet; // M^-1 - W^-1
    const pdet = pa * pc - pb * pb;
    let nxx: number, nyy: number, nxy: number, dx: number, dy: number;
    const tr0 = wxx + wyy;
    let useNewton = pa > 0 && pc > 0 && pdet > 0;
    if (useNewton) {
      nxx = pc / pdet; nyy = pa / pdet; nxy = -pb / pdet;
      const tr = nxx + nyy;
      if (!(tr < 3 * tr0 && tr > tr0 / 3)) useNewton = false;
      // centre step C M^-1 mu
      const ia = myy / mdet, ib = -mxy / mdet, ic = mxx / mdet;
      const ux = ia * mux + ib * muy, uy = ib * mux + ic * muy;
      dx = nxx * ux + nxy * uy; dy = nxy * ux + nyy * uy;
    } else {
      nxx = 0; nyy = 0; nxy = 0; dx = 0; dy = 0;
    }
    if (!useNewton) {
      nxx = 2 * mxx; nyy = 2 * myy; nxy = 2 * mxy;
      dx = 2 * mux; dy = 2 * muy;
    }
    // Keep the step sane: centre within the stamp, weight not larger than the stamp.
    const stepMax = Math.sqrt(tr0);
    const sl = Math.hypot(dx, dy);
    if (sl > stepMax) { dx *= stepMax / sl; dy *= stepMax / sl; }
    if (nxx + nyy > 2 * maxVar) { ok = false; break; }
    const change = Math.abs(nxx - wxx) + Math.abs(nyy - wyy) + 2 * Math.abs(nxy - wxy);
    xc += dx; yc += dy;
    wxx = nxx; wyy = nyy; wxy = nxy;
    if (!(xc > -0.5 && xc < w - 0.5 && yc > -0.5 && yc < h - 0.5)) { ok = false; break; }
    if (Math.abs(dx) < 1e-4 && Math.abs(dy) < 1e-4 && change < 1e-5 * (wxx + wyy)) { converged = true; it++; break; }
  }
  const nan = Number.NaN;
  if (!ok || !pass(stamp, w, h, xc, yc, wxx, wyy, wxy, true) || !(S[0] > 0)) {
    return { x: ok ? xc : nan, y: ok ? yc : nan, ixx: nan, iyy: nan, ixy: nan, e1: nan, e2: nan, flux: nan, comaX: nan, comaY: nan, converged: false, iterations: it };
  }
  // The stamp must hold the object: weight sigma at most half the distance to the nearest edge.
  const edge = Math.min(xc + 0.5, w - 0.5 - xc, yc + 0.5, h - 0.5 - yc);
  if (4 * Math.max(wxx, wyy) > edge * edge) converged = false;
  const T = wxx + wyy;
  const norm = S[0] * Math.pow(T / 2, 1.5);
  return {
    x: xc,
    y: yc,
    ixx: wxx,
    iyy: wyy,
    ixy: wxy,
    e1: (wxx - wyy) / T,
    e2: (2 * wxy) / T,
    flux: 2 * S[0],
    comaX: S[6] / norm,
    comaY: S[7] / norm,
    converged,
    iterations: it,
  };
}

/**
 * The adaptive moments' result for a star whose covariance is already known (from a PSF fit, for
 * undersampled stars whose adaptive iteration has no fixed point: sampled at pixel centres, a
 * star narrower than about 1 px sigma makes the weighted variance shrink with the weight, down to
 * a single pixel). The weight is fixed at that covariance about (x, y), which is where the
 * adaptive weight settles for a Gaussian star, so ixx, iyy, ixy, e1, e2 are the given ones,
 * flux = 2 sum(w I) and the spin-1 coma the weighted third moment about (x, y), normalised as in
 * adaptiveMoments. converged = false when the weighted flux is not positive.
 */
export function fixedMoments(stamp: Float32Array, w: number, h: number, x: number, y: number, ixx: number, iyy: number, ixy: number): AdaptiveMoments {
  const k = momentsKernel();
  if (k && w > 0 && h > 0 && w * h <= k.stamp.length) {
    k.stamp.set(stamp.subarray(0, w * h));
    k.fixed(w, h, x, y, ixx, iyy, ixy);
    const o = k.out;
    return { x: o[0], y: o[1], ixx: o[2], iyy: o[3], ixy: o[4], e1: o[5], e2: o[6], flux: o[7], comaX: o[8], comaY: o[9], converged: o[10] === 1, iterations: o[11] };
  }
  return fixedMomentsJs(stamp, w, h, x, y, ixx, iyy, ixy);
}

/** fixedMoments in TypeScript: the reference for the WebAssembly kernel, and the fallback. */
export function fixedMomentsJs(stamp: Float32Array, w: number, h: number, x: number, y: number, ixx: number, iyy: number, ixy: number): AdaptiveMoments {
  const nan = Number.NaN;
  const T = ixx + iyy;
  if (!pass(stamp, w, h, x, y, ixx, iyy, ixy, true) || !(S[0] > 0) || !(T > 0)) {
    return { x, y, ixx: nan, iyy: nan, ixy: nan, e1: nan, e2: nan, flux: nan, comaX: nan, comaY: nan, converged: false, iterations: 0 };
  }
  const norm = S[0] * Math.pow(T / 2, 1.5);
  return { x, y, ixx, iyy, ixy, e1: (ixx - iyy) / T, e2: (2 * ixy) / T, flux: 2 * S[0], comaX: S[6] / norm, comaY: S[7] / norm, converged: true, iterations: 0 };
}

/**
 * Moments with a fixed elliptical Gaussian weight of covariance (wxx, wyy, wxy) about
 * (xc, yc) (no iteration): raw weighted moments, as in Source Extractor's windowed
 * moments (X2WIN = sigma^2/2 for a Gaussian star with a matched weight). With a very broad
 * weight these are the plain unweighted moments. Third moments are about (xc, yc).
 */
export function weightedMoments(stamp: Float32Array, w: number, h: number, xc: number, yc: number, wxx: number, wyy: number, wxy: number): {
  sum: number; mx: number; my: number; mxx: number; myy: number; mxy: number; spin1X: number; spin1Y: number;
} {
  const nan = Number.NaN;
  if (!pass(stamp, w, h, xc, yc, wxx, wyy, wxy, true) || !(S[0] !== 0)) return { sum: nan, mx: nan, my: nan, mxx: nan, myy: nan, mxy: nan, spin1X: nan, spin1Y: nan };
  const m0 = S[0];
  return { sum: m0, mx: S[1] / m0, my: S[2] / m0, mxx: S[3] / m0, myy: S[4] / m0, mxy: S[5] / m0, spin1X: S[6] / m0, spin1Y: S[7] / m0 };
}

/**
 * First-order (linear) errors of the adaptive centroid and distortion from per-pixel
 * variances (constant or per pixel; NaN pixels skipped), holding the converged weight:
 * var(x) = 4 sum(w^2 var (x - xc)^2) / (sum w I)^2 (Source Extractor windowed-centroid
 * error, PositionWin), and for e the fixed-weight distortion error times 2: the matched
 * weight responds to a shape change with half the change (at W = C, dW = 4 dM), which
 * is exact for a Gaussian star.
 */
export function adaptiveMomentErrors(stamp: Float32Array, variance: Float32Array | number, w: number, h: number, m: AdaptiveMoments): { x: number; y: number; e1: number; e2: number } {
  const k = momentsKernel();
  if (!k || !(w > 0 && h > 0 && w * h <= k.stamp.length)) return adaptiveMomentErrorsJs(stamp, variance, w, h, m);
  k.stamp.set(stamp.subarray(0, w * h));
  let mode = 1, c = 0;
  if (typeof variance === 'number') c = variance; else { mode = 2; k.variance.set(variance.subarray(0, w * h)); }
  k.errors(w, h, mode, c, m.x, m.y, m.ixx, m.iyy, m.ixy);
  const o = k.out;
  return { x: o[12], y: o[13], e1: o[14], e2: o[15] };
}

/** adaptiveMomentErrors in TypeScript: the reference for the WebAssembly kernel, and the fallback. */
export function adaptiveMomentErrorsJs(stamp: Float32Array, variance: Float32Array | number, w: number, h: number, m: AdaptiveMoments): { x: number; y: number; e1: number; e2: number } {
  const nan = Number.NaN;
  const det = m.ixx * m.iyy - m.ixy * m.ixy;
  if (!(det > 0) || !Number.isFinite(m.x) || !Number.isFinite(m.y)) return { x: nan, y: nan, e1: nan, e2: nan };
  if (!gaussianWeights(w, h, m.x, m.y, m.iyy / det, -m.ixy / det, m.ixx / det, m.ixx, m.iyy)) return { x: nan, y: nan, e1: nan, e2: nan };
  const x0 = BOX[0], x1 = BOX[1], y0 = BOX[2], y1 = BOX[3];
  const wg = WGT;
  const constVar = typeof variance === 'number';
  // First pass: sums for e (raw moments about the centre).
  let s0 = 0, sxx = 0, syy = 0, sxy = 0;
  for (let y = y0; y <= y1; y++) {
    const dy = y - m.y;
    for (let x = x0; x <= x1; x++) {
      const v = stamp[y * w + x];
      const g = wg[y * w + x];
      if (v !== v || g === 0) continue;
      const dx = x - m.x;
      const wi = g * v;
      s0 += wi; sxx += wi * dx * dx; syy += wi * dy * dy; sxy += wi * dx * dy;
    }
  }
  const T = sxx + syy;
  if (!(s0 > 0) || !(T > 0)) return { x: nan, y: nan, e1: nan, e2: nan };
  const e1 = (sxx - syy) / T, e2 = (2 * sxy) / T;
  let vx = 0, vy = 0, v1 = 0, v2 = 0;
  for (let y = y0; y <= y1; y++) {
    const dy = y - m.y;
    for (let x = x0; x <= x1; x++) {
      const i = y * w + x;
      const v = stamp[i];
      const g = wg[i];
      if (v !== v || g === 0) continue;
      const s2 = constVar ? (variance as number) : (variance as Float32Array)[i];
      if (!(s2 > 0) || !Number.isFinite(s2)) continue;
      const dx = x - m.x;
      const w2s = g * g * s2;
      vx += w2s * dx * dx; vy += w2s * dy * dy;
      const r2 = dx * dx + dy * dy;
      const d1 = dx * dx - dy * dy - e1 * r2, d2 = 2 * dx * dy - e2 * r2;
      v1 += w2s * d1 * d1; v2 += w2s * d2 * d2;
    }
  }
  return {
    x: (2 * Math.sqrt(vx)) / s0,
    y: (2 * Math.sqrt(vy)) / s0,
    e1: (2 * Math.sqrt(v1)) / T,
    e2: (2 * Math.sqrt(v2)) / T,
  };
}

/**
 * Second-moment ellipse (Source Extractor Position.rst definitions): A, B = rms spreads
 * along the major and minor axes, theta = major-axis angle in (-90, 90] degrees from +x
 * toward +y, e1/e2 distortion components.
 */
export function momentsToEllipse(ixx: number, iyy: number, ixy: number): { a: number; b: number; thetaDeg: number; e1: number; e2: number } {
  const mean = 0.5 * (ixx + iyy);
  const d = Math.sqrt(0.25 * (ixx - iyy) * (ixx - iyy) + ixy * ixy);
  let theta = 0.5 * Math.atan2(2 * ixy, ixx - iyy) * (180 / Math.PI);
  if (theta <= -90) theta += 180;
  const T = ixx + iyy;
  return { a: Math.sqrt(mean + d), b: Math.sqrt(Math.max(mean - d, 0)), thetaDeg: theta, e1: (ixx - iyy) / T, e2: (2 * ixy) / T };
}
