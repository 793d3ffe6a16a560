/** The focus pair's result as plain data (types only, so the page can name it without the fit's code). */
import type { Finding } from '../diagnose/types.ts';
import type { XY } from '../field/types.ts';

export interface FocusPairCorner { name: string; xPx: number; yPx: number; defocusUm: number; defocusErrUm: number }

export interface FocusPairResult {
  schema: 'skyloupe.focuspair/1';
  stepUm: number;
  /** The twin (opposite) solution is worse by at least 9 in chi^2 (3 sigma). */
  signResolved: boolean;
  signSignificance: number;
  tilt: {
    significant: boolean;
    significance: number;
    /** Signed focus change across the width (left -> right, +x) and height (+y), um: > 0 = that side farther from the lens. */
    acrossFrameUm: { x: number; y: number };
    acrossFrameErrUm: { x: number; y: number };
    axisDeg: number;
    axisErrDeg: number | null;
    /** Direction (0-360, pixel axes) toward which the sensor lies increasingly behind focus. */
    uphillDeg: number;
    tiltMrad: number | null;
    tiltErrMrad: number | null;
  };
  /** Signed focus error of the first frame at its centre and corners, um. */
  defocus: { centreUm: number; centreErrUm: number; corners: FocusPairCorner[] };
  /** Signed field-curvature term at unit field height, um. */
  curvatureUm: number;
  curvatureErrUm: number;
  /** Fitted sqrt(K) step against the expected one (1 = the optics and the step agree); null when fitted freely. */
  stepScale: number | null;
  centrePx: XY;
  starsUsed: { near: number; far: number };
  note: string | null;
  findings: Finding[];
}
