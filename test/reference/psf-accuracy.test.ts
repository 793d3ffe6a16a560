/**
 * Accuracy of measured size, shape and position on simulated stars whose truth is known
 * analytically (renderer and noise in ./psf-stamps.ts, independent of core/).
 *
 * SNR here is the optimal matched-filter SNR nu = sqrt(sum m_k^2)/sigma_n (optics.md §1.6),
 * the same definition measureStar reports. No estimator can beat the Cramér-Rao bound,
 * which for a well-sampled Gaussian in sky noise is sigma(FWHM)/FWHM = 1/nu,
 * sigma(e) = 2/nu, sigma(x0) = sqrt(2) sigma/nu (optics.md §1.6): at nu = 50 the bound's own
 * median |FWHM error| is 1.35 % and median |ellipticity error| ~0.023. The fixed targets
 * (median |FWHM error| <= 1 %, |ellipticity error| <= 0.01, angle <= 2 deg for
 * ellipticity >= 0.1, centroid <= 0.05 px) are therefore asserted at nu = 200; at nu = 50
 * the errors are asserted against the bound instead.
 *
 * Truth "as recorded": for the fitter-accuracy tests the stamps are point-sampled (the
 * model class exactly); one test uses pixel-integrated stamps (16 x 16 supersampling) with
 * the standard approximation covariance + 1/12 px^2 per axis (Thompson, Larson & Webb 2002
 * a^2/12 term; Source Extractor rho = 1/12).
 */
import { describe, it, expect } from 'vitest';
import { measureStar } from '../../core/stars/measure.ts';
import type { Star } from '../../core/stars/types.ts';
import { render, rng, addGaussianNoise, matchedSnr, erf, type StarTruth } from './psf-stamps.ts';

const K = 2 * Math.sqrt(2 * Math.LN2);
const W = 25;
const median = (a: number[]) => { const s = [...a].sort((p, q) => p - q); return s.length % 2 ? s[s.length >> 1] : 0.5 * (s[s.length / 2 - 1] + s[s.length / 2]); };
const angDiff = (a: number, b: number) => { let d = (a - b) % 180; if (d > 90) d -= 180; if (d <= -90) d += 180; return Math.abs(d); };

interface Truth { fwhm: number; maj: number; min: number; ell: number; theta: number; x: number; y: number; sigma: number }

function randomStar(u: () => number, model: 'gaussian' | 'moffat'): StarTruth {
  const fw = 3 + 3 * u();
  const ell = 0.1 + 0.2 * u();
  return { model, x0: 12 + u() - 0.5, y0: 12 + u() - 0.5, flux: 1e4, fwhmMajor: fw, fwhmMinor: fw * (1 - ell), thetaDeg: 180 * u() - 90, beta: 2.5 + 2.5 * u() };
}

/** Recorded truth of a pixel-integrated Gaussian: covariance R diag(s1^2, s2^2) R^T + I/12. */
function boxedTruth(t: StarTruth): Truth {
  const s1 = t.fwhmMajor / K, s2 = t.fwhmMinor / K, th = (t.thetaDeg * Math.PI) / 180;
  const c = Math.cos(th), s = Math.sin(th);
  const xx = s1 * s1 * c * c + s2 * s2 * s * s + 1 / 12, yy = s1 * s1 * s * s + s2 * s2 * c * c + 1 / 12, xy = (s1 * s1 - s2 * s2) * c * s;
  const m = 0.5 * (xx + yy), d = Math.sqrt(0.25 * (xx - yy) ** 2 + xy * xy);
  const maj = K * Math.sqrt(m + d), min = K * Math.sqrt(m - d);
  return { fwhm: Math.sqrt(maj * min), maj, min, ell: 1 - min / maj, theta: t.thetaDeg, x: t.x0, y: t.y0, sigma: Math.sqrt(maj * min) / K };
}
function exactTruth(t: StarTruth): Truth {
  return { fwhm: Math.sqrt(t.fwhmMajor * t.fwhmMinor), maj: t.fwhmMajor, min: t.fwhmMinor, ell: 1 - t.fwhmMinor / t.fwhmMajor, theta: t.thetaDeg, x: t.x0, y: t.y0, sigma: Math.sqrt(t.fwhmMajor * t.fwhmMinor) / K };
}

