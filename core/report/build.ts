import type { Analysis } from '../analyze.ts';
import type { Star } from '../stars/types.ts';
import { median } from '../image/stats.ts';
import { REPORT_SCHEMA, type Report, type ReportStar, type ZoneSummary } from './types.ts';
import { VERSION } from '../version.ts';
import { sectionModel } from '../sky/section.ts';
import { pixelToSky } from '../sky/lens.ts';
import { vecToRadec } from '../sky/sphere.ts';
import { sharedEllipticity } from './shared-ellipticity.ts';

const r4 = (v: number) => (Number.isFinite(v) ? Math.round(v * 1e4) / 1e4 : null);

function med(values: number[]): number | null {
  const a = Float64Array.from(values.filter((v) => Number.isFinite(v)));
  return a.length ? median(a, a.length) : null;
}

export function usable(s: Star): boolean {
  return s.flags.length === 0 && Number.isFinite(s.fwhmPx);
}

/**
 * Centre = within 25 % of the half-diagonal of the frame centre; corners = beyond 75 %
 * (simple radial zones for the summary; the field map has the full zone grid).
 */
export function radialZone(s: { x: number; y: number }, width: number, height: number, circle: { xPx: number; yPx: number; radiusPx: number } | null = null): 'center' | 'corners' | 'middle' {
  // an image circle (circular fisheye): zones about its centre, in units of its radius
  const cx = circle ? circle.xPx : (width - 1) / 2;
  const cy = circle ? circle.yPx : (height - 1) / 2;
  const r = Math.hypot(s.x - cx, s.y - cy) / (circle ? circle.radiusPx : Math.hypot(cx, cy));
  return r <= 0.25 ? 'center' : r >= 0.75 ? 'corners' : 'middle';
}

function zoneSummary(zone: 'center' | 'corners', stars: Star[], plate: number | null, about: { x: number; y: number }): ZoneSummary {
  const fwhm = med(stars.map((s) => s.fwhmPx));
  let e1 = 0;
  let e2 = 0;
  let n = 0;
  for (const s of stars) {
    if (!Number.isFinite(s.moments.e1) || !Number.isFinite(s.moments.e2)) continue;
    e1 += s.moments.e1; e2 += s.moments.e2; n++;
  }
  return {
    zone,
    stars: stars.length,
    medianFwhmPx: fwhm === null ? null : r4(fwhm),
    medianFwhmArcsec: fwhm !== null && plate !== null ? r4(fwhm * plate) : null,
    medianHfdPx: r4n(med(stars.map((s) => s.hfdPx))),
    meanShapeE: n ? r4(Math.hypot(e1, e2) / n) : null,
    medianEllipticity: r4n(med(stars.map((s) => s.ellipticity))),
    sharedEllipticity: r4n(sharedEllipticity(stars.map((s) => ({ x: s.x, y: s.y, e1: s.moments.e1, e2: s.moments.e2 })), zone === 'corners' ? about : null)),
  };
}

function r4n(v: number | null): number | null {
  return v === null ? null : r4(v);
}

function reportStar(s: Star): ReportStar {
  return {
    x: r4(s.x)!, y: r4(s.y)!, flux: r4(s.flux)!, snr: r4(s.snr)!,
    fwhmPx: r4(s.fwhmPx)!, fwhmMajorPx: r4(s.fwhmMajorPx)!, fwhmMinorPx: r4(s.fwhmMinorPx)!,
    ellipticity: r4(s.ellipticity)!, thetaDeg: r4(s.thetaDeg)!, hfdPx: r4(s.hfdPx)!,
    coma: { x: r4(s.coma.x)!, y: r4(s.coma.y)! },
    flags: [...s.flags],
    model: s.model,
    moffatBeta: s.moffatBeta === null ? null : r4(s.moffatBeta),
    e1: r4(s.moments.e1)!, e2: r4(s.moments.e2)!,
    err: { x: r4(s.err.x)!, y: r4(s.err.y)!, fwhmPx: r4(s.err.fwhmPx)!, ellipticity: r4(s.err.ellipticity)!, thetaDeg: r4(s.err.thetaDeg)!, hfdPx: r4(s.err.hfdPx)! },
  };
}

