import { describe, it, expect } from 'vitest';
import { adaptiveMoments, weightedMoments, adaptiveMomentErrors, momentsToEllipse } from '../../core/stars/moments.ts';
import { render, rng, gauss, matchedSnr, renderComaSpot, type StarTruth } from '../reference/psf-stamps.ts';

const f32 = (a: Float64Array) => Float32Array.from(a);
const FWHM = 2 * Math.sqrt(2 * Math.LN2);

/** Analytic covariance of an elliptical Gaussian given by FWHMs and angle (rotation of diag(s1^2, s2^2)). */
function cov(t: StarTruth) {
  const s1 = t.fwhmMajor / FWHM, s2 = t.fwhmMinor / FWHM, th = (t.thetaDeg * Math.PI) / 180;
  const c = Math.cos(th), s = Math.sin(th);
  return { xx: s1 * s1 * c * c + s2 * s2 * s * s, yy: s1 * s1 * s * s + s2 * s2 * c * c, xy: (s1 * s1 - s2 * s2) * c * s };
}

describe('momentsToEllipse', () => {
  it('matches the Source Extractor / GalSim check values (optics.md §8)', () => {
    // Ixx = 5, Iyy = 3, Ixy = 1 -> A = 2.326846, B = 1.608038, theta = 22.5 deg, e = (0.25, 0.25)
    // (Source Extractor Position.rst definitions; distortion as in the GalSim Shear docstring).
    const r = momentsToEllipse(5, 3, 1);
    expect(r.a).toBeCloseTo(2.326846, 6);
    expect(r.b).toBeCloseTo(1.608038, 6);
    expect(r.thetaDeg).toBeCloseTo(22.5, 9);
    expect(r.e1).toBeCloseTo(0.25, 12);
    expect(r.e2).toBeCloseTo(0.25, 12);
    // theta takes the sign of Ixy, in (-90, 90] (Source Extractor)
    expect(momentsToEllipse(5, 3, -1).thetaDeg).toBeCloseTo(-22.5, 9);
    expect(momentsToEllipse(3, 5, 0).thetaDeg).toBeCloseTo(90, 9);
  });
});

