/**
 * Elliptical Gaussian and elliptical Moffat (Moffat 1969, A&A 3, 455) PSF fits by
 * Levenberg-Marquardt (Marquardt 1963; damping update of Nielsen 1999), specialised to
 * these two models: analytic Jacobians, per-pixel weights 1/variance, module-level
 * Float64Array scratch (no allocation per iteration), Cholesky solves of the 7x7 / 8x8
 * normal equations.
 *
 * Models, with d = (x - x0, y - y0) and Q = a dx^2 + 2 b dx dy + c dy^2 scaled so that
 * Q = 1 on the half-maximum contour (FWHM along an axis = 2/sqrt(eigenvalue)):
 *   gaussian  m = B + A 2^(-Q)                       ([[a,b],[b,c]] = C^-1 / (2 ln 2))
 *   moffat    m = B + A (1 + k Q)^(-beta), k = 2^(1/beta) - 1   (Moffat 1969, alpha^2 = 1/(k a))
 * This half-maximum form of the inverse covariance has no angle degeneracy for round
 * stars, and keeps the shape parameters nearly uncorrelated with beta (the Moffat's
 * alpha-beta degeneracy otherwise makes the fit crawl); positive definiteness is enforced
 * by rejecting steps that leave it. The Moffat's eighth parameter is 1/beta, kept in
 * [1/20, 1/1.2] (beta 1.2..20; above 20 a Moffat is practically a Gaussian), with the bound
 * handled as an active set. Parameters: x0, y0, A, B, a, b, c (, 1/beta); the Moffat starts
 * at beta = 4.
 *
 * Stopping: an accepted step whose actual and predicted chi2 decrease are both below
 * 1e-3 x chi2Reduced (i.e. ~1e-3 in units of the noise, far below the parameter errors).
 *
 * The model is evaluated at pixel centres and fitted to the pixel values, so the
 * reported FWHMs describe the star as recorded, the pixel box included (for a Gaussian
 * the fitted per-axis variance is close to sigma^2 + 1/12 px^2, the box variance,
 * Thompson, Larson & Webb 2002).
 */

import type { PsfFit } from './types.ts';
import { PSF_FIT_WASM_BASE64 } from './wasm/psf-fit.wasm.ts';
import { lazyKernel } from '../wasm/instantiate.ts';

export interface FitOptions {
  model: 'gaussian' | 'moffat';
  /**
   * Gauss-Legendre points per pixel axis to integrate the model over each pixel (3 or 4), for
   * undersampled stars; absent or 1: the model at pixel centres. An integrated fit reports the
   * star as recorded all the same: its FWHMs, angle and ellipticity are those of the fitted
   * profile's covariance plus the pixel box's, I/12 (see boxedShape).
   */
  pixelNodes?: number;
  maxIterations?: number;
  /** per-pixel variance, or a constant */
  variance: Float32Array | number;
  /** Fit only pixels within this distance (px) of init (x, y); default: the whole stamp. */
  radius?: number;
  init: { x: number; y: number; ixx: number; iyy: number; ixy: number; amplitude?: number; background?: number };
}

const LN2 = Math.LN2;
const BETA_MIN = 1.2;
const BETA_MAX = 20;
const BETA_START = 4;
// The Moffat's eighth parameter is gamma = 1/beta: the profile is analytic in gamma down to
// the Gaussian limit gamma -> 0, so Gaussian-like stars do not send the fit on a long walk
// (about 4 instead of 5.5 iterations on average).
const G_MIN = 1 / BETA_MAX;
const G_MAX = 1 / BETA_MIN;
const RAD2DEG = 180 / Math.PI;

// Module-level scratch, grown on demand (one copy per worker thread). Pixels are kept on
// the stamp grid; excluded pixels (NaN, bad variance) have weight 0.
let cap = 0;
let DAT = new Float64Array(0);
let WT = new Float64Array(0);
let PROF = new Float64Array(0); // profile value at the last evaluated parameters
let LNU = new Float64Array(0); // Moffat ln(1 + kQ) at the last evaluated parameters
let IU = new Float64Array(0); // Moffat 1/(1 + kQ)
let COLT = new Float64Array(0); // Gaussian per-column factor
const H = new Float64Array(64); // J^T W J (full symmetric)
const G = new Float64Array(8); // J^T W r
const A = new Float64Array(64); // damped matrix / Cholesky factor
const P = new Float64Array(8); // current parameters
const PT = new Float64Array(8); // trial parameters
const DELTA = new Float64Array(8);
const COV = new Float64Array(64);
const TMP = new Float64Array(8);
const GRAD = new Float64Array(8);
let GW = 0, GH = 0; // grid of the current fit
// Gauss-Legendre nodes and weights on a pixel [-1/2, 1/2] (the [-1, 1] rule halved; Abramowitz &
// Stegun 25.4.29, table 25.4): NT/NW the current fit's, NN of them (0: point model).
const GL3 = { t: [-0.5 * Math.sqrt(0.6), 0, 0.5 * Math.sqrt(0.6)], w: [5 / 18, 8 / 18, 5 / 18] };
const GL4 = {
  t: [-0.4305681557970263, -0.1699905217924281, 0.1699905217924281, 0.4305681557970263],
  w: [0.1739274225687269, 0.3260725774312731, 0.3260725774312731, 0.1739274225687269],
};
const NT = new Float64Array(4), NW = new Float64Array(4);
let NN = 0;
function setNodes(n: number | undefined): void {
  const g = n === 3 ? GL3 : n === 4 ? GL4 : null;
  NN = g ? g.t.length : 0;
  if (g) for (let i = 0; i < NN; i++) { NT[i] = g.t[i]; NW[i] = g.w[i]; }
}
let BX0 = 0, BX1 = -1, BY0 = 0, BY1 = -1; // bounding box of the pixels with weight > 0

function ensure(n: number): void {
  if (n <= cap) return;
  cap = Math.max(n, 2 * cap, 256);
  DAT = new Float64Array(cap);
  WT = new Float64Array(cap);
  PROF = new Float64Array(cap);
  LNU = new Float64Array(cap);
  IU = new Float64Array(cap);
  COLT = new Float64Array(cap);
}

/** Shape parameters valid: positive-definite matrix, centre not far outside the stamp, beta in range. */
function validShape(p: Float64Array, moffat: boolean, w: number, h: number): boolean {
  const a = p[4], b = p[5], c = p[6];
  if (!(a > 0 && c > 0 && a * c - b * b > 1e-12 * a * c)) return false;
  if (!(p[0] > -1 && p[0] < w && p[1] > -1 && p[1] < h)) return false;
  if (moffat && !(p[7] >= G_MIN && p[7] <= G_MAX)) return false;
  return Number.isFinite(p[2]) && Number.isFinite(p[3]);
}

/**
 * chi^2 at parameters p; stores the profile (and ln u, 1/u for Moffat) per pixel.
 * The Gaussian 2^-Q is evaluated separably: 2^-(a dx^2) per column, 2^-(c dy^2) per row,
 * and the cross term 2^-(2b dx dy) as a geometric sequence along each row (one multiply
 * per pixel instead of one exp), unless that could overflow.
 */
