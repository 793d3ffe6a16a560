// The PSF fit's loop runs as WebAssembly compiled from core/stars/wasm/psf-fit.as.ts; the
// TypeScript loop (fitPsfWithSnrJs) is its reference: both loops give the same fits on noisy
// Gaussian and Moffat stamps of every kind the pipeline passes (that the committed module is the
// compiled source: wasm-modules.test.ts).
import { describe, it, expect } from 'vitest';
import { fitPsfWithSnr, fitPsfWithSnrJs, type FitOptions } from '../../core/stars/psf-fit.ts';
import { render, rng, addGaussianNoise, matchedSnr, type StarTruth } from '../reference/psf-stamps.ts';

describe('PSF fit in WebAssembly', () => {
  it('gives the fits of the TypeScript loop (Gaussian and Moffat, point and pixel-integrated, per-pixel and constant variance, windows, missing pixels)', () => {
    const u = rng(77);
    const W = 23;
    let compared = 0;
    for (let k = 0; k < 120; k++) {
      const moffat = k % 2 === 1;
      // undersampled stars with the pixel-integrated model (3 and 4 Gauss-Legendre points per axis)
      const pixelNodes = k % 5 === 1 ? 3 : k % 5 === 3 ? 4 : undefined;
      const fw = pixelNodes ? 0.9 + 1.5 * u() : 2.5 + 3 * u();
      const t: StarTruth = { model: moffat ? 'moffat' : 'gaussian', beta: 2 + 3 * u(), x0: 11 + u() - 0.5, y0: 11 + u() - 0.5, flux: 2e4, fwhmMajor: fw, fwhmMinor: fw * (0.6 + 0.4 * u()), thetaDeg: 180 * u() - 90 };
      const clean = render(t, W, W, 'integrated', 4);
      const nu = 20 + 300 * u();
      const sn = matchedSnr(clean, 1) / nu;
      const img = addGaussianNoise(clean, sn, u, 5 * sn * (u() - 0.5));
      if (k % 7 === 0) img[3 * W + 4] = Number.NaN;
      const perPixel = k % 3 !== 0;
      const variance = perPixel ? Float32Array.from(clean, (c) => sn * sn + Math.max(0, c) * 0.01) : sn * sn;
      const s0 = fw / 2.3548;
      const opts: FitOptions = {
        model: moffat ? 'moffat' : 'gaussian', variance, pixelNodes,
        radius: k % 4 === 0 ? undefined : Math.max(4, 2.5 * fw),
        init: { x: Math.round(t.x0), y: Math.round(t.y0), ixx: s0 * s0, iyy: s0 * s0 * 0.9, ixy: 0.1, background: k % 5 === 0 ? undefined : 0 },
      };
      const a = fitPsfWithSnr(img, W, W, opts);
      const b = fitPsfWithSnrJs(img, W, W, opts);
      expect(a.nPixels).toBe(b.nPixels);
      expect(a.fit.converged).toBe(b.fit.converged);
      if (!b.fit.converged) continue;
      compared++;
      // the same arithmetic up to the last bits of exp/log/pow: far inside the noise
      expect(Math.abs(a.fit.x - b.fit.x)).toBeLessThan(1e-3 * b.fit.err.x);
      expect(Math.abs(a.fit.fwhmMajorPx - b.fit.fwhmMajorPx)).toBeLessThan(1e-3 * b.fit.err.fwhmMajorPx);
      expect(Math.abs(a.fit.fwhmMinorPx - b.fit.fwhmMinorPx)).toBeLessThan(1e-3 * b.fit.err.fwhmMinorPx);
      expect(Math.abs(a.fit.chi2Reduced / b.fit.chi2Reduced - 1)).toBeLessThan(1e-9);
      expect(a.fit.iterations).toBe(b.fit.iterations);
      expect(a.snr / b.snr).toBeCloseTo(1, 9);
      if (moffat) expect(Math.abs((a.fit.beta as number) - (b.fit.beta as number))).toBeLessThan(1e-3 * (b.fit.err.beta as number));
    }
    expect(compared).toBeGreaterThan(95);
  });

  it('refuses a start it cannot fit the same way as the TypeScript loop', () => {
    const img = new Float32Array(9 * 9).fill(Number.NaN);
    const opts: FitOptions = { model: 'gaussian', variance: 1, init: { x: 4, y: 4, ixx: 2, iyy: 2, ixy: 0 } };
    const a = fitPsfWithSnr(img, 9, 9, opts), b = fitPsfWithSnrJs(img, 9, 9, opts);
    expect(a.fit.converged).toBe(false);
    expect(b.fit.converged).toBe(false);
    expect(a.nPixels).toBe(b.nPixels);
  });
});