function run(seed: number, n: number, model: 'gaussian' | 'moffat', nu: number, mode: 'point' | 'integrated', truthOf: (t: StarTruth) => Truth) {
  const u = rng(seed);
  const out: { s: Star; tr: Truth; nuTrue: number }[] = [];
  for (let k = 0; k < n; k++) {
    const t = randomStar(u, model);
    const clean = render(t, W, W, mode, 16);
    const sn = matchedSnr(clean, 1) / nu;
    const img = addGaussianNoise(clean, sn, u);
    const s = measureStar({ stamp: img, w: W, h: W, originX: 100, originY: 50, skyVariance: sn * sn, gain: null, saturated: false, sigmaGuessPx: 1.5, flags: [] }, { model });
    out.push({ s, tr: truthOf(t), nuTrue: nu });
  }
  return out;
}

function errors(res: ReturnType<typeof run>) {
  const fwhm = res.map((r) => Math.abs(r.s.fwhmPx / r.tr.fwhm - 1));
  const ell = res.map((r) => Math.abs(r.s.ellipticity - r.tr.ell));
  const ang = res.map((r) => angDiff(r.s.thetaDeg, r.tr.theta));
  const cen = res.map((r) => Math.hypot(r.s.x - 100 - r.tr.x, r.s.y - 50 - r.tr.y));
  return { fwhm, ell, ang, cen };
}

describe('accuracy at nu = 200 (targets)', () => {
  for (const model of ['gaussian', 'moffat'] as const) {
    it(`${model}: median |FWHM err| <= 1 %, |ell err| <= 0.01, angle <= 2 deg, centroid <= 0.05 px`, () => {
      const res = run(model === 'gaussian' ? 101 : 202, 120, model, 200, 'point', exactTruth);
      expect(res.every((r) => !r.s.flags.includes('fit-failed'))).toBe(true);
      expect(res.every((r) => r.s.model === model)).toBe(true);
      const e = errors(res);
      expect(median(e.fwhm)).toBeLessThanOrEqual(0.01);
      expect(median(e.ell)).toBeLessThanOrEqual(0.01);
      expect(median(e.ang)).toBeLessThanOrEqual(2); // all stars have ellipticity >= 0.1
      expect(median(e.cen)).toBeLessThanOrEqual(0.05);
      // reported SNR is the matched-filter SNR of the fitted profile
      expect(median(res.map((r) => r.s.snr / 200))).toBeCloseTo(1, 1);
    });
  }

  it('pixel-integrated Gaussian stars: the fit describes the star as recorded (sigma^2 + 1/12 per axis)', () => {
    const res = run(303, 120, 'gaussian', 200, 'integrated', boxedTruth);
    const e = errors(res);
    expect(median(e.fwhm)).toBeLessThanOrEqual(0.01);
    expect(median(e.ell)).toBeLessThanOrEqual(0.01);
    expect(median(e.ang)).toBeLessThanOrEqual(2);
    expect(median(e.cen)).toBeLessThanOrEqual(0.05);
    // against the unboxed profile the FWHM reads high by the box term (about 1/(2 * 12 sigma^2) relative)
    const raw = run(303, 120, 'gaussian', 200, 'integrated', exactTruth);
    const bias = median(raw.map((r) => r.s.fwhmPx / r.tr.fwhm - 1));
    const predicted = median(raw.map((r) => 1 / (24 * r.tr.sigma * r.tr.sigma)));
    expect(bias).toBeGreaterThan(0.5 * predicted);
    expect(bias).toBeLessThan(1.5 * predicted);
  });
});

describe('accuracy at nu = 50 against the Cramér-Rao bound (optics.md §1.6)', () => {
  it('Gaussian: normalised errors have medians within 1.3x of an efficient estimator', () => {
    const res = run(404, 200, 'gaussian', 50, 'point', exactTruth);
    expect(res.filter((r) => r.s.flags.includes('fit-failed')).length).toBeLessThan(3);
    const ok = res.filter((r) => !r.s.flags.includes('fit-failed'));
    const nu = 50;
    // per-star bounds: FWHM 1/nu relative, x0 and y0 sqrt(2) sigma / nu each (radial error is
    // Rayleigh: median 1.1774 x the per-axis sigma), ellipticity: distortion e has sigma 2/nu and
    // d(1-q)/de = (1+q^2)^2 / (4q); angle: sigma(theta) = sigma(e) / (2 e) rad.
    const zf = ok.map((r) => Math.abs(r.s.fwhmPx / r.tr.fwhm - 1) / (1 / nu));
    const zc = ok.map((r) => Math.hypot(r.s.x - 100 - r.tr.x, r.s.y - 50 - r.tr.y) / ((Math.SQRT2 * r.tr.sigma) / nu));
    const ze = ok.map((r) => { const q = 1 - r.tr.ell; return Math.abs(r.s.ellipticity - r.tr.ell) / (((2 / nu) * (1 + q * q) ** 2) / (4 * q)); });
    const za = ok.map((r) => { const q = 1 - r.tr.ell, e = (1 - q * q) / (1 + q * q); return angDiff(r.s.thetaDeg, r.tr.theta) / ((((2 / nu) / (2 * e)) * 180) / Math.PI); });
    // an efficient unbiased estimator has median |z| = 0.6745 (half-normal), 1.1774 for the radial error
    expect(median(zf)).toBeLessThan(0.6745 * 1.3);
    expect(median(ze)).toBeLessThan(0.6745 * 1.3);
    expect(median(za)).toBeLessThan(0.6745 * 1.3);
    expect(median(zc)).toBeLessThan(1.1774 * 1.3);
  });
});

