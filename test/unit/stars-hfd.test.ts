import { describe, it, expect } from 'vitest';
import { halfFluxDiameter, halfFluxDiameterWithError, pixelCircleOverlap, enclosedFlux } from '../../core/stars/hfd.ts';
import { render, rng, gauss, type StarTruth } from '../reference/psf-stamps.ts';

const f32 = (a: Float64Array) => Float32Array.from(a);

/** Independent brute force: fraction of an n x n grid of sub-pixel points inside the circle. */
function overlapBrute(dx: number, dy: number, r: number, n = 1000): number {
  let c = 0;
  for (let j = 0; j < n; j++) {
    const y = dy - 0.5 + (j + 0.5) / n;
    for (let i = 0; i < n; i++) {
      const x = dx - 0.5 + (i + 0.5) / n;
      if (x * x + y * y <= r * r) c++;
    }
  }
  return c / (n * n);
}

describe('pixel/circle overlap', () => {
  it('matches brute-force supersampling for pixels cut by the circle', () => {
    const u = rng(3);
    for (let k = 0; k < 25; k++) {
      const r = 0.3 + 4 * u();
      const ang = 2 * Math.PI * u();
      const d = r + (u() - 0.5) * 1.6;
      const dx = d * Math.cos(ang), dy = d * Math.sin(ang);
      // grid point counting converges as ~n^-1.5 for a smooth boundary: ~3e-5 at n = 1000
      expect(Math.abs(pixelCircleOverlap(dx, dy, r) - overlapBrute(dx, dy, r))).toBeLessThan(6e-5);
    }
    // a pixel containing the whole circle holds pi r^2 (geometry)
    expect(pixelCircleOverlap(0.1, -0.05, 0.3)).toBeCloseTo(Math.PI * 0.09, 12);
  });

  it('overlaps of all pixels add up to the disc area pi r^2 (geometry)', () => {
    const img = new Float32Array(41 * 41).fill(1);
    for (const [x, y, r] of [[20, 20, 7.3], [20.37, 19.81, 3.05], [19.5, 20.5, 12.9], [20.1, 20.2, 0.7]]) {
      expect(enclosedFlux(img, 41, 41, x, y, r)).toBeCloseTo(Math.PI * r * r, 8);
    }
  });
});

