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
import { buildFindings, UNDERSAMPLED_FWHM } from './findings.ts';
import type { Diagnosis, Finding } from './types.ts';
import { sizeZoneChecks, spinZoneChecks } from './zone-check.ts';

export type { DiagnoseContext } from './context.ts';
export type * from './types.ts';
export { formatFindings } from './format.ts';

/**
 * Which size the diagnosis rests on, and why: the adaptive second moments (Bernstein & Jarvis
 * 2002), because the defocus, tilt and curvature models need sizes that add in quadrature under
 * blur (optics.md 1.1, 4), which moments do and FWHM and HFD do not. Like any second moment they
 * read large on flat-topped (clipped or camera-processed) cores (measured here on clipped Gaussian
 * stars: a core clipped at 30 % of its peak reads 32 % wider in moments, 12 % in HFD), so clipped
 * stars are kept out of the field map and the zone medians outvote the rest (zone-check.ts); the
 * HFD, which such cores change least, is reported beside them, while a Gaussian-fit FWHM reads low.
 */
export const SIZE_METRIC = 'adaptive second moments, T = Ixx + Iyy (px^2), because the defocus, tilt and curvature models need sizes that add in quadrature under blur (optics.md 1.1, 4), which FWHM and HFD do not; like any second moment they read large on flat-topped (clipped or camera-processed) cores, so clipped stars are kept out and zone medians outvote odd ones; the HFD, least changed by such cores, is reported beside them';

/** Below this median FWHM (px) shapes depend on the pixel phase (LSST StackClub notebook, optics.md 1.6). */
export const MARGINAL_FWHM = 2;

function medianCleanFwhm(stars: readonly Star[]): number | null {
  const v = Float64Array.from(stars.filter((s) => s.flags.length === 0 && Number.isFinite(s.fwhmPx)).map((s) => s.fwhmPx)).sort();
  return v.length >= 10 ? v[v.length >> 1] : null;
}

/**
 * Coverage of the 3 x 3 zones that hold sky (a quarter of their area or more): by clean stars
 * (flags empty, a size measured), and by stars whose shape (moments) was measured.
 */
function coverageOf(stars: readonly Star[], map: FieldMap): Diagnosis['coverage'] {
  const cells = map.zones.cells;
  const withData = cells.map((z) => (z.dataFraction ?? 1) >= 0.25);
  const clean = stars.filter((s) => s.flags.length === 0 && Number.isFinite(s.fwhmPx) && Number.isFinite(s.x) && Number.isFinite(s.y));
  const counts = cells.map(() => 0);
  for (const s of clean) {
    const k = cells.findIndex((z) => s.x >= z.bounds.x0 && s.x < z.bounds.x1 && s.y >= z.bounds.y0 && s.y < z.bounds.y1);
    if (k >= 0) counts[k]++;
  }
  const isCorner = cells.map((z) => z.zone === 'corners');
  const zonesWithData = withData.filter(Boolean).length;
  const cornersWithData = cells.filter((_, k) => withData[k] && isCorner[k]).length;
  const zonesWithStars = cells.filter((_, k) => withData[k] && counts[k] >= 3).length;
  const cornersWithStars = cells.filter((_, k) => withData[k] && isCorner[k] && counts[k] >= 3).length;
  const zonesWithShapes = cells.filter((z, k) => withData[k] && z.n >= 3).length;
  const cornersWithShapes = cells.filter((z, k) => withData[k] && isCorner[k] && z.n >= 3).length;
  const enough = (zones: number, corners: number) => zonesWithData >= 5 && zones >= zonesWithData - 2 && corners >= Math.max(0, cornersWithData - 1);
  const sizes = Float64Array.from(clean.map((s) => s.fwhmPx)).sort();
  const medianFwhmPx = sizes.length ? sizes[sizes.length >> 1] : null;
  return {
    zonesWithData, cornersWithData, zonesWithStars, cornersWithStars, zonesWithShapes, cornersWithShapes,
    cleanStars: clean.length, medianFwhmPx,
    cleanCover: enough(zonesWithStars, cornersWithStars),
    undersampled: medianFwhmPx !== null && sizes.length >= 10 && medianFwhmPx < UNDERSAMPLED_FWHM,
    marginal: medianFwhmPx !== null && sizes.length >= 10 && medianFwhmPx >= UNDERSAMPLED_FWHM && medianFwhmPx < MARGINAL_FWHM,
    adequate: enough(zonesWithShapes, cornersWithShapes),
  };
}

