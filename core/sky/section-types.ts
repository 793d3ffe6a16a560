/**
 * Types of the report's `astrometry` section, apart from the code that builds it (so the page's
 * figures can use them without the solver).
 */
import type { DistortionSummary } from './distortion.ts';
import type { Projection } from './lens.ts';

/** The distortion as the report carries it: the fit's summary without its internal significance. */
export type AstrometryDistortion = Omit<DistortionSummary, 'significance'>;

export interface AstrometryMatch {
  /** Index into report.stars. */
  star: number;
  catalogueId: string;
  /** Proper name or designation, for labels; null when the catalogue has none. */
  name: string | null;
  magnitude: number | null;
  raDeg: number;
  decDeg: number;
  /** Measured position minus where a distortion-free lens (same pointing, scale, projection) puts the star, px. */
  shiftPx: { x: number; y: number };
  /** Measured position minus the fitted model's, px. */
  residualPx: { x: number; y: number };
}

export interface AstrometrySection {
  solved: boolean;
  /** Why the frame was not placed on the sky (null when it was). */
  reason: string | null;
  /** Sky position of the frame centre ((W - 1) / 2, (H - 1) / 2), ICRS degrees. */
  centre: { raDeg: number; decDeg: number } | null;
  /** Direction of celestial north on the frame at its centre, degrees from +x toward +y (pixel axes). */
  rotationDeg: number | null;
  /** 'normal': the frame, as displayed, shows the sky as seen (east 90 deg counter-clockwise from north); 'mirrored' otherwise. */
  parity: 'normal' | 'mirrored' | null;
  /** Sky scale at the optical centre, arcsec per frame pixel. */
  scaleArcsecPerPx: number | null;
  scaleErrArcsecPerPx: number | null;
  /** The lens's focal length measured from the stars (needs the pixel size), mm. */
  focalLengthMm: number | null;
  focalLengthErrMm: number | null;
  projection: Projection | null;
  distortion: AstrometryDistortion | null;
  /** Optical centre (the centre of the distortion), px; `fitted` false = assumed at the frame centre. */
  opticalCentre: { xPx: number; yPx: number; xErrPx: number | null; yErrPx: number | null; fitted: boolean } | null;
  starsMatched: number;
  rmsArcsec: number | null;
  rmsPx: number | null;
  catalogue: { name: string; stars: number; source: string; file: string | null };
  /** The stated focal length against the measured one (the 2 % rule). */
  focalLengthCheck: null | { statedMm: number; source: string; measuredMm: number; differencePercent: number; replaced: boolean };
  search: { mode: 'hint' | 'blind' | 'none'; hintFailed: boolean; placementsTried: number; logOdds: number | null; acceptLogOdds: number; falsePositiveBound: number; seconds: number };
  matches: AstrometryMatch[];
  /** A WCS already in the header, and the distortion it implies (null when there is none). */
  headerWcs: null | { kind: string; scaleArcsecPerPx: number; nonRadialPx: number; distortion: AstrometryDistortion } | { kind: null; note: string };
  /**
   * The fitted model itself: sky direction v (ICRS unit vector) -> camera c = rotation v (row-major;
   * rows: the camera's x axis, y axis and boresight), field angle theta from c, image radius
   * r = fPx P(theta) for the projection P, r_d = r (1 + k1 q^2 + k2 q^4) with q = r / rNormPx,
   * x = cx + r_d cx/|c_xy|, y = cy + parity r_d cy/|c_xy|; px in this frame's pixels.
   */
  model: null | { rotation: number[]; fPx: number; cxPx: number; cyPx: number; parity: 1 | -1; projection: Projection; k1: number; k2: number; rNormPx: number };
  /** Projection fits tried, for the record. */
  projections: { projection: Projection; matched: number; rmsPx: number; maxDistortionPercent: number }[];
  notes: string[];
}

