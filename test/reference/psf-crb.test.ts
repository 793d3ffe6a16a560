/**
 * Cramér-Rao bound for a pixelated Gaussian PSF with Poisson noise and background, and
 * the scatter of the fitted FWHM against it.
 *
 * Exact Fisher information (Smith, Joseph, Rieger & Lidke 2010, Nature Methods 7, 373;
 * Ober, Ram & Ward 2004, Biophys. J. 86, 1185): F_ij = sum_k (dmu_k/dth_i)(dmu_k/dth_j)/mu_k,
 * mu_k = b + N P_k with P_k the pixel integral of the Gaussian (products of erf differences),
 * th = (x0, y0, s, N, b[, e1, e2]). Checked against the closed forms of optics.md §2 / §8:
 * the Mortensen et al. 2010 (Nature Methods 7, 377) maximum-likelihood variance and the
 * tabulated exact-Fisher values.
 */
import { describe, it, expect } from 'vitest';
import { fitPsf, psfProfileAt } from '../../core/stars/psf-fit.ts';
import { adaptiveMoments } from '../../core/stars/moments.ts';
import type { PsfFit } from '../../core/stars/types.ts';
import { erf, poisson, rng, renderRoundGaussianExact } from './psf-stamps.ts';

const phi = (u: number) => Math.exp(-0.5 * u * u) / Math.sqrt(2 * Math.PI);
const Phi = (u: number) => 0.5 * (1 + erf(u / Math.SQRT2));

/** Inverse of a small symmetric positive-definite matrix by Gauss-Jordan (test-local, independent of core/). */
function inverse(a: number[][]): number[][] {
  const n = a.length;
  const m = a.map((r, i) => [...r, ...Array.from({ length: n }, (_, j) => (i === j ? 1 : 0))]);
  for (let c = 0; c < n; c++) {
    let p = c;
    for (let r = c + 1; r < n; r++) if (Math.abs(m[r][c]) > Math.abs(m[p][c])) p = r;
    [m[c], m[p]] = [m[p], m[c]];
    const d = m[c][c];
    for (let j = 0; j < 2 * n; j++) m[c][j] /= d;
    for (let r = 0; r < n; r++) if (r !== c) { const f = m[r][c]; for (let j = 0; j < 2 * n; j++) m[r][j] -= f * m[c][j]; }
  }
  return m.map((r) => r.slice(n));
}

/**
 * Fisher matrix for a round Gaussian (sigma s, N photons, b photons/pixel background) at
 * (x0, y0) on a w x h grid of unit pixels; with `shape`, also the distortion (e1, e2) at
 * e = 0 (covariance s^2 [[1+e1, e2], [e2, 1-e1]]): dG/de1 = (x^2 - y^2)/(2 s^2) G,
 * dG/de2 = x y / s^2 G, integrated per pixel with the 1-D moments of the normal,
 * int u phi = -phi, int u^2 phi = Phi - u phi.
 */
function fisher(w: number, h: number, x0: number, y0: number, s: number, N: number, b: number, shape: boolean): number[][] {
  const axis = (n: number, c: number) => Array.from({ length: n }, (_, i) => {
    const u0 = (i - 0.5 - c) / s, u1 = (i + 0.5 - c) / s;
    const E = Phi(u1) - Phi(u0);
    return {
      E,
      dc: (phi(u0) - phi(u1)) / s, // dE/dcentre
      ds: (u0 * phi(u0) - u1 * phi(u1)) / s, // dE/ds
      m1: phi(u0) - phi(u1), // int u phi du over the pixel
      m2: E - (u1 * phi(u1) - u0 * phi(u0)), // int u^2 phi du
    };
  });
  const X = axis(w, x0), Y = axis(h, y0);
  const np = shape ? 7 : 5;
  const F = Array.from({ length: np }, () => new Array(np).fill(0));
  for (let j = 0; j < h; j++) for (let i = 0; i < w; i++) {
    const ex = X[i], ey = Y[j];
    const P = ex.E * ey.E;
    const mu = b + N * P;
    if (!(mu > 0)) continue;
    const d = [N * ex.dc * ey.E, N * ex.E * ey.dc, N * (ex.ds * ey.E + ex.E * ey.ds), P, 1];
    if (shape) d.push(N * 0.5 * (ex.m2 * ey.E - ex.E * ey.m2), N * ex.m1 * ey.m1);
    for (let p = 0; p < np; p++) for (let q = 0; q < np; q++) F[p][q] += (d[p] * d[q]) / mu;
  }
  return F;
}