describe('adaptiveMoments', () => {
  it('recovers the covariance, centre and flux of a point-sampled elliptical Gaussian (Bernstein & Jarvis 2002: W = C at convergence)', () => {
    const u = rng(11);
    for (let k = 0; k < 12; k++) {
      const t: StarTruth = { model: 'gaussian', x0: 15 + u() - 0.5, y0: 15 + u() - 0.5, flux: 5000, fwhmMajor: 3 + 3 * u(), fwhmMinor: 0, thetaDeg: 180 * u() - 90 };
      t.fwhmMinor = t.fwhmMajor * (0.6 + 0.4 * u());
      const c = cov(t);
      const m = adaptiveMoments(f32(render(t, 31, 31, 'point')), 31, 31, 15, 15, 1.5);
      expect(m.converged).toBe(true);
      // Sums of a Gaussian sampled at unit spacing equal its integrals to ~exp(-2 pi^2 sigma^2) (Poisson summation).
      expect(m.ixx).toBeCloseTo(c.xx, 4);
      expect(m.iyy).toBeCloseTo(c.yy, 4);
      expect(m.ixy).toBeCloseTo(c.xy, 4);
      expect(m.x).toBeCloseTo(t.x0, 5);
      expect(m.y).toBeCloseTo(t.y0, 5);
      // flux = 2 sum(wI): sum(wI) = F/2 for a matched weight of peak 1 (integral of N(C) exp(-d^T C^-1 d / 2) = 1/2)
      expect(m.flux / t.flux).toBeCloseTo(1, 4);
      // distortion e = (Ixx - Iyy + 2i Ixy)/T = |e| (cos 2theta, sin 2theta), |e| = (1 - q^2)/(1 + q^2) (optics.md §1.3)
      const q = t.fwhmMinor / t.fwhmMajor, e = (1 - q * q) / (1 + q * q), th = (t.thetaDeg * Math.PI) / 90;
      expect(m.e1).toBeCloseTo(e * Math.cos(th), 5);
      expect(m.e2).toBeCloseTo(e * Math.sin(th), 5);
      expect(Math.hypot(m.comaX, m.comaY)).toBeLessThan(1e-4); // symmetric profile: no spin-1 (limit: the 1e-4 px centre tolerance)
    }
  });

  it('windowed moments with the matched weight are sigma^2/2 (Source Extractor X2WIN check, optics.md §1.4)', () => {
    const t: StarTruth = { model: 'gaussian', x0: 12.3, y0: 11.6, flux: 1000, fwhmMajor: 4, fwhmMinor: 4, thetaDeg: 0 };
    const s2 = (4 / FWHM) ** 2;
    const r = weightedMoments(f32(render(t, 25, 25, 'point')), 25, 25, t.x0, t.y0, s2, s2, 0);
    expect(r.mxx).toBeCloseTo(s2 / 2, 5);
    expect(r.myy).toBeCloseTo(s2 / 2, 5);
  });

  it('documents the pixel box: unweighted moments of pixel-integrated data are sigma^2 + 1/12 (Thompson et al. 2002; Source Extractor rho = 1/12)', () => {
    const t: StarTruth = { model: 'gaussian', x0: 14.2, y0: 14.7, flux: 1000, fwhmMajor: 3.2, fwhmMinor: 2.4, thetaDeg: 0 };
    const img = f32(render(t, 29, 29, 'integrated', 24));
    const big = 1e10; // effectively unweighted
    const c0 = weightedMoments(img, 29, 29, 14, 14, big, big, 0);
    const r = weightedMoments(img, 29, 29, 14 + c0.mx, 14 + c0.my, big, big, 0);
    const s1 = (3.2 / FWHM) ** 2, s2 = (2.4 / FWHM) ** 2;
    // (24-point midpoint supersampling gives a box variance (1 - 1/24^2)/12, within the tolerance)
    expect(r.mxx - r.mx * r.mx).toBeCloseTo(s1 + 1 / 12, 3);
    expect(r.myy - r.my * r.my).toBeCloseTo(s2 + 1 / 12, 3);
    // the adaptive (weighted) moments see nearly the same box term for a well-sampled star
    const m = adaptiveMoments(img, 29, 29, 14, 14, 1.5);
    expect(m.ixx / (s1 + 1 / 12)).toBeCloseTo(1, 2);
    expect(m.iyy / (s2 + 1 / 12)).toBeCloseTo(1, 2);
  });

  it('spin-1 third moment of a geometric coma spot is +S^3/3 toward the flare, unweighted (optics.md §1.5, sign derived in the comment)', () => {
    // optics.md §1.5 (verified by Monte Carlo there): centroid offset S toward the flare, variances
    // S^2/2 along and S^2/6 across, |spin-1| = S^3/3, spin-3 = 0. The reference lists the
    // third moment as -S^3/4 and the spin-1 as -S^3/3 "pointing toward the flare"; measured along
    // the tip->flare direction u, with t = rho^2 ~ U(0,1) and u = S t (2 + cos psi), v = S t sin psi:
    // E[(u - S)^3] = S^3 (E[A^3]/4 - E[A^2] + 3E[A]/2 - 1) = S^3 (11/4 - 9/2 + 3 - 1) = +S^3/4 (A = 2 + cos psi)
    // and E[(u-S)|z|^2] = S^3 (1/4 + 1/4 - 1/6) = +S^3/3: positive along the flare. So
    // <|z|^2 z> itself points toward the flare; no sign flip is applied.
    const S = 2, blur = 1.2, w = 45, flare = 35;
    const img = f32(renderComaSpot(w, w, 18, 20, S, flare, blur, 1e4));
    const big = 1e12;
    const c0 = weightedMoments(img, w, w, 22, 22, big, big, 0);
    const cx = 22 + c0.mx, cy = 22 + c0.my;
    const r = weightedMoments(img, w, w, cx, cy, big, big, 0);
    const fr = (flare * Math.PI) / 180;
    // centroid offset S toward the flare
    expect(cx - 18).toBeCloseTo(S * Math.cos(fr), 3);
    expect(cy - 20).toBeCloseTo(S * Math.sin(fr), 3);
    // second moments along / across the flare: S^2/2 + blur^2 + 1/12, S^2/6 + blur^2 + 1/12 (box, optics.md §1.6)
    const vx = r.mxx - r.mx ** 2, vy = r.myy - r.my ** 2, vxy = r.mxy - r.mx * r.my;
    const along = vx * Math.cos(fr) ** 2 + 2 * vxy * Math.cos(fr) * Math.sin(fr) + vy * Math.sin(fr) ** 2;
    const across = vx * Math.sin(fr) ** 2 - 2 * vxy * Math.cos(fr) * Math.sin(fr) + vy * Math.cos(fr) ** 2;
    expect(along).toBeCloseTo((S * S) / 2 + blur * blur + 1 / 12, 2);
    expect(across).toBeCloseTo((S * S) / 6 + blur * blur + 1 / 12, 2);
    // spin-1 about the centroid (third cumulants add under convolution; the blur and box add none)
    const spin = Math.hypot(r.spin1X, r.spin1Y);
    expect(spin / (S ** 3 / 3)).toBeCloseTo(1, 2);
    expect(Math.atan2(r.spin1Y, r.spin1X)).toBeCloseTo(fr, 3);
  });

  it('adaptive coma vector points toward the flare, is dimensionless and flux independent', () => {
    for (const flare of [-150, -60, 0, 35, 100, 179]) {
      const img = f32(renderComaSpot(45, 45, 20, 21, 2, flare, 1.3, 1e4, 120, 48));
      const m = adaptiveMoments(img, 45, 45, 22, 22, 1.5);
      expect(m.converged).toBe(true);
      const ang = (Math.atan2(m.comaY, m.comaX) * 180) / Math.PI;
      let d = ang - flare;
      d = ((d + 540) % 360) - 180;
      expect(Math.abs(d)).toBeLessThan(1);
      expect(Math.hypot(m.comaX, m.comaY)).toBeGreaterThan(0.05);
    }
    // scale invariance: the same spot twice as large (S, blur doubled) gives the same normalised
    // coma, up to the fixed 1/12 px^2 pixel box (about 1 % of T/2 here)
    const a = adaptiveMoments(f32(renderComaSpot(81, 81, 36, 38, 2.5, 20, 2, 1e4, 120, 48)), 81, 81, 40, 40, 2);
    const b = adaptiveMoments(f32(renderComaSpot(81, 81, 33, 36, 5, 20, 4, 3e4, 120, 48)), 81, 81, 40, 40, 2);
    expect(a.converged && b.converged).toBe(true);
    expect(Math.abs(Math.hypot(b.comaX, b.comaY) / Math.hypot(a.comaX, a.comaY) - 1)).toBeLessThan(0.03);
  });

  it('noise: MC scatter of e1, e2, x matches adaptiveMomentErrors and the Fisher bound 2/nu (optics.md §1.6)', () => {
    const u = rng(5);
    const t: StarTruth = { model: 'gaussian', x0: 12.2, y0: 11.9, flux: 1, fwhmMajor: 4, fwhmMinor: 4, thetaDeg: 0 };
    const clean = render(t, 25, 25, 'point');
    const nu = 50;
    const sn = matchedSnr(clean, 1) / nu;
    const e1s: number[] = [], e2s: number[] = [], xs: number[] = [], pe: number[] = [], px: number[] = [];
    const img = new Float32Array(clean.length);
    for (let k = 0; k < 600; k++) {
      for (let i = 0; i < clean.length; i++) img[i] = clean[i] + sn * gauss(u);
      const m = adaptiveMoments(img, 25, 25, 12, 12, 1.7);
      if (!m.converged) continue;
      e1s.push(m.e1); e2s.push(m.e2); xs.push(m.x);
      const er = adaptiveMomentErrors(img, sn * sn, 25, 25, m);
      pe.push(er.e1); px.push(er.x);
    }
    expect(e1s.length).toBeGreaterThan(590);
    const sd = (a: number[]) => { const mu = a.reduce((s, v) => s + v, 0) / a.length; return Math.sqrt(a.reduce((s, v) => s + (v - mu) ** 2, 0) / (a.length - 1)); };
    const med = (a: number[]) => [...a].sort((p, q) => p - q)[a.length >> 1];
    // Fisher: sigma(e) = 2/nu, sigma(x0) = sqrt(2) sigma / nu for a well-sampled Gaussian in sky noise
    expect(sd(e1s) / (2 / nu)).toBeGreaterThan(0.9);
    expect(sd(e1s) / (2 / nu)).toBeLessThan(1.15);
    expect(sd(e2s) / (2 / nu)).toBeLessThan(1.15);
    expect(sd(xs) / ((Math.SQRT2 * (4 / FWHM)) / nu)).toBeLessThan(1.15);
    // reported errors agree with the scatter (std of a std from 600 samples is ~3 %)
    expect(Math.abs(med(pe) / sd(e1s) - 1)).toBeLessThan(0.12);
    expect(Math.abs(med(px) / sd(xs) - 1)).toBeLessThan(0.12);
  });

  it('never throws on bad stamps', () => {
    const nanS = new Float32Array(100).fill(NaN);
    expect(adaptiveMoments(nanS, 10, 10, 5, 5, 1.5).converged).toBe(false);
    expect(adaptiveMoments(new Float32Array(100), 10, 10, 5, 5, 1.5).converged).toBe(false);
    const neg = new Float32Array(100).fill(-1);
    expect(adaptiveMoments(neg, 10, 10, 5, 5, 1.5).converged).toBe(false);
    expect(adaptiveMoments(new Float32Array(100).fill(1), 10, 10, 5, 5, NaN).converged).toBe(false);
    const u = rng(2);
    const junk = Float32Array.from({ length: 400 }, () => gauss(u));
    expect(() => adaptiveMoments(junk, 20, 20, 10, 10, 2)).not.toThrow();
  });
});
