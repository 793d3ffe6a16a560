/**
 * The diagnosis: one section per fault (report contract fields from DESIGN.md kept by name), each
 * with its estimate, the 1-sigma uncertainty beside it (`...Err`), its significance, and a
 * plain `note` when the data cannot support it. Plain JSON data.
 */
import type { XY, OpticalCentre } from '../field/types.ts';

export type Severity = 'info' | 'minor' | 'major';

export interface Finding {
  code: string;
  severity: Severity;
  message: string;
  numbers?: Record<string, number | string | null>;
}

export interface CornerDefocus {
  name: string;
  xPx: number;
  yPx: number;
  /** |focus error| at the corner (one frame: magnitude only), um at the sensor; null without optics. */
  defocusUm: number | null;
  defocusErrUm: number | null;
  /** Geometric blur-disk diameter from that focus error, px. */
  blurDiameterPx: number;
  blurDiameterErrPx: number;
}

export interface TiltDiagnosis {
  significant: boolean;
  /** False when there are too few stars or no size signal to fit. */
  supported: boolean;
  note: string | null;
  /** Direction of steepest focus change, degrees mod 180 in (-90, 90]. */
  axisDeg: number | null;
  axisErrDeg: number | null;
  /**
   * Change of best-focus position across the full width (x, right minus left) and height (y, +y minus
   * y = 0), µm at the sensor, the meaning shared with focus-pair and through-focus (DESIGN.md);
   * absolute values while signResolved is false (one frame: always).
   */
  acrossFrameUm: { x: number | null; y: number | null };
  acrossFrameErrUm: { x: number | null; y: number | null };
  /** The same as change of geometric blur-disk diameter, px (available without optics). */
  acrossFrameBlurPx: { x: number | null; y: number | null };
  acrossFrameBlurErrPx: { x: number | null; y: number | null };
  /** Tilt angle of the focal plane against the sensor, mrad (um of focus per mm), null without optics. */
  tiltMrad: number | null;
  tiltErrMrad: number | null;
  signResolved: boolean;
  /** Best focus (|delta| = 0) crosses the frame: the size field is V-shaped. */
  bestFocusInFrame: boolean | null;
  corners: CornerDefocus[];
  /** Worst corner size against the best point, from the model (Gaussian-equivalent FWHM ratio). */
  worstCornerRatio: number | null;
  /** sqrt of the chi^2 drop when the tilt terms are added to the symmetric model (stars), or the zones' if smaller. */
  significance: number;
  /** The same test on zone medians, with their scatter (zone-check.ts); null when the zones are too few. */
  zoneSignificance: number | null;
  /** t value of the HFD^2 slope against the model's defocus term (> 2 needed: every size grows with defocus); null: not tested. */
  hfdAgreement: number | null;
  deltaChi2: number;
  starsUsed: number;
  model: string;
}

export interface SpacingDiagnosis {
  /** Radial or tangential elongation pattern growing with field height, about the optical centre. */
  pattern: 'radial' | 'tangential' | 'none';
  significant: boolean;
  /** Signed radial-minus-tangential moment I_rad - I_tan at unit field height (frame corner distance), px^2: > 0 radial. */
  radMinusTanPx2: number | null;
  radMinusTanErrPx2: number | null;
  /** The same in distortion units (e_radial at the corners). */
  cornerERadial: number | null;
  cornerERadialErr: number | null;
  /** Model-free check: mean e_radial of stars beyond 0.6 field height, uniform elongation removed. */
  outerERadial: number | null;
  outerERadialErr: number | null;
  significance: number;
  zoneSignificance: number | null;
  /** The symmetric part of the corner size against the centre (FWHM-equivalent ratio), all four corners alike. */
  cornerToCentreSize: number | null;
  cornerToCentreSizeErr: number | null;
  /** The same as a moment difference T(unit field height) - T(centre), px^2 (seeing cancels). */
  cornerExcessPx2: number | null;
  cornerExcessErrPx2: number | null;
  note: string | null;
}

export interface ComaDiagnosis {
  significant: boolean;
  tail: 'outward' | 'inward' | 'none';
  /** Centre of the coma pattern (where coma vanishes), px; null when not located. */
  centerPx: XY | null;
  centerErrPx: XY | null;
  /** Distance of that centre from the frame centre, as a fraction of the frame diagonal. */
  centreOffsetFraction: number | null;
  decentred: boolean;
  /** Sagittal coma length per unit field height (half-diagonal), px; real (radial) part, > 0 outward. */
  gradientPx: number | null;
  gradientErrPx: number | null;
  /** Sagittal coma length at unit field height (frame-corner distance), px, and as a fraction of the star FWHM (moment-equivalent). */
  cornerComaPx: number | null;
  cornerComaRatio: number | null;
  /** Uniform coma length across the frame, px (collimation or decentring), when it is significant. */
  uniform: { x: number; y: number; err: number } | null;
  /**
   * The uniform flare points along a pixel row or column (within 5 deg or 3 sigma): charge-transfer trails
   * and bleeding along the readout do that too, so one frame cannot call it collimation.
   */
  uniformAlongPixelAxis: boolean;
  significance: number;
  zoneSignificance: number | null;
  note: string | null;
}