function chi2At(p: Float64Array, moffat: boolean): number {
  if (NN > 0) return chi2AtIntegrated(p, moffat);
  const w = GW, xa = BX0, xb = BX1, ya = BY0, yb = BY1; // loops over the box of fitted pixels
  const x0 = p[0], y0 = p[1], amp = p[2], bg = p[3], a = p[4], b2 = 2 * p[5], c = p[6];
  const DAT_ = DAT, WT_ = WT, PROF_ = PROF; // locals: faster than module slots in hot loops
  let chi2 = 0;
  if (moffat) {
    const LNU_ = LNU, IU_ = IU;
    const mb = -1 / p[7];
    const kh = Math.pow(2, p[7]) - 1;
    for (let y = ya; y <= yb; y++) {
      const dy = y - y0;
      const row = y * w;
      for (let x = xa; x <= xb; x++) {
        const k = row + x;
        const wk = WT_[k];
        if (wk === 0) { PROF_[k] = 0; continue; }
        const dx = x - x0;
        const u = 1 + kh * (dx * (a * dx + b2 * dy) + c * dy * dy);
        const lnu = Math.log(u); // u >= 1: log(u) is accurate enough here and faster than log1p
        const e = Math.exp(mb * lnu);
        LNU_[k] = lnu;
        IU_[k] = 1 / u;
        PROF_[k] = e;
        const r = DAT_[k] - bg - amp * e;
        chi2 += wk * r * r;
      }
    }
    return chi2;
  }
  const ka = -LN2 * a, kc = -LN2 * c, kb = -LN2 * b2;
  const separable = Math.abs(kb) * (Math.abs(xa - x0) + Math.abs(xb - x0) + 1) * (Math.abs(ya - y0) + Math.abs(yb - y0) + 1) < 600;
  if (separable) {
    const COLT_ = COLT;
    for (let x = xa; x <= xb; x++) { const dx = x - x0; COLT_[x] = Math.exp(ka * dx * dx); }
    for (let y = ya; y <= yb; y++) {
      const dy = y - y0;
      const row = y * w;
      let t = Math.exp(kc * dy * dy + kb * (xa - x0) * dy); // row factor times cross term at x = xa
      const ratio = Math.exp(kb * dy);
      for (let x = xa; x <= xb; x++, t *= ratio) {
        const k = row + x;
        const e = COLT_[x] * t;
        PROF_[k] = e;
        const wk = WT_[k];
        if (wk === 0) continue;
        const r = DAT_[k] - bg - amp * e;
        chi2 += wk * r * r;
      }
    }
    return chi2;
  }
  for (let y = ya; y <= yb; y++) {
    const dy = y - y0;
    const row = y * w;
    for (let x = xa; x <= xb; x++) {
      const k = row + x;
      const dx = x - x0;
      const e = Math.exp(dx * (ka * dx + kb * dy) + kc * dy * dy);
      PROF_[k] = e;
      const wk = WT_[k];
      if (wk === 0) continue;
      const r = DAT_[k] - bg - amp * e;
      chi2 += wk * r * r;
    }
  }
  return chi2;
}

/** Node values cached for the integrated model (per box pixel and node): the most NODE_CAP of them. */
export const NODE_CAP = 65536;
const NE = new Float64Array(NODE_CAP); // profile at each node
const NLU = new Float64Array(NODE_CAP); // Moffat ln u
const NIU = new Float64Array(NODE_CAP); // Moffat 1/u
const CXN = new Float64Array(4 * 1024); // Gaussian column factor per (column, node)
const XN = new Float64Array(4); // Gaussian cross-term factor per x node, for one row node

/**
 * chi2At for the pixel-integrated model: each pixel's profile is the NN x NN Gauss-Legendre sum
 * of the point profile over the pixel (stored in PROF), and each node's value is kept (NE; ln u
 * and 1/u for the Moffat) for the normal equations at the same parameters, which always follow
 * the chi2 of their point. The Gaussian is evaluated separably as at pixel centres: 2^-(a dx^2)
 * per column node, 2^-(c dy^2) per row node, and the cross term 2^-(2b dx dy) as
 * 2^-(2b (x - x0) dy) (a geometric sequence along the row) times 2^-(2b t_i dy) per x node.
 */
function chi2AtIntegrated(p: Float64Array, moffat: boolean): number {
  const w = GW, xa = BX0, xb = BX1, ya = BY0, yb = BY1;
  const bw = xb - xa + 1;
  const x0 = p[0], y0 = p[1], amp = p[2], bg = p[3], a = p[4], b2 = 2 * p[5], c = p[6];
  const nn = NN, n2 = nn * nn;
  let chi2 = 0;
  if (moffat) {
    const mb = -1 / p[7];
    const kh = Math.pow(2, p[7]) - 1;
    for (let y = ya; y <= yb; y++) {
      const row = y * w;
      for (let x = xa; x <= xb; x++) {
        const k = row + x;
        const wk = WT[k];
        if (wk === 0) { PROF[k] = 0; continue; }
        const base = ((y - ya) * bw + (x - xa)) * n2;
        let e = 0;
        for (let j = 0; j < nn; j++) {
          const dy = y + NT[j] - y0;
          let ej = 0;
          for (let i = 0; i < nn; i++) {
            const dx = x + NT[i] - x0;
            const u = 1 + kh * (dx * (a * dx + b2 * dy) + c * dy * dy);
            const lnu = Math.log(u);
            const en = Math.exp(mb * lnu);
            const q = base + j * nn + i;
            NE[q] = en; NLU[q] = lnu; NIU[q] = 1 / u;
            ej += NW[i] * en;
          }
          e += NW[j] * ej;
        }
        PROF[k] = e;
        const r = DAT[k] - bg - amp * e;
        chi2 += wk * r * r;
      }
    }
    return chi2;
  }
  const ka = -LN2 * a, kc = -LN2 * c, kb = -LN2 * b2;
  const separable = Math.abs(kb) * (Math.abs(xa - x0) + Math.abs(xb - x0) + 1) * (Math.abs(ya - y0) + Math.abs(yb - y0) + 1) < 600;
  if (separable) for (let x = xa; x <= xb; x++) for (let i = 0; i < nn; i++) { const dx = x + NT[i] - x0; CXN[(x - xa) * nn + i] = Math.exp(ka * dx * dx); }
  for (let y = ya; y <= yb; y++) {
    const row = y * w;
    for (let j = 0; j < nn; j++) {
      const dy = y + NT[j] - y0;
      let t = 0, ratio = 0;
      if (separable) {
        t = Math.exp(kc * dy * dy + kb * (xa - x0) * dy); // row factor times cross term at x = xa
        ratio = Math.exp(kb * dy);
        for (let i = 0; i < nn; i++) XN[i] = Math.exp(kb * NT[i] * dy);
      }
      for (let x = xa; x <= xb; x++, t *= ratio) {
        const k = row + x;
        if (WT[k] === 0) continue;
        const q0 = ((y - ya) * bw + (x - xa)) * n2 + j * nn;
        for (let i = 0; i < nn; i++) {
          let en: number;
          if (separable) en = CXN[(x - xa) * nn + i] * t * XN[i];
          else { const dx = x + NT[i] - x0; en = Math.exp(dx * (ka * dx + kb * dy) + kc * dy * dy); }
          NE[q0 + i] = en;
        }
      }
    }
    for (let x = xa; x <= xb; x++) {
      const k = row + x;
      const wk = WT[k];
      if (wk === 0) { PROF[k] = 0; continue; }
      const base = ((y - ya) * bw + (x - xa)) * n2;
      let e = 0;
      for (let j = 0; j < nn; j++) {
        let ej = 0;
        for (let i = 0; i < nn; i++) ej += NW[i] * NE[base + j * nn + i];
        e += NW[j] * ej;
      }
      PROF[k] = e;
      const r = DAT[k] - bg - amp * e;
      chi2 += wk * r * r;
    }
  }
  return chi2;
}

