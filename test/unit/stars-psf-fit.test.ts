import { describe, it, expect } from 'vitest';
import { fitPsf, psfMatchedSnr, type FitOptions } from '../../core/stars/psf-fit.ts';
import { render, rng, gauss, matchedSnr, type StarTruth } from '../reference/psf-stamps.ts';

const f32 = (a: Float64Array) => Float32Array.from(a);
const K = 2 * Math.sqrt(2 * Math.LN2);

/** Start values of the kind the moments give: roughly right, round. */
function roughInit(t: StarTruth, s = 1.6): FitOptions['init'] {
  return { x: Math.round(t.x0), y: Math.round(t.y0), ixx: s * s, iyy: s * s, ixy: 0 };
}
const angDiff = (a: number, b: number) => { let d = (a - b) % 180; if (d > 90) d -= 180; if (d <= -90) d += 180; return Math.abs(d); };

describe('fitPsf on noiseless point-sampled stamps (the model class exactly)', () => {
  it('Gaussian: FWHM = 2.354820045 sigma (optics.md §1.1), centre, angle, flux', () => {
    const u = rng(21);
    for (let k = 0; k < 10; k++) {
      const s1 = 1.2 + 2 * u(), s2 = s1 * (0.6 + 0.4 * u());
      const t: StarTruth = { model: 'gaussian', x0: 12 + u(), y0: 11 + u(), flux: 1e4, fwhmMajor: 0, fwhmMinor: 0, thetaDeg: 170 * u() - 85, sigmaMajor: s1, sigmaMinor: s2 };
      const img = f32(render(t, 25, 25, 'point'));
      const f = fitPsf(img, 25, 25, { model: 'gaussian', variance: 1, init: roughInit(t) });
      expect(f.converged).toBe(true);
      expect(f.fwhmMajorPx / (2.354820045 * s1)).toBeCloseTo(1, 5);
      expect(f.fwhmMinorPx / (2.354820045 * s2)).toBeCloseTo(1, 5);
      expect(f.x).toBeCloseTo(t.x0, 5);
      expect(f.y).toBeCloseTo(t.y0, 5);
      if (s2 / s1 < 0.95) expect(angDiff(f.thetaDeg, t.thetaDeg)).toBeLessThan(1e-3);
      // sum of unit-spaced samples equals the integral for a well-sampled Gaussian (Poisson summation)
      expect(f.flux / t.flux).toBeCloseTo(1, 4);
      expect(Math.abs(f.background)).toBeLessThan(1e-6);
    }
  });

  it('Moffat: FWHM/alpha = 1.130501 / 1.019649 / 0.869959 / 0.791401 at beta 2.5 / 3 / 4 / 4.765 (Moffat 1969; optics.md §8, astropy Moffat2D.fwhm)', () => {
    const table: [number, number][] = [[2.5, 1.130501], [3, 1.019649], [4, 0.869959], [4.765, 0.791401]];
    for (const [beta, ratio] of table) {
      const a1 = 2.6, a2 = 2.1;
      const t: StarTruth = { model: 'moffat', x0: 15.3, y0: 14.6, flux: 1e4, fwhmMajor: 0, fwhmMinor: 0, thetaDeg: 33, beta, alphaMajor: a1, alphaMinor: a2 };
      const img = f32(render(t, 31, 31, 'point'));
      const f = fitPsf(img, 31, 31, { model: 'moffat', variance: 1, init: roughInit(t) });
      expect(f.converged).toBe(true);
      expect(f.beta as number).toBeCloseTo(beta, 4);
      expect(f.fwhmMajorPx / (a1 * ratio)).toBeCloseTo(1, 5);
      expect(f.fwhmMinorPx / (a2 * ratio)).toBeCloseTo(1, 5);
      expect(angDiff(f.thetaDeg, 33)).toBeLessThan(1e-3);
    }
  });

  it('angle convention: degrees from +x toward +y, in (-90, 90]', () => {
    for (const th of [0, 30, 45, 89.5, 90, -45, -89.5]) {
      const t: StarTruth = { model: 'gaussian', x0: 12, y0: 12, flux: 1e4, fwhmMajor: 6, fwhmMinor: 3, thetaDeg: th };
      const f = fitPsf(f32(render(t, 25, 25, 'point')), 25, 25, { model: 'gaussian', variance: 1, init: roughInit(t) });
      const expected = th === -90 ? 90 : th;
      expect(f.thetaDeg).toBeGreaterThan(-90);
      expect(f.thetaDeg).toBeLessThanOrEqual(90);
      expect(angDiff(f.thetaDeg, expected)).toBeLessThan(1e-4);
    }
    // a star elongated along the array's first diagonal (x and y growing together) is at +45
    const img = new Float32Array(21 * 21);
    for (let y = 0; y < 21; y++) for (let x = 0; x < 21; x++) { const u = (x - 10 + y - 10) / Math.SQRT2, v = (y - 10 - (x - 10)) / Math.SQRT2; img[y * 21 + x] = Math.exp(-0.5 * (u * u / 9 + v * v / 2)); }
    const f = fitPsf(img, 21, 21, { model: 'gaussian', variance: 1, init: { x: 10, y: 10, ixx: 3, iyy: 3, ixy: 0 } });
    expect(f.thetaDeg).toBeCloseTo(45, 4);
  });

  it('ignores NaN pixels and zero-weight pixels; per-pixel and constant variance agree', () => {
    const t: StarTruth = { model: 'moffat', x0: 10.4, y0: 9.7, flux: 1e4, fwhmMajor: 4.5, fwhmMinor: 3.9, thetaDeg: -20, beta: 3.5 };
    const clean = f32(render(t, 21, 21, 'point'));
    const a = fitPsf(clean, 21, 21, { model: 'moffat', variance: 4, init: roughInit(t) });
    const b = fitPsf(clean, 21, 21, { model: 'moffat', variance: new Float32Array(441).fill(4), init: roughInit(t) });
    expect(b.fwhmMajorPx).toBeCloseTo(a.fwhmMajorPx, 8);
    expect(b.err.fwhmPx).toBeCloseTo(a.err.fwhmPx, 8);
    const holes = clean.slice();
    for (const i of [0, 5, 100, 220, 230, 300, 440]) holes[i] = NaN;
    const c = fitPsf(holes, 21, 21, { model: 'moffat', variance: 1, init: roughInit(t) });
    expect(c.converged).toBe(true);
    expect(c.fwhmMajorPx / 4.5).toBeCloseTo(1, 5);
    expect(c.beta as number).toBeCloseTo(3.5, 4);
  });
});

