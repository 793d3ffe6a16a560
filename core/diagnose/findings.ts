/** Findings: one plain-language line per fault, with severity, the numbers behind it, and the action. */
import type { Geometry } from '../field/geometry.ts';
import type { Units } from './context.ts';
import type { Diagnosis, Finding } from './types.ts';
import type { FieldMap } from '../field/types.ts';
import { axisWords, fmt, fmtErr, tiltAdvice } from './words.ts';

/** Below this median FWHM (px) stars are too undersampled for shapes (Howell's sampling parameter, optics.md 1.6 and 7). */
export const UNDERSAMPLED_FWHM = 1.5;

/** Corner-to-centre size ratio above which corners count as clearly soft ("good corners" <= 1.2, optics.md 7, common practice). */
const MAJOR_RATIO = 1.2;
/** Corner elongation (distortion e) above which stars look visibly oval (A/B ~ 1.1, optics.md 7, common practice). */
const MAJOR_E = 0.1;

/** Spacer step to try: +-0.5 mm at f/5, scaling with depth of focus as N^2 (optics.md 5, a common-practice heuristic). */
export function spacingStepMm(N: number | null): number {
  if (N === null) return 0.5;
  const s = 0.5 * (N / 5) ** 2;
  return Math.min(1, Math.max(0.1, Math.round(s * 20) / 20));
}

const sev = (major: boolean): 'major' | 'minor' => (major ? 'major' : 'minor');

