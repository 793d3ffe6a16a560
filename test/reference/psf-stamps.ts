/**
 * Test-only stamp renderer and noise, independent of core/: analytic elliptical Gaussian
 * and Moffat profiles written in rotated (major, minor) axes, point-sampled at pixel
 * centres or integrated over each pixel by ss x ss supersampling (midpoint rule), plus
 * seeded Gaussian and Poisson noise.
 */

/** mulberry32, uniform in [0, 1): the one seeded PRNG of the tests. */
export { mulberry32 as rng } from '../helpers/rng.ts';

/** Standard normal deviate by Box-Muller. */
export function gauss(u: () => number): number {
  let a = u();
  while (a <= 1e-300) a = u();
  return Math.sqrt(-2 * Math.log(a)) * Math.cos(2 * Math.PI * u());
}

/** ln Gamma(x), Lanczos approximation (g = 7, 9 terms; Numerical Recipes / Wikipedia coefficients). */
export function lgamma(x: number): number {
  const c = [0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
    12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7];
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - lgamma(1 - x);
  x -= 1;
  let s = c[0];
  for (let i = 1; i < 9; i++) s += c[i] / (x + i);
  const t = x + 7.5;
  return 0.5 * Math.log(2 * Math.PI) + (x + 0.5) * Math.log(t) - t + Math.log(s);
}

/**
 * Poisson deviate: Knuth's multiplication method below mean 10, Hormann's PTRS
 * transformed rejection (Hormann 1993, Insurance: Math. & Econ. 12, 39) above.
 */
export function poisson(u: () => number, lam: number): number {
  if (lam <= 0) return 0;
  if (lam < 10) {
    const L = Math.exp(-lam);
    let k = 0, p = 1;
    for (;;) { p *= u(); if (p <= L) return k; k++; }
  }
  const slam = Math.sqrt(lam), loglam = Math.log(lam);
  const b = 0.931 + 2.53 * slam, a = -0.059 + 0.02483 * b;
  const invalpha = 1.1239 + 1.1328 / (b - 3.4), vr = 0.9277 - 3.6224 / (b - 2);
  for (;;) {
    const U = u() - 0.5, V = u();
    const us = 0.5 - Math.abs(U);
    const k = Math.floor(((2 * a) / us + b) * U + lam + 0.43);
    if (us >= 0.07 && V <= vr) return k;
    if (k < 0 || (us < 0.013 && V > us)) continue;
    if (Math.log(V) + Math.log(invalpha) - Math.log(a / (us * us) + b) <= -lam + k * loglam - lgamma(k + 1)) return k;
  }
}

export interface StarTruth {
  model: 'gaussian' | 'moffat';
  x0: number; y0: number;
  /** total flux of the continuous profile */
  flux: number;
  fwhmMajor: number; fwhmMinor: number;
  thetaDeg: number;
  beta?: number;
  /** Moffat only: give the core widths alpha directly instead of the FWHMs (which are then ignored). */
  alphaMajor?: number; alphaMinor?: number;
  /** Gaussian only: give the sigmas directly instead of the FWHMs (which are then ignored). */
  sigmaMajor?: number; sigmaMinor?: number;
}

/** Continuous profile value (flux per unit area) at (x, y). */
export function profile(t: StarTruth): (x: number, y: number) => number {
  const th = (t.thetaDeg * Math.PI) / 180, ct = Math.cos(th), st = Math.sin(th);
  if (t.model === 'gaussian') {
    // FWHM = 2 sqrt(2 ln 2) sigma
    const k = 2 * Math.sqrt(2 * Math.LN2);
    const s1 = t.sigmaMajor ?? t.fwhmMajor / k, s2 = t.sigmaMinor ?? t.fwhmMinor / k;
    const norm = t.flux / (2 * Math.PI * s1 * s2);
    return (x, y) => {
      const dx = x - t.x0, dy = y - t.y0;
      const u = dx * ct + dy * st, v = -dx * st + dy * ct;
      return norm * Math.exp(-0.5 * ((u * u) / (s1 * s1) + (v * v) / (s2 * s2)));
    };
  }
  // Moffat 1969: I = I0 (1 + r^2/alpha^2)^-beta, FWHM = 2 alpha sqrt(2^(1/beta) - 1), flux = pi I0 alpha1 alpha2 / (beta - 1)
  const beta = t.beta as number;
  const f = 2 * Math.sqrt(Math.pow(2, 1 / beta) - 1);
  const a1 = t.alphaMajor ?? t.fwhmMajor / f, a2 = t.alphaMinor ?? t.fwhmMinor / f;
  const i0 = (t.flux * (beta - 1)) / (Math.PI * a1 * a2);
  return (x, y) => {
    const dx = x - t.x0, dy = y - t.y0;
    const u = dx * ct + dy * st, v = -dx * st + dy * ct;
    return i0 * Math.pow(1 + (u * u) / (a1 * a1) + (v * v) / (a2 * a2), -beta);
  };
}

/** Noiseless stamp: 'point' = value at pixel centres (x 1 px^2), 'integrated' = ss x ss midpoint supersampling of each pixel. */
export function render(t: StarTruth, w: number, h: number, mode: 'point' | 'integrated', ss = 16): Float64Array {
  const f = profile(t);
  const out = new Float64Array(w * h);
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      if (mode === 'point') { out[y * w + x] = f(x, y); continue; }
      let s = 0;
      for (let j = 0; j < ss; j++) for (let i = 0; i < ss; i++) s += f(x - 0.5 + (i + 0.5) / ss, y - 0.5 + (j + 0.5) / ss);
      out[y * w + x] = s / (ss * ss);
    }
  }
  return out;
}

