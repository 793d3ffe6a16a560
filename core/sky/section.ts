/**
 * The report's `astrometry` section (skyloupe.report/1, additive; DESIGN.md "Additions planned in
 * turn 2"), built from the solver's outcome: where the frame is on the sky, the lens's real focal
 * length, its projection and radial distortion, the matched stars, and for an existing WCS in the
 * header the distortion it implies.
 */
import type { Optics } from '../frame/types.ts';
import { catalogueId, starName, starRaDecDeg, type Catalogue } from './catalogue.ts';
import { centreScaleArcsecPerPx, pixelToSky, skyToPixel, type LensModel, type Projection } from './lens.ts';
import type { SkyOutcome } from './solve.ts';
import { DEG, tangentBasis, vecToRadec } from './sphere.ts';
import type { WcsDistortion } from './wcs.ts';

export type { AstrometryDistortion, AstrometryMatch, AstrometrySection } from './section-types.ts';
import type { AstrometryDistortion, AstrometryMatch, AstrometrySection } from './section-types.ts';

const r = (v: number, d = 4) => (Number.isFinite(v) ? Math.round(v * 10 ** d) / 10 ** d : NaN);
const rn = (v: number | null | undefined, d = 4) => (v === null || v === undefined || !Number.isFinite(v) ? null : r(v, d));

/** Image direction of north at a pixel: degrees from +x toward +y. */
export function northAngleDeg(m: LensModel, x: number, y: number): number | null {
  const v = pixelToSky(m, x, y);
  if (!v) return null;
  const { north } = tangentBasis(v);
  const e = 1e-5;
  const p = skyToPixel(m, [v[0] + e * north[0], v[1] + e * north[1], v[2] + e * north[2]]);
  if (!p) return null;
  let a = (Math.atan2(p[1] - y, p[0] - x) * 180) / Math.PI;
  if (a <= -180) a += 360;
  return a;
}

export function distortionSection(d: AstrometryDistortion): AstrometryDistortion {
  return {
    k1: r(d.k1, 6), k2: r(d.k2, 6), k1Err: rn(d.k1Err, 6), k2Err: rn(d.k2Err, 6),
    pattern: d.pattern,
    cornerPercent: r(d.cornerPercent, 4), cornerPercentErr: rn(d.cornerPercentErr, 4),
    edgePercent: { x: r(d.edgePercent.x, 4), y: r(d.edgePercent.y, 4) },
    maxShiftPx: r(d.maxShiftPx, 3),
    turnFraction: rn(d.turnFraction, 3),
  };
}

export interface SectionContext {
  width: number;
  height: number;
  displayTopRow: 'first' | 'last';
  /** Pixel pitch of the frame's pixels (full resolution), um; null when unknown. */
  framePixelUm: number | null;
  /** The optics before the solve (for the 2 % rule). */
  optics: Optics;
  catalogueFile: string | null;
  headerWcs: WcsDistortion | null | { note: string };
}

/** The focal length check: measured and stated differ by more than this (percent) and the measured one is used. */
export const FOCAL_LENGTH_TOLERANCE_PERCENT = 2;

