// The bundled catalogue: the committed binary is exactly what bin/build-catalogue.ts makes from the
// npm package d3-celestial (Hipparcos, data/stars.14.json); every star of the package is in it with
// its position (to the 0.36" rounding of the source) and magnitude; cone queries find exactly the
// stars a brute-force scan finds; damaged files get a clear message. The lens projections follow
// their defining formulas (Kannala & Brandt 2006, IEEE PAMI 28, 1335, table 1).
import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import path from 'node:path';
import { catalogueModule } from '../../bin/build-catalogue.ts';
import { bundledCatalogue } from '../../core/sky/bundled.ts';
import { decodeCatalogue, encodeCatalogue, starsInCone, catalogueId, starName } from '../../core/sky/catalogue.ts';
import { angleOfRadius, radiusOfAngle, PROJECTIONS, skyToPixel, pixelToSky, type LensModel } from '../../core/sky/lens.ts';
import { DEG, radecToVec, angleBetween, rotationFromVector } from '../../core/sky/sphere.ts';
import { summarizeDistortion } from '../../core/sky/distortion.ts';
import { SkyloupeError } from '../../core/errors.ts';

const require = createRequire(import.meta.url);

describe('bundled catalogue (Hipparcos from d3-celestial)', () => {
  it('the committed module is what the builder makes from the package now', () => {
    expect(readFileSync(new URL('../../core/sky/catalogue-hipparcos.gen.ts', import.meta.url), 'utf8')).toBe(catalogueModule());
  });

  it('holds every star of data/stars.14.json with its position and magnitude', () => {
    const dir = path.dirname(require.resolve('d3-celestial/package.json'));
    const src = JSON.parse(readFileSync(path.join(dir, 'data', 'stars.14.json'), 'utf8')).features as { id: number; properties: { mag: number }; geometry: { coordinates: [number, number] } }[];
    const cat = bundledCatalogue();
    expect(cat.count).toBe(src.length);
    expect(cat.count).toBe(118216); // the count the issue states for the package
    const byId = new Map<number, number>();
    for (let i = 0; i < cat.count; i++) byId.set(cat.id[i], i);
    let worst = 0;
    for (const f of src) {
      const i = byId.get(f.id)!;
      const [lon, lat] = f.geometry.coordinates;
      const v = radecToVec((lon < 0 ? lon + 360 : lon) * DEG, lat * DEG);
      worst = Math.max(worst, angleBetween(v, [cat.xyz[3 * i], cat.xyz[3 * i + 1], cat.xyz[3 * i + 2]]) / DEG * 3600);
      expect(Math.abs(cat.mag[i] - f.properties.mag)).toBeLessThan(6e-4);
    }
    expect(worst).toBeLessThan(0.001); // the binary keeps 0.0003" steps
    // Vega, HIP 91262, V 0.03 (Hipparcos)
    const vega = byId.get(91262)!;
    expect(catalogueId(cat, vega)).toBe('HIP 91262');
    expect(starName(cat, vega)).toBe('Vega');
  });

  it('cone queries return exactly the stars within the radius, brightest first', () => {
    const cat = bundledCatalogue();
    for (const [ra, dec, r] of [[0, 89.5, 5], [180, -88, 3], [359.8, 10, 4], [0.5, -30, 12], [100, 60, 35]]) {
      const v = radecToVec(ra * DEG, dec * DEG);
      const got = starsInCone(cat, v, r * DEG);
      const want: number[] = [];
      for (let i = 0; i < cat.count; i++) if (angleBetween(v, [cat.xyz[3 * i], cat.xyz[3 * i + 1], cat.xyz[3 * i + 2]]) <= r * DEG) want.push(i);
      expect(new Set(got)).toEqual(new Set(want));
      for (let k = 1; k < got.length; k++) expect(cat.mag[got[k]]).toBeGreaterThanOrEqual(cat.mag[got[k - 1]]);
    }
  });

  it('a damaged or foreign file is refused with a clear message', () => {
    const good = encodeCatalogue([{ raDeg: 10, decDeg: 20, mag: 5, id: 7 }], { name: 'T', source: 't', idPrefix: 'T', epoch: 2000, positionErrorArcsec: 1, band: 'V', cellDeg: 5 });
    expect(decodeCatalogue(good).count).toBe(1);
    for (const bytes of [good.subarray(0, 10), good.subarray(0, good.length - 3), new TextEncoder().encode('SIMPLE  =                    T')]) {
      expect(() => decodeCatalogue(bytes)).toThrow(SkyloupeError);
    }
  });
});

describe('lens projections and distortion (formulas)', () => {
  it('each projection and its inverse follow the defining formula', () => {
    const f: Record<string, (t: number) => number> = {
      rectilinear: Math.tan, 'fisheye-equidistant': (t) => t,
      'fisheye-equisolid': (t) => 2 * Math.sin(t / 2), 'fisheye-stereographic': (t) => 2 * Math.tan(t / 2),
    };
    for (const p of PROJECTIONS) {
      for (const t of [0.01, 0.3, 0.8, 1.2]) {
        expect(radiusOfAngle(p, t)).toBeCloseTo(f[p](t), 12);
        expect(angleOfRadius(p, radiusOfAngle(p, t))).toBeCloseTo(t, 12);
      }
    }
  });

  it('sky to pixel and back is the identity through distortion and parity', () => {
    const m: LensModel = { rot: rotationFromVector([0.3, -1.2, 0.7]), fPx: 3000, cx: 2010, cy: 1480, parity: -1, projection: 'fisheye-equisolid', k1: -0.04, k2: 0.02, rNorm: 2500 };
    for (const [x, y] of [[0, 0], [4000, 3000], [2010, 1480], [100, 2900]]) {
      const v = pixelToSky(m, x, y)!;
      const p = skyToPixel(m, v)!;
      expect(Math.hypot(p[0] - x, p[1] - y)).toBeLessThan(1e-6);
    }
  });

  it('distortion numbers: corner percent is k1 + k2 at q = 1 (to first order); a turning profile is a mustache', () => {
    const base = { covK: [1e-10, 0, 1e-10] as [number, number, number], rNorm: 2500, width: 4000, height: 3000, cx: 1999.5, cy: 1499.5 };
    const barrel = summarizeDistortion({ ...base, k1: -0.02, k2: 0, k2Fitted: false });
    expect(barrel.pattern).toBe('barrel');
    // r_d = R at the corner: r solves r (1 + k1 (r/R)^2) = R; (R - r) / r in percent
    const r = 2500 / (1 - 0.02 * 1.0206); // two fixed-point steps of the cubic, enough at 1e-4
    expect(barrel.cornerPercent).toBeCloseTo(100 * (2500 - r) / r, 1);
    expect(summarizeDistortion({ ...base, k1: 0.01, k2: 0, k2Fitted: false }).pattern).toBe('pincushion');
    const mustache = summarizeDistortion({ ...base, k1: -0.04, k2: 0.05, k2Fitted: true });
    expect(mustache.pattern).toBe('mustache');
    // dD/dq = 0 at q^2 = -k1 / (2 k2) = 0.4
    expect(mustache.turnFraction!).toBeCloseTo(Math.sqrt(0.4), 1);
    expect(summarizeDistortion({ ...base, k1: 1e-6, k2: 0, k2Fitted: false, covK: [1e-8, 0, 0] }).pattern).toBe('none');
  });
});