/**
 * normalEquations for the pixel-integrated model: each pixel's Jacobian is the Gauss-Legendre
 * sum of the point model's (the derivative of the integral is the integral of the derivative),
 * from the node values chi2AtIntegrated(p) kept.
 */
function normalEquationsIntegrated(p: Float64Array, moffat: boolean): void {
  const w = GW, xa = BX0, xb = BX1, ya = BY0, yb = BY1;
  const bw = xb - xa + 1;
  const x0 = p[0], y0 = p[1], amp = p[2], bg = p[3], a = p[4], b = p[5], c = p[6];
  const m = moffat ? 8 : 7;
  H.fill(0);
  G.fill(0);
  const beta = moffat ? 1 / p[7] : 0;
  const kh = moffat ? Math.pow(2, p[7]) - 1 : 0;
  const dkk = moffat ? (-(kh + 1) * LN2) / (beta * beta * kh) : 0;
  const qk = moffat ? 2 * amp * beta * kh : 2 * LN2 * amp;
  const nn = NN, n2 = nn * nn;
  const J = TMP; // the pixel's Jacobian
  for (let y = ya; y <= yb; y++) {
    const row = y * w;
    for (let x = xa; x <= xb; x++) {
      const k = row + x;
      const wk = WT[k];
      if (wk === 0) continue;
      const e = PROF[k];
      const r = DAT[k] - bg - amp * e;
      if (e < 1e-10) { H[3 * m + 3] += wk; G[3] += wk * r; continue; }
      const base = ((y - ya) * bw + (x - xa)) * n2;
      let j0 = 0, j1 = 0, j4 = 0, j5 = 0, j6 = 0, j7 = 0;
      for (let jn = 0; jn < nn; jn++) {
        const dy = y + NT[jn] - y0;
        for (let i = 0; i < nn; i++) {
          const dx = x + NT[i] - x0;
          const q = base + jn * nn + i;
          const wn = NW[i] * NW[jn];
          const en = NE[q];
          let wq: number;
          if (moffat) {
            const iu = NIU[q];
            wq = wn * qk * en * iu;
            j7 += wn * amp * en * beta * beta * (NLU[q] + beta * dkk * (1 - iu));
          } else {
            wq = wn * qk * en;
          }
          j0 += wq * (a * dx + b * dy);
          j1 += wq * (b * dx + c * dy);
          j4 -= 0.5 * wq * dx * dx;
          j5 -= wq * dx * dy;
          j6 -= 0.5 * wq * dy * dy;
        }
      }
      J[0] = j0; J[1] = j1; J[2] = e; J[3] = 1; J[4] = j4; J[5] = j5; J[6] = j6; J[7] = j7;
      const wr = wk * r;
      for (let i = 0; i < m; i++) {
        const wi = wk * J[i];
        G[i] += wr * J[i];
        for (let jj = i; jj < m; jj++) H[i * m + jj] += wi * J[jj];
      }
    }
  }
  for (let i = 0; i < m; i++) for (let jj = 0; jj < i; jj++) H[i * m + jj] = H[jj * m + i];
  HM = m;
}

/**
 * Normal equations H = J^T W J, G = J^T W r at p, using the profile stored by the last
 * chi2At(p). Accumulated in scalars (upper triangle) for speed.
 */
function normalEquations(p: Float64Array, moffat: boolean): void {
  if (NN > 0) { normalEquationsIntegrated(p, moffat); return; }
  const w = GW, xa = BX0, xb = BX1, ya = BY0, yb = BY1; // loops over the box of fitted pixels
  const x0 = p[0], y0 = p[1], amp = p[2], bg = p[3], a = p[4], b = p[5], c = p[6];
  let h00 = 0, h01 = 0, h02 = 0, h03 = 0, h04 = 0, h05 = 0, h06 = 0;
  let h11 = 0, h12 = 0, h13 = 0, h14 = 0, h15 = 0, h16 = 0;
  let h22 = 0, h23 = 0, h24 = 0, h25 = 0, h26 = 0;
  let h33 = 0, h34 = 0, h35 = 0, h36 = 0;
  let h44 = 0, h45 = 0, h46 = 0;
  let h55 = 0, h56 = 0;
  let h66 = 0;
  let h07 = 0, h17 = 0, h27 = 0, h37 = 0, h47 = 0, h57 = 0, h67 = 0, h77 = 0;
  let g0 = 0, g1 = 0, g2 = 0, g3 = 0, g4 = 0, g5 = 0, g6 = 0, g7 = 0;
  const DAT_ = DAT, WT_ = WT, PROF_ = PROF, LNU_ = LNU, IU_ = IU;
  const beta = moffat ? 1 / p[7] : 0;
  const kh = moffat ? Math.pow(2, p[7]) - 1 : 0;
  // d ln u / d beta = Q dk/dbeta / u = (1 - 1/u) (dk/dbeta) / k
  const dkk = moffat ? (-(kh + 1) * LN2) / (beta * beta * kh) : 0;
  const ab2k = 2 * amp * beta * kh;
  const ln2a2 = 2 * LN2 * amp;
  for (let y = ya; y <= yb; y++) {
    const dy = y - y0;
    const row = y * w;
    for (let x = xa; x <= xb; x++) {
      const k = row + x;
      const wk = WT_[k];
      if (wk === 0) continue;
      const e = PROF_[k];
      const r = DAT_[k] - bg - amp * e;
      if (e < 1e-10) { h33 += wk; g3 += wk * r; continue; } // only the background column is not ~0
      const dx = x - x0;
      // q = -2 dm/dQ: Gaussian 2 ln2 A e; Moffat 2 A beta k e / u.
      let q: number;
      let j7 = 0;
      if (moffat) {
        const iu = IU_[k];
        q = ab2k * e * iu;
        // dm/dgamma = dm/dbeta * (-beta^2)
        j7 = amp * e * beta * beta * (LNU_[k] + beta * dkk * (1 - iu));
      } else {
        q = ln2a2 * e;
      }
      const j0 = q * (a * dx + b * dy);
      const j1 = q * (b * dx + c * dy);
      const j2 = e;
      const j4 = -0.5 * q * dx * dx;
      const j5 = -q * dx * dy;
      const j6 = -0.5 * q * dy * dy;
      const w0 = wk * j0, w1 = wk * j1, w2 = wk * j2, w4 = wk * j4, w5 = wk * j5, w6 = wk * j6;
      h00 += w0 * j0; h01 += w0 * j1; h02 += w0 * j2; h03 += w0; h04 += w0 * j4; h05 += w0 * j5; h06 += w0 * j6;
      h11 += w1 * j1; h12 += w1 * j2; h13 += w1; h14 += w1 * j4; h15 += w1 * j5; h16 += w1 * j6;
      h22 += w2 * j2; h23 += w2; h24 += w2 * j4; h25 += w2 * j5; h26 += w2 * j6;
      h33 += wk; h34 += w4; h35 += w5; h36 += w6;
      h44 += w4 * j4; h45 += w4 * j5; h46 += w4 * j6;
      h55 += w5 * j5; h56 += w5 * j6;
      h66 += w6 * j6;
      const wr = wk * r;
      g0 += wr * j0; g1 += wr * j1; g2 += wr * j2; g3 += wr; g4 += wr * j4; g5 += wr * j5; g6 += wr * j6;
      if (moffat) {
        const w7 = wk * j7;
        h07 += w0 * j7; h17 += w1 * j7; h27 += w2 * j7; h37 += w7; h47 += w4 * j7; h57 += w5 * j7; h67 += w6 * j7; h77 += w7 * j7;
        g7 += wr * j7;
      }
    }
  }
  const m = moffat ? 8 : 7;
  const s = setH;
  HM = m;
  s(0, 0, h00); s(0, 1, h01); s(0, 2, h02); s(0, 3, h03); s(0, 4, h04); s(0, 5, h05); s(0, 6, h06);
  s(1, 1, h11); s(1, 2, h12); s(1, 3, h13); s(1, 4, h14); s(1, 5, h15); s(1, 6, h16);
  s(2, 2, h22); s(2, 3, h23); s(2, 4, h24); s(2, 5, h25); s(2, 6, h26);
  s(3, 3, h33); s(3, 4, h34); s(3, 5, h35); s(3, 6, h36);
  s(4, 4, h44); s(4, 5, h45); s(4, 6, h46);
  s(5, 5, h55); s(5, 6, h56);
  s(6, 6, h66);
  G[0] = g0; G[1] = g1; G[2] = g2; G[3] = g3; G[4] = g4; G[5] = g5; G[6] = g6;
  if (moffat) {
    s(0, 7, h07); s(1, 7, h17); s(2, 7, h27); s(3, 7, h37); s(4, 7, h47); s(5, 7, h57); s(6, 7, h67); s(7, 7, h77);
    G[7] = g7;
  }
}

