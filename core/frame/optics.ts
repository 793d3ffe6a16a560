/** Optics of the measured plane: file hints, user overrides, and where each value came from. */
import { usage } from '../errors.ts';
import type { Optics, OpticsHints, OpticsSource } from './types.ts';

export interface UserOptics { focalLengthMm?: number; pixelSizeUm?: number; fNumber?: number }

/** Arcseconds per radian: 180 * 3600 / pi = 206264.806... (definition of the radian). */
const ARCSEC_PER_RAD = (180 * 3600) / Math.PI;

/** Plate scale ["/px] = 206.265 * p[µm] / f[mm]: p/f is the angle in radians, 1 µm/mm = 1e-3 rad. */
export function plateScaleArcsecPerPx(pixelSizeUm: number, focalLengthMm: number): number {
  return (ARCSEC_PER_RAD * 1e-3 * pixelSizeUm) / focalLengthMm;
}

function checkUser(name: string, v: number | undefined): number | undefined {
  if (v === undefined) return undefined;
  if (typeof v !== 'number' || !Number.isFinite(v) || v <= 0) throw usage(`${name} must be a positive number, got ${String(v)}`);
  return v;
}

function fromHint(v: number | undefined): number | undefined {
  return typeof v === 'number' && Number.isFinite(v) && v > 0 ? v : undefined;
}

/**
 * User values win over the file's; a value nobody gave stays null. The f-number falls back to
 * focal length / aperture diameter (source 'derived'). `source.keywords` names the card or tag
 * that served each file value (e.g. fNumber 'FNUMBER', or 'FOCALLEN/APTDIA' for the ratio). `pixelSizeUm` in the result is the pitch
 * of the measured plane: the stated pitch of the stored pixels (binning already included, see
 * fits.ts) times `planeScale` (2 for CFA superpixels).
 */
export function resolveOptics(hints: OpticsHints | null, user: UserOptics, planeScale: number): Optics {
  if (!(planeScale > 0) || !Number.isFinite(planeScale)) throw usage(`plane scale must be a positive number, got ${planeScale}`);
  const uf = checkUser('focal length (mm)', user.focalLengthMm);
  const up = checkUser('pixel size (µm)', user.pixelSizeUm);
  const un = checkUser('f-number', user.fNumber);
  const from: OpticsSource = hints ? hints.from : null;

  const pick = (u: number | undefined, h: number | undefined): [number | null, OpticsSource] =>
    u !== undefined ? [u, 'user'] : h !== undefined ? [h, from] : [null, null];

  const [focalLengthMm, fSrc] = pick(uf, fromHint(hints?.focalLengthMm));
  const [statedPx, pSrc] = pick(up, fromHint(hints?.pixelSizeUm));
  let [fNumber, nSrc] = pick(un, fromHint(hints?.fNumber));
  const kw = hints?.keywords ?? {};
  const card = (src: OpticsSource, k: string | undefined): string | null => (src === 'header' || src === 'exif') && k ? k : null;
  let nCard = card(nSrc, kw.fNumber);
  const aperture = fromHint(hints?.apertureMm);
  if (fNumber === null && focalLengthMm !== null && aperture !== undefined) {
    fNumber = focalLengthMm / aperture; // N = f / D
    nSrc = 'derived';
    // which cards the ratio used: the focal length may be the user's
    nCard = `${fSrc === 'user' ? 'user focal length' : kw.focalLengthMm ?? 'focal length'}/${kw.apertureMm ?? 'aperture'}`;
  }
  const pixelSizeUm = statedPx === null ? null : statedPx * planeScale;
  const plate = pixelSizeUm !== null && focalLengthMm !== null ? plateScaleArcsecPerPx(pixelSizeUm, focalLengthMm) : null;
  return {
    focalLengthMm,
    pixelSizeUm,
    fNumber,
    plateScaleArcsecPerPx: plate,
    source: {
      focalLengthMm: fSrc,
      pixelSizeUm: pSrc,
      fNumber: nSrc,
      plateScaleArcsecPerPx: plate === null ? null : 'derived',
      keywords: { focalLengthMm: card(fSrc, kw.focalLengthMm), pixelSizeUm: card(pSrc, kw.pixelSizeUm), fNumber: nCard },
    },
  };
}