export function astrometrySection(out: SkyOutcome, ctx: SectionContext): AstrometrySection {
  const cat: Catalogue = out.catalogue;
  const catInfo = { name: cat.info.name, stars: cat.count, source: cat.info.source, file: ctx.catalogueFile };
  const search = {
    mode: out.search.mode, hintFailed: out.search.hintFailed, placementsTried: out.search.placementsTried,
    logOdds: rn(out.search.logOdds, 2), acceptLogOdds: r(out.search.acceptLogOdds, 2),
    falsePositiveBound: Number(out.search.falsePositiveBound.toPrecision(3)), seconds: r(out.search.seconds, 3),
  };
  const headerWcs: AstrometrySection['headerWcs'] = ctx.headerWcs === null ? null
    : 'note' in ctx.headerWcs ? { kind: null, note: ctx.headerWcs.note }
      : { kind: ctx.headerWcs.kind, scaleArcsecPerPx: r(ctx.headerWcs.scaleArcsecPerPx, 4), nonRadialPx: r(ctx.headerWcs.nonRadialPx, 3), distortion: distortionSection(ctx.headerWcs.distortion) };
  if (!out.solved) {
    return {
      solved: false, reason: out.reason, centre: null, rotationDeg: null, parity: null,
      scaleArcsecPerPx: null, scaleErrArcsecPerPx: null, focalLengthMm: null, focalLengthErrMm: null,
      projection: null, distortion: null, opticalCentre: null, starsMatched: 0, rmsArcsec: null, rmsPx: null,
      catalogue: catInfo, focalLengthCheck: null, search, matches: [], headerWcs, model: null, projections: [], notes: [],
    };
  }
  const m = out.model;
  const W = ctx.width, H = ctx.height;
  const cxF = (W - 1) / 2, cyF = (H - 1) / 2;
  const cv = pixelToSky(m, cxF, cyF);
  const c = cv ? vecToRadec(cv) : null;
  const scale = centreScaleArcsecPerPx(m);
  const scaleErr = scale * (out.fit.err.fPx / m.fPx);
  const f = ctx.framePixelUm ? (m.fPx * ctx.framePixelUm) / 1000 : null;
  const fErr = f !== null ? f * (out.fit.err.fPx / m.fPx) : null;
  const displayed = m.parity * (ctx.displayTopRow === 'first' ? 1 : -1);
  const ideal: LensModel = { ...m, k1: 0, k2: 0 };
  const pt: [number, number] = [0, 0];
  const matches: AstrometryMatch[] = out.matches.map((mm) => {
    const { raDeg, decDeg } = starRaDecDeg(cat, mm.cat);
    const v = [cat.xyz[3 * mm.cat], cat.xyz[3 * mm.cat + 1], cat.xyz[3 * mm.cat + 2]];
    const p = skyToPixel(ideal, v, pt);
    const model = skyToPixel(m, v, [0, 0]);
    // measured = model - residual (the fit's residual is model - measured)
    const mx = model ? model[0] - mm.dxPx : NaN, my = model ? model[1] - mm.dyPx : NaN;
    const magnitude = cat.mag[mm.cat] < 30 ? r(cat.mag[mm.cat], 3) : null;
    return {
      star: mm.star,
      catalogueId: catalogueId(cat, mm.cat),
      name: starName(cat, mm.cat),
      magnitude,
      raDeg: r(raDeg, 6), decDeg: r(decDeg, 6),
      shiftPx: { x: p ? r(mx - p[0], 3) : NaN, y: p ? r(my - p[1], 3) : NaN },
      residualPx: { x: r(-mm.dxPx, 3), y: r(-mm.dyPx, 3) },
    };
  });
  const notes: string[] = [];
  let focalLengthCheck: AstrometrySection['focalLengthCheck'] = null;
  const stated = ctx.optics.focalLengthMm;
  if (f !== null && stated !== null && ctx.optics.source.focalLengthMm !== null) {
    const diff = 100 * (stated / f - 1);
    const replaced = Math.abs(diff) > FOCAL_LENGTH_TOLERANCE_PERCENT;
    focalLengthCheck = { statedMm: stated, source: ctx.optics.source.focalLengthMm, measuredMm: r(f, 3), differencePercent: r(diff, 2), replaced };
  }
  if (out.search.hintFailed && out.search.mode === 'blind') notes.push('not found at the scale the optics give: placed by the search over all scales');
  if (out.projectionTrials.length > 1) {
    notes.push(`projection chosen among ${out.projectionTrials.length}: the one that fits as well as any and needs the least distortion`);
  }
  return {
    solved: true, reason: null,
    centre: c ? { raDeg: r(c.ra / DEG, 6), decDeg: r(c.dec / DEG, 6) } : null,
    rotationDeg: rn(northAngleDeg(m, cxF, cyF), 3),
    parity: displayed > 0 ? 'normal' : 'mirrored',
    scaleArcsecPerPx: r(scale, 5), scaleErrArcsecPerPx: rn(scaleErr, 5),
    focalLengthMm: f === null ? null : r(f, 3), focalLengthErrMm: rn(fErr, 3),
    projection: m.projection,
    distortion: distortionSection(out.distortion),
    opticalCentre: { xPx: r(m.cx, 2), yPx: r(m.cy, 2), xErrPx: rn(out.fit.err.cx, 2), yErrPx: rn(out.fit.err.cy, 2), fitted: out.centreFitted },
    starsMatched: out.matches.length,
    rmsArcsec: r(out.fit.rmsPx * scale, 3),
    rmsPx: r(out.fit.rmsPx, 3),
    catalogue: catInfo,
    focalLengthCheck,
    search,
    matches,
    headerWcs,
    model: { rotation: Array.from(m.rot), fPx: m.fPx, cxPx: m.cx, cyPx: m.cy, parity: m.parity, projection: m.projection, k1: m.k1, k2: m.k2, rNormPx: m.rNorm },
    projections: out.projectionTrials.map((t) => ({ projection: t.projection, matched: t.matched, rmsPx: r(t.rmsPx, 3), maxDistortionPercent: r(t.maxDistortionPercent, 3) })),
    notes,
  };
}

/** The lens model of a report section (null when the frame was not placed). */
export function sectionModel(s: Pick<AstrometrySection, 'model'>): LensModel | null {
  const m = s.model;
  if (!m) return null;
  return { rot: Float64Array.from(m.rotation), fPx: m.fPx, cx: m.cxPx, cy: m.cyPx, parity: m.parity, projection: m.projection, k1: m.k1, k2: m.k2, rNorm: m.rNormPx };
}