let HM = 7;
/** H[i][j] = H[j][i] = v for the current size HM (a plain function: no closure per call). */
function setH(i: number, j: number, v: number): void {
  H[i * HM + j] = v;
  H[j * HM + i] = v;
}

/** In-place Cholesky of the m x m matrix in A (lower factor). False if not positive definite. */
function cholesky(m: number): boolean {
  for (let j = 0; j < m; j++) {
    let d = A[j * m + j];
    for (let k = 0; k < j; k++) d -= A[j * m + k] * A[j * m + k];
    if (!(d > 0)) return false;
    const l = Math.sqrt(d);
    A[j * m + j] = l;
    for (let i = j + 1; i < m; i++) {
      let v = A[i * m + j];
      for (let k = 0; k < j; k++) v -= A[i * m + k] * A[j * m + k];
      A[i * m + j] = v / l;
    }
  }
  return true;
}

/** Solve L L^T x = rhs (rhs in `out`, overwritten) with the factor in A. */
function cholSolve(m: number, out: Float64Array): void {
  for (let i = 0; i < m; i++) {
    let v = out[i];
    for (let k = 0; k < i; k++) v -= A[i * m + k] * out[k];
    out[i] = v / A[i * m + i];
  }
  for (let i = m - 1; i >= 0; i--) {
    let v = out[i];
    for (let k = i + 1; k < m; k++) v -= A[k * m + i] * out[k];
    out[i] = v / A[i * m + i];
  }
}

/**
 * Damped step: (H + lambda diag(H)) delta = G, with parameter `frozen` (or -1) held fixed.
 * Returns false if the system is singular.
 */
function solveStep(m: number, lambda: number, frozen: number): boolean {
  for (let i = 0; i < m; i++) {
    for (let j = 0; j < m; j++) A[i * m + j] = H[i * m + j];
    const d = H[i * m + i];
    A[i * m + i] = d + lambda * (d > 0 ? d : 1e-30) + 1e-300;
    DELTA[i] = G[i];
  }
  if (frozen >= 0) {
    for (let j = 0; j < m; j++) { A[frozen * m + j] = 0; A[j * m + frozen] = 0; }
    A[frozen * m + frozen] = 1;
    DELTA[frozen] = 0;
  }
  if (!cholesky(m)) return false;
  cholSolve(m, DELTA);
  for (let i = 0; i < m; i++) if (!Number.isFinite(DELTA[i])) return false;
  return true;
}

/**
 * Fit an elliptical Gaussian or Moffat to a stamp. Coordinates are relative to stamp
 * pixel (0,0) (pixel centres at integers). Pixels with NaN data or a non-finite or
 * non-positive variance are ignored. Never throws on bad data: a fit that cannot start
 * or does not converge comes back with converged = false (and NaN where undefined).
 *
 * Uncertainties: covariance = (J^T W J)^-1, multiplied by chi2Reduced when that exceeds 1
 * (model mismatch or underestimated noise widens the errors; they never shrink below the
 * noise-only value). Derived quantities are propagated with the analytic Jacobian of the
 * transformation (first order).
 */
export function fitPsf(stamp: Float32Array, w: number, h: number, opts: FitOptions): PsfFit {
  return fitPsfWithSnr(stamp, w, h, opts).fit;
}

/**
 * fitPsf plus the optimal (matched-filter) SNR of the fitted profile,
 * sqrt(sum_k (A p_k)^2 / variance_k) over the fitted pixels (NaN for a failed start), and
 * the number of pixels fitted.
 */
export function fitPsfWithSnr(stamp: Float32Array, w: number, h: number, opts: FitOptions): { fit: PsfFit; snr: number; nPixels: number } {
  const k = wasmKernel();
  if (k && w * h <= k.capacity && w > 0 && h > 0) return fitPsfWithSnrWasm(k, stamp, w, h, opts);
  return fitPsfWithSnrJs(stamp, w, h, opts);
}

interface WasmKernel {
  capacity: number;
  stamp: Float32Array;
  variance: Float32Array;
  out: Float64Array;
  fit: (w: number, h: number, moffat: number, maxIter: number, radius: number, constVar: number,
    ix: number, iy: number, ixx: number, iyy: number, ixy: number, amp: number, bg: number, nodes: number) => number;
}
/**
 * The fit's loop compiled to WebAssembly (wasm/psf-fit.as.ts, the same algorithm as
 * fitPsfWithSnrJs below), once per thread; null where WebAssembly is unavailable or
 * SKYLOUPE_WASM=0 / SKYLOUPE_PSF_FIT=js asks for the TypeScript loop.
 */
const psfKernel = lazyKernel<WasmKernel>(PSF_FIT_WASM_BASE64, 'psf-fit', (m) => {
  const cap = m.int('capacity');
  return { capacity: cap, stamp: m.f32('stampPtr', cap), variance: m.f32('variancePtr', cap), out: m.f64('outPtr', 80), fit: m.fn('fit') };
});
const PSF_FIT_JS = typeof process !== 'undefined' && process.env?.SKYLOUPE_PSF_FIT === 'js';
function wasmKernel(): WasmKernel | null {
  return PSF_FIT_JS ? null : psfKernel();
}

