/**
 * What the fitted radial distortion r_d = r (1 + k1 q^2 + k2 q^4), q = r / R, means in the frame:
 * the percentage (r_d - r) / r at the corner and edge distances, the largest shift in pixels, and
 * the pattern: barrel (negative, the image shrinks outward), pincushion (positive), mustache (the
 * relative distortion turns inside the frame: one sign near the centre, the other toward the
 * corners) or none (not significant).
 */
import { undistortRadius } from './lens.ts';

export type DistortionPattern = 'barrel' | 'pincushion' | 'mustache' | 'none';

export interface DistortionInput {
  k1: number;
  k2: number;
  /** Covariance of (k1, k2): var k1, cov, var k2 (zeros for a term not fitted); null when unknown. */
  covK: [number, number, number] | null;
  k2Fitted: boolean;
  rNorm: number;
  width: number;
  height: number;
  /** Optical centre, px. */
  cx: number;
  cy: number;
}

export interface DistortionSummary {
  k1: number;
  k2: number;
  k1Err: number | null;
  k2Err: number | null;
  pattern: DistortionPattern;
  /** 100 (r_d - r) / r at the distance of the frame corner (R, half the diagonal), negative = barrel. */
  cornerPercent: number;
  cornerPercentErr: number | null;
  /** The same at the distances of the edge midpoints: W / 2 (x) and H / 2 (y). */
  edgePercent: { x: number; y: number };
  /** Largest |r_d - r| over the frame, px. */
  maxShiftPx: number;
  /** Where the relative distortion turns (mustache), as a fraction of the corner distance; null if it does not within the frame. */
  turnFraction: number | null;
  /** Significance of the distortion at the corner, in standard errors. */
  significance: number | null;
}

/** Relative distortion D = r_d / r - 1 at undistorted radius r, and its gradient in (k1, k2). */
function relDistortion(k1: number, k2: number, R: number, r: number): { D: number; g1: number; g2: number } {
  const q2 = (r / R) ** 2;
  return { D: k1 * q2 + k2 * q2 * q2, g1: q2, g2: q2 * q2 };
}

function errOf(cov: [number, number, number] | null, g1: number, g2: number): number | null {
  if (!cov) return null;
  const v = g1 * g1 * cov[0] + 2 * g1 * g2 * cov[1] + g2 * g2 * cov[2];
  return v >= 0 ? Math.sqrt(v) : null;
}

/** Percent at a distorted radius rd. */
function percentAt(k1: number, k2: number, R: number, rd: number, cov: [number, number, number] | null): { pct: number; err: number | null } {
  const r = undistortRadius({ k1, k2, rNorm: R }, rd);
  if (!Number.isFinite(r) || r <= 0) return { pct: NaN, err: null };
  const { D, g1, g2 } = relDistortion(k1, k2, R, r);
  const e = errOf(cov, g1, g2);
  return { pct: 100 * D, err: e === null ? null : 100 * e };
}

/** Minimum significance (standard errors) for a distortion to count. */
export const DISTORTION_SIGMA = 3;
/** Below this largest shift (px) a distortion is not worth naming, whatever its significance. */
export const DISTORTION_MIN_SHIFT_PX = 0.15;

export function summarizeDistortion(d: DistortionInput): DistortionSummary {
  const { k1, k2, rNorm: R, width: W, height: H } = d;
  const corner = percentAt(k1, k2, R, R, d.covK);
  const ex = percentAt(k1, k2, R, W / 2, d.covK);
  const ey = percentAt(k1, k2, R, H / 2, d.covK);
  // the largest shift over the frame: a grid of points about the optical centre
  let maxShift = 0;
  const n = 24;
  for (let i = 0; i <= n; i++) {
    for (let j = 0; j <= n; j++) {
      const x = (i / n) * (W - 1), y = (j / n) * (H - 1);
      const rd = Math.hypot(x - d.cx, y - d.cy);
      const r = undistortRadius({ k1, k2, rNorm: R }, rd);
      if (Number.isFinite(r)) maxShift = Math.max(maxShift, Math.abs(rd - r));
    }
  }
  const sig = corner.err && corner.err > 0 ? Math.abs(corner.pct) / corner.err : null;
  // the turn of D(q) = k1 q^2 + k2 q^4: dD/dq = 0 at q^2 = -k1 / (2 k2)
  let turnFraction: number | null = null;
  let pattern: DistortionPattern;
  const qc = undistortRadius({ k1, k2, rNorm: R }, R) / R;
  if (d.k2Fitted && k1 * k2 < 0) {
    const qt = Math.sqrt(-k1 / (2 * k2));
    if (qt > 0.15 * qc && qt < 0.9 * qc) {
      const t = relDistortion(k1, k2, R, qt * R);
      const c = relDistortion(k1, k2, R, qc * R);
      const eT = errOf(d.covK, t.g1, t.g2);
      const eTurn = errOf(d.covK, c.g1 - t.g1, c.g2 - t.g2);
      const shiftTurn = Math.abs(t.D) * qt * R;
      const shiftBack = Math.abs(c.D - t.D) * qc * R;
      if (eT !== null && eTurn !== null && Math.abs(t.D) > DISTORTION_SIGMA * eT && Math.abs(c.D - t.D) > DISTORTION_SIGMA * eTurn
        && shiftTurn >= DISTORTION_MIN_SHIFT_PX && shiftBack >= DISTORTION_MIN_SHIFT_PX) {
        turnFraction = qt / qc;
      }
    }
  }
  if (turnFraction !== null) pattern = 'mustache';
  else if (maxShift < DISTORTION_MIN_SHIFT_PX || sig === null || sig < DISTORTION_SIGMA || !Number.isFinite(corner.pct)) pattern = 'none';
  else pattern = corner.pct < 0 ? 'barrel' : 'pincushion';
  return {
    k1, k2,
    k1Err: d.covK ? Math.sqrt(d.covK[0]) : null,
    k2Err: d.covK && d.k2Fitted ? Math.sqrt(d.covK[2]) : null,
    pattern,
    cornerPercent: corner.pct,
    cornerPercentErr: corner.err,
    edgePercent: { x: ex.pct, y: ey.pct },
    maxShiftPx: maxShift,
    turnFraction,
    significance: sig,
  };
}
