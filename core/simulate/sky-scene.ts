/**
 * Scene stars with `pointing`: the bundled catalogue's stars through the lens the scene describes
 * (sky-field.ts), and the truth of where that lens points and how it draws the sky, in the terms
 * of the report's astrometry section.
 */
import { bundledCatalogue } from '../sky/bundled.ts';
import { catalogueId, starRaDecDeg } from '../sky/catalogue.ts';
import { centreScaleArcsecPerPx, pixelToSky, undistortRadius } from '../sky/lens.ts';
import { DEG, vecToRadec } from '../sky/sphere.ts';
import type { Scene, SceneSkyStars } from './scene.ts';
import { skyFieldStars, skyLensModel, type SkyLens } from './sky-field.ts';
import type { PlacedStar } from './stars.ts';

export interface SkyStars {
  lens: SkyLens;
  stars: PlacedStar[];
  /** Per star, in the order of `stars`. */
  starTruth: { catalogueId: string; mag: number; raDeg: number; decDeg: number }[];
  catalogue: string;
}

/** The optical centre the scene's optics use (the frame centre for analytic stars). */
function opticalCentre(scene: Scene): { x: number; y: number } {
  const frame = { x: (scene.width - 1) / 2, y: (scene.height - 1) / 2 };
  return scene.psf.kind === 'optics' ? (scene.psf.aberrations.opticalCenterPx ?? frame) : frame;
}

export function sceneSkyLens(scene: Scene, s: SceneSkyStars): SkyLens {
  const oc = opticalCentre(scene);
  return {
    raDeg: s.pointing.raDeg,
    decDeg: s.pointing.decDeg,
    northDeg: s.northDeg,
    // The simulator writes FITS, shown with the last row at the top: the stored rows are the
    // mirror of what is displayed, so a frame that displays the sky as seen is stored mirrored.
    mirrored: s.parity === 'normal',
    projection: s.projection,
    focalLengthMm: scene.optics.focalLengthMm,
    pixelSizeUm: scene.optics.pixelSizeUm,
    k1: s.k1,
    k2: s.k2,
    centreOffsetPx: { x: oc.x - (scene.width - 1) / 2, y: oc.y - (scene.height - 1) / 2 },
  };
}

export function skyStarsOfScene(scene: Scene, s: SceneSkyStars): SkyStars {
  const cat = bundledCatalogue();
  const lens = sceneSkyLens(scene, s);
  const field = skyFieldStars(cat, {
    width: scene.width, height: scene.height, lens, magLimit: s.magLimit, fluxMag0E: s.fluxMag0E,
    maxStars: s.maxStars || undefined, marginPx: s.marginPx,
  });
  return {
    lens,
    stars: field.map((f) => ({ x: f.x, y: f.y, fluxE: f.fluxE })),
    starTruth: field.map((f) => ({ catalogueId: catalogueId(cat, f.cat), mag: f.mag, ...starRaDecDeg(cat, f.cat) })),
    catalogue: cat.info.name,
  };
}

/** The scene's sky placement as the report states it (report.astrometry's names where they mean the same). */
export function skyTruth(scene: Scene, sky: SkyStars): Record<string, unknown> {
  const s = scene.stars as SceneSkyStars;
  const W = scene.width, H = scene.height;
  const m = skyLensModel(sky.lens, W, H);
  const c = pixelToSky(m, (W - 1) / 2, (H - 1) / 2);
  const centre = c ? vecToRadec(c) : null;
  // 100 (r_d - r) / r where the distorted radius is rd (the report's cornerPercent at rd = R)
  const percentAt = (rd: number) => {
    const q2 = (undistortRadius(m, rd) / m.rNorm) ** 2;
    return 100 * (s.k1 * q2 + s.k2 * q2 * q2);
  };
  return {
    catalogue: sky.catalogue,
    magLimit: s.magLimit,
    stars: sky.stars.length,
    pointing: s.pointing,
    northDeg: s.northDeg,
    parity: s.parity,
    projection: s.projection,
    focalLengthMm: scene.optics.focalLengthMm,
    scaleArcsecPerPx: centreScaleArcsecPerPx(m),
    opticalCentre: { xPx: m.cx, yPx: m.cy },
    centre: centre ? { raDeg: centre.ra / DEG, decDeg: centre.dec / DEG } : null,
    distortion: {
      model: 'r_d = r (1 + k1 q^2 + k2 q^4), q = r / rNormPx, about the optical centre',
      k1: s.k1,
      k2: s.k2,
      rNormPx: m.rNorm,
      cornerPercent: percentAt(m.rNorm),
      edgePercent: { x: percentAt(W / 2), y: percentAt(H / 2) },
    },
  };
}