/** fitPsfWithSnr through the WebAssembly loop; start values and the derived quantities here. */
function fitPsfWithSnrWasm(k: WasmKernel, stamp: Float32Array, w: number, h: number, opts: FitOptions): { fit: PsfFit; snr: number; nPixels: number } {
  const moffat = opts.model === 'moffat';
  const m = moffat ? 8 : 7;
  const nPix = w * h;
  ensure(nPix + 2 * (w + h));
  const init = opts.init;
  const variance = opts.variance;
  let constVar = -1;
  if (typeof variance === 'number') constVar = variance > 0 && Number.isFinite(variance) ? variance : 0;
  else k.variance.set(variance.subarray(0, nPix));
  k.stamp.set(stamp.subarray(0, nPix));
  const { bg, amp } = startLevels(stamp, w, h, init);
  const radius = opts.radius !== undefined && opts.radius > 0 ? opts.radius : 0;
  setNodes(opts.pixelNodes);
  if (NN > 0) {
    // the kernel's box test (as fitPsfWithSnrJs): too large a box is fitted at pixel centres
    const rw = radius > 0 ? radius : Infinity;
    const bw = Number.isFinite(rw) ? Math.min(w - 1, Math.ceil(init.x + rw)) - Math.max(0, Math.floor(init.x - rw)) + 1 : w;
    const bh = Number.isFinite(rw) ? Math.min(h - 1, Math.ceil(init.y + rw)) - Math.max(0, Math.floor(init.y - rw)) + 1 : h;
    if (bw * bh * NN * NN > NODE_CAP || bw * NN > CXN.length) NN = 0;
  }
  const status = k.fit(w, h, moffat ? 1 : 0, opts.maxIterations ?? 100, radius, constVar, init.x, init.y, init.ixx, init.iyy, init.ixy, amp, bg, NN);
  const o = k.out;
  for (let i = 0; i < 8; i++) P[i] = o[i];
  const n = o[75];
  if (status !== 0) return { fit: failed(opts.model, P, 0), snr: Number.NaN, nPixels: n };
  HM = m;
  for (let i = 0; i < m * m; i++) H[i] = o[8 + i];
  return { fit: finish(opts.model, m, n, o[72], o[73], o[74] === 1 && P[2] > 0), snr: o[76], nPixels: n };
}

/** The TypeScript loop: the reference for the WebAssembly one, and the fallback. */
export function fitPsfWithSnrJs(stamp: Float32Array, w: number, h: number, opts: FitOptions): { fit: PsfFit; snr: number; nPixels: number } {
  const moffat = opts.model === 'moffat';
  const m = moffat ? 8 : 7;
  const maxIter = opts.maxIterations ?? 100;
  const nPix = w * h;
  ensure(nPix + 2 * (w + h));
  GW = w; GH = h;
  setNodes(opts.pixelNodes);
  const init = opts.init;
  const variance = opts.variance;
  const constVar = typeof variance === 'number';
  const r2max = opts.radius !== undefined && opts.radius > 0 ? opts.radius * opts.radius : Infinity;
  // Only the box around the window is touched (the box's pixels are all written).
  let n = 0;
  const rw = Math.sqrt(r2max);
  const ya = Number.isFinite(rw) ? Math.max(0, Math.floor(init.y - rw)) : 0, yb = Number.isFinite(rw) ? Math.min(h - 1, Math.ceil(init.y + rw)) : h - 1;
  const xa = Number.isFinite(rw) ? Math.max(0, Math.floor(init.x - rw)) : 0, xb = Number.isFinite(rw) ? Math.min(w - 1, Math.ceil(init.x + rw)) : w - 1;
  BX0 = xa; BX1 = xb; BY0 = ya; BY1 = yb;
  // the integrated model keeps its node values per box pixel: a box too large for them (never an
  // undersampled star's window) is fitted at pixel centres
  if ((xb - xa + 1) * (yb - ya + 1) * NN * NN > NODE_CAP || (xb - xa + 1) * NN > CXN.length) NN = 0;
  for (let y = ya; y <= yb; y++) {
    const dy2 = (y - init.y) * (y - init.y);
    for (let x = xa; x <= xb; x++) {
      const i = y * w + x;
      const v = stamp[i];
      const s2 = constVar ? (variance as number) : (variance as Float32Array)[i];
      const out = (x - init.x) * (x - init.x) + dy2 > r2max;
      if (out || !Number.isFinite(v) || !(s2 > 0) || !Number.isFinite(s2)) { DAT[i] = 0; WT[i] = 0; continue; }
      DAT[i] = v; WT[i] = 1 / s2;
      n++;
    }
  }

  // Start from the measured moments: the half-maximum contour of the Gaussian with that
  // covariance, d^T C^-1 d = 2 ln 2 (same start FWHM for both models).
  const ixx = init.ixx, iyy = init.iyy, ixy = init.ixy;
  const det = ixx * iyy - ixy * ixy;
  const scale = 1 / (2 * LN2);
  P[0] = init.x; P[1] = init.y;
  P[4] = (iyy / det) * scale; P[5] = (-ixy / det) * scale; P[6] = (ixx / det) * scale;
  if (moffat) P[7] = 1 / BETA_START;
  const { bg, amp } = startLevels(stamp, w, h, init);
  P[3] = bg;
  P[2] = amp;

  if (n <= m || !validShape(P, moffat, w, h) || !(det > 0)) return { fit: failed(opts.model, P, 0), snr: Number.NaN, nPixels: n };

  let chi2 = chi2At(P, moffat);
  if (!Number.isFinite(chi2)) return { fit: failed(opts.model, P, 0), snr: Number.NaN, nPixels: n };
  normalEquations(P, moffat);
  const dof = n - m;
  let lambda = 1e-3;
  let nu = 2;
  let converged = false;
  let profAtP = true; // PROF holds the profile at P (not at a rejected trial)
  let iter = 0;
  for (; iter < maxIter; iter++) {
    // Tolerance on the predicted chi2 decrease, in units of the noise (chi2Reduced).
    const tol = 1e-3 * Math.max(chi2 / dof, 1e-300);
    let frozen = -1;
    if (moffat) {
      // Active bound on beta: freeze it when the free step pushes outward.
      if (!solveStep(m, lambda, -1)) { lambda *= nu; nu *= 2; if (lambda > 1e12) break; continue; }
      const gt = P[7] + DELTA[7];
      if ((P[7] <= G_MIN && gt < G_MIN) || (P[7] >= G_MAX && gt > G_MAX)) frozen = 7;
    }
    if (frozen >= 0 || !moffat) {
      if (!solveStep(m, lambda, frozen)) { lambda *= nu; nu *= 2; if (lambda > 1e12) break; continue; }
    }
    let pred = 0;
    for (let i = 0; i < m; i++) {
      PT[i] = P[i] + DELTA[i];
      // predicted decrease of chi2 = delta^T (2G - H delta) = delta^T (G + lambda D delta)
      const d = H[i * m + i];
      pred += DELTA[i] * (G[i] + lambda * (d > 0 ? d : 1e-30) * DELTA[i]);
    }
    if (moffat) PT[7] = Math.min(G_MAX, Math.max(G_MIN, PT[7]));
    const ok = validShape(PT, moffat, w, h);
    const chi2t = ok ? chi2At(PT, moffat) : Infinity;
    if (ok) profAtP = false;
    if (chi2t < chi2) {
      const rho = (chi2 - chi2t) / Math.max(pred, 1e-300);
      for (let i = 0; i < m; i++) P[i] = PT[i];
      const drop = chi2 - chi2t;
      chi2 = chi2t;
      profAtP = true; // PROF was computed at PT = P
      // Converged: keep the normal equations of the previous point (the step is negligible)
      // for the covariance instead of recomputing them.
      if (pred < tol && drop < tol) { converged = true; iter++; break; }
      normalEquations(P, moffat);
      const t = 2 * rho - 1;
      lambda *= Math.max(1 / 3, 1 - t * t * t);
      if (lambda < 1e-12) lambda = 1e-12;
      nu = 2;
    } else {
      if (pred < tol) { converged = true; iter++; break; } // no decrease left to find
      lambda *= nu;
      nu *= 2;
      if (lambda > 1e12) break;
    }
  }
  // Also accept a stationary point reached at maxIterations / lambda blow-up if the
  // undamped Gauss-Newton step predicts no significant decrease.
  if (!converged && solveStep(m, 0, -1)) {
    let pred = 0;
    for (let i = 0; i < m; i++) pred += DELTA[i] * G[i];
    if (pred < 1e-4 * Math.max(chi2 / dof, 1e-300)) converged = true;
  }
  // Matched-filter SNR from the stored profile (re-evaluated if the last trial was rejected).
  if (!profAtP) chi2At(P, moffat);
  let s2 = 0;
  const amp2 = P[2] * P[2];
  for (let y = ya; y <= yb; y++) for (let k = y * w + xa; k <= y * w + xb; k++) s2 += WT[k] * amp2 * PROF[k] * PROF[k];
  return { fit: finish(opts.model, m, n, chi2, iter, converged && P[2] > 0), snr: Math.sqrt(s2), nPixels: n };
}