describe('fitPsf uncertainties', () => {
  it('reported 1-sigma errors match the Monte Carlo scatter (Gaussian and Moffat, nu = 80)', () => {
    const u = rng(77);
    for (const model of ['gaussian', 'moffat'] as const) {
      const t: StarTruth = { model, x0: 12.3, y0: 11.8, flux: 1, fwhmMajor: 4.6, fwhmMinor: 3.8, thetaDeg: 25, beta: 3 };
      const clean = render(t, 25, 25, 'point');
      const sn = matchedSnr(clean, 1) / 80;
      const vals: Record<string, number[]> = { x: [], fwhm: [], maj: [], ell: [], th: [], beta: [] };
      const errs: Record<string, number[]> = { x: [], fwhm: [], maj: [], ell: [], th: [], beta: [] };
      const img = new Float32Array(clean.length);
      for (let k = 0; k < 300; k++) {
        for (let i = 0; i < img.length; i++) img[i] = clean[i] + sn * gauss(u);
        const f = fitPsf(img, 25, 25, { model, variance: sn * sn, init: roughInit(t, 1.8) });
        if (!f.converged) continue;
        vals.x.push(f.x); errs.x.push(f.err.x);
        vals.fwhm.push(Math.sqrt(f.fwhmMajorPx * f.fwhmMinorPx)); errs.fwhm.push(f.err.fwhmPx);
        vals.maj.push(f.fwhmMajorPx); errs.maj.push(f.err.fwhmMajorPx);
        vals.ell.push(1 - f.fwhmMinorPx / f.fwhmMajorPx); errs.ell.push(f.err.ellipticity);
        vals.th.push(f.thetaDeg); errs.th.push(f.err.thetaDeg);
        if (model === 'moffat') { vals.beta.push(f.beta as number); errs.beta.push(f.err.beta as number); }
      }
      expect(vals.x.length).toBeGreaterThan(295);
      const sd = (a: number[]) => { const m = a.reduce((s, v) => s + v, 0) / a.length; return Math.sqrt(a.reduce((s, v) => s + (v - m) ** 2, 0) / (a.length - 1)); };
      const med = (a: number[]) => [...a].sort((p, q) => p - q)[a.length >> 1];
      // first-order (covariance) errors; std of a std from 300 samples is ~4 %
      for (const key of ['x', 'fwhm', 'maj', 'ell', 'th'] as const) {
        expect(Math.abs(med(errs[key]) / sd(vals[key]) - 1), `${model} ${key}`).toBeLessThan(0.15);
      }
      // beta is skewed (bounded, nonlinear): the covariance error is only indicative
      if (model === 'moffat') expect(Math.abs(med(errs.beta) / sd(vals.beta) - 1)).toBeLessThan(0.35);
    }
  });

  it('matched-filter SNR of the fit equals sqrt(sum m^2)/sigma of the truth (optics.md §1.6 definition)', () => {
    const t: StarTruth = { model: 'gaussian', x0: 12.3, y0: 11.8, flux: 1e4, fwhmMajor: 4.6, fwhmMinor: 3.8, thetaDeg: 25 };
    const clean = render(t, 25, 25, 'point');
    const f = fitPsf(f32(clean), 25, 25, { model: 'gaussian', variance: 9, init: roughInit(t) });
    expect(psfMatchedSnr(f, 9, 25, 25) / matchedSnr(clean, 3)).toBeCloseTo(1, 6);
    // and nu = F / (sigma_n sqrt(4 pi sx sy)) for a well-sampled Gaussian (optics.md §1.6, elliptical form)
    expect(psfMatchedSnr(f, 9, 25, 25) / (1e4 / (3 * Math.sqrt(4 * Math.PI * (4.6 / K) * (3.8 / K))))).toBeCloseTo(1, 4);
  });
});

