import { mulberry32 as rand32 } from '../helpers/rng.ts';
/**
 * Synthetic Star arrays from analytic moment models, independent of the code under test.
 * Physics (optics.md): second moments add under convolution (sections 1.1 and 4):
 *  - seeing: per-axis sigma_s^2 = (FWHM / 2.354820045)^2, plus the pixel box 1/12 (section 1.6);
 *  - geometric defocus with astigmatism: the pupil disk maps to an ellipse with semi-axes
 *    |delta +- dAst/2| / (2N) (um), whose per-axis variance is (semi-axis)^2 / 4, i.e.
 *    d^2 / 16 for a disk of diameter d = delta / N (section 1.1, uniform defocus disk);
 *  - third-order coma of sagittal size S, as Gaussian-weighted adaptive moments see it: the
 *    closed-form model of core/field/coma-calibration.ts (a geometric spot, section 1.5, through
 *    a Gaussian core), itself checked against rendered and measured stars in
 *    test/reference/recovery-calibration.test.ts; the coma adds its share to T and M;
 *  - a trail of length L: L^2/12 along the trail for unweighted moments (section 6); as the
 *    adaptive moments see it, the closed-form segment-through-core model of
 *    core/field/coma-calibration.ts (checked in test/reference/recovery-calibration.test.ts);
 *  - field rotation by an angle w about (xr, yr): tangential trails of length w |r - r_r|.
 * Noise at the Fisher level for a well-sampled Gaussian (section 1.6): sigma(e_i) = 2/nu,
 * sigma(T)/T = 2/nu (from sigma(sigma) = sigma/nu). Coma noise 3/nu is an assumption of this
 * generator, not a published value.
 */
import type { Star } from '../../core/stars/types.ts';
import type { Optics } from '../../core/frame/types.ts';
import { adaptiveComaMoments, adaptiveTrail } from '../../core/field/coma-calibration.ts';

export interface Scene {
  width: number;
  height: number;
  nStars: number;
  seeingFwhmPx: number;
  fNumber: number;
  pixelSizeUm: number;
  obstruction?: number;
  /** Focus error at the frame centre, um (positive = sensor behind focus). */
  defocusUm?: number;
  /** Tilt of the focal plane: um of focus per mm across the sensor, along x and y. */
  tiltUmPerMm?: { x: number; y: number };
  /** Field curvature: focus error um at unit field height (half-diagonal) about the optical centre, delta = c rho^2. */
  curvatureUm?: number;
  /** Astigmatism: sagittal-tangential separation um at unit field height (grows as rho^2); > 0 = radial line nearer. */
  astigUm?: number;
  /** Optical centre (px); default frame centre. */
  opticalCentre?: { x: number; y: number };
  /** Coma: sagittal coma S in px at unit field height (grows linearly), flare outward if > 0. */
  comaPx?: number;
  /** Centre of the coma pattern (default optical centre). */
  comaCentre?: { x: number; y: number };
  trail?: { lengthPx: number; angleDeg: number };
  rotation?: { angleRad: number; centre: { x: number; y: number } };
  /** Minimum and maximum optimal SNR nu. */
  snr?: [number, number];
  /** Fraction of outliers (blends etc.) with inflated sizes. */
  outliers?: number;
  seed: number;
}

export function optics(s: { fNumber: number | null; pixelSizeUm: number | null; focalLengthMm?: number | null }): Optics {
  const f = s.focalLengthMm ?? null;
  return {
    focalLengthMm: f,
    pixelSizeUm: s.pixelSizeUm,
    fNumber: s.fNumber,
    plateScaleArcsecPerPx: f && s.pixelSizeUm ? (206.265 * s.pixelSizeUm) / f : null,
    source: { focalLengthMm: f ? 'user' : null, pixelSizeUm: s.pixelSizeUm ? 'user' : null, fNumber: s.fNumber ? 'user' : null, plateScaleArcsecPerPx: f && s.pixelSizeUm ? 'derived' : null },
  };
}

export { mulberry32 as rand32 } from '../helpers/rng.ts';

function normal(r: () => number): number {
  return Math.sqrt(-2 * Math.log(Math.max(1e-300, r()))) * Math.cos(2 * Math.PI * r());
}