/**
 * The pixel box added to a fitted (pixel-integrated, so intrinsic) shape: the half-maximum form
 * M = [[a, b], [b, c]] of the covariance C = M^-1 / (2 ln 2) becomes that of C + I/12, the box's
 * variance per axis (exact for the second moments of any profile; Thompson, Larson & Webb 2002's
 * a^2/12 term, optics.md 1.6). For a Gaussian this is the star as recorded to within 1.3 % in FWHM
 * at sigma 0.55 px (the box-convolved profile's half-maximum width, computed numerically), far less
 * above; for a Moffat it treats the core as its half-maximum Gaussian. Writes a', b', c' into out.
 */
export function boxedShape(a: number, b: number, c: number, out: Float64Array): void {
  const det = a * c - b * b;
  const s11 = c / det + BOX_KAPPA, s22 = a / det + BOX_KAPPA, s12 = -b / det;
  const ds = s11 * s22 - s12 * s12;
  out[0] = s22 / ds; out[1] = -s12 / ds; out[2] = s11 / ds;
}
// 5-point Gauss-Legendre on a pixel (A&S table 25.4), for the box-convolved profile below: the
// pixel integral of a Gaussian of sigma >= 0.35 px to 1e-5 of its peak
const HW_T = [-0.4530899229693320, -0.2692346550528416, 0, 0.2692346550528416, 0.4530899229693320];
const HW_W = [0.1184634425280945, 0.2393143352496832, 0.2844444444444444, 0.2393143352496832, 0.1184634425280945];

/** The profile (peak 1, half-maximum form a, b, c, Moffat if kh > 0) averaged over the unit pixel centred at (vx, vy). */
function boxedProfile(a: number, b: number, c: number, kh: number, beta: number, vx: number, vy: number): number {
  let s = 0;
  for (let j = 0; j < 5; j++) {
    const dy = vy + HW_T[j];
    let sj = 0;
    for (let i = 0; i < 5; i++) {
      const dx = vx + HW_T[i];
      const q = dx * (a * dx + 2 * b * dy) + c * dy * dy;
      sj += HW_W[i] * (kh > 0 ? Math.exp(-beta * Math.log(1 + kh * q)) : Math.exp(-LN2 * q));
    }
    s += HW_W[j] * sj;
  }
  return s;
}

/**
 * Half the full width at half maximum, along the unit direction (ux, uy), of the fitted profile
 * convolved with the pixel box: the star as recorded (the simulator's "recorded" FWHM, made the
 * same way: the box-convolved peak stays at the centre, a symmetric profile). Bracketed about
 * h0 and found by Illinois false position to 1e-12 of it.
 */
function recordedHalfWidth(a: number, b: number, c: number, kh: number, beta: number, ux: number, uy: number, h0: number, peak: number): number {
  const half = 0.5 * peak;
  const f = (r: number) => boxedProfile(a, b, c, kh, beta, r * ux, r * uy) - half;
  // bracket about h0, the box's second-moment estimate (within a few % of the answer)
  let lo = 0.95 * h0, flo = f(lo);
  if (!(flo > 0)) { lo = 0; flo = peak - half; }
  let hi = 1.2 * h0, fhi = f(hi);
  for (let k = 0; k < 30 && fhi > 0; k++) { lo = hi; flo = fhi; hi *= 2; fhi = f(hi); }
  let side = 0;
  for (let it = 0; it < 100 && hi - lo > 1e-12 * (1 + hi); it++) {
    const r = (lo * fhi - hi * flo) / (fhi - flo);
    const fr = f(r);
    if (fr > 0) { lo = r; flo = fr; if (side === 1) fhi *= 0.5; side = 1; }
    else if (fr < 0) { hi = r; fhi = fr; if (side === -1) flo *= 0.5; side = -1; }
    else { lo = hi = r; }
  }
  return 0.5 * (lo + hi);
}

/**
 * FWHMs along the fitted profile's own axes of that profile convolved with the pixel box (the
 * star as recorded), for a pixel-integrated fit: [major, minor]. The box keeps the axes of the
 * covariance (C + I/12 has C's eigenvectors), so the angle is the fit's.
 */
export function recordedFwhms(a: number, b: number, c: number, moffat: boolean, gamma: number): [number, number] {
  const kh = moffat ? Math.pow(2, gamma) - 1 : 0;
  const beta = moffat ? 1 / gamma : 0;
  const t = 0.5 * Math.atan2(-2 * b, c - a); // major-axis angle (as finish's theta)
  const ct = Math.cos(t), st = Math.sin(t);
  const peak = boxedProfile(a, b, c, kh, beta, 0, 0);
  // the box's second-moment form has the same axes: its half widths start the search
  boxedShape(a, b, c, BOXED);
  const bm = 0.5 * (BOXED[0] + BOXED[2]), bd = Math.sqrt(0.25 * (BOXED[0] - BOXED[2]) * (BOXED[0] - BOXED[2]) + BOXED[1] * BOXED[1]);
  return [
    2 * recordedHalfWidth(a, b, c, kh, beta, ct, st, 1 / Math.sqrt(bm - bd), peak),
    2 * recordedHalfWidth(a, b, c, kh, beta, -st, ct, 1 / Math.sqrt(bm + bd), peak),
  ];
}

