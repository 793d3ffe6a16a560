// Rendered frames of catalogue stars through known lenses (core/simulate: sky-field.ts places the
// bundled catalogue's stars through the lens model, render.ts draws them with noise), written and
// read back as FITS and run through the whole pipeline (core/analyze.ts): the report's astrometry
// section must give the lens the simulator used (simulator truth) for a rectilinear lens with
// barrel distortion, one with mustache distortion, an equisolid fisheye and a mirrored frame.
import { describe, expect, it } from 'vitest';
import { renderScene } from '../../core/simulate/render.ts';
import type { SceneInput } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { bundledCatalogue } from '../../core/sky/bundled.ts';
import { skyFieldStars, skyLensModel, type SkyLens } from '../../core/simulate/sky-field.ts';
import { pixelToSky } from '../../core/sky/lens.ts';
import { sectionModel } from '../../core/sky/section.ts';
import { angleBetween } from '../../core/sky/sphere.ts';
import { buildReport } from '../../core/report/build.ts';
import { starsCsv } from '../../core/report/csv.ts';

const W = 3000, H = 2000, PIXEL_UM = 12;

function lensOf(o: Partial<SkyLens>): SkyLens {
  return { raDeg: 83.8, decDeg: -5.4, northDeg: -90, mirrored: false, projection: 'rectilinear', focalLengthMm: 24, pixelSizeUm: PIXEL_UM, k1: 0, k2: 0, centreOffsetPx: { x: 0, y: 0 }, ...o };
}

async function render(lens: SkyLens, seed: number) {
  const stars = skyFieldStars(bundledCatalogue(), { width: W, height: H, lens, magLimit: 8, fluxMag0E: 1.2e7, maxStars: 600, marginPx: 12 });
  const scene: SceneInput = {
    width: W, height: H, seed,
    optics: { pixelSizeUm: PIXEL_UM, focalLengthMm: lens.focalLengthMm, fNumber: 2.8 },
    stars: stars.map((s) => ({ x: s.x, y: s.y, fluxE: s.fluxE })),
    psf: { kind: 'analytic', fwhmMajorPx: 2.6, fwhmMinorPx: 2.6 },
    sky: { level: 600 },
  };
  const res = renderScene(scene as Parameters<typeof renderScene>[0]);
  const frame = decodeFits(fitsBytes(res));
  return { analysis: await analyzeFrame(frame, { workers: 0 }), stars };
}

describe('rendered catalogue fields through known lenses, whole pipeline (simulator truth)', () => {
  const cases: { name: string; lens: Partial<SkyLens>; pattern: string; projection: string; parity: string }[] = [
    { name: '24 mm rectilinear, barrel -2.5 %', lens: { k1: -0.025, raDeg: 279, decDeg: 38, northDeg: -70 }, pattern: 'barrel', projection: 'rectilinear', parity: 'normal' },
    { name: '20 mm rectilinear, mustache', lens: { focalLengthMm: 20, k1: -0.04, k2: 0.05, raDeg: 84, decDeg: -1, northDeg: -100 }, pattern: 'mustache', projection: 'rectilinear', parity: 'normal' },
    { name: '15 mm equisolid fisheye', lens: { focalLengthMm: 15, projection: 'fisheye-equisolid', raDeg: 200, decDeg: 50, northDeg: 10 }, pattern: 'none', projection: 'fisheye-equisolid', parity: 'normal' },
    { name: '50 mm, mirrored', lens: { focalLengthMm: 50, mirrored: true, raDeg: 56.8, decDeg: 24.1, northDeg: -95 }, pattern: 'none', projection: 'rectilinear', parity: 'mirrored' },
  ];
  for (const [k, c] of cases.entries()) {
    it(c.name, async () => {
      const lens = lensOf(c.lens);
      const { analysis: a } = await render(lens, 40 + k);
      const s = a.astrometry!;
      expect(s.solved, s.reason ?? '').toBe(true);
      const truth = skyLensModel(lens, W, H);
      const model = sectionModel(s)!;
      // the frame centre's sky position within 1 px, the focal length within 0.2 %
      expect(angleBetween(pixelToSky(model, (W - 1) / 2, (H - 1) / 2)!, pixelToSky(truth, (W - 1) / 2, (H - 1) / 2)!) * truth.fPx).toBeLessThan(1);
      expect(Math.abs(s.focalLengthMm! / lens.focalLengthMm - 1)).toBeLessThan(0.002);
      expect(s.projection).toBe(c.projection);
      // FITS frames are displayed bottom-up (last row at the top): the displayed parity is the mirror of the stored one
      expect(s.parity).toBe(c.parity === 'normal' ? 'mirrored' : 'normal');
      expect(s.distortion!.pattern).toBe(c.pattern);
      expect(Math.abs(s.distortion!.k1 - lens.k1)).toBeLessThan(4 * s.distortion!.k1Err! + 5e-4);
      // the report and its CSV carry RA/Dec and catalogue numbers of matched stars
      const report = buildReport(a, 'sim.fits');
      const matched = report.stars.filter((st) => st.catalogueId);
      expect(matched.length).toBe(s.starsMatched);
      expect(matched[0].catalogueId).toMatch(/^HIP \d+$/);
      const csv = starsCsv(report).split('\r\n');
      expect(csv[0].endsWith(',raDeg,decDeg,catalogueId')).toBe(true);
    });
  }
});
