/**
 * Coma (optics.md sections 1.5 and 3): a spin-1 field c(z) = alpha (z - z0) growing linearly with
 * field height; alpha > 0 (radial) = flare outward. Its centre z0 = -beta/alpha is the point where
 * coma vanishes: far from the frame centre it means decentring or collimation error.
 * The field is fitted on the geometric sagittal coma S (px), which grows linearly; the measured
 * (adaptive) moments are read through the closed-form model of field/coma-calibration.ts. Coma
 * also adds to the second moments (unweighted: S^2/2 along the flare, S^2/6 across, section
 * 1.5; the adaptive share from the same model), which the size and elongation analyses subtract.
 */
import type { FieldAnalysis } from '../field/map.ts';
import { clippedMean } from '../field/stats.ts';
import { comaLengthAt, fitSpin1 } from '../field/spin.ts';
import { adaptiveComaMoments, comaDefocusMoments, coreForComa, coreForComaDefocus } from '../field/coma-calibration.ts';
import type { ComaDiagnosis } from './types.ts';
import { robustSigma, type SpinZoneChecks } from './zone-check.ts';
import type { Spin1Field } from '../field/types.ts';

export const COMA_SIGMA = 4;
/** Practical floor: sagittal coma at the corners at least this fraction of the typical Gaussian-equivalent FWHM. */
export const COMA_MIN_FRACTION = 0.15;
/** A uniform flare within this many degrees (or 3 sigma) of a pixel row or column may be the sensor's readout. */
const PIXEL_AXIS_DEG = 5;
/** Decentred when the coma centre is farther than this fraction of the diagonal from the frame centre. */
const DECENTRED_FRACTION = 0.1;

export interface ComaResult {
  readonly diagnosis: ComaDiagnosis;
  /** The spin-1 fit the diagnosis rests on (refitted with the stars' defocus in the second pass). */
  readonly spin1: Spin1Field | null;
  /** Per-star moment contributions of the fitted coma (px^2): size T, and M components. */
  readonly correction: { T: Float64Array; M1: Float64Array; M2: Float64Array } | null;
}

/**
 * diskPx: per-star defocus-disk diameters from the defocus model (second pass), so the coma is
 * read with its defocus cross term and its moment share is computed with the star's own blur.
 */