/** 2 ln 2 / 12: the box variance 1/12 in the units of M^-1 = 2 ln 2 C. */
const BOX_KAPPA = (2 * LN2) / 12;
const BOXED = new Float64Array(3);
const BOXJ = new Float64Array(9); // d(a', b', c') / d(a, b, c), row-major

function finish(model: 'gaussian' | 'moffat', m: number, n: number, chi2: number, iterations: number, converged: boolean): PsfFit {
  const moffat = model === 'moffat';
  const dof = n - m;
  const chi2Reduced = chi2 / dof;
  const x0 = P[0], y0 = P[1], amp = P[2], bg = P[3];
  const a0 = P[4], b0 = P[5], c0 = P[6];
  // the shape reported: the star as recorded (the integrated fit's own shape plus the pixel box)
  let a = a0, b = b0, c = c0;
  if (NN > 0) { BOXJ.fill(0); BOXJ[0] = BOXJ[4] = BOXJ[8] = 1; }
  if (NN > 0 && a0 * c0 - b0 * b0 > 0) {
    boxedShape(a0, b0, c0, BOXED);
    a = BOXED[0]; b = BOXED[1]; c = BOXED[2];
    // its Jacobian by central differences (the map is smooth; steps 1e-6 of the trace)
    const hstep = 1e-6 * (a0 + c0);
    for (let j = 0; j < 3; j++) {
      const pa = a0 + (j === 0 ? hstep : 0), pb = b0 + (j === 1 ? hstep : 0), pc = c0 + (j === 2 ? hstep : 0);
      boxedShape(pa, pb, pc, BOXED);
      const u0 = BOXED[0], u1 = BOXED[1], u2 = BOXED[2];
      boxedShape(2 * a0 - pa, 2 * b0 - pb, 2 * c0 - pc, BOXED);
      BOXJ[j] = (u0 - BOXED[0]) / (2 * hstep); BOXJ[3 + j] = (u1 - BOXED[1]) / (2 * hstep); BOXJ[6 + j] = (u2 - BOXED[2]) / (2 * hstep);
    }
  }
  const beta = moffat ? 1 / P[7] : 0;
  const kh = moffat ? Math.pow(2, P[7]) - 1 : 0;
  const det = a * c - b * b;
  const det0 = a0 * c0 - b0 * b0;
  const half = 0.5 * (a + c);
  const D = Math.sqrt(0.25 * (a - c) * (a - c) + b * b);
  const l1 = half - D; // smallest eigenvalue: major axis
  const l2 = half + D;
  // FWHMs: from the half-maximum form; for an integrated fit the errors come from the box's
  // second-moment form (a', b', c') and the values from the box-convolved profile itself
  const fMaj = 2 / Math.sqrt(l1);
  const fMin = 2 / Math.sqrt(l2);
  const fMean = Math.sqrt(fMaj * fMin);
  let repMaj = fMaj, repMin = fMin;
  if (NN > 0 && det0 > 0 && P[2] > 0) [repMaj, repMin] = recordedFwhms(a0, b0, c0, moffat, P[7]);
  const theta = 0.5 * Math.atan2(-2 * b, c - a) * RAD2DEG;
  const thetaDeg = theta <= -90 ? theta + 180 : theta;
  // Flux: analytic integral of the profile above background (integral of 2^-Q is pi/(ln2 sqrt(det)),
  // of (1 + kQ)^-beta is pi/((beta - 1) k sqrt(det))).
  const flux = moffat ? (Math.PI * amp) / ((beta - 1) * kh * Math.sqrt(det0)) : (Math.PI * amp) / (LN2 * Math.sqrt(det0));

  // Covariance from the undamped normal equations.
  let haveCov = true;
  for (let i = 0; i < m * m; i++) A[i] = H[i];
  if (!cholesky(m)) haveCov = false;
  if (haveCov) {
    for (let j = 0; j < m; j++) {
      for (let i = 0; i < m; i++) TMP[i] = i === j ? 1 : 0;
      cholSolve(m, TMP);
      for (let i = 0; i < m; i++) COV[i * m + j] = TMP[i];
    }
    const s = Math.max(1, chi2Reduced);
    for (let i = 0; i < m * m; i++) COV[i] *= s;
  }
  const nan = Number.NaN;
  // Eigenvalue derivatives: l1,2 = (a+c)/2 -+ D, so dl1/da = 1/2 - (a-c)/(4D), dl1/db = -b/D,
  // dl1/dc = 1/2 + (a-c)/(4D), and l2 the opposite signs (sr, br taken as 0 for a round star).
  const sr = D > 0 ? (a - c) / (2 * D) : 0;
  const br = D > 0 ? b / D : 0;
  const dl1a = 0.5 - 0.5 * sr, dl1b = -br, dl1c = 0.5 + 0.5 * sr;
  const dl2a = 0.5 + 0.5 * sr, dl2b = br, dl2c = 0.5 - 0.5 * sr;
  GRAD.fill(0); // FWHMs and shape depend on (a, b, c) only
  // major: 2/sqrt(l1)
  GRAD[4] = (-fMaj / (2 * l1)) * dl1a; GRAD[5] = (-fMaj / (2 * l1)) * dl1b; GRAD[6] = (-fMaj / (2 * l1)) * dl1c;
  const eMaj = (shapeErr(m, haveCov) * repMaj) / fMaj;
  // minor: 2/sqrt(l2)
  GRAD[4] = (-fMin / (2 * l2)) * dl2a; GRAD[5] = (-fMin / (2 * l2)) * dl2b; GRAD[6] = (-fMin / (2 * l2)) * dl2c;
  const eMin = (shapeErr(m, haveCov) * repMin) / fMin;
  // mean: 2 det^(-1/4)
  GRAD[4] = (-fMean / 4) * (c / det); GRAD[5] = (fMean / 4) * ((2 * b) / det); GRAD[6] = (-fMean / 4) * (a / det);
  const eMean = (shapeErr(m, haveCov) * Math.sqrt(repMaj * repMin)) / fMean;
  // ellipticity 1 - sqrt(l1/l2)
  const de1 = -0.5 / Math.sqrt(l1 * l2), de2 = (0.5 * Math.sqrt(l1)) / Math.pow(l2, 1.5);
  GRAD[4] = de1 * dl1a + de2 * dl2a; GRAD[5] = de1 * dl1b + de2 * dl2b; GRAD[6] = de1 * dl1c + de2 * dl2c;
  const eEll = shapeErr(m, haveCov);
  // theta = 0.5 atan2(Y, X), Y = -2b, X = c - a
  const X = c - a, Y = -2 * b, R2 = X * X + Y * Y;
  let eTheta = 90;
  if (R2 > 0) {
    GRAD[4] = (0.5 * Y) / R2; GRAD[5] = -X / R2; GRAD[6] = (-0.5 * Y) / R2;
    eTheta = Math.min(90, shapeErr(m, haveCov) * RAD2DEG); // 90 deg: no orientation information
  }
  const ex = haveCov ? Math.sqrt(COV[0]) : nan;
  const ey = haveCov ? Math.sqrt(COV[m + 1]) : nan;
  const eBeta = moffat && haveCov ? Math.sqrt(COV[7 * m + 7]) * beta * beta : null; // d beta = -beta^2 d gamma
  return {
    model,
    x: x0,
    y: y0,
    amplitude: amp,
    background: bg,
    fwhmMajorPx: repMaj,
    fwhmMinorPx: repMin,
    thetaDeg,
    ...(NN > 0 && det > 0 ? { recordedCov: { ixx: c / (det * 2 * LN2), iyy: a / (det * 2 * LN2), ixy: -b / (det * 2 * LN2) } } : {}),
    beta: moffat ? beta : null,
    flux,
    chi2Reduced,
    iterations,
    converged: converged && Number.isFinite(fMean) && Number.isFinite(repMaj) && Number.isFinite(repMin),
    err: {
      x: ex,
      y: ey,
      fwhmMajorPx: eMaj,
      fwhmMinorPx: eMin,
      fwhmPx: eMean,
      ellipticity: eEll,
      thetaDeg: eTheta,
      beta: eBeta,
    },
  };
}