// Undersampled stars (issue 13 item 4: FWHM 1-2 px, measured, not dropped). Truth: the star as
// recorded, the Gaussian convolved with the 1-px box. For an axis-aligned Gaussian that profile
// along an axis is G(x) = Phi((x + 1/2)/s) - Phi((x - 1/2)/s) (times a constant), so its half-maximum
// half-width solves G(x) = G(0)/2, found here by bisection (independent of core/); its second
// moments are s^2 + 1/12 per axis (the box's variance, Thompson et al. 2002; optics.md 1.6).
describe('undersampled stars (FWHM 1-2 px, pixel-integrated)', () => {
  const Phi = (u: number) => 0.5 * (1 + erf(u / Math.SQRT2));
  const boxedHalfWidth = (s: number) => {
    const g = (x: number) => Phi((x + 0.5) / s) - Phi((x - 0.5) / s);
    const half = g(0) / 2;
    let lo = 0, hi = 10 * s + 1;
    for (let k = 0; k < 200; k++) { const m = 0.5 * (lo + hi); if (g(m) > half) lo = m; else hi = m; }
    return 0.5 * (lo + hi);
  };
  it('every star measured (fit and moments), recorded FWHM within 1 %, ellipticity within 0.01, size T unbiased to 1 %, at any sub-pixel phase', () => {
    const u = rng(505);
    const Wd = 17;
    const fw: number[] = [], el: number[] = [], tt: number[] = [];
    let failed = 0;
    for (let k = 0; k < 200; k++) {
      const fMaj = 1 + u(), ell = 0.2 * u();
      const t: StarTruth = { model: 'gaussian', x0: 8 + u() - 0.5, y0: 8 + u() - 0.5, flux: 1e4, fwhmMajor: fMaj, fwhmMinor: fMaj * (1 - ell), thetaDeg: k % 2 ? 0 : 90 };
      const clean = render(t, Wd, Wd, 'integrated', 32);
      const sn = matchedSnr(clean, 1) / 200;
      const img = addGaussianNoise(clean, sn, u);
      const s = measureStar({ stamp: img, w: Wd, h: Wd, originX: 0, originY: 0, skyVariance: sn * sn, gain: null, saturated: false, sigmaGuessPx: fMaj / K, flags: [] }, { model: 'gaussian' });
      if (s.flags.length || !Number.isFinite(s.moments.ixx)) { failed++; continue; }
      const s1 = t.fwhmMajor / K, s2 = t.fwhmMinor / K;
      const maj = 2 * boxedHalfWidth(s1), min = 2 * boxedHalfWidth(s2);
      fw.push(s.fwhmPx / Math.sqrt(maj * min) - 1);
      el.push(Math.abs(s.ellipticity - (1 - min / maj)));
      tt.push((s.moments.ixx + s.moments.iyy) / (s1 * s1 + s2 * s2 + 2 / 12) - 1);
    }
    const mean = (a: number[]) => a.reduce((p, v) => p + v, 0) / a.length;
    console.log(`undersampled: ${fw.length} measured, ${failed} not; FWHM error median ${(100 * median(fw)).toFixed(2)} %, |ell err| median ${median(el).toFixed(4)}, T error mean ${(100 * mean(tt)).toFixed(2)} %`);
    expect(failed).toBe(0);
    expect(Math.abs(median(fw))).toBeLessThan(0.01);
    expect(median(fw.map(Math.abs))).toBeLessThan(0.01);
    expect(median(el)).toBeLessThan(0.01);
    expect(Math.abs(mean(tt))).toBeLessThan(0.01);
  });
});
