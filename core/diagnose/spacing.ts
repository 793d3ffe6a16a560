/**
 * Corrector/flattener spacing (optics.md section 5): a radial or tangential elongation pattern,
 * the same in all four corners and growing with field height, measured by the signed
 * radial-minus-tangential moment D = I_rad - I_tan (isotropic seeing cancels exactly in D).
 * Which sign means "too close" depends on the corrector design, so the advice says so.
 */
import type { Symmetric } from './symmetric.ts';
import type { SpacingDiagnosis } from './types.ts';
import { robustSigma } from './zone-check.ts';

export const SPACING_SIGMA = 4;
/** Practical floor: corner distortion 0.02 (A/B ~ 1.02); "good corners" allow up to ~0.1 (optics.md 7, common practice). */
export const SPACING_MIN_E = 0.02;

export function diagnoseSpacing(sym: Symmetric | null, rotationExplains: boolean, starsUsed: number, zoneSig: number | null = null): SpacingDiagnosis {
  if (!sym) {
    return {
      pattern: 'none', significant: false, radMinusTanPx2: null, radMinusTanErrPx2: null, cornerERadial: null, cornerERadialErr: null,
      outerERadial: null, outerERadialErr: null, significance: 0, zoneSignificance: null, cornerToCentreSize: null, cornerToCentreSizeErr: null,
      cornerExcessPx2: null, cornerExcessErrPx2: null,
      note: `too few clean stars (${starsUsed}) for the corner pattern`,
    };
  }
  const Tc = sym.t0 + sym.excess;
  const eR = sym.D / Tc;
  const eRErr = sym.DErr / Tc;
  const ratio = Tc > 0 && sym.t0 > 0 ? Math.sqrt(Tc / sym.t0) : NaN;
  const ratioErr = Number.isFinite(ratio) ? Math.hypot(sym.excessErr / sym.t0, (sym.excess * sym.t0Err) / (sym.t0 * sym.t0)) / (2 * ratio) : NaN;
  const outerAgrees = !(sym.outerN >= 5) || Math.sign(sym.outerERadial) === Math.sign(sym.D);
  const sigma = robustSigma(sym.significance, zoneSig);
  const significant = !rotationExplains && sigma >= SPACING_SIGMA && Math.abs(eR) >= SPACING_MIN_E && outerAgrees;
  let note: string | null = null;
  if (rotationExplains) note = 'the tangential pattern is field rotation (only one axis grows), not the optics';
  else if (sym.significance >= SPACING_SIGMA && !outerAgrees) note = 'the fitted pattern and the outer stars disagree in sign; not reported';
  else if (sym.significance >= SPACING_SIGMA && Math.abs(eR) < SPACING_MIN_E) note = 'a corner pattern is detected but too weak to matter';
  else if (sym.significance >= SPACING_SIGMA && sigma < SPACING_SIGMA) note = `the stars show a corner pattern (${sym.significance.toFixed(1)} sigma) that the zone medians do not confirm (${sigma.toFixed(1)} sigma)`;
  return {
    pattern: significant ? (sym.D > 0 ? 'radial' : 'tangential') : 'none',
    significant,
    radMinusTanPx2: sym.D, radMinusTanErrPx2: sym.DErr,
    cornerERadial: eR, cornerERadialErr: eRErr,
    outerERadial: Number.isFinite(sym.outerERadial) ? sym.outerERadial : null,
    outerERadialErr: Number.isFinite(sym.outerERadialErr) ? sym.outerERadialErr : null,
    significance: sigma,
    zoneSignificance: zoneSig,
    cornerToCentreSize: Number.isFinite(ratio) ? ratio : null,
    cornerToCentreSizeErr: Number.isFinite(ratioErr) ? ratioErr : null,
    cornerExcessPx2: sym.excess,
    cornerExcessErrPx2: sym.excessErr,
    note,
  };
}