export function buildFindings(d: Diagnosis, g: Geometry, u: Units, map?: FieldMap): Finding[] {
  const out: Finding[] = [];
  const cov = d.coverage;
  if (!cov.cleanCover && cov.cleanStars >= 30) {
    const sky = cov.zonesWithData < 9 ? ' that hold sky' : ' of the frame';
    out.push({
      code: 'POOR_COVERAGE', severity: 'info',
      message: `The stars cover only ${cov.zonesWithStars} of the ${cov.zonesWithData} zones${sky} (${cov.cornersWithStars} of ${cov.cornersWithData} corners): tilt, spacing, coma and curvature cannot be judged across the field. Use a frame with stars in every part (a richer field or a longer exposure).`,
      numbers: { zonesWithStars: cov.zonesWithStars, zonesWithData: cov.zonesWithData, cornersWithStars: cov.cornersWithStars, cornersWithData: cov.cornersWithData },
    });
  } else if (cov.undersampled) {
    out.push({
      code: 'UNDERSAMPLED', severity: 'info',
      message: `The stars are undersampled: their median FWHM is ${fmt(cov.medianFwhmPx, 3)} px, below about ${UNDERSAMPLED_FWHM} px (common practice; Howell's sampling limit), so their shapes follow the pixel grid more than the optics. Tilt, spacing, coma and curvature are not judged from them, although ${cov.cleanStars} clean stars cover the frame. A longer focal length, smaller pixels or slight defocus would sample the stars.`,
      numbers: { medianFwhmPx: cov.medianFwhmPx, limitPx: UNDERSAMPLED_FWHM, cleanStars: cov.cleanStars, starsWithShapes: d.starsUsed },
    });
  } else if (cov.marginal && cov.adequate) {
    out.push({
      code: 'SMALL_STARS', severity: 'info',
      message: `The stars are small: their median FWHM is ${fmt(cov.medianFwhmPx, 2)} px, below about 2 px, where a star's elongation and flare follow the pixel grid as much as the optics (optics.md 1.6). Tilt and curvature are judged from the star sizes; corner elongation, astigmatism and coma are not.`,
      numbers: { medianFwhmPx: cov.medianFwhmPx, limitPx: 2 },
    });
  } else if (!cov.adequate && cov.cleanStars >= 30) {
    out.push({
      code: 'FEW_SHAPES', severity: 'info',
      message: `The shapes of only ${d.starsUsed} of ${cov.cleanStars} clean stars could be measured (${cov.zonesWithShapes} of ${cov.zonesWithData} zones hold three or more), too few to judge tilt, spacing, coma and curvature across the field, although the stars themselves cover it.`,
      numbers: { starsWithShapes: d.starsUsed, cleanStars: cov.cleanStars, zonesWithShapes: cov.zonesWithShapes, zonesWithData: cov.zonesWithData },
    });
  }
  const ps = d.trailing.pixelShape;
  if (ps?.explains) {
    out.push({
      code: 'PIXEL_SHAPE', severity: 'info',
      message: `Every star is stretched about ${fmt(ps.axisRatio, 2)}:1 along ${fmt(ps.angleDeg, 0)}°, the same way across the frame, as ${ps.source} says the pixels are on the sky (unequal pixel scales): this is the detector's geometry, not trailing or the optics.`,
      numbers: { axisRatio: ps.axisRatio, angleDeg: ps.angleDeg },
    });
  }
  const t = d.tilt;
  const sigma = (s: number) => `${fmt(s, 1)} σ`;
  if (d.starsUsed < 30 && cov.cleanStars < 30) {
    out.push({ code: 'FEW_STARS', severity: 'info', message: `Only ${d.starsUsed} clean stars: too few for a reliable field diagnosis; use a longer exposure or a richer field.`, numbers: { starsUsed: d.starsUsed } });
  }
  if (d.trailing.significant && d.trailing.kind === 'uniform') {
    const tr = d.trailing;
    out.push({
      code: 'TRAILING', severity: sev((tr.elongation ?? 0) >= MAJOR_E),
      message: `Trailing: stars are stretched the same way across the whole frame, along ${fmt(tr.angleDeg, 0)}° (±${fmtErr(tr.angleErrDeg)}), about ${fmt(tr.lengthPx, 1)} px (±${fmtErr(tr.lengthErrPx)}) long (${sigma(tr.significance)}). This is tracking, guiding, wind or vibration, not the optics: check guiding, balance, polar alignment and exposure length. If the direction turns by 90° when you defocus slightly, it is on-axis astigmatism instead.`,
      numbers: { angleDeg: tr.angleDeg, angleErrDeg: tr.angleErrDeg, elongation: tr.elongation, lengthPx: tr.lengthPx, lengthErrPx: tr.lengthErrPx, significance: tr.significance },
    });
  }
  if (d.trailing.significant && d.trailing.kind === 'rotation' && d.trailing.rotation) {
    const r = d.trailing.rotation;
    const where = r.centerPx ? `a centre at x ${fmt(r.centerPx.x, 0)}, y ${fmt(r.centerPx.y, 0)} px` : 'a centre outside the frame';
    out.push({
      code: 'FIELD_ROTATION', severity: sev((d.trailing.lengthPx ?? 0) >= 2),
      message: `Field rotation: stars trail in arcs around ${where}, turning about ${fmt(r.angleDeg, 3)}° during the exposure (trails up to ${fmt(d.trailing.lengthPx, 1)} px at the far corner; ${sigma(d.trailing.significance)}). Not an optical fault: improve the polar alignment (alt-az mounts need a derotator) or shorten the exposures.`,
      numbers: { rotationDeg: r.angleDeg, rotationErrDeg: r.angleErrDeg, centerX: r.centerPx?.x ?? null, centerY: r.centerPx?.y ?? null, lengthPx: d.trailing.lengthPx },
    });
  }
  if (t.significant) {
    const worst = [...t.corners].sort((a, b) => b.blurDiameterPx - a.blurDiameterPx);
    const best = worst[worst.length - 1];
    const across = u.micrometres
      ? `focus changes by about ${fmt(Math.hypot(t.acrossFrameUm.x ?? 0, t.acrossFrameUm.y ?? 0), 0)} µm across the frame diagonal (${fmt(t.acrossFrameUm.x, 0)} ± ${fmtErr(t.acrossFrameErrUm.x)} µm across the width, ${fmt(t.acrossFrameUm.y, 0)} ± ${fmtErr(t.acrossFrameErrUm.y)} µm across the height)`
      : `the defocus blur changes by ${fmt(t.acrossFrameBlurPx.x, 1)} px across the width and ${fmt(t.acrossFrameBlurPx.y, 1)} px across the height (micrometres need the f-number and pixel size)`;
    const shim = t.tiltMrad !== null ? ` A shim of about ${fmt(t.tiltMrad, 2)} µm per mm of ring diameter corrects it (e.g. ${fmt(t.tiltMrad * 50, 0)} µm on a 50 mm ring).` : '';
    out.push({
      code: 'TILT',
      severity: sev((t.worstCornerRatio ?? 1) >= MAJOR_RATIO),
      message: `Sensor tilt: ${across}, steepest along ${fmt(t.axisDeg, 0)}° ± ${fmtErr(t.axisErrDeg)} (${axisWords(g, t.axisDeg ?? 0)}; ${sigma(t.significance)}). Softest corner ${worst[0].name} (blur ${fmt(worst[0].blurDiameterPx, 1)} px), sharpest ${best.name} (${fmt(best.blurDiameterPx, 1)} px). ${capital(tiltAdvice(g, t))}: take two frames a known focus step apart and run skyloupe focus-pair, or a focus series with skyloupe through-focus.${shim}`,
      numbers: {
        acrossWidthUm: t.acrossFrameUm.x, acrossHeightUm: t.acrossFrameUm.y, acrossWidthErrUm: t.acrossFrameErrUm.x, acrossHeightErrUm: t.acrossFrameErrUm.y,
        acrossWidthBlurPx: t.acrossFrameBlurPx.x, acrossHeightBlurPx: t.acrossFrameBlurPx.y,
        axisDeg: t.axisDeg, axisErrDeg: t.axisErrDeg, tiltMrad: t.tiltMrad, significance: t.significance, worstCorner: worst[0].name,
      },
    });
  }
  const sp = d.spacing;
  if (sp.significant) {
    const shape = sp.pattern === 'radial' ? 'radially (long axes pointing at the centre)' : 'tangentially (long axes across the radius, circling the centre)';
    const step = spacingStepMm(u.fNumber);
    const as0 = d.astigmatism;
    const astigWords = as0.lineSeparationUm
      ? ` Read as astigmatism, the corner foci are ${fmt(as0.lineSeparationUm.low, 0)} to ${fmt(as0.lineSeparationUm.high, 0)} µm apart (one frame cannot tell which).`
      : as0.lineSeparationPx
        ? ` Read as astigmatism, the corner line images are ${fmt(as0.lineSeparationPx.low, 1)} to ${fmt(as0.lineSeparationPx.high, 1)} px long.`
        : '';
    const major = Math.abs(sp.cornerERadial ?? 0) >= MAJOR_E || (sp.cornerToCentreSize ?? 1) >= MAJOR_RATIO;
    out.push({
      code: 'SPACING',
      severity: sev(major),
      message: `Corner stars are stretched ${shape}, alike in all corners (corner elongation ${fmt(Math.abs(sp.cornerERadial ?? 0), 3)} ± ${fmtErr(sp.cornerERadialErr)}, ${sigma(sp.significance)}; corners ${fmt(sp.cornerToCentreSize, 2)}× the centre size). With a flattener, reducer or coma corrector this is the sign of a wrong spacing to the sensor; with a bare lens it is the lens's own field astigmatism.${astigWords} Which way to move depends on the corrector design (a radial or tangential pattern does not say "too close" or "too far" in general): change the spacing in steps of about ${fmt(step, 2)} mm, take a frame at each, and run skyloupe sweep, which finds the spacing where the pattern changes sign.`,
      numbers: { pattern: sp.pattern, radMinusTanPx2: sp.radMinusTanPx2, radMinusTanErrPx2: sp.radMinusTanErrPx2, cornerERadial: sp.cornerERadial, cornerToCentreSize: sp.cornerToCentreSize, stepMm: step, significance: sp.significance },
    });
  }
  const as = d.astigmatism;
  if (as.significant && as.decentred && as.centerPx) {
    out.push({
      code: 'ASTIGMATISM_DECENTRED', severity: 'minor',
      message: `The elongation pattern is centred at x ${fmt(as.centerPx.x, 0)}, y ${fmt(as.centerPx.y, 0)} px, away from the frame centre: a tilted or decentred element or adapter rather than the design; check the collimation and the lens or corrector seating.`,
      numbers: { centerX: as.centerPx.x, centerY: as.centerPx.y, centerErrX: as.centerErrPx?.x ?? null, centerErrY: as.centerErrPx?.y ?? null },
    });
  }
  const cu = d.curvature;
  if (cu.significant) {
    const um = cu.cornerDefocusUm !== null ? `the corners sit about ${fmt(cu.cornerDefocusUm, 0)} ± ${fmtErr(cu.cornerDefocusErrUm)} µm out of focus when the centre is sharp` : `the corners carry about ${fmt(cu.cornerBlurPx, 1)} px of defocus blur`;
    // An image circle (a circular fisheye): the softening toward its edge is the lens's own, no
    // spacing or shim corrects it, so it is worth a look at most.
    if (g.circle) out.push({
      code: 'FIELD_CURVATURE',
      severity: 'minor',
      message: `Softer toward the edge of the image circle: stars stay round but grow toward the edge alike all round (${fmt(cu.roundGrowthRatio, 2)}× the centre size, ${sigma(cu.significance)}); ${um.replace('the corners sit', 'the edge sits').replace('the corners carry', 'the edge carries')}. With a fisheye this is the lens's own off-axis softening rather than a fault to correct: focusing a little off the centre balances it, and stopping down a stop or two sharpens the edge.`,
      numbers: { cornerDefocusUm: cu.cornerDefocusUm, cornerDefocusErrUm: cu.cornerDefocusErrUm, cornerBlurPx: cu.cornerBlurPx, roundGrowthRatio: cu.roundGrowthRatio, radiusMm: cu.radiusMm, significance: cu.significance },
    });
    else out.push({
      code: 'FIELD_CURVATURE',
      severity: sev((cu.roundGrowthRatio ?? 1) >= MAJOR_RATIO),
      message: `Field curvature: stars stay round but grow toward all corners alike (${fmt(cu.roundGrowthRatio, 2)}× the centre size, ${sigma(cu.significance)}); ${um}${cu.radiusMm ? ` (focal surface radius about ${fmt(cu.radiusMm, 0)} mm)` : ''}. With a flattener, check its spacing (skyloupe sweep); with a bare lens, focus about a third of the way out from the centre for a better balance, or stop down. Astigmatism balanced at its medial focus looks the same in one frame.`,
      numbers: { cornerDefocusUm: cu.cornerDefocusUm, cornerDefocusErrUm: cu.cornerDefocusErrUm, cornerBlurPx: cu.cornerBlurPx, roundGrowthRatio: cu.roundGrowthRatio, radiusMm: cu.radiusMm, significance: cu.significance },
    });
  }
  const co = d.coma;
  if (co.significant && co.tail !== 'none') {
    const why = co.tail === 'outward'
      ? 'Typical of a fast reflector without a (well-spaced) coma corrector, and of fast camera lenses: with a corrector, check its spacing; with a lens, stopping down helps (coma shrinks as 1/N²).'
      : 'Flares pointing inward mean over-correction: with a coma corrector, check its spacing.';
    const where = co.centerPx
      ? (co.decentred
        ? ` The coma-free point is at x ${fmt(co.centerPx.x, 0)}, y ${fmt(co.centerPx.y, 0)} px, ${fmt((co.centreOffsetFraction ?? 0) * 100, 0)} % of the diagonal from the frame centre: collimate the optics (or check for a decentred element; with a laser collimator, never look into the beam).`
        : ` The coma-free point is near the frame centre (x ${fmt(co.centerPx.x, 0)} ± ${fmtErr(co.centerErrPx?.x)}, y ${fmt(co.centerPx.y, 0)} ± ${fmtErr(co.centerErrPx?.y)} px), so collimation looks fine.`)
      : '';
    out.push({
      code: 'COMA', severity: sev((co.cornerComaRatio ?? 0) >= 0.5),
      message: `Coma: star flares point ${co.tail} and grow toward the edges (coma flare about ${fmt(co.cornerComaPx, 1)} ± ${fmtErr(co.gradientErrPx)} px at the corners, ${fmt((co.cornerComaRatio ?? 0) * 100, 0)} % of the star size; ${sigma(co.significance)}). ${why}${where}`,
      numbers: { tail: co.tail, cornerComaPx: co.cornerComaPx, cornerComaRatio: co.cornerComaRatio, gradientPx: co.gradientPx, gradientErrPx: co.gradientErrPx, centerX: co.centerPx?.x ?? null, centerY: co.centerPx?.y ?? null, centreOffsetFraction: co.centreOffsetFraction, significance: co.significance },
    });
  } else if (co.significant && co.uniform && co.uniformAlongPixelAxis) {
    // Along a pixel row or column a sensor's readout trail (charge transfer, bleeding) looks the same: a note.
    out.push({
      code: 'COMA_UNIFORM', severity: 'info',
      message: `The same faint flare in every part of the frame (about ${fmt(Math.hypot(co.uniform.x, co.uniform.y), 1)} ± ${fmtErr(co.uniform.err)} px, ${sigma(co.significance)}), pointing along the pixel ${Math.abs(co.uniform.x) > Math.abs(co.uniform.y) ? 'rows' : 'columns'}: a readout trail of the sensor (charge transfer or bleeding along the readout direction) does this as well as collimation. Rotate the camera by 90°: a flare that turns with it is the sensor; one that stays is the optics.`,
      numbers: { x: co.uniform.x, y: co.uniform.y, err: co.uniform.err, significance: co.significance },
    });
  } else if (co.significant && co.uniform) {
    out.push({
      code: 'COMA_UNIFORM', severity: 'minor',
      message: `The same coma flare in every part of the frame, centre included (about ${fmt(Math.hypot(co.uniform.x, co.uniform.y), 1)} ± ${fmtErr(co.uniform.err)} px, ${sigma(co.significance)}): this is collimation or a decentred element, not field coma; collimate the optics (with a laser collimator, never look into the beam).`,
      numbers: { x: co.uniform.x, y: co.uniform.y, err: co.uniform.err, significance: co.significance },
    });
  }
  const optical = t.significant || sp.significant || cu.significant || co.significant;
  const sd = d.stopDown;
  if (optical && sd.available && sd.predictions.length) {
    const p = sd.predictions.slice(0, 2).map((q) => `f/${q.fNumber}: corners ~${fmt(q.cornerFwhmPx, 1)} px, centre ~${fmt(q.centreFwhmPx, 1)} px`).join('; ');
    const stopAt = sd.worthwhileTo !== null && sd.fNumber !== null && sd.worthwhileTo > sd.fNumber
      ? `Stopping down pays up to about f/${sd.worthwhileTo}; beyond it each stop gains less than 10 % for twice the exposure.`
      : 'Stopping down gains less than 10 % per stop here (each stop doubles the exposure).';
    out.push({
      code: 'STOP_DOWN', severity: 'info',
      message: `Stopping down (from f/${fmt(sd.fNumber, 1)}): ${p}. ${stopAt}`,
      numbers: { fNumber: sd.fNumber, worthwhileTo: sd.worthwhileTo, nextFNumber: sd.predictions[0].fNumber, nextCornerFwhmPx: sd.predictions[0].cornerFwhmPx, nextCentreFwhmPx: sd.predictions[0].centreFwhmPx, relativeErr: sd.relativeErr },
    });
  }
  if (!u.micrometres && optical) {
    out.push({ code: 'OPTICS_UNKNOWN', severity: 'info', message: `${capital(u.why ?? '')}.`, numbers: { fNumber: u.fNumber, pixelSizeUm: u.pixelSizeUm } });
  }
  if (!out.some((f) => f.severity !== 'info') && d.starsUsed >= 30 && d.coverage.adequate && !d.coverage.undersampled) {
    // The measured corner-to-centre FWHM ratio (zone medians), not a model extrapolation.
    const zones = map?.zones.cells ?? [];
    const c = zones.find((z) => z.zone === 'center')?.fwhmPx ?? null;
    const k = zones.filter((z) => z.zone === 'corners' && z.fwhmPx !== null && z.n >= 3).map((z) => z.fwhmPx as number);
    const ratio = c && k.length ? k.reduce((s, v) => s + v, 0) / k.length / c : null;
    const t = d.tilt;
    const bound = t.supported && t.acrossFrameUm.x !== null
      ? `; tilt below about ${fmt(Math.hypot(t.acrossFrameUm.x ?? 0, t.acrossFrameUm.y ?? 0) + 2 * Math.hypot(t.acrossFrameErrUm.x ?? 0, t.acrossFrameErrUm.y ?? 0), 0)} µm across the frame`
      : '';
    out.push({
      code: 'CLEAN', severity: 'info',
      message: d.coverage.marginal
        ? `No significant fault in what small stars can show: from ${d.starsUsed} stars, tilt, curvature and trailing are within the noise${ratio ? ` (corner stars ${fmt(ratio, 2)}× the centre FWHM)` : ''}${bound}; corner elongation and coma are not judged.`
        : `No significant optical or tracking fault: from ${d.starsUsed} stars, tilt, corner elongation, coma, curvature and trailing are all within the noise${ratio ? ` (corner stars ${fmt(ratio, 2)}× the centre FWHM)` : ''}${bound}.`,
      numbers: { starsUsed: d.starsUsed, cornerToCentreFwhm: ratio },
    });
  }
  const order = { major: 0, minor: 1, info: 2 } as const;
  return out.sort((a, b) => order[a.severity] - order[b.severity]);
}

function capital(s: string): string {
  return s ? s[0].toUpperCase() + s.slice(1) : s;
}
