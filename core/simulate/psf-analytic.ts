/**
 * Analytic elliptical Gaussian / Moffat stars, integrated over each pixel by
 * Gauss-Legendre quadrature, and their "as recorded" FWHM (the profile
 * convolved with the 1-px pixel box).
 */
import { GAUSS_FWHM_PER_SIGMA, moffatAlpha } from './psf-optics.ts';
import { glNodes } from './quadrature.ts';

export interface AnalyticStar {
  model: 'gaussian' | 'moffat';
  x: number;
  y: number;
  fluxE: number;
  fwhmMajorPx: number;
  fwhmMinorPx: number;
  thetaDeg: number;
  beta: number;
}

/**
 * Normalised profile as a quadratic form: value = norm * g(q), q = A dx^2 + 2B dx dy + C dy^2,
 * g = exp(-q/2) (Gaussian, q in sigma units) or (1 + q)^-β (Moffat, q in α units).
 * Normalisation: Gaussian 1/(2π σa σb); Moffat (β-1)/(π αa αb) (optics.md §1.1).
 */
export interface Profile {
  moffat: boolean;
  beta: number;
  A: number;
  B: number;
  C: number;
  norm: number;
  /** Major-axis scale (σ or α), px. */
  scaleMajor: number;
  scaleMinor: number;
}

export function makeProfile(s: AnalyticStar): Profile {
  const moffat = s.model === 'moffat';
  const sa = moffat ? moffatAlpha(s.fwhmMajorPx, s.beta) : s.fwhmMajorPx / GAUSS_FWHM_PER_SIGMA;
  const sb = moffat ? moffatAlpha(s.fwhmMinorPx, s.beta) : s.fwhmMinorPx / GAUSS_FWHM_PER_SIGMA;
  const th = (s.thetaDeg * Math.PI) / 180;
  const c = Math.cos(th), sn = Math.sin(th);
  const ia = 1 / (sa * sa), ib = 1 / (sb * sb);
  return {
    moffat,
    beta: s.beta,
    A: c * c * ia + sn * sn * ib,
    B: c * sn * (ia - ib),
    C: sn * sn * ia + c * c * ib,
    norm: moffat ? (s.beta - 1) / (Math.PI * sa * sb) : 1 / (2 * Math.PI * sa * sb),
    scaleMajor: sa,
    scaleMinor: sb,
  };
}

/** Profile value per unit flux at offset (dx, dy) from the centre. */
export function profileAt(p: Profile, dx: number, dy: number): number {
  const q = p.A * dx * dx + 2 * p.B * dx * dy + p.C * dy * dy;
  return p.moffat ? p.norm * Math.pow(1 + q, -p.beta) : p.norm * Math.exp(-0.5 * q);
}

/** Smallest circle radius (px) leaving at most `tol` of the flux outside: 1 - F(<r) along the major axis bounds it (optics.md §1.1). */
export function stampRadius(p: Profile, tol: number): number {
  const u = p.moffat ? Math.pow(tol, 1 / (1 - p.beta)) - 1 : -2 * Math.log(tol);
  return p.scaleMajor * Math.sqrt(u);
}

/** Automatic Gauss-Legendre order for the core: the minor scale sets how fast the profile turns inside one pixel. */
export function autoOrder(p: Profile): number {
  // Tuned against 24-point quadrature: core error below ~1e-6 of the peak for FWHM >= 1 px.
  const n = p.moffat ? Math.ceil(3.6 / p.scaleMinor) + 2 : Math.ceil(2.4 / p.scaleMinor) + 1;
  return Math.max(3, Math.min(16, n));
}

/**
 * t^β on t = 1/(1+q) in [0, 1], tabulated for linear interpolation: the Moffat
 * (1+q)^-β without a pow per sample. Interpolation error relative to the value is
 * β(β-1)/8 (h/t)^2 with h = 1/8192: ~1e-8 near the core, ~1e-4 of a value that is
 * itself < 1e-4 of the peak in the far wings.
 */