describe('halfFluxDiameter', () => {
  it('Gaussian: HFD = FWHM (optics.md §1.1: HFR = sigma sqrt(2 ln 2)), plus the pixel boxes', () => {
    const s = 4;
    const t: StarTruth = { model: 'gaussian', x0: 40.3, y0: 39.8, flux: 1e5, fwhmMajor: s * 2.354820045, fwhmMinor: s * 2.354820045, thetaDeg: 0 };
    const img = f32(render(t, 81, 81, 'integrated', 8));
    const r = halfFluxDiameter(img, 81, 81, t.x0, t.y0, 40);
    // flux inside 10 sigma is 1 - exp(-50): all of it
    expect(r.totalFlux / t.flux).toBeCloseTo(1, 4);
    // Pixel integration adds the 1/12 px^2 box variance per axis (optics.md §1.6), and spreading
    // each pixel value uniformly over its square adds it once more: HFD ~ FWHM sqrt(1 + 1/(6 s^2))
    // (second-order approximation; 0.5 % at s = 4).
    expect(Math.abs(r.hfdPx / (t.fwhmMajor * Math.sqrt(1 + 1 / (6 * s * s))) - 1)).toBeLessThan(0.0005);
    expect(Math.abs(r.hfdPx / t.fwhmMajor - 1)).toBeLessThan(0.006);
  });

  it('Moffat: HFD/FWHM = 1.355897 (beta 2.5) and 1.262384 (beta 3) (optics.md §8), exact with a finite aperture', () => {
    for (const [beta, ratio] of [[2.5, 1.355897], [3, 1.262384]]) {
      // the table value itself: r50 = alpha sqrt(2^(1/(beta-1)) - 1), FWHM = 2 alpha sqrt(2^(1/beta) - 1) (Moffat 1969; Trujillo et al. 2001)
      expect(Math.sqrt(2 ** (1 / (beta - 1)) - 1) / Math.sqrt(2 ** (1 / beta) - 1)).toBeCloseTo(ratio, 6);
      // alpha = 10 px keeps the pixel-box terms (see the Gaussian case) near 0.2 %
      const alpha = 10, R = 80;
      const t: StarTruth = { model: 'moffat', x0: 80.2, y0: 79.7, flux: 1e5, fwhmMajor: 0, fwhmMinor: 0, thetaDeg: 0, beta, alphaMajor: alpha, alphaMinor: alpha };
      const img = f32(render(t, 161, 161, 'integrated', 4));
      const r = halfFluxDiameter(img, 161, 161, t.x0, t.y0, R);
      // Finite aperture: F(<r) = 1 - (1 + r^2/alpha^2)^(1-beta) (optics.md §1.1), so
      // half of F(<R) is reached at (1 + r^2/alpha^2)^(1-beta) = (1 + (1 + R^2/alpha^2)^(1-beta))/2.
      const fR = 1 - (1 + (R * R) / (alpha * alpha)) ** (1 - beta);
      expect(r.totalFlux / t.flux).toBeCloseTo(fR, 3);
      const q = ((1 + (1 - fR)) / 2) ** (1 / (1 - beta));
      const hfdFinite = 2 * alpha * Math.sqrt(q - 1);
      expect(Math.abs(r.hfdPx / hfdFinite - 1)).toBeLessThan(0.004);
      // and within 0.5 % of the infinite-aperture ratio for this wide aperture (R = 8 alpha)
      const fwhm = 2 * alpha * Math.sqrt(2 ** (1 / beta) - 1);
      expect(Math.abs(r.hfdPx / fwhm / ratio - 1)).toBeLessThan(0.005);
    }
  });

  it('curve of growth is exact: matches an independent supersampled evaluation of the same piecewise-constant image', () => {
    const u = rng(9);
    const img = new Float32Array(15 * 15);
    for (let i = 0; i < img.length; i++) img[i] = u();
    const x = 7.23, y = 6.61;
    const r = halfFluxDiameter(img, 15, 15, x, y, 6.5);
    // brute force: each pixel split into 200 x 200 sub-points
    const frac = (rr: number) => { let s = 0; for (let py = 0; py < 15; py++) for (let px = 0; px < 15; px++) s += img[py * 15 + px] * overlapBrute(px - x, py - y, rr, 200); return s; };
    const total = frac(6.5);
    expect(r.totalFlux / total).toBeCloseTo(1, 4);
    expect(frac(r.hfdPx / 2) / total).toBeCloseTo(0.5, 3);
  });

  it('HFD error agrees with the Monte Carlo scatter', () => {
    const u = rng(4);
    const t: StarTruth = { model: 'gaussian', x0: 12.1, y0: 11.8, flux: 2e4, fwhmMajor: 4, fwhmMinor: 4, thetaDeg: 0 };
    const clean = render(t, 25, 25, 'point');
    const sn = 10;
    const means: number[] = [];
    for (const guess of [undefined, 2.2]) {
      const v: number[] = [], e: number[] = [];
      const img = new Float32Array(clean.length);
      for (let k = 0; k < 400; k++) {
        for (let i = 0; i < img.length; i++) img[i] = clean[i] + sn * gauss(u);
        const r = halfFluxDiameterWithError(img, sn * sn, 25, 25, t.x0, t.y0, 11, guess);
        v.push(r.hfdPx); e.push(r.errPx);
      }
      const mu = v.reduce((s, a) => s + a, 0) / v.length;
      const sd = Math.sqrt(v.reduce((s, a) => s + (a - mu) ** 2, 0) / (v.length - 1));
      const med = [...e].sort((a, b) => a - b)[e.length >> 1];
      expect(Math.abs(med / sd - 1)).toBeLessThan(0.15); // first-order error; std of std at n = 400 is 3.5 %
      means.push(mu);
    }
    // the bracketing start (guess) finds the same crossings as the 0.5 px grid (different noise draws)
    expect(Math.abs(means[1] / means[0] - 1)).toBeLessThan(0.005);
  });

  it('bad input gives NaN, never throws', () => {
    expect(halfFluxDiameter(new Float32Array(100).fill(NaN), 10, 10, 5, 5, 4).hfdPx).toBeNaN();
    expect(halfFluxDiameter(new Float32Array(100), 10, 10, 5, 5, 4).hfdPx).toBeNaN();
    expect(halfFluxDiameter(new Float32Array(100).fill(-3), 10, 10, 5, 5, 4).hfdPx).toBeNaN();
    expect(halfFluxDiameter(new Float32Array(100).fill(1), 10, 10, 5, 5, 0).hfdPx).toBeNaN();
    expect(halfFluxDiameter(new Float32Array(100).fill(1), 10, 10, NaN, 5, 3).hfdPx).toBeNaN();
  });
});