/** Mortensen et al. 2010 ML variance (optics.md §2): (sa^2/N) / (1 + int_0^1 ln t / (1 + t/tau) dt). */
function mortensenML(s: number, a: number, N: number, b: number): number {
  const sa2 = s * s + (a * a) / 12;
  const tau = (2 * Math.PI * sa2 * b) / (N * a * a);
  // t = e^-v: int_0^inf (-v) e^-v / (1 + e^-v / tau) dv, Simpson on [0, 60]
  const n = 20000, hh = 60 / n;
  let I = 0;
  for (let k = 0; k <= n; k++) {
    const v = k * hh;
    const f = (-v * Math.exp(-v)) / (1 + Math.exp(-v) / tau);
    I += f * (k === 0 || k === n ? 1 : k % 2 ? 4 : 2);
  }
  I *= hh / 3;
  return (sa2 / N) / (1 + I);
}

describe('Fisher information code (checked against optics.md §8 and Mortensen et al. 2010)', () => {
  it('reproduces the tabulated exact-Fisher and Mortensen ML localisation errors', () => {
    // s = 1, a = 1, N = 2000, b2 = 50: exact Fisher 0.03359, Mortensen ML 0.03356 (optics.md §8)
    const F1 = inverse(fisher(31, 31, 15, 15, 1, 2000, 50, false));
    expect(Math.sqrt(F1[0][0])).toBeCloseTo(0.03359, 4);
    expect(Math.sqrt(mortensenML(1, 1, 2000, 50))).toBeCloseTo(0.03356, 5);
    // s = 2, N = 5000, b2 = 100: exact Fisher 0.05428, Mortensen ML 0.05427
    const F2 = inverse(fisher(41, 41, 20, 20, 2, 5000, 100, false));
    expect(Math.sqrt(F2[0][0])).toBeCloseTo(0.05428, 4);
    expect(Math.sqrt(mortensenML(2, 1, 5000, 100))).toBeCloseTo(0.05427, 5);
    // no background, s = 1.5, N = 1e4: sigma_x = 0.01528 (= sqrt(sa^2/N)), exact sigma_s = 0.00777
    const F3 = inverse(fisher(31, 31, 15, 15, 1.5, 1e4, 0, false).map((r) => r.slice(0, 4)).slice(0, 4));
    expect(Math.sqrt(F3[0][0])).toBeCloseTo(0.01528, 5);
    expect(Math.sqrt(F3[2][2])).toBeCloseTo(0.00777, 5);
    // the Mortensen ML closed form matches the exact bound within 0.2 % (optics.md §2: within 0.1 % in the cases checked there)
    expect(Math.abs(Math.sqrt(F1[0][0]) / Math.sqrt(mortensenML(1, 1, 2000, 50)) - 1)).toBeLessThan(0.002);
    expect(Math.abs(Math.sqrt(F2[0][0]) / Math.sqrt(mortensenML(2, 1, 5000, 100)) - 1)).toBeLessThan(0.002);
    console.log(`exact Fisher sigma_x: ${Math.sqrt(F1[0][0]).toFixed(6)} (s=1), ${Math.sqrt(F2[0][0]).toFixed(6)} (s=2); Mortensen ML ${Math.sqrt(mortensenML(1, 1, 2000, 50)).toFixed(6)}, ${Math.sqrt(mortensenML(2, 1, 5000, 100)).toFixed(6)}; no-bg sigma_x ${Math.sqrt(F3[0][0]).toFixed(6)} sigma_s ${Math.sqrt(F3[2][2]).toFixed(6)}`);
    // adding the distortion parameters leaves the round-star bounds unchanged (orthogonal by symmetry)
    const F4 = inverse(fisher(41, 41, 20, 20, 2, 5000, 100, true));
    expect(Math.sqrt(F4[0][0]) / Math.sqrt(F2[0][0])).toBeCloseTo(1, 6);
    expect(Math.sqrt(F4[2][2]) / Math.sqrt(F2[2][2])).toBeCloseTo(1, 6);
  });
});