const MOFFAT_TABLE_N = 8192;
const MOFFAT_TABLES = new Map<number, Float64Array>();
function moffatTable(beta: number): Float64Array {
  let t = MOFFAT_TABLES.get(beta);
  if (!t) {
    t = new Float64Array(MOFFAT_TABLE_N + 2);
    for (let i = 0; i <= MOFFAT_TABLE_N + 1; i++) t[i] = Math.pow(i / MOFFAT_TABLE_N, beta);
    if (MOFFAT_TABLES.size > 256) MOFFAT_TABLES.clear();
    MOFFAT_TABLES.set(beta, t);
  }
  return t;
}

/** Largest stamp radius, px: a limit on time for extreme wings. */
export const MAX_STAMP_RADIUS = 400;

/**
 * Adds one star's expected electrons (pixel integrals of the profile) to `img`.
 * Pixels within ~2 FWHM get `order`^2 Gauss-Legendre points, out to ~5 FWHM 3x3,
 * beyond that the midpoint value with its second-order correction
 * f + ∇²f/24 (the mean of t^2 over a unit interval is 1/12), one evaluation per
 * pixel where the profile is smooth. Returns the electrons actually deposited.
 * `floorE`: stop the stamp where the profile per pixel falls below this.
 */
export function renderAnalyticStar(
  img: Float32Array, width: number, height: number, s: AnalyticStar, p: Profile,
  tol: number, order: number, floorE: number,
): number {
  let R = stampRadius(p, tol);
  // Also stop where a pixel would receive less than floorE (a profile along the major axis).
  if (floorE > 0) {
    const peak = s.fluxE * p.norm;
    if (peak <= floorE) R = Math.min(R, 2 * s.fwhmMajorPx + 2);
    else {
      const g = floorE / peak; // g(q) = g -> q
      const q = p.moffat ? Math.pow(g, -1 / p.beta) - 1 : -2 * Math.log(g);
      R = Math.min(R, Math.max(p.scaleMajor * Math.sqrt(q), 2 * s.fwhmMajorPx + 2));
    }
  }
  R = Math.min(R, MAX_STAMP_RADIUS);
  const x0 = s.x, y0 = s.y;
  const ixa = Math.max(0, Math.ceil(x0 - R)), ixb = Math.min(width - 1, Math.floor(x0 + R));
  const iya = Math.max(0, Math.ceil(y0 - R)), iyb = Math.min(height - 1, Math.floor(y0 + R));
  if (ixa > ixb || iya > iyb) return 0;
  const r1 = 2 * s.fwhmMajorPx + 1.5, r2 = 5 * s.fwhmMajorPx + 3;
  const r1s = r1 * r1, r2s = r2 * r2, Rs = (R + 0.5) * (R + 0.5);
  const gCore = glNodes(order), gMid = glNodes(Math.min(order, 3));
  const { A, B, C, norm, moffat } = p;
  const beta = p.beta;
  const tr = A + C, k1 = (4 * beta * (beta + 1)) / 24, k2 = (2 * beta * tr) / 24;
  const T = moffat ? moffatTable(beta) : new Float64Array(0);
  const TN = MOFFAT_TABLE_N;
  const F = s.fluxE * norm;
  let total = 0;
  for (let iy = iya; iy <= iyb; iy++) {
    const dy0 = iy - y0;
    const row = iy * width;
    for (let ix = ixa; ix <= ixb; ix++) {
      const dx0 = ix - x0;
      const d2 = dx0 * dx0 + dy0 * dy0;
      if (d2 > Rs) continue;
      if (d2 >= r2s) {
        // Corrected midpoint: Moffat g = (1+q)^-β, ∇²g = g [4β(β+1)|Mx|²/(1+q)² - 2β tr(M)/(1+q)];
        // Gaussian g = exp(-q/2), ∇²g = g (|Mx|² - tr(M)).
        const mx = A * dx0 + B * dy0, my = B * dx0 + C * dy0, m2 = mx * mx + my * my;
        const q = dx0 * mx + dy0 * my;
        let val: number;
        if (moffat) {
          const u = 1 / (1 + q);
          const xi = u * TN, i0 = xi | 0;
          val = (T[i0] + (xi - i0) * (T[i0 + 1] - T[i0])) * (1 + k1 * m2 * u * u - k2 * u);
        } else {
          val = Math.exp(-0.5 * q) * (1 + (m2 - tr) / 24);
        }
        const v = F * val;
        img[row + ix] += v;
        total += v;
        continue;
      }
      const g = d2 < r1s ? gCore : gMid;
      const t = g.t, w = g.w, n = t.length;
      let sum = 0;
      for (let j = 0; j < n; j++) {
        const dy = dy0 + t[j];
        const by = 2 * B * dy, cy = C * dy * dy;
        let rs = 0;
        for (let i = 0; i < n; i++) {
          const dx = dx0 + t[i];
          const q = dx * (A * dx + by) + cy;
          let val: number;
          if (moffat) {
            const xi = TN / (1 + q), i0 = xi | 0;
            val = T[i0] + (xi - i0) * (T[i0 + 1] - T[i0]);
          } else val = Math.exp(-0.5 * q);
          rs += w[i] * val;
        }
        sum += w[j] * rs;
      }
      const v = F * sum;
      img[row + ix] += v;
      total += v;
    }
  }
  return total;
}

