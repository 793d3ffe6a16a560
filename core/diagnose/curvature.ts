/**
 * Field curvature (optics.md sections 3 and 4): focus error growing as h^2 (delta = h^2 / (2R)),
 * symmetric about the optical centre, with round stars (both axes grow). From the c r^2 term of
 * the defocus model; magnitude only from one frame.
 */
import type { Units } from './context.ts';
import type { Symmetric } from './symmetric.ts';
import type { DefocusModel } from './tilt.ts';
import { P } from './defocus-fit.ts';
import { std } from '../field/stats.ts';
import type { CurvatureDiagnosis } from './types.ts';
import { robustSigma } from './zone-check.ts';

export const CURV_DCHI2 = 16;
const MIN_ROUND_RATIO = 1.05;

export function diagnoseCurvature(model: DefocusModel | null, sym: Symmetric | null, u: Units, halfDiagonalPx: number, zoneSig: number | null = null): CurvatureDiagnosis {
  const none: CurvatureDiagnosis = {
    significant: false, cornerDefocusUm: null, cornerDefocusErrUm: null, cornerBlurPx: null, cornerBlurErrPx: null,
    roundGrowthRatio: null, roundGrowthRatioErr: null, radiusMm: null, signResolved: false, significance: 0, zoneSignificance: null, note: null,
  };
  if (!model || !sym) return { ...none, note: 'too few clean stars' };
  const a3 = Math.abs(model.full.params[P.a3]);
  const a3Err = std(model.boot.map((b) => Math.abs(b[P.a3])));
  const dchi2 = model.noCurvature ? Math.max(0, model.noCurvature.chi2 - model.full.chi2) : 0;
  const iso = Math.max(0, sym.excess - Math.abs(sym.D));
  const ratio = sym.t0 > 0 ? Math.sqrt((sym.t0 + iso) / sym.t0) : NaN;
  const ratioErr = Number.isFinite(ratio) ? Math.hypot(sym.excessErr, sym.DErr) / sym.t0 / (2 * ratio) : NaN;
  const sigma = robustSigma(Math.sqrt(dchi2), zoneSig);
  const significant = sigma >= Math.sqrt(CURV_DCHI2) && ratio >= MIN_ROUND_RATIO && iso > 3 * Math.hypot(sym.excessErr, sym.DErr);
  const sK = u.sqrtK;
  const dUm = sK ? a3 / sK : null;
  const hMm = u.pixelSizeUm ? (halfDiagonalPx * u.pixelSizeUm) / 1000 : null;
  return {
    significant,
    cornerDefocusUm: dUm,
    cornerDefocusErrUm: sK ? a3Err / sK : null,
    cornerBlurPx: a3 * u.blurPerQ,
    cornerBlurErrPx: a3Err * u.blurPerQ,
    roundGrowthRatio: Number.isFinite(ratio) ? ratio : null,
    roundGrowthRatioErr: Number.isFinite(ratioErr) ? ratioErr : null,
    radiusMm: significant && dUm && hMm ? (hMm * hMm) / (2 * (dUm / 1000)) : null,
    signResolved: false,
    significance: sigma,
    zoneSignificance: zoneSig,
    note: significant ? 'round stars growing symmetrically toward the corners; astigmatism balanced at its medial focus looks the same in one frame' : (u.micrometres ? null : u.why),
  };
}