/**
 * sqrt(g^T C g) with g = GRAD over the shape parameters 4..6 (FWHMs and shape do not depend on
 * beta). GRAD is taken with respect to the reported shape; for a pixel-integrated fit it is
 * carried back to the fitted parameters through the box's Jacobian first.
 */
function shapeErr(m: number, haveCov: boolean): number {
  if (!haveCov) return Number.NaN;
  if (NN > 0) {
    const g0 = GRAD[4], g1 = GRAD[5], g2 = GRAD[6];
    for (let j = 0; j < 3; j++) GRAD[4 + j] = g0 * BOXJ[j] + g1 * BOXJ[3 + j] + g2 * BOXJ[6 + j];
  }
  let v = 0;
  for (let i = 4; i < 7; i++) for (let j = 4; j < 7; j++) v += GRAD[i] * COV[i * m + j] * GRAD[j];
  return Math.sqrt(Math.max(v, 0));
}

function failed(model: 'gaussian' | 'moffat', p: Float64Array, iterations: number): PsfFit {
  const nan = Number.NaN;
  return {
    model,
    x: Number.isFinite(p[0]) ? p[0] : nan,
    y: Number.isFinite(p[1]) ? p[1] : nan,
    amplitude: nan,
    background: nan,
    fwhmMajorPx: nan,
    fwhmMinorPx: nan,
    thetaDeg: nan,
    beta: model === 'moffat' ? nan : null,
    flux: nan,
    chi2Reduced: nan,
    iterations,
    converged: false,
    err: { x: nan, y: nan, fwhmMajorPx: nan, fwhmMinorPx: nan, fwhmPx: nan, ellipticity: nan, thetaDeg: nan, beta: model === 'moffat' ? nan : null },
  };
}

/** Start background and amplitude: the caller's, else the border median and the peak above it. */
function startLevels(stamp: Float32Array, w: number, h: number, init: FitOptions['init']): { bg: number; amp: number } {
  let bg = init.background;
  if (bg === undefined || !Number.isFinite(bg)) bg = borderMedian(stamp, w, h);
  let amp = init.amplitude;
  if (amp === undefined || !Number.isFinite(amp)) amp = peakNear(stamp, w, h, init.x, init.y) - bg;
  return { bg, amp };
}

/** Median of the finite border pixels (start value for the background); uses the PROF scratch. */
function borderMedian(stamp: Float32Array, w: number, h: number): number {
  let n = 0;
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      if (y !== 0 && y !== h - 1 && x !== 0 && x !== w - 1) continue;
      const v = stamp[y * w + x];
      if (Number.isFinite(v)) PROF[n++] = v;
    }
  }
  if (n === 0) return 0;
  const arr = PROF.subarray(0, n);
  arr.sort();
  return n % 2 ? arr[(n - 1) >> 1] : 0.5 * (arr[n / 2 - 1] + arr[n / 2]);
}

/** Largest finite pixel in the 3x3 box around (x, y). */
function peakNear(stamp: Float32Array, w: number, h: number, x: number, y: number): number {
  const cx = Math.round(x), cy = Math.round(y);
  let best = -Infinity;
  for (let yy = Math.max(0, cy - 1); yy <= Math.min(h - 1, cy + 1); yy++) {
    for (let xx = Math.max(0, cx - 1); xx <= Math.min(w - 1, cx + 1); xx++) {
      const v = stamp[yy * w + xx];
      if (Number.isFinite(v) && v > best) best = v;
    }
  }
  return Number.isFinite(best) ? best : 0;
}

/**
 * Optimal (matched-filter) SNR of a fitted profile: sqrt(sum_k m_k^2 / variance_k) over the
 * stamp pixels with finite positive variance, m = fitted profile above background.
 */
export function psfMatchedSnr(fit: PsfFit, variance: Float32Array | number, w: number, h: number): number {
  if (!Number.isFinite(fit.fwhmMajorPx) || !Number.isFinite(fit.fwhmMinorPx) || !Number.isFinite(fit.amplitude)) return Number.NaN;
  const moffat = fit.model === 'moffat';
  const beta = moffat ? (fit.beta as number) : 0;
  const k = moffat ? Math.pow(2, 1 / beta) - 1 : 0;
  const l1 = 4 / (fit.fwhmMajorPx * fit.fwhmMajorPx);
  const l2 = 4 / (fit.fwhmMinorPx * fit.fwhmMinorPx);
  const t = fit.thetaDeg / RAD2DEG;
  const ct = Math.cos(t), st = Math.sin(t);
  // Q = d^T M d with M = R diag(l1, l2) R^T
  const a = l1 * ct * ct + l2 * st * st, b = (l1 - l2) * ct * st, c = l1 * st * st + l2 * ct * ct;
  const constVar = typeof variance === 'number';
  let s = 0;
  for (let y = 0; y < h; y++) {
    const dy = y - fit.y;
    for (let x = 0; x < w; x++) {
      const i = y * w + x;
      const v = constVar ? (variance as number) : (variance as Float32Array)[i];
      if (!(v > 0) || !Number.isFinite(v)) continue;
      const dx = x - fit.x;
      const q = dx * (a * dx + 2 * b * dy) + c * dy * dy;
      const mk = moffat ? fit.amplitude * Math.exp(-beta * Math.log1p(k * q)) : fit.amplitude * Math.exp(-LN2 * q);
      s += (mk * mk) / v;
    }
  }
  return Math.sqrt(s);
}

/**
 * The fitted profile above background at (x, y) in stamp coordinates,
 * rebuilt from the reported FWHMs and angle (for matched-filter SNR and variance models).
 */
export function psfProfileAt(fit: PsfFit, x: number, y: number): number {
  const moffat = fit.model === 'moffat';
  const k = moffat ? Math.pow(2, 1 / (fit.beta as number)) - 1 : 0;
  const l1 = 4 / (fit.fwhmMajorPx * fit.fwhmMajorPx);
  const l2 = 4 / (fit.fwhmMinorPx * fit.fwhmMinorPx);
  const t = fit.thetaDeg / RAD2DEG;
  const ct = Math.cos(t), st = Math.sin(t);
  const dx = x - fit.x, dy = y - fit.y;
  const u = dx * ct + dy * st, v = -dx * st + dy * ct;
  const q = l1 * u * u + l2 * v * v;
  return moffat ? fit.amplitude * Math.pow(1 + k * q, -(fit.beta as number)) : fit.amplitude * Math.exp(-LN2 * q);
}