/** Profile convolved with the unit pixel box, per unit flux, at (dx, dy) (16x16 Gauss-Legendre). */
function boxed(p: Profile, dx: number, dy: number, g: { t: Float64Array; w: Float64Array }): number {
  const t = g.t, w = g.w, n = t.length;
  let sum = 0;
  for (let j = 0; j < n; j++) {
    let rs = 0;
    for (let i = 0; i < n; i++) rs += w[i] * profileAt(p, dx + t[i], dy + t[j]);
    sum += w[j] * rs;
  }
  return sum;
}

/**
 * FWHM as recorded: full width at half maximum of (profile * 1-px box) along the
 * star's major and minor axes, by quadrature and bracketed root finding (Illinois
 * false position). The box-convolved peak stays at the centre (both are symmetric).
 */
export function recordedFwhm(s: AnalyticStar): { major: number; minor: number } {
  const p = makeProfile(s);
  // 8 points per axis are exact to ~1e-10 once the profile is wider than the pixel.
  const g = glNodes(p.scaleMinor >= 1 ? 8 : p.scaleMinor >= 0.5 ? 16 : 32);
  const peak = boxed(p, 0, 0, g);
  const th = (s.thetaDeg * Math.PI) / 180;
  const half = (ux: number, uy: number, guess: number): number => {
    const f = (r: number) => boxed(p, r * ux, r * uy, g) - peak / 2;
    let lo = 0, flo = f(0);
    let hi = Math.max(guess, 0.5), fhi = f(hi);
    while (fhi > 0 && hi < 1e4) { lo = hi; flo = fhi; hi *= 2; fhi = f(hi); }
    let side = 0;
    for (let it = 0; it < 100 && hi - lo > 1e-10; it++) {
      const r = (lo * fhi - hi * flo) / (fhi - flo);
      const fr = f(r);
      if (fr > 0) { lo = r; flo = fr; if (side === 1) fhi /= 2; side = 1; }
      else { hi = r; fhi = fr; if (side === -1) flo /= 2; side = -1; }
      if (fr === 0) { lo = hi = r; }
    }
    return lo + hi; // 2 x the half-width
  };
  return {
    major: half(Math.cos(th), Math.sin(th), s.fwhmMajorPx / 2 + 0.5),
    minor: half(-Math.sin(th), Math.cos(th), s.fwhmMinorPx / 2 + 0.5),
  };
}
