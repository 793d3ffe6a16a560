// A deeper, user-supplied catalogue made from Debian's astrometry.net index files
// (astrometry-data-tycho2-10-19: Tycho-2, BSD-2), read by core/sky/astrometry-index.ts:
//   - its bright stars are where Hipparcos (d3-celestial) puts them: an independent catalogue of
//     the same stars (Tycho-2 and Hipparcos share the Hipparcos reference frame);
//   - at 1000 mm on a full-frame sensor, where Hipparcos holds too few stars, frames of Tycho-2
//     stars place with it (simulator truth), and the report says which catalogue served.
// Skips when the index files are missing (.ci/run installs them).
import { existsSync, readFileSync, readdirSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it, beforeAll } from 'vitest';
import { mergeStars, readAstrometryIndex } from '../../core/sky/astrometry-index.ts';
import { decodeCatalogue, encodeCatalogue, starsInCone } from '../../core/sky/catalogue.ts';
import { bundledCatalogue } from '../../core/sky/bundled.ts';
import { skyFieldStars, skyLensModel } from '../../core/simulate/sky-field.ts';
import { solveSky } from '../../core/sky/solve.ts';
import { astrometrySection } from '../../core/sky/section.ts';
import { pixelToSky } from '../../core/sky/lens.ts';
import { angleBetween, DEG } from '../../core/sky/sphere.ts';
import { Rng } from '../../core/simulate/prng.ts';

const DIR = '/usr/share/astrometry';
const files = existsSync(DIR) ? readdirSync(DIR).filter((f) => /^index-tycho2-1\d\..*fits$/.test(f)).map((f) => path.join(DIR, f)) : [];

describe('a deeper catalogue from astrometry.net index files (Tycho-2)', () => {
  // never skipped silently (README): without the package this fails and says what to install
  beforeAll(() => { if (files.length < 10) throw new Error('the Tycho-2 index files are missing: apt-get install -y astrometry-data-tycho2-10-19 (CI installs them)'); });
  const stars = files.length ? mergeStars(files.map((f) => readAstrometryIndex(new Uint8Array(readFileSync(f)), f).stars)) : [];
  const tycho = files.length ? decodeCatalogue(encodeCatalogue(stars, { name: 'Tycho-2 (astrometry.net index)', source: 'test', idPrefix: '', epoch: 2000, positionErrorArcsec: 0.1, band: 'VT', cellDeg: 2 })) : null!;

  it('holds the bright Hipparcos stars at their Hipparcos positions', () => {
    expect(tycho.count).toBeGreaterThan(300_000);
    const hip = bundledCatalogue();
    let n = 0, found = 0;
    for (let i = 0; i < hip.count; i++) {
      if (hip.mag[i] > 6 || hip.mag[i] < 2) continue; // the brightest stars are missing from Tycho-2's index files
      n++;
      const v: [number, number, number] = [hip.xyz[3 * i], hip.xyz[3 * i + 1], hip.xyz[3 * i + 2]];
      const near = starsInCone(tycho, v, (3 / 3600) * DEG, 1);
      if (near.length) found++;
    }
    // a 3" match for nearly all: proper motions over the epochs and double stars account for the rest
    expect(found / n).toBeGreaterThan(0.9);
  });

  it('1000 mm full frame: Tycho-2 stars place with the deeper catalogue, which the report names', () => {
    const rng = new Rng(21);
    const W = 6000, H = 4000;
    let withTycho = 0;
    for (let t = 0; t < 5; t++) {
      const lens = { raDeg: 70 * t + 13, decDeg: 25 * t - 50, northDeg: 30 * t, mirrored: false, projection: 'rectilinear' as const, focalLengthMm: 1000, pixelSizeUm: 6, k1: 0, k2: 0, centreOffsetPx: { x: 0, y: 0 } };
      const field = skyFieldStars(tycho, { width: W, height: H, lens, magLimit: 11, fluxMag0E: 1e7, maxStars: 300 })
        .map((s) => ({ x: s.x + 0.3 * rng.normal(), y: s.y + 0.3 * rng.normal(), flux: s.fluxE, errPx: 0.3, fwhmPx: 3 }));
      const r = solveSky(field, { width: W, height: H, scaleHintArcsecPerPx: 206.265 * 6 / 1000, catalogue: tycho, blind: false });
      if (!r.solved) continue;
      withTycho++;
      const truth = skyLensModel(lens, W, H);
      expect(angleBetween(pixelToSky(r.model, 2999.5, 1999.5)!, pixelToSky(truth, 2999.5, 1999.5)!) * truth.fPx).toBeLessThan(1);
      const s = astrometrySection(r, { width: W, height: H, displayTopRow: 'first', framePixelUm: 6, optics: { focalLengthMm: 1000, pixelSizeUm: 6, fNumber: null, plateScaleArcsecPerPx: 1.24, source: { focalLengthMm: 'header', pixelSizeUm: 'header', fNumber: null, plateScaleArcsecPerPx: 'derived' } }, catalogueFile: 'tycho.skycat', headerWcs: null });
      expect(s.catalogue.name).toBe('Tycho-2 (astrometry.net index)');
      expect(s.catalogue.file).toBe('tycho.skycat');
    }
    expect(withTycho).toBe(5);
  });
});