describe('fitPsf on bad stamps', () => {
  it('never throws; reports converged = false', () => {
    const opts = (model: 'gaussian' | 'moffat'): FitOptions => ({ model, variance: 1, init: { x: 5, y: 5, ixx: 2, iyy: 2, ixy: 0 } });
    for (const model of ['gaussian', 'moffat'] as const) {
      expect(fitPsf(new Float32Array(100).fill(NaN), 10, 10, opts(model)).converged).toBe(false);
      expect(fitPsf(new Float32Array(100), 10, 10, opts(model)).converged).toBe(false);
      const inf = new Float32Array(100).fill(1); inf[3] = Infinity;
      expect(() => fitPsf(inf, 10, 10, opts(model))).not.toThrow();
      expect(fitPsf(new Float32Array(4).fill(1), 2, 2, opts(model)).converged).toBe(false);
      expect(fitPsf(new Float32Array(100).fill(1), 10, 10, { ...opts(model), init: { x: 5, y: 5, ixx: -1, iyy: 2, ixy: 0 } }).converged).toBe(false);
      expect(fitPsf(new Float32Array(100).fill(1), 10, 10, { ...opts(model), variance: 0 }).converged).toBe(false);
      const u = rng(1);
      const junk = Float32Array.from({ length: 225 }, () => gauss(u));
      expect(() => fitPsf(junk, 15, 15, { ...opts(model), init: { x: 7, y: 7, ixx: 2, iyy: 2, ixy: 0 } })).not.toThrow();
    }
  });
});