describe('fitted FWHM scatter vs the Cramér-Rao bound', () => {
  it('std(FWHM) of Poisson-weighted fits is within 1.2x of the bound (Gaussian PSF with background)', () => {
    const w = 21, h = 21, x0 = 10.3, y0 = 9.8, s = 2, N = 5000, b = 100;
    const mean = renderRoundGaussianExact(w, h, x0, y0, s, N);
    const Finv = inverse(fisher(w, h, x0, y0, s, N, b, true));
    // The fit describes the star as recorded (point-sampled model, pixel box included):
    // s_rec ~ sqrt(s^2 + 1/12) (Thompson et al. 2002), so d(FWHM_rec)/ds = 2.3548 s / s_rec.
    const sRec = Math.sqrt(s * s + 1 / 12);
    const boundFwhm = 2 * Math.sqrt(2 * Math.LN2) * (s / sRec) * Math.sqrt(Finv[2][2]);
    const boundX = Math.sqrt(Finv[0][0]);
    const u = rng(2024);
    const img = new Float32Array(w * h), sub = new Float32Array(w * h), vari = new Float32Array(w * h);
    const fw: number[] = [], xs: number[] = [];
    const M = 800;
    for (let k = 0; k < M; k++) {
      for (let i = 0; i < w * h; i++) img[i] = poisson(u, b + mean[i]);
      // start: adaptive moments of the border-median-subtracted stamp
      const border: number[] = [];
      for (let i = 0; i < w; i++) border.push(img[i], img[(h - 1) * w + i]);
      border.sort((p, q) => p - q);
      const b0 = border[border.length >> 1];
      for (let i = 0; i < w * h; i++) sub[i] = img[i] - b0;
      const m = adaptiveMoments(sub, w, h, 10, 10, 2);
      // Poisson weights by iterative reweighting: variance = fitted model (b + profile), which
      // converges to the Poisson maximum-likelihood normal equations.
      let fit: PsfFit = fitPsf(img, w, h, { model: 'gaussian', variance: b0, init: { ...m, background: b0 } });
      for (let pass = 0; pass < 2 && fit.converged; pass++) {
        for (let j = 0; j < h; j++) for (let i = 0; i < w; i++) vari[j * w + i] = Math.max(1, fit.background + psfProfileAt(fit, i, j));
        fit = fitPsf(img, w, h, { model: 'gaussian', variance: vari, init: { x: fit.x, y: fit.y, ixx: m.ixx, iyy: m.iyy, ixy: m.ixy, background: fit.background } });
      }
      if (!fit.converged) continue;
      fw.push(Math.sqrt(fit.fwhmMajorPx * fit.fwhmMinorPx));
      xs.push(fit.x);
    }
    expect(fw.length).toBeGreaterThan(M * 0.99);
    const sd = (a: number[]) => { const mu = a.reduce((p, v) => p + v, 0) / a.length; return Math.sqrt(a.reduce((p, v) => p + (v - mu) ** 2, 0) / (a.length - 1)); };
    const ratio = sd(fw) / boundFwhm;
    // std of a std from 800 samples: 2.5 %; an efficient estimator gives ~1.00-1.05 (optics.md §2 test recipe)
    expect(ratio).toBeLessThan(1.2);
    expect(ratio).toBeGreaterThan(0.9);
    expect(sd(xs) / boundX).toBeLessThan(1.2);
    expect(sd(xs) / boundX).toBeGreaterThan(0.9);
    console.log(`FWHM scatter / CRB = ${ratio.toFixed(3)}, x scatter / CRB = ${(sd(xs) / boundX).toFixed(3)}`);
  });
});