export interface AstigmatismDiagnosis {
  significant: boolean;
  /** Orientation of the field-astigmatism elongation about its centre. */
  pattern: 'radial' | 'tangential' | 'none';
  /** Corner elongation (distortion e, radial part) and its error. */
  cornerElongation: number | null;
  cornerElongationErr: number | null;
  /** Symmetry centre of the pattern and whether it is far from the frame centre (decentred optics). */
  centerPx: XY | null;
  centerErrPx: XY | null;
  decentred: boolean;
  /**
   * Sagittal-tangential focus separation at the corners, um, from corner size and elongation; one
   * frame allows two readings (both line foci on one side of the sensor, or straddling it).
   */
  lineSeparationUm: { low: number; high: number } | null;
  lineSeparationPx: { low: number; high: number } | null;
  /** Share of the symmetric corner size growth that is elongation: 1 = line-like, 0 = round. */
  elongationShare: number | null;
  /** Rank-1 test ratio (1 = only one axis grows, like a trail). */
  excessRatio: number | null;
  note: string | null;
}

export interface CurvatureDiagnosis {
  significant: boolean;
  /** |focus error| at unit field height (corner distance) from the symmetric term, um; null without optics. */
  cornerDefocusUm: number | null;
  cornerDefocusErrUm: number | null;
  cornerBlurPx: number | null;
  cornerBlurErrPx: number | null;
  /** Corner against centre size ratio for the round (isotropic) part, FWHM-equivalent. */
  roundGrowthRatio: number | null;
  roundGrowthRatioErr: number | null;
  /** Field-curvature radius estimate |h^2 / (2 delta)| at the corner, mm (needs the pixel size). */
  radiusMm: number | null;
  signResolved: boolean;
  significance: number;
  zoneSignificance: number | null;
  note: string | null;
}

export interface TrailingDiagnosis {
  significant: boolean;
  kind: 'uniform' | 'rotation' | 'none';
  /** Trail direction (uniform), degrees in (-90, 90]. */
  angleDeg: number | null;
  angleErrDeg: number | null;
  /** Trail length, px (uniform: everywhere; rotation: at the farthest corner from the centre). */
  lengthPx: number | null;
  lengthErrPx: number | null;
  /** Distortion e the trail adds to a typical star (uniform: |dM| / T). */
  elongation: number | null;
  rotation: {
    centerPx: XY | null;
    centerErrPx: XY | null;
    /** Rotation during the exposure, degrees. */
    angleDeg: number;
    angleErrDeg: number;
  } | null;
  significance: number;
  zoneSignificance: number | null;
  /**
   * The uniform stretch the header WCS implies (unequal pixel scales on the sky), when it matters
   * (distortion 0.02 or more), and whether it explains the stars' uniform elongation (then no trail).
   */
  pixelShape: { axisRatio: number; angleDeg: number; source: string; explains: boolean } | null;
  note: string | null;
}

export interface StopPrediction {
  fNumber: number;
  centreFwhmPx: number;
  cornerFwhmPx: number;
  /** Exposure time needed for the same signal, relative to now: (N2/N1)^2. */
  exposureFactor: number;
}

export interface StopDownDiagnosis {
  available: boolean;
  note: string | null;
  fNumber: number | null;
  /** Terms at the current stop, FWHM-equivalent px in quadrature: fixed (seeing, pixel), diffraction, defocus-like (1/N), coma (1/N^2). */
  terms: { fixedPx: number; diffractionPx: number; centreDefocusPx: number; cornerDefocusPx: number; cornerComaPx: number } | null;
  predictions: StopPrediction[];
  /** The stop past which the corners improve by less than 10 % per stop (or get worse). */
  worthwhileTo: number | null;
  /** Relative uncertainty of the corner predictions (1 sigma). */
  relativeErr: number | null;
}

export interface Diagnosis {
  optics: { fNumber: number | null; pixelSizeUm: number | null; focalLengthMm: number | null; micrometres: boolean; note: string | null };
  sizeMetric: string;
  starsUsed: number;
  /**
   * How well the stars cover the frame's 3x3 zones that hold sky (zonesWithData, at most 9 and 4
   * corners): zones with at least 3 clean stars (zonesWithStars), and with at least 3 stars whose
   * shape was measured (zonesWithShapes); adequate when the shapes cover all but two zones and
   * one corner. Undersampled: the clean stars' median FWHM is below about 1.5 px (Howell); marginal:
   * below about 2 px, where shapes depend on the pixel phase (optics.md 1.6).
   */
  coverage: {
    zonesWithData: number; cornersWithData: number;
    zonesWithStars: number; cornersWithStars: number;
    zonesWithShapes: number; cornersWithShapes: number;
    cleanStars: number; medianFwhmPx: number | null;
    cleanCover: boolean; undersampled: boolean; adequate: boolean;
    /** Median FWHM from 1.5 to 2 px: sizes are judged, elongation and flare (spacing, astigmatism, coma) are not. */
    marginal: boolean;
  };
  /** The seeing core the defocus model assumes: Moffat (from the sharper half's PSF fits) or Gaussian. */
  coreProfile: { model: 'gaussian' | 'moffat'; moffatBeta: number | null; stars: number; moffatStars: number };
  centre: OpticalCentre;
  tilt: TiltDiagnosis;
  spacing: SpacingDiagnosis;
  coma: ComaDiagnosis;
  astigmatism: AstigmatismDiagnosis;
  curvature: CurvatureDiagnosis;
  trailing: TrailingDiagnosis;
  stopDown: StopDownDiagnosis;
  /** No significant fault. */
  clean: boolean;
}
