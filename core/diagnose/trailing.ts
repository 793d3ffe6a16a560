/**
 * Trailing (optics.md section 6): a trail of length L adds L^2/12 along its direction only, so
 * the anisotropic moment M = (Ixx - Iyy) + 2i Ixy gains L^2/12 e^{2i theta} everywhere (tracking,
 * wind), or -(w t)^2 (z - z_r)^2 / 12 for field rotation by w t about z_r: tangential, growing
 * linearly in length, and rank-1 (the size grows by exactly |dM|). No optical fault.
 */
import type { FieldAnalysis } from '../field/map.ts';
import { spin2LooksRank1 } from '../field/map.ts';
import { axisDeg, clippedMean } from '../field/stats.ts';
import { patternMagnitude } from '../field/spin.ts';
import { trailLengthFromMoments } from '../field/coma-calibration.ts';
import type { TrailingDiagnosis } from './types.ts';
import { robustSigma, type SpinZoneChecks } from './zone-check.ts';
import type { PixelShape } from './pixel-shape.ts';

/** Uniform part significant at this many sigma, and at least this distortion |C|/T (A/B ~ 1.02). */
export const UNIFORM_SIGMA = 5;
const UNIFORM_MIN_E = 0.02;
/** Field rotation: tangential rank-1 pattern with at least this distortion at the corners. */
export const ROTATION_SIGMA = 5;
const ROTATION_MIN_E = 0.03;

export interface TrailingResult {
  readonly diagnosis: TrailingDiagnosis;
  /** Per-star |dM| of the trail model (px^2), the size it adds; null when no trailing. */
  readonly sizeCorrection: Float64Array | null;
  /** The rotation pattern explains the spin-2 field (spacing/astigmatism must not claim it). */
  readonly explainsSpin2: boolean;
}

/** The uniform stretch counts as the pixels' shape when what is left of it is below this share of it (or UNIFORM_MIN_E). */
const PIXEL_SHAPE_TOLERANCE = 0.25;

/**
 * pixelShape: the stretch the header WCS implies for round stars (pixel-shape.ts). A uniform
 * elongation it explains (direction and size) is the detector's geometry, not trailing; only
 * what is left beyond it is tested as a trail.
 */
