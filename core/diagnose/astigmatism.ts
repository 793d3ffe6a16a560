/**
 * Field astigmatism (optics.md section 3): sagittal and tangential foci split as rho^2; at a
 * focus offset delta from the medial surface the blur ellipse has axes |delta +- dz/2| / N, so
 *   dT = k (a^2 + b^2),  D = k (a^2 - b^2),  a, b = delta +- dz/2,  k = (1 + eps^2) / (16 N^2 p^2).
 * One frame gives |a| and |b| only: both line foci on one side (dz = ||a| - |b||) or straddling
 * the sensor (dz = |a| + |b|). Told apart from curvature (round growth: D = 0), from tilt (odd in
 * position) and from trailing (rank-1, rotation centre). A pattern centred far from the frame
 * centre points to decentred optics.
 */
import type { FieldAnalysis } from '../field/map.ts';
import type { Units } from './context.ts';
import type { Symmetric } from './symmetric.ts';
import type { AstigmatismDiagnosis, SpacingDiagnosis } from './types.ts';

const DECENTRED_FRACTION = 0.1;

export function diagnoseAstigmatism(fa: FieldAnalysis, sym: Symmetric | null, spacing: SpacingDiagnosis, u: Units, rotationExplains: boolean): AstigmatismDiagnosis {
  const s2 = fa.map.spin2;
  const g = fa.geom;
  const base: AstigmatismDiagnosis = {
    significant: false, pattern: 'none', cornerElongation: null, cornerElongationErr: null, centerPx: null, centerErrPx: null,
    decentred: false, lineSeparationUm: null, lineSeparationPx: null, elongationShare: null, excessRatio: s2?.excessRatio ?? null,
    note: null,
  };
  if (!sym) return { ...base, note: 'too few clean stars' };
  if (rotationExplains) return { ...base, note: 'the elongation pattern is field rotation, not astigmatism' };
  const centre = s2?.centrePx ?? null;
  const cErr = s2?.centreErrPx ?? null;
  const off = centre ? Math.hypot(centre.x - g.cx, centre.y - g.cy) : 0;
  const decentred = !!(spacing.significant && centre && cErr && off / (2 * g.scale) > DECENTRED_FRACTION && off > 3 * Math.hypot(cErr.x, cErr.y));
  const dT = Math.max(0, sym.excess);
  const D = Math.abs(sym.D);
  const eps = u.obstruction;
  const A = (4 * Math.sqrt(Math.max(0, (dT + D) / 2))) / Math.sqrt(1 + eps * eps);
  const B = (4 * Math.sqrt(Math.max(0, (dT - D) / 2))) / Math.sqrt(1 + eps * eps);
  const sepPx = spacing.significant ? { low: Math.abs(A - B), high: A + B } : null;
  const toUm = u.micrometres ? (u.fNumber as number) * (u.pixelSizeUm as number) : null;
  return {
    ...base,
    significant: spacing.significant,
    pattern: spacing.pattern,
    cornerElongation: spacing.cornerERadial,
    cornerElongationErr: spacing.cornerERadialErr,
    centerPx: centre,
    centerErrPx: cErr,
    decentred,
    lineSeparationPx: sepPx,
    lineSeparationUm: sepPx && toUm ? { low: sepPx.low * toUm, high: sepPx.high * toUm } : null,
    elongationShare: dT > 0 ? Math.min(1, D / dT) : null,
    note: spacing.significant
      ? (decentred ? 'the pattern is centred away from the frame centre: a tilted or decentred element (or sensor) rather than the design' : 'one frame cannot tell whether both line foci lie on one side of the sensor or straddle it, hence a range')
      : null,
  };
}