/** Covariance of the star at (x, y), px^2, plus its normalised spin-1 (coma) vector. */
export function trueMoments(s: Scene, x: number, y: number): { ixx: number; iyy: number; ixy: number; c: [number, number] } {
  const N = s.fNumber;
  const p = s.pixelSizeUm;
  const eps = s.obstruction ?? 0;
  const oc = s.opticalCentre ?? { x: (s.width - 1) / 2, y: (s.height - 1) / 2 };
  const half = 0.5 * Math.hypot(s.width, s.height);
  const dx = x - oc.x;
  const dy = y - oc.y;
  const rho2 = (dx * dx + dy * dy) / (half * half);
  const phi = Math.atan2(dy, dx);
  const fc = { x: (s.width - 1) / 2, y: (s.height - 1) / 2 };
  const xmm = ((x - fc.x) * p) / 1000;
  const ymm = ((y - fc.y) * p) / 1000;
  const delta = (s.defocusUm ?? 0) + (s.tiltUmPerMm?.x ?? 0) * xmm + (s.tiltUmPerMm?.y ?? 0) * ymm + (s.curvatureUm ?? 0) * rho2;
  const ast = (s.astigUm ?? 0) * rho2;
  // Radial and tangential semi-axes of the blur ellipse (um), variance = semi^2/4 * (1 + eps^2) for an annular pupil.
  const aR = (delta - ast / 2) / (2 * N);
  const aT = (delta + ast / 2) / (2 * N);
  const vR = ((aR * aR) / 4) * (1 + eps * eps) / (p * p);
  const vT = ((aT * aT) / 4) * (1 + eps * eps) / (p * p);
  const sig2 = (s.seeingFwhmPx / 2.354820045) ** 2 + 1 / 12;
  // Build covariance: seeing isotropic + radial/tangential ellipse rotated by phi.
  const c = Math.cos(phi);
  const sn = Math.sin(phi);
  let ixx = sig2 + vR * c * c + vT * sn * sn;
  let iyy = sig2 + vR * sn * sn + vT * c * c;
  let ixy = (vR - vT) * c * sn;
  // Coma about its centre: S grows linearly with field height; adaptive share added to the moments.
  let cm: [number, number] = [0, 0];
  if (s.comaPx) {
    const cc = s.comaCentre ?? oc;
    const ex = x - cc.x;
    const ey = y - cc.y;
    const r = Math.hypot(ex, ey) / half;
    const S = s.comaPx * r;
    const ang = Math.atan2(ey, ex) + (S < 0 ? Math.PI : 0);
    const core = (ixx + iyy) / 2;
    const a = adaptiveComaMoments(Math.abs(S), core);
    const dT = a.T - 2 * core;
    const ca = Math.cos(ang);
    const sa = Math.sin(ang);
    ixx += dT / 2 + (a.D / 2) * (ca * ca - sa * sa);
    iyy += dT / 2 - (a.D / 2) * (ca * ca - sa * sa);
    ixy += (a.D / 2) * 2 * ca * sa;
    cm = [a.c * ca, a.c * sa];
  }
  const addLine = (L: number, ang: number) => {
    const core = (ixx + iyy) / 2;
    const v = core * adaptiveTrail(L / Math.sqrt(core)).D;
    const ca = Math.cos(ang);
    const sa = Math.sin(ang);
    ixx += v * ca * ca;
    iyy += v * sa * sa;
    ixy += v * ca * sa;
  };
  if (s.trail) addLine(s.trail.lengthPx, (s.trail.angleDeg * Math.PI) / 180);
  if (s.rotation) {
    const rx = x - s.rotation.centre.x;
    const ry = y - s.rotation.centre.y;
    addLine(s.rotation.angleRad * Math.hypot(rx, ry), Math.atan2(ry, rx) + Math.PI / 2);
  }
  return { ixx, iyy, ixy, c: cm };
}

export function synthStars(s: Scene): Star[] {
  const r = rand32(s.seed);
  const [lo, hi] = s.snr ?? [25, 300];
  const stars: Star[] = [];
  for (let k = 0; k < s.nStars; k++) {
    const x = -0.5 + r() * s.width;
    const y = -0.5 + r() * s.height;
    // Flux-limited counts: N(>nu) ~ nu^-1.5 between lo and hi.
    const nu = Math.min(hi, lo * Math.pow(1 - r() * (1 - Math.pow(lo / hi, 1.5)), -1 / 1.5));
    const m = trueMoments(s, x, y);
    let T = m.ixx + m.iyy;
    let e1 = (m.ixx - m.iyy) / T;
    let e2 = (2 * m.ixy) / T;
    const se = 2 / nu;
    T *= 1 + se * normal(r);
    if (s.outliers && r() < s.outliers) T *= 1.5 + r();
    e1 += se * normal(r);
    e2 += se * normal(r);
    const emod = Math.hypot(e1, e2);
    if (emod > 0.95) { e1 *= 0.95 / emod; e2 *= 0.95 / emod; }
    const ixx = (T * (1 + e1)) / 2;
    const iyy = (T * (1 - e1)) / 2;
    const ixy = (T * e2) / 2;
    const tr = ixx + iyy;
    const root = Math.sqrt(((ixx - iyy) / 2) ** 2 + ixy * ixy);
    const A = Math.sqrt(tr / 2 + root);
    const B = Math.sqrt(Math.max(1e-9, tr / 2 - root));
    const cs = 3 / nu;
    const fwhm = 2.354820045 * Math.sqrt(A * B);
    stars.push({
      x, y, flux: nu * 100, snr: nu,
      fwhmPx: fwhm, fwhmMajorPx: 2.354820045 * A, fwhmMinorPx: 2.354820045 * B,
      ellipticity: 1 - B / A, thetaDeg: (0.5 * Math.atan2(2 * ixy, ixx - iyy) * 180) / Math.PI,
      hfdPx: fwhm,
      coma: { x: m.c[0] + cs * normal(r), y: m.c[1] + cs * normal(r) },
      flags: [], model: 'gaussian', moffatBeta: null,
      moments: { ixx, iyy, ixy, e1, e2 },
      err: { x: 0.1, y: 0.1, fwhmPx: fwhm / nu, ellipticity: se, thetaDeg: 5, hfdPx: fwhm / nu, e1: se, e2: se },
    });
  }
  return stars;
}
