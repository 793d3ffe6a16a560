/**
 * The plate-solving step of the pipeline (after measure): solve, read any WCS in the header, build
 * the report section, and correct the optics when the stars measure the focal length more than
 * 2 % away from the stated one (or measure what nobody stated), recording it as 'plate-solve'.
 */
import type { Optics } from '../frame/types.ts';
import { plateScaleArcsecPerPx } from '../frame/optics.ts';
import type { Star } from '../stars/types.ts';
import type { Catalogue } from './catalogue.ts';
import { astrometrySection, type AstrometrySection } from './section.ts';
import { solveSky, type SolveStar } from './solve.ts';
import { readWcs, wcsDistortion } from './wcs.ts';

export interface SkyStepInput {
  width: number;
  height: number;
  displayTopRow: 'first' | 'last';
  /** Frame pixels per measured-plane pixel (2 for colour mosaics). */
  planeScale: number;
  optics: Optics;
  stars: readonly Star[];
  meta: Readonly<Record<string, string | number | boolean>>;
}

export interface SkyStepOptions {
  /** A deeper catalogue than the bundled one, and the file it came from. */
  catalogue?: Catalogue | null;
  catalogueFile?: string | null;
  /** Search every scale when the optics give none or it fails. Default true. */
  blind?: boolean;
  signal?: AbortSignal;
}

export interface SkyStepResult {
  astrometry: AstrometrySection;
  optics: Optics;
}

export function solveStars(stars: readonly Star[]): SolveStar[] {
  return stars.map((s) => ({ x: s.x, y: s.y, flux: s.flux, errPx: Math.hypot(s.err.x, s.err.y) / Math.SQRT2, fwhmPx: s.fwhmPx, flags: s.flags }));
}

export function plateSolveStep(a: SkyStepInput, opts: SkyStepOptions = {}): SkyStepResult {
  const o = a.optics;
  const framePixelUm = o.pixelSizeUm !== null ? o.pixelSizeUm / a.planeScale : null;
  const hint = o.focalLengthMm !== null && framePixelUm !== null
    ? plateScaleArcsecPerPx(framePixelUm, o.focalLengthMm)
    : o.plateScaleArcsecPerPx !== null ? o.plateScaleArcsecPerPx / a.planeScale : null;
  const outcome = solveSky(solveStars(a.stars), {
    width: a.width, height: a.height,
    scaleHintArcsecPerPx: hint,
    blind: opts.blind ?? true,
    catalogue: opts.catalogue ?? undefined,
    signal: opts.signal,
  });
  const w = readWcs(a.meta);
  const headerWcs = w.wcs ? wcsDistortion(w.wcs, a.width, a.height) : w.note ? { note: w.note } : null;
  const section = astrometrySection(outcome, {
    width: a.width, height: a.height, displayTopRow: a.displayTopRow, framePixelUm, optics: o,
    catalogueFile: opts.catalogueFile ?? null, headerWcs,
  });
  let optics = o;
  if (section.solved) {
    const f = section.focalLengthMm;
    const check = section.focalLengthCheck;
    if (f !== null && o.pixelSizeUm !== null && (o.focalLengthMm === null || check?.replaced)) {
      optics = {
        ...o,
        focalLengthMm: f,
        plateScaleArcsecPerPx: plateScaleArcsecPerPx(o.pixelSizeUm, f),
        source: { ...o.source, focalLengthMm: 'plate-solve', plateScaleArcsecPerPx: 'derived' },
      };
      section.notes.push(check?.replaced
        ? `the stars put the focal length at ${f.toFixed(2)} mm, ${Math.abs(check.differencePercent).toFixed(1)} % from the stated ${check.statedMm} mm (${check.source}): arcseconds use the measured value`
        : `focal length measured from the stars: ${f.toFixed(2)} mm (none was given)`);
    } else if (f === null && section.scaleArcsecPerPx !== null) {
      const measuredPlane = section.scaleArcsecPerPx * a.planeScale;
      const stated = o.plateScaleArcsecPerPx;
      if (stated === null || Math.abs(stated / measuredPlane - 1) > 0.02) {
        optics = { ...o, plateScaleArcsecPerPx: measuredPlane, source: { ...o.source, plateScaleArcsecPerPx: 'plate-solve' } };
        section.notes.push(stated === null
          ? `sky scale measured from the stars: ${section.scaleArcsecPerPx.toFixed(3)}"/px (the focal length in mm needs the pixel size)`
          : `the stars put the sky scale at ${section.scaleArcsecPerPx.toFixed(3)}"/px, more than 2 % from the stated optics: arcseconds use the measured value`);
      }
    }
  }
  return { astrometry: section, optics };
}

/** The analysis with its astrometry section, the optics the solve corrected, and the step's time. */
export function analysisWithSky<A extends { frame: { width: number; height: number; displayTopRow: 'first' | 'last' }; plane: { scale: number }; optics: Optics; stars: Star[]; timings: Readonly<Record<string, number>> }>(
  a: A, meta: Readonly<Record<string, string | number | boolean>>, opts: SkyStepOptions = {},
): A & { astrometry: AstrometrySection } {
  const t = performance.now();
  const r = plateSolveStep({ width: a.frame.width, height: a.frame.height, displayTopRow: a.frame.displayTopRow, planeScale: a.plane.scale, optics: a.optics, stars: a.stars, meta }, opts);
  return { ...a, optics: r.optics, astrometry: r.astrometry, timings: { ...a.timings, astrometry: (performance.now() - t) / 1000 } };
}
