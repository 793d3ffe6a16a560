/**
 * The specialised Levenberg-Marquardt fitter against a general-purpose reference:
 * ml-levenberg-marquardt 5.x (mljs; Gavin's LM notes), with numerical central-difference
 * Jacobians and its own parametrisation (sigma or alpha per axis and an angle), on
 * unweighted noisy stamps. Both minimise the same sum of squares, so the minima must agree.
 * (The reference's `weights` option takes standard deviations, 1/w^2, so only unweighted
 * stamps are compared.)
 */
import { describe, it, expect } from 'vitest';
import { levenbergMarquardt } from 'ml-levenberg-marquardt';
import { fitPsf } from '../../core/stars/psf-fit.ts';
import { adaptiveMoments, momentsToEllipse } from '../../core/stars/moments.ts';
import { render, rng, addGaussianNoise, matchedSnr, type StarTruth } from './psf-stamps.ts';

const W = 19;
const angDiff = (a: number, b: number) => { let d = (a - b) % 180; if (d > 90) d -= 180; if (d <= -90) d += 180; return Math.abs(d); };

function gaussModel([x0, y0, A, B, s1, s2, th]: number[]) {
  const c = Math.cos(th), s = Math.sin(th);
  return (i: number) => {
    const dx = (i % W) - x0, dy = Math.floor(i / W) - y0;
    const u = dx * c + dy * s, v = -dx * s + dy * c;
    return B + A * Math.exp(-0.5 * ((u * u) / (s1 * s1) + (v * v) / (s2 * s2)));
  };
}
function moffatModel([x0, y0, A, B, a1, a2, th, beta]: number[]) {
  const c = Math.cos(th), s = Math.sin(th);
  return (i: number) => {
    const dx = (i % W) - x0, dy = Math.floor(i / W) - y0;
    const u = dx * c + dy * s, v = -dx * s + dy * c;
    return B + A * Math.pow(1 + (u * u) / (a1 * a1) + (v * v) / (a2 * a2), -beta);
  };
}

describe('fitPsf vs ml-levenberg-marquardt (unweighted)', () => {
  it('same minimum for elliptical Gaussian and Moffat stars', () => {
    const u = rng(1234);
    const xs = Array.from({ length: W * W }, (_, i) => i);
    let tMine = 0, tRef = 0;
    for (let k = 0; k < 8; k++) {
      const model = k % 2 ? 'moffat' : 'gaussian';
      const fw = 3 + 2 * u();
      const t: StarTruth = { model, x0: 9 + u() - 0.5, y0: 9 + u() - 0.5, flux: 1e4, fwhmMajor: fw, fwhmMinor: fw * (0.7 + 0.2 * u()), thetaDeg: 160 * u() - 80, beta: 2.5 + 2 * u() };
      const clean = render(t, W, W, 'point');
      const img = addGaussianNoise(clean, matchedSnr(clean, 1) / 150, u);
      const m = adaptiveMoments(img, W, W, 9, 9, 1.5);
      expect(m.converged).toBe(true);
      const mine = fitPsf(img, W, W, { model, variance: 1, init: m });
      const t0 = performance.now();
      for (let rep = 0; rep < 50; rep++) fitPsf(img, W, W, { model, variance: 1, init: m }); // timing, warm
      const t1 = performance.now();
      expect(mine.converged).toBe(true);
      // reference start: the same moments, as (sigma, sigma, angle) / (alpha, alpha, angle, beta = 3)
      const el = momentsToEllipse(m.ixx, m.iyy, m.ixy);
      const peak = Math.max(...img);
      const th0 = (el.thetaDeg * Math.PI) / 180;
      const kM = 2 * Math.sqrt(2 ** (1 / 3) - 1) / (2 * Math.sqrt(2 * Math.LN2)); // same start FWHM
      const init = model === 'gaussian' ? [m.x, m.y, peak, 0, el.a, el.b, th0] : [m.x, m.y, peak, 0, el.a / kM, el.b / kM, th0, 3];
      const ref = levenbergMarquardt({ x: xs, y: Array.from(img) }, model === 'gaussian' ? gaussModel : moffatModel, {
        initialValues: init,
        damping: 1e-2,
        gradientDifference: 1e-6,
        centralDifference: true,
        maxIterations: 400,
        errorTolerance: 0,
        ...(model === 'moffat' ? { minValues: [-5, -5, -1e9, -1e9, 0.05, 0.05, -10, 1.2], maxValues: [30, 30, 1e9, 1e9, 100, 100, 10, 20] } : {}),
      });
      const t2 = performance.now();
      tMine += (t1 - t0) / 50; tRef += t2 - t1;
      const p = ref.parameterValues;
      const kf = model === 'gaussian' ? 2 * Math.sqrt(2 * Math.LN2) : 2 * Math.sqrt(2 ** (1 / p[7]) - 1);
      const refMaj = kf * Math.max(Math.abs(p[4]), Math.abs(p[5])), refMin = kf * Math.min(Math.abs(p[4]), Math.abs(p[5]));
      let refTh = (p[6] * 180) / Math.PI + (Math.abs(p[4]) < Math.abs(p[5]) ? 90 : 0);
      // sum of squares at our solution must not exceed the reference's (same objective)
      const ssMine = xs.reduce((s, i) => {
        const f = model === 'gaussian'
          ? gaussModel([mine.x, mine.y, mine.amplitude, mine.background, mine.fwhmMajorPx / kf, mine.fwhmMinorPx / kf, (mine.thetaDeg * Math.PI) / 180])(i)
          : moffatModel([mine.x, mine.y, mine.amplitude, mine.background, mine.fwhmMajorPx / (2 * Math.sqrt(2 ** (1 / (mine.beta as number)) - 1)), mine.fwhmMinorPx / (2 * Math.sqrt(2 ** (1 / (mine.beta as number)) - 1)), (mine.thetaDeg * Math.PI) / 180, mine.beta as number])(i);
        return s + (img[i] - f) ** 2;
      }, 0);
      expect(ssMine).toBeLessThanOrEqual(ref.parameterError * (1 + 1e-7));
      expect(mine.x).toBeCloseTo(p[0], 4);
      expect(mine.y).toBeCloseTo(p[1], 4);
      expect(mine.fwhmMajorPx / refMaj).toBeCloseTo(1, 4);
      expect(mine.fwhmMinorPx / refMin).toBeCloseTo(1, 4);
      expect(angDiff(mine.thetaDeg, refTh)).toBeLessThan(0.01);
      expect(mine.amplitude / p[2]).toBeCloseTo(1, 4);
      expect(mine.background).toBeCloseTo(p[3], 2);
      if (model === 'moffat') expect(mine.beta as number).toBeCloseTo(p[7], 3);
    }
    console.log(`specialised LM ${(tMine / 8).toFixed(3)} ms/fit, ml-levenberg-marquardt ${(tRef / 8).toFixed(1)} ms/fit (printed, not asserted)`);
  });
});