export interface DiagnoseResult {
  field: FieldMap;
  diagnosis: Diagnosis;
  findings: Finding[];
}

const JOINT_GAIN = 25;

export function diagnose(stars: readonly Star[], ctx: DiagnoseContext): DiagnoseResult {
  const fa = analyzeField(stars, { width: ctx.width, height: ctx.height, displayTopRow: ctx.displayTopRow, region: ctx.dataRegion ?? null });
  const u = units(ctx);
  // every fault is tested on the zone medians too, so a few odd stars cannot make it (zone-check.ts)
  const zSpin = spinZoneChecks(fa);
  // On marginally sampled stars (FWHM under 2 px) shapes follow the pixel grid (optics.md 1.6): a
  // trail must at least reach the stars' own FWHM to be told from it.
  const sampling = medianCleanFwhm(stars);
  const trailing = diagnoseTrailing(fa, zSpin, ctx.pixelShape ?? null, sampling !== null && sampling < MARGINAL_FWHM ? sampling : 0);
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
  const coverage = coverageOf(stars, fa.map);
  const adequate = coverage.adequate;
  const why = !coverage.cleanCover
    ? `the stars cover only ${coverage.zonesWithStars} of the ${coverage.zonesWithData} zones with sky (${coverage.cornersWithStars} of ${coverage.cornersWithData} corners), too few to judge a pattern across the field`
    : coverage.undersampled
      ? `the stars are undersampled (median FWHM ${coverage.medianFwhmPx?.toFixed(2)} px, below about ${UNDERSAMPLED_FWHM} px), too small for a shape diagnosis`
      : `the shapes of too few stars could be measured (${fa.cols.n} of ${coverage.cleanStars} clean stars) to judge a pattern across the field`;
  if (!adequate || coverage.undersampled) {
    const off = <T extends { significant: boolean; note: string | null }>(x: T): T => ({ ...x, significant: false, note: [why, x.note].filter(Boolean).join('; ') });
    Object.assign(tilt, off(tilt), { supported: false });
    Object.assign(spacing, off(spacing), { pattern: 'none' as const });
    Object.assign(astigmatism, off(astigmatism), { pattern: 'none' as const });
    Object.assign(curvature, off(curvature));
    Object.assign(coma.diagnosis, off(coma.diagnosis), { tail: 'none' as const });
  } else if (coverage.marginal) {
    // Stars under about 2 px: elongation and flare follow the pixel phase (optics.md 1.6); sizes still count.
    const marginal = `the stars are small (median FWHM ${coverage.medianFwhmPx?.toFixed(2)} px, below about ${MARGINAL_FWHM} px): their elongation and flare follow the pixel grid as much as the optics`;
    const off = <T extends { significant: boolean; note: string | null }>(x: T): T => ({ ...x, significant: false, note: [marginal, x.note].filter(Boolean).join('; ') });
    Object.assign(spacing, off(spacing), { pattern: 'none' as const });
    Object.assign(astigmatism, off(astigmatism), { pattern: 'none' as const });
    Object.assign(coma.diagnosis, off(coma.diagnosis), { tail: 'none' as const });
  }
  const o = ctx.optics;
  const diagnosis: Diagnosis = {
    optics: { fNumber: u.fNumber, pixelSizeUm: u.pixelSizeUm, focalLengthMm: o.focalLengthMm, micrometres: u.micrometres, note: u.why },
    sizeMetric: SIZE_METRIC,
    coreProfile: { model: fa.core.beta === null ? 'gaussian' : 'moffat', moffatBeta: fa.core.beta, stars: fa.core.stars, moffatStars: fa.core.moffatStars },
    starsUsed: fa.cols.n,
    coverage,
    centre: fa.map.centre,
    tilt, spacing, coma: coma.diagnosis, astigmatism, curvature, trailing: trailing.diagnosis, stopDown,
    clean: false,
  };
  diagnosis.clean = !(tilt.significant || spacing.significant || coma.diagnosis.significant || astigmatism.significant || curvature.significant || trailing.diagnosis.significant);
  return { field: fa.map, diagnosis, findings: buildFindings(diagnosis, fa.geom, u, fa.map) };
}
