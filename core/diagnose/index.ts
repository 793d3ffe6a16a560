/**
 * diagnose(): from measured stars to the field map, the per-fault diagnosis and the findings.
 * Order matters: trailing and coma are found first and their moment contributions removed
 * before the size (tilt, curvature) and elongation (spacing, astigmatism) analyses.
 */
import type { Star } from '../stars/types.ts';
import { analyzeField } from '../field/map.ts';
import type { FieldMap } from '../field/types.ts';
import { units, type DiagnoseContext } from './context.ts';
import { diagnoseTrailing } from './trailing.ts';
import { diagnoseComa } from './coma.ts';
import { fitDefocusModel, diagnoseTilt } from './tilt.ts';
import { qAt } from './defocus-fit.ts';
import { fitComaDefocus } from './joint.ts';
import { correctedColumns, symmetricPart } from './symmetric.ts';
import { diagnoseSpacing } from './spacing.ts';
import { diagnoseAstigmatism } from './astigmatism.ts';
import { diagnoseCurvature } from './curvature.ts';
import { diagnoseStopDown } from './stopdown.ts';
import { buildFindings } from './findings.ts';
import type { Diagnosis, Finding } from './types.ts';
import { sizeZoneChecks, spinZoneChecks } from './zone-check.ts';

export type { DiagnoseContext } from './context.ts';
export type * from './types.ts';
export { formatFindings } from './format.ts';

export interface DiagnoseResult {
  field: FieldMap;
  diagnosis: Diagnosis;
  findings: Finding[];
}

const JOINT_GAIN = 25;

export function diagnose(stars: readonly Star[], ctx: DiagnoseContext): DiagnoseResult {
  const fa = analyzeField(stars, { width: ctx.width, height: ctx.height, displayTopRow: ctx.displayTopRow });
  const u = units(ctx);
  // every fault is tested on the zone medians too, so a few odd stars cannot make it (zone-check.ts)
  const zSpin = spinZoneChecks(fa);
  const trailing = diagnoseTrailing(fa, zSpin);
  let coma = diagnoseComa(fa, null, null, zSpin);
  let corrected = correctedColumns(fa, coma.correction, trailing.sizeCorrection);
  let faC = { ...fa, cols: corrected };
  let model = fitDefocusModel(faC, null);
  // Coma and defocus interact (their ray errors add at the same pupil point): with coma present,
  // fit both together; where that fits clearly better than the separate fits (delta chi^2 >= 25
  // for the 9 joint parameters), read the coma with each star's own defocus and refit the defocus.
  if (coma.correction && model && coma.spin1) {
    const trailOnly = correctedColumns(fa, null, trailing.sizeCorrection);
    const joint = fitComaDefocus(fa, trailOnly, model.full.params, coma.spin1, u.blurPerQ);
    if (joint && joint.startChi2 - joint.chi2 >= JOINT_GAIN) {
      const p = joint.defocus;
      const disk = Float64Array.from(model.data.u, (uu, i) => Math.abs(qAt(p, uu, model!.data.v[i])) * u.blurPerQ);
      coma = diagnoseComa(fa, disk, joint.spin1, zSpin);
      corrected = correctedColumns(fa, coma.correction, trailing.sizeCorrection);
      faC = { ...fa, cols: corrected };
      model = fitDefocusModel(faC, null) ?? model;
    }
  }
  if (coma.spin1) fa.map.spin1 = coma.spin1;
  const zSize = sizeZoneChecks(faC, corrected);
  const tilt = diagnoseTilt(faC, u, model, zSize.tilt);
  const sym = symmetricPart(faC, corrected, model);
  const spacing = diagnoseSpacing(sym, trailing.explainsSpin2, fa.cols.n, zSize.spacing);
  const astigmatism = diagnoseAstigmatism(fa, sym, spacing, u, trailing.explainsSpin2);
  const curvature = diagnoseCurvature(model, sym, u, fa.geom.scale, zSize.curvature);
  const stopDown = diagnoseStopDown(fa, u, model, coma);
  // Patterns across the field need stars across the field: without them, say so rather than extrapolate.
  const cells = fa.map.zones.cells;
  const zonesWithStars = cells.filter((z) => z.n >= 3).length;
  const cornersWithStars = cells.filter((z) => z.zone === 'corners' && z.n >= 3).length;
  const adequate = zonesWithStars >= 7 && cornersWithStars >= 3;
  if (!adequate) {
    const why = `the stars cover only ${zonesWithStars} of the 9 zones (${cornersWithStars} of 4 corners), too few to judge a pattern across the field`;
    const off = <T extends { significant: boolean; note: string | null }>(x: T): T => ({ ...x, significant: false, note: [why, x.note].filter(Boolean).join('; ') });
    Object.assign(tilt, off(tilt), { supported: false });
    Object.assign(spacing, off(spacing), { pattern: 'none' as const });
    Object.assign(astigmatism, off(astigmatism), { pattern: 'none' as const });
    Object.assign(curvature, off(curvature));
    Object.assign(coma.diagnosis, off(coma.diagnosis), { tail: 'none' as const });
  }
  const o = ctx.optics;
  const diagnosis: Diagnosis = {
    optics: { fNumber: u.fNumber, pixelSizeUm: u.pixelSizeUm, focalLengthMm: o.focalLengthMm, micrometres: u.micrometres, note: u.why },
    sizeMetric: 'adaptive second moments, T = Ixx + Iyy (px^2); sizes add in quadrature (optics.md 1.1, 4)',
    starsUsed: fa.cols.n,
    coverage: { zonesWithStars, cornersWithStars, adequate },
    centre: fa.map.centre,
    tilt, spacing, coma: coma.diagnosis, astigmatism, curvature, trailing: trailing.diagnosis, stopDown,
    clean: false,
  };
  diagnosis.clean = !(tilt.significant || spacing.significant || coma.diagnosis.significant || astigmatism.significant || curvature.significant || trailing.diagnosis.significant);
  return { field: fa.map, diagnosis, findings: buildFindings(diagnosis, fa.geom, u, fa.map) };
}