export function diagnoseTrailing(fa: FieldAnalysis, zones: SpinZoneChecks | null = null, pixelShape: PixelShape | null = null, minTrailPx = 0): TrailingResult {
  const s2 = fa.map.spin2;
  const Tmed = clippedMean(fa.cols.T).mean;
  const none: TrailingDiagnosis = {
    significant: false, kind: 'none', angleDeg: null, angleErrDeg: null, lengthPx: null, lengthErrPx: null, elongation: null,
    rotation: null, significance: 0, zoneSignificance: null, pixelShape: null, note: null,
  };
  if (!s2 || !(Tmed > 0)) return { diagnosis: { ...none, note: 'too few clean stars to test for trailing' }, sizeCorrection: null, explainsSpin2: false };
  const g = fa.geom;
  // Field rotation first: a rotation pattern also changes the constant term.
  const aMag = Math.hypot(s2.a.re, s2.a.im);
  const tangential = s2.a.re < 0 && Math.abs(s2.a.im) < 0.5 * Math.abs(s2.a.re);
  const cRot = s2.centrePx ?? s2.farCentrePx ?? { x: g.cx, y: g.cy };
  // significance from the stars, or from the zone medians where they say less (zone-check.ts)
  const aSig = robustSigma(s2.aSignificance, zones?.pattern ?? null);
  const cSig = robustSigma(s2.cSignificance, zones?.uniformElongation ?? null);
  const rotationLike = aSig >= ROTATION_SIGMA && tangential && spin2LooksRank1(s2) && aMag / Tmed >= ROTATION_MIN_E;
  // Rotation trails leave the across-trail width at the core everywhere; astigmatism near its
  // tangential line focus is nearly rank-1 too, but its minor axis changes across the field.
  // Trails shorter than minTrailPx (the FWHM of marginally sampled stars) are not told apart from the pixel grid.
  let short: string | null = null;
  const farOf = (c: { x: number; y: number }) => Math.max(...[[-0.5, -0.5], [g.width - 0.5, -0.5], [-0.5, g.height - 0.5], [g.width - 0.5, g.height - 0.5]].map(([x, y]) => Math.hypot(x - c.x, y - c.y)));
  const rotLen = rotationLike ? trailLengthFromMoments(aMag * (farOf(cRot) / g.scale) ** 2, Tmed + aMag * (farOf(cRot) / g.scale) ** 2) : 0;
  if (rotationLike && rotLen < minTrailPx) short = `a field-rotation pattern (${aSig.toFixed(1)} sigma) whose trails reach only ${rotLen.toFixed(1)} px, less than the stars' own FWHM (${minTrailPx.toFixed(1)} px): on stars this small the pixel grid can do as much`;
  const corrRot = rotationLike && !short ? rotationSizeCorrection(fa, cRot) : null;
  if (rotationLike && corrRot) {
    const c = cRot;
    // Adaptive moments of a trail exceed L^2/12 once L passes the core (coma-calibration.ts),
    // so the rotation is read from the moment at unit field height through that model.
    const aErr = Math.hypot(s2.aErr.re, s2.aErr.im);
    const Lunit = trailLengthFromMoments(aMag, Tmed + aMag);
    const wt = Lunit / g.scale;
    const wtErr = Math.abs(trailLengthFromMoments(aMag + aErr, Tmed + aMag + aErr) - Lunit) / g.scale;
    const far = Math.max(...[[-0.5, -0.5], [g.width - 0.5, -0.5], [-0.5, g.height - 0.5], [g.width - 0.5, g.height - 0.5]].map(([x, y]) => Math.hypot(x - c.x, y - c.y)));
    // Size the trails add: |M| of a smooth fit about the centre (A2 r^2 + A4 r^4 terms), since a
    // trail adds to one axis only (T - |M| = 2 x the across-trail variance, unchanged by the trail).
    const corr = corrRot as Float64Array;
    return {
      diagnosis: {
        significant: true, kind: 'rotation', angleDeg: null, angleErrDeg: null,
        lengthPx: trailLengthFromMoments(aMag * (far / g.scale) ** 2, Tmed + aMag * (far / g.scale) ** 2), lengthErrPx: wtErr * far, elongation: aMag / Tmed,
        rotation: { centerPx: s2.centrePx ?? s2.farCentrePx, centerErrPx: s2.centreErrPx, angleDeg: (wt * 180) / Math.PI, angleErrDeg: (wtErr * 180) / Math.PI },
        significance: aSig, zoneSignificance: zones?.pattern ?? null, pixelShape: null,
        note: [s2.centrePx ? null : 'the rotation centre lies far outside the frame',
          'one frame cannot fully exclude astigmatism at its tangential line focus, which would turn by 90 degrees through focus; a trail does not'].filter(Boolean).join('; '),
      },
      sizeCorrection: corr,
      explainsSpin2: true,
    };
  }
  const C0 = s2.c;
  const c0Mag = Math.hypot(C0.re, C0.im);
  // The part of the uniform moment the pixels' shape explains: e_pixels T for a typical star.
  const P = pixelShape ? { re: pixelShape.e1 * Tmed, im: pixelShape.e2 * Tmed } : { re: 0, im: 0 };
  const pMag = Math.hypot(P.re, P.im);
  const C = { re: C0.re - P.re, im: C0.im - P.im };
  const cMag = Math.hypot(C.re, C.im);
  const shape = pixelShape && pMag / Tmed >= UNIFORM_MIN_E
    ? { axisRatio: pixelShape.axisRatio, angleDeg: pixelShape.angleDeg, source: pixelShape.source, explains: cMag / Tmed < Math.max(UNIFORM_MIN_E, PIXEL_SHAPE_TOLERANCE * pMag / Tmed) && cSig >= UNIFORM_SIGMA }
    : null;
  // significance of what is left after the pixels' shape (the errors are those of the whole)
  const rSig = c0Mag > 0 ? (cSig * cMag) / c0Mag : 0;
  const uniformLen = trailLengthFromMoments(cMag, Tmed);
  if (!shape?.explains && rSig >= UNIFORM_SIGMA && cMag / Tmed >= UNIFORM_MIN_E && uniformLen < minTrailPx) {
    short = `a uniform elongation (${rSig.toFixed(1)} sigma) of only ${uniformLen.toFixed(1)} px, less than the stars' own FWHM (${minTrailPx.toFixed(1)} px): on stars this small the pixel grid can do as much`;
  }
  if (!short && !shape?.explains && rSig >= UNIFORM_SIGMA && cMag / Tmed >= UNIFORM_MIN_E) {
    // Length through the adaptive-moment trail model (L^2/12 only for unweighted moments).
    const L = uniformLen;
    // Errors of |C| and of its phase from the component errors.
    const magErr = Math.hypot(C.re * s2.cErr.re, C.im * s2.cErr.im) / cMag;
    const perpErr = Math.hypot(C.im * s2.cErr.re, C.re * s2.cErr.im) / cMag;
    const Lerr = Math.abs(trailLengthFromMoments(cMag + magErr, Tmed) - L);
    return {
      diagnosis: {
        significant: true, kind: 'uniform',
        angleDeg: axisDeg((0.5 * Math.atan2(C.im, C.re) * 180) / Math.PI),
        angleErrDeg: ((0.5 * perpErr) / cMag) * (180 / Math.PI),
        lengthPx: L, lengthErrPx: Lerr, elongation: cMag / Tmed,
        rotation: null, significance: rSig, zoneSignificance: zones?.uniformElongation ?? null, pixelShape: shape,
        note: ['a single elongation direction across the whole frame; if it turns by 90 degrees when you defocus slightly, it is astigmatism on the axis (pinched or misaligned optics) instead',
          shape ? `beyond the ${shape.axisRatio.toFixed(2)}:1 stretch along ${shape.angleDeg.toFixed(0)}° that the pixels' shape on the sky explains (${shape.source})` : null].filter(Boolean).join('; '),
      },
      // A trail adds only to its own axis: T - |M| keeps the core (a no-op for a strictly uniform trail).
      sizeCorrection: rotationSizeCorrection(fa, { x: g.cx, y: g.cy }),
      explainsSpin2: false,
    };
  }
  const note = short ?? (shape?.explains
    ? `every star is stretched about ${shape.axisRatio.toFixed(2)}:1 along ${shape.angleDeg.toFixed(0)}°, as ${shape.source} says the pixels are on the sky (unequal pixel scales): the detector's geometry, not trailing`
    : s2.cSignificance >= UNIFORM_SIGMA && c0Mag / Tmed >= UNIFORM_MIN_E && cSig < UNIFORM_SIGMA
      ? `the stars show a uniform elongation (${s2.cSignificance.toFixed(1)} sigma) that the zone medians do not confirm (${cSig.toFixed(1)} sigma): a few stars, not the frame`
      : null);
  return { diagnosis: { ...none, significance: rSig, zoneSignificance: zones?.uniformElongation ?? null, pixelShape: shape, note }, sizeCorrection: null, explainsSpin2: false };
}

/**
 * Size the trails add, per star: |M| of the star itself where the trail dominates its noise
 * (exact for rank-1 blur, whatever the trail length), debiased by sigma^2/(2|M|) (the Rice
 * bias of a modulus), and the smooth model's |M| where the star is too noisy for that.
 */
function rotationSizeCorrection(fa: FieldAnalysis, c: { x: number; y: number }): Float64Array {
  const model = patternMagnitude(fa.cols, fa.geom, c);
  const cols = fa.cols;
  const out = new Float64Array(cols.n);
  for (let i = 0; i < cols.n; i++) {
    const m = Math.hypot(cols.M1[i], cols.M2[i]);
    const sg = cols.sigM[i];
    const own = m > sg ? m - (sg * sg) / (2 * m) : 0;
    const w = Math.min(1, Math.max(0, (model[i] / sg - 2) / 3));
    out[i] = w * own + (1 - w) * model[i];
  }
  return out;
}