export function diagnoseComa(fa: FieldAnalysis, diskPx: Float64Array | null = null, spin1: Spin1Field | null = null, zones: SpinZoneChecks | null = null): ComaResult {
  const s1 = spin1 ?? (diskPx ? (fitSpin1(fa.cols, fa.geom, 54321, diskPx) ?? fa.map.spin1) : fa.map.spin1);
  const g = fa.geom;
  const empty: ComaDiagnosis = {
    significant: false, tail: 'none', centerPx: null, centerErrPx: null, centreOffsetFraction: null, decentred: false,
    gradientPx: null, gradientErrPx: null, cornerComaPx: null, cornerComaRatio: null, uniform: null, uniformAlongPixelAxis: false, significance: 0, zoneSignificance: null, note: null,
  };
  if (!s1) return { diagnosis: { ...empty, note: 'too few clean stars to map coma' }, correction: null, spin1: null };
  const alpha = s1.alpha;
  const aMag = Math.hypot(alpha.re, alpha.im);
  const radialFrac = aMag > 0 ? alpha.re / aMag : 0;
  const diag = 2 * g.scale;
  const centre = s1.centrePx;
  const offset = centre ? Math.hypot(centre.x - g.cx, centre.y - g.cy) / diag : null;
  // Corner coma from the linear field, at unit field height about its centre.
  const cornerComa = aMag;
  const fwhm = 2.354820045 * Math.sqrt(clippedMean(fa.cols.T).mean / 2);
  const minS = COMA_MIN_FRACTION * fwhm;
  // significance from the stars, or from the zone medians where they say less (zone-check.ts)
  const fieldSig = robustSigma(s1.alphaSignificance, zones?.comaField ?? null);
  const uniformSigma = robustSigma(s1.uniformSignificance, zones?.comaUniform ?? null);
  const fieldSignificant = fieldSig >= COMA_SIGMA && cornerComa >= minS && Math.abs(radialFrac) > 0.5;
  const uMag = Math.hypot(s1.uniform.x, s1.uniform.y);
  const uniformSig = !fieldSignificant && uniformSigma >= COMA_SIGMA + 1 && uMag >= minS;
  const decentred = !!(fieldSignificant && centre && s1.centreErrPx && offset !== null && offset > DECENTRED_FRACTION
    && Math.hypot(centre.x - g.cx, centre.y - g.cy) > 3 * Math.hypot(s1.centreErrPx.x, s1.centreErrPx.y));
  // a flare along the pixel rows or columns is what a readout trail (charge transfer, bleeding) gives
  const uAngle = (Math.atan2(s1.uniform.y, s1.uniform.x) * 180) / Math.PI;
  // consistent with a pixel axis: within PIXEL_AXIS_DEG, or within 3 sigma of its direction (a vector
  // of significance z has a direction error of 1/z rad)
  const uDirErrDeg = 180 / Math.PI / Math.max(1e-9, uniformSigma);
  const alongAxis = uniformSig && Math.abs(((uAngle % 90) + 90 + 45) % 90 - 45) <= Math.max(PIXEL_AXIS_DEG, 3 * uDirErrDeg);
  let note: string | null = null;
  if (fieldSignificant && Math.abs(radialFrac) < 0.9) note = 'the coma vectors are partly rotated against the radius, a sign of misalignment';
  if (!fieldSignificant && uniformSig) {
    note = alongAxis
      ? 'the same flare everywhere, along a pixel row or column: a readout trail of the sensor (charge transfer, bleeding) or collimation; rotating the camera tells them apart'
      : 'the same coma everywhere, centre included: collimation or a decentred element rather than field coma';
  }
  const diagnosis: ComaDiagnosis = {
    significant: fieldSignificant || uniformSig,
    tail: fieldSignificant ? (alpha.re > 0 ? 'outward' : 'inward') : 'none',
    centerPx: fieldSignificant ? centre : null,
    centerErrPx: fieldSignificant ? s1.centreErrPx : null,
    centreOffsetFraction: fieldSignificant ? offset : null,
    decentred,
    gradientPx: alpha.re,
    gradientErrPx: s1.alphaErr.re,
    cornerComaPx: cornerComa,
    cornerComaRatio: fwhm > 0 ? cornerComa / fwhm : null,
    // the uniform length's error as its significance says (S grows as c^(1/3) for small c, so the
    // noise of c pushed through the inversion from zero overstates it)
    uniform: uniformSig ? { x: s1.uniform.x, y: s1.uniform.y, err: Math.min(s1.uniformErr, uMag / Math.max(1e-9, uniformSigma)) } : null,
    significance: Math.max(fieldSig, uniformSig ? uniformSigma : 0),
    zoneSignificance: uniformSig ? (zones?.comaUniform ?? null) : (zones?.comaField ?? null),
    uniformAlongPixelAxis: alongAxis,
    note,
  };
  if (!diagnosis.significant) return { diagnosis, correction: null, spin1: s1 };
  // Moment contributions of the fitted coma field at every star.
  const n = fa.cols.n;
  const T = new Float64Array(n);
  const M1 = new Float64Array(n);
  const M2 = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const { x: cx, y: cy } = comaLengthAt(s1, g, fa.cols.x[i], fa.cols.y[i]);
    const S = Math.hypot(cx, cy);
    if (!(S > 0)) continue;
    // What the coma adds to the adaptive moments (closed form, coma-calibration.ts), with the
    // star's own defocus when known.
    const d = diskPx ? diskPx[i] : 0;
    const s2 = d > 0 ? coreForComaDefocus(S, d, fa.cols.T[i]) : coreForComa(S, fa.cols.T[i]);
    const m = d > 0 ? comaDefocusMoments(S, d, s2) : adaptiveComaMoments(S, s2);
    const m0T = d > 0 ? comaDefocusMoments(0, d, s2).T : 2 * s2;
    const ca = cx / S;
    const sa = cy / S;
    T[i] = m.T - m0T;
    M1[i] = m.D * (ca * ca - sa * sa);
    M2[i] = m.D * 2 * ca * sa;
  }
  return { diagnosis, correction: { T, M1, M2 }, spin1: s1 };
}