/** Optimal (matched-filter) SNR of a noiseless stamp in white noise sigma_n: sqrt(sum m^2)/sigma_n. */
export function matchedSnr(clean: Float64Array, sigmaN: number): number {
  let s = 0;
  for (let i = 0; i < clean.length; i++) s += clean[i] * clean[i];
  return Math.sqrt(s) / sigmaN;
}

export function addGaussianNoise(clean: Float64Array, sigmaN: number, u: () => number, background = 0): Float32Array {
  const out = new Float32Array(clean.length);
  for (let i = 0; i < clean.length; i++) out[i] = clean[i] + background + sigmaN * gauss(u);
  return out;
}

/**
 * erf(x): Maclaurin series for |x| < 2.5, Lentz continued fraction for erfc beyond
 * (Abramowitz & Stegun 7.1.5 and 7.1.14); better than 1e-13 absolute.
 */
export function erf(x: number): number {
  const ax = Math.abs(x);
  if (ax < 2.5) {
    let term = x, sum = x;
    const x2 = x * x;
    for (let n = 1; n < 200; n++) {
      term *= -x2 / n;
      const add = term / (2 * n + 1);
      sum += add;
      if (Math.abs(add) < 1e-17 * Math.abs(sum)) break;
    }
    return (2 / Math.sqrt(Math.PI)) * sum;
  }
  // erfc(x) = exp(-x^2)/sqrt(pi) * 1/(x + 1/2/(x + 1/(x + 3/2/(x + ...)))) (A&S 7.1.14)
  let f = ax, C = ax, Dd = 0;
  for (let n = 1; n < 300; n++) {
    const an = n / 2;
    Dd = ax + an * Dd; Dd = 1 / Dd;
    C = ax + an / C;
    const delta = C * Dd;
    f *= delta;
    if (Math.abs(delta - 1) < 1e-16) break;
  }
  const erfc = Math.exp(-ax * ax) / Math.sqrt(Math.PI) / f;
  return x > 0 ? 1 - erfc : erfc - 1;
}

/** Normal CDF difference Phi(b) - Phi(a) for a unit-sigma normal. */
function dPhi(a: number, b: number): number {
  return 0.5 * (erf(b / Math.SQRT2) - erf(a / Math.SQRT2));
}

/**
 * Exact pixel integrals of a round Gaussian (sigma s, total flux `flux`) at (x0, y0):
 * products of erf differences per axis (as in Smith et al. 2010, Nature Methods 7, 373).
 */
export function renderRoundGaussianExact(w: number, h: number, x0: number, y0: number, s: number, flux: number): Float64Array {
  const ex = new Float64Array(w), ey = new Float64Array(h);
  for (let i = 0; i < w; i++) ex[i] = dPhi((i - 0.5 - x0) / s, (i + 0.5 - x0) / s);
  for (let j = 0; j < h; j++) ey[j] = dPhi((j - 0.5 - y0) / s, (j + 0.5 - y0) / s);
  const out = new Float64Array(w * h);
  for (let j = 0; j < h; j++) for (let i = 0; i < w; i++) out[j * w + i] = flux * ex[i] * ey[j];
  return out;
}

/**
 * Geometric third-order coma spot (optics.md §3: each pupil zone rho images to a circle of
 * radius S rho^2 whose centre is displaced 2 S rho^2 from the Gaussian image point toward
 * the flare; pupil azimuth phi maps to 2 phi on the circle), blurred by a round Gaussian
 * sigma `blur` and integrated over pixels (erf). Rays are placed by midpoint quadrature
 * in t = rho^2 (uniform for a uniformly filled pupil) and in the circle angle.
 * (tipX, tipY) = Gaussian image point; flareDeg = direction from the tip to the flare.
 */
export function renderComaSpot(w: number, h: number, tipX: number, tipY: number, S: number, flareDeg: number, blur: number, flux: number, nt = 300, npsi = 72): Float64Array {
  const out = new Float64Array(w * h);
  const f = (flareDeg * Math.PI) / 180, cf = Math.cos(f), sf = Math.sin(f);
  const rad = Math.ceil(6 * blur) + 1;
  const ex = new Float64Array(2 * rad + 1), ey = new Float64Array(2 * rad + 1);
  const per = flux / (nt * npsi);
  for (let it = 0; it < nt; it++) {
    const t = (it + 0.5) / nt;
    for (let ip = 0; ip < npsi; ip++) {
      const psi = (2 * Math.PI * (ip + 0.5)) / npsi;
      const u = S * t * (2 + Math.cos(psi)), v = S * t * Math.sin(psi);
      const px = tipX + u * cf - v * sf, py = tipY + u * sf + v * cf;
      const cx = Math.round(px), cy = Math.round(py);
      for (let k = -rad; k <= rad; k++) {
        ex[k + rad] = dPhi((cx + k - 0.5 - px) / blur, (cx + k + 0.5 - px) / blur);
        ey[k + rad] = dPhi((cy + k - 0.5 - py) / blur, (cy + k + 0.5 - py) / blur);
      }
      for (let j = -rad; j <= rad; j++) {
        const yy = cy + j;
        if (yy < 0 || yy >= h) continue;
        for (let i = -rad; i <= rad; i++) {
          const xx = cx + i;
          if (xx < 0 || xx >= w) continue;
          out[yy * w + xx] += per * ex[i + rad] * ey[j + rad];
        }
      }
    }
  }
  return out;
}
