/** The focus pair's result as plain data (types only, so the page can name it without the fit's code). */
import type { Finding } from '../diagnose/types.ts';
import type { XY } from '../field/types.ts';

export interface FocusPairCorner { name: string; xPx: number; yPx: number; defocusUm: number; defocusErrUm: number }

export interface FocusPairResult {
  schema: 'skyloupe.focuspair/1';
  stepUm: number;
  /** The twin (opposite) solution is worse by at least 9 in chi^2 (3 sigma, after the model check's scaling). */
  signResolved: boolean;
  signSignificance: number;
  tilt: {
    significant: boolean;
    significance: number;
    /** Change of best-focus position across the width (right minus left, +x) and height (+y minus y = 0), µm (DESIGN.md; the same as through-focus). */
    acrossFrameUm: { x: number; y: number };
    acrossFrameErrUm: { x: number; y: number };
    /** Direction of steepest change of best focus, degrees mod 180 (pixel axes). */
    axisDeg: number;
    axisErrDeg: number | null;
    /** The pair settles the sign (the same as signResolved). */
    signResolved: boolean;
    tiltMrad: number | null;
    tiltErrMrad: number | null;
  };
  /** Signed focus error of the first frame at its centre and corners, µm (positive = sensor behind focus). */
  defocus: { centreUm: number; centreErrUm: number; corners: FocusPairCorner[] };
  /** Best focus at the corners minus at the centre, µm (> 0 = the corners want the sensor farther from the lens), as in through-focus. */
  curvature: { cornerUm: number; cornerErrUm: number; significant: boolean };
  /**
   * |sagittal minus tangential focus| at the corners, µm: sizes alone do not tell its sign. The term
   * is included in the model when it improves the fit by 3 sigma (then it has an error); significant
   * when it is also 3 errors from zero.
   */
  astigmatism: { included: boolean; magnitudeUm: number; magnitudeErrUm: number | null; significant: boolean };
  /**
   * Model check: the mean residual size of each zone of each frame against its error. A model that
   * misses structure leaves zones off by more than their noise; the errors are scaled up by
   * sqrt(chi2 / zones) when that is above 1.
   */
  modelCheck: { zones: number; chi2: number; errorScale: number };
  /** Moffat power index of the seeing core used for both frames (from the sharper frame), null = Gaussian core. */
  moffatBeta: number | null;
  /** Fitted sqrt(K) step against the expected one (1 = the optics and the step agree); null when fitted freely. */
  stepScale: number | null;
  /** The frame centre the field coordinates are taken about, px. */
  centrePx: XY;
  starsUsed: { near: number; far: number };
  note: string | null;
  findings: Finding[];
}