export function buildReport(a: Analysis, path: string, extra: Pick<Report, 'diagnosis' | 'findings' | 'field'> = {}): Report {
  const good = a.stars.filter(usable);
  const plate = a.optics.plateScaleArcsecPerPx;
  const { width, height } = a.frame;
  const circle = a.frame.dataRegion?.kind === 'circle' ? a.frame.dataRegion.circle : null;
  const center = good.filter((s) => radialZone(s, width, height, circle) === 'center');
  const corners = good.filter((s) => radialZone(s, width, height, circle) === 'corners');
  const fwhm = med(good.map((s) => s.fwhmPx));
  // the point the radial zones are taken about (the frame or image-circle centre)
  const about = circle ? { x: circle.xPx, y: circle.yPx } : { x: (width - 1) / 2, y: (height - 1) / 2 };
  return {
    schema: REPORT_SCHEMA,
    tool: { name: 'skyloupe', version: VERSION },
    createdAt: new Date().toISOString(),
    frame: {
      path, width, height, format: a.frame.format, cfa: a.frame.cfa, optics: a.optics,
      display: {
        topRow: a.frame.displayTopRow,
        note: a.frame.displayTopRow === 'last'
          ? 'displayed with the last stored row at the top (FITS convention: y increases upward)'
          : 'displayed with the first stored row at the top',
      },
      dataRegion: a.frame.dataRegion,
      pixelShape: a.frame.pixelShape,
      saturation: { ...a.frame.saturation },
    },
    conventions: {
      coordinates: '0-based array coordinates: x = column, y = row in storage order, pixel centres at integers',
      angles: 'degrees from +x toward +y, major axis in (-90, 90]',
      fwhm: 'profile-fit FWHM of the star as recorded (pixel box included)',
    },
    sky: { level: r4(a.sky.level)!, sigma: r4(a.sky.sigma)!, boxPx: a.sky.boxPx },
    detection: {
      threshold: a.detection.threshold,
      candidates: a.detection.candidates,
      measured: a.detection.measured,
      outsideData: a.detection.outsideData,
      usedForField: good.length,
      subset: a.detection.subset,
      flagged: a.detection.flagged,
    },
    summary: {
      stars: good.length,
      medianFwhmPx: r4n(fwhm),
      medianFwhmArcsec: fwhm !== null && plate !== null ? r4(fwhm * plate) : null,
      medianHfdPx: r4n(med(good.map((s) => s.hfdPx))),
      medianEllipticity: r4n(med(good.map((s) => s.ellipticity))),
      center: zoneSummary('center', center, plate, about),
      corners: zoneSummary('corners', corners, plate, about),
    },
    stars: withSky(a.stars.map(reportStar), a),
    ...extra,
    ...(a.astrometry ? { astrometry: a.astrometry } : {}),
    ...(a.zonePsf ? { zonePsf: a.zonePsf } : {}),
    timings: a.timings,
  };
}

/** RA/Dec of every star through the fitted lens model, and the catalogue number of matched ones. */
function withSky(stars: ReportStar[], a: Analysis): ReportStar[] {
  const s = a.astrometry;
  if (!s) return stars;
  const model = sectionModel(s);
  const ids = new Map(s.matches.map((m) => [m.star, m.catalogueId]));
  const deg = 180 / Math.PI;
  return stars.map((st, i) => {
    const v = model ? pixelToSky(model, a.stars[i].x, a.stars[i].y) : null;
    const rd = v ? vecToRadec(v) : null;
    return { ...st, raDeg: rd ? Math.round(rd.ra * deg * 1e6) / 1e6 : null, decDeg: rd ? Math.round(rd.dec * deg * 1e6) / 1e6 : null, catalogueId: ids.get(i) ?? null };
  });
}
