import { mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { SkyloupeError } from '../../core/errors.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { Rng } from '../../core/simulate/prng.ts';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene, type SceneStarField } from '../../core/simulate/scene.ts';
import { generateStars } from '../../core/simulate/stars.ts';
import { simulateToFiles, truthPathFor } from '../../core/simulate/write.ts';

function usageError(fn: () => unknown): SkyloupeError {
  try { fn(); } catch (e) { if (e instanceof SkyloupeError) return e; throw e; }
  throw new Error('no error thrown');
}

describe('parseScene', () => {
  it('fills every default and round-trips through JSON', () => {
    const s = parseScene({});
    expect(s).toMatchObject({
      schema: 'skyloupe.scene/1', width: 1024, height: 768, seed: 1, saturationAdu: 65535, quantize: true,
      optics: { pixelSizeUm: 3.76, focalLengthMm: 300, fNumber: 4, obstruction: 0 },
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 2.5, fwhmMinorPx: 2.5 },
      noise: { gain: 1, readNoiseE: 3, biasAdu: 500, shotNoise: true },
    });
    expect(parseScene(JSON.parse(JSON.stringify(s)))).toEqual(s);
    const o = parseScene({ psf: { kind: 'optics', aberrations: { comaCenterPx: { x: 1, y: 2 } } } });
    expect(parseScene(JSON.parse(JSON.stringify(o)))).toEqual(o);
    expect(o.psf).toMatchObject({ kind: 'optics', seeing: { model: 'gaussian', fwhmPx: 2.5, beta: 4.765 }, aberrations: { curvatureRadiusMm: null, opticalCenterPx: null } });
    expect(s.optics.binning).toBe(1);
    const sky = parseScene({ stars: { pointing: { raDeg: 83.8, decDeg: -5.4 } } });
    expect(sky.stars).toEqual({
      pointing: { raDeg: 83.8, decDeg: -5.4 }, northDeg: 0, parity: 'normal', projection: 'rectilinear',
      k1: 0, k2: 0, magLimit: 8, fluxMag0E: 1e7, maxStars: 0, marginPx: 6,
    });
    expect(parseScene(JSON.parse(JSON.stringify(sky)))).toEqual(sky);
  });

  it('rejects bad input with one-line usage errors naming the field', () => {
    const cases: [unknown, RegExp][] = [
      [null, /^scene: must be a JSON object$/],
      [{ width: -5 }, /^scene: width must be >= 1/],
      [{ width: 10.5 }, /^scene: width must be an integer/],
      [{ widht: 10 }, /^scene: widht is not a known field/],
      [{ width: 20000, height: 20000 }, /more than 100000000 pixels/],
      [{ psf: { kind: 'wavy' } }, /^scene: psf.kind must be one of 'analytic', 'optics'/],
      [{ psf: { seeing: {} } }, /^scene: psf.seeing is not a known field/],
      [{ psf: { kind: 'optics', seeing: { beta: 1 } } }, /^scene: psf.seeing.beta must be > 1/],
      [{ psf: { fwhmMajorPx: 2, fwhmMinorPx: 3 } }, /fwhmMinorPx > fwhmMajorPx/],
      [{ stars: { fluxMinE: 10, fluxMaxE: 5 } }, /fluxMaxE < fluxMinE/],
      [{ stars: [{ x: 1, y: 2 }] }, /^scene: stars\[0\] needs x, y and fluxE/],
      [{ sky: { level: 'high' } }, /^scene: sky.level must be a finite number/],
      [{ psf: { kind: 'optics', aberrations: { curvatureRadiusMm: 0 } } }, /curvatureRadiusMm must be at least 1 mm/],
      [{ saturationAdu: 70000 }, /saturationAdu must be <= 65535/],
      [{ schema: 'other/2' }, /^scene: schema must be/],
      [{ optics: { binning: 1.5 } }, /^scene: optics.binning must be an integer/],
      [{ stars: { pointing: { raDeg: 10 } } }, /^scene: stars.pointing needs raDeg and decDeg$/],
      [{ stars: { pointing: { raDeg: 10, decDeg: 95 } } }, /^scene: stars.pointing.decDeg must be <= 90/],
      [{ stars: { pointing: { raDeg: 10, decDeg: 5 }, projection: 'fisheye' } }, /^scene: stars.projection must be one of 'rectilinear'/],
      [{ stars: { pointing: { raDeg: 10, decDeg: 5 }, count: 5 } }, /^scene: stars.count is not a known field/],
    ];
    for (const [input, re] of cases) {
      const e = usageError(() => parseScene(input));
      expect(e.kind).toBe('usage');
      expect(e.message).toMatch(re);
      expect(e.message).not.toContain('\n');
    }
  });
});

describe('random star fields', () => {
  const field = (over: Partial<SceneStarField>): SceneStarField => ({
    count: 400, fluxMinE: 1e3, fluxMaxE: 1e6, slope: 1.75, minSeparationPx: 15, marginPx: 10, ...over,
  });

  it('keeps the minimum separation and the margins', () => {
    const stars = generateStars(field({}), 600, 400, new Rng(3));
    expect(stars).toHaveLength(400);
    let minD = Infinity;
    for (let i = 0; i < stars.length; i++) {
      const s = stars[i];
      expect(s.x).toBeGreaterThanOrEqual(10);
      expect(s.x).toBeLessThanOrEqual(589);
      for (let j = i + 1; j < stars.length; j++) minD = Math.min(minD, Math.hypot(s.x - stars[j].x, s.y - stars[j].y));
    }
    expect(minD).toBeGreaterThanOrEqual(15);
  });

  it('gives a usage error, not a hang, when the stars cannot fit', () => {
    const e = usageError(() => generateStars(field({ count: 5000, minSeparationPx: 20 }), 300, 200, new Rng(1)));
    expect(e.message).toMatch(/^scene: stars.count 5000 cannot be placed 20 px apart/);
  });

  for (const slope of [1, 1.75, 2.5]) {
    it(`fluxes follow dN/dF ∝ F^-${slope}: KS test against the integrated CDF`, () => {
      const stars = generateStars(field({ count: 3000, minSeparationPx: 0, slope }), 2000, 2000, new Rng(8));
      const lo = 1e3, hi = 1e6;
      // CDF of the truncated power law, by direct integration of F^-s.
      const cdf = (f: number) => slope === 1 ? Math.log(f / lo) / Math.log(hi / lo)
        : (Math.pow(f, 1 - slope) - Math.pow(lo, 1 - slope)) / (Math.pow(hi, 1 - slope) - Math.pow(lo, 1 - slope));
      const fl = stars.map((s) => s.fluxE).sort((a, b) => a - b);
      let d = 0;
      fl.forEach((f, i) => { d = Math.max(d, Math.abs(cdf(f) - i / fl.length), Math.abs(cdf(f) - (i + 1) / fl.length)); });
      expect(d).toBeLessThan(1.63 / Math.sqrt(fl.length)); // asymptotic Kolmogorov-Smirnov critical value at α = 0.01, 1.628/sqrt(n) [from memory]
      expect(fl[0]).toBeGreaterThanOrEqual(lo);
      expect(fl[fl.length - 1]).toBeLessThanOrEqual(hi);
    });
  }
});

describe('simulateToFiles', () => {
  const dirs: string[] = [];
  const tempDir = () => { const d = mkdtempSync(path.join(tmpdir(), 'skyloupe-sim-')); dirs.push(d); return d; };
  afterAll(() => { for (const d of dirs) rmSync(d, { recursive: true, force: true }); });

  it('writes a 16-bit BZERO=32768 FITS and the truth beside it, atomically', async () => {
    const dir = tempDir();
    const scenePath = path.join(dir, 'scene.json');
    const scene = { width: 120, height: 80, seed: 4, stars: { count: 12, minSeparationPx: 10 }, psf: { kind: 'optics' }, hotPixels: 2 };
    writeFileSync(scenePath, JSON.stringify(scene));
    const out = path.join(dir, 'frame.fits');
    const { truthPath } = await simulateToFiles(scenePath, out);
    expect(truthPath).toBe(path.join(dir, 'frame.truth.json'));
    expect(readdirSync(dir).sort()).toEqual(['frame.fits', 'frame.truth.json', 'scene.json']);
    const bytes = new Uint8Array(readFileSync(out));
    expect(bytes.length % 2880).toBe(0);
    const header = Buffer.from(bytes.subarray(0, 2880)).toString('latin1');
    // FITS Standard 4.0 §4.4.2.5: unsigned 16-bit data are stored as BITPIX 16 with BZERO = 32768.
    expect(header).toMatch(/BITPIX  =\s+16/);
    expect(header).toMatch(/BZERO   =\s+32768/);
    const frame = decodeFits(bytes);
    const direct = renderScene(parseScene(scene));
    expect([frame.width, frame.height]).toEqual([120, 80]);
    expect(Array.from(frame.data)).toEqual(Array.from(direct.data));
    expect(frame.meta.FOCALLEN).toBe(300);
    const truth = JSON.parse(readFileSync(truthPath, 'utf8'));
    expect(truth.schema).toBe('skyloupe.simtruth/1');
    expect(truth.stars).toHaveLength(12);
    expect(truth.stars[0].x).toBeCloseTo(direct.truth.stars[0].x, 6);
    expect(parseScene(truth.scene)).toEqual(truth.scene);
  });

  it('draws catalogue stars through the scene\'s lens, with their catalogue numbers in the truth', () => {
    // Orion's belt at 50 mm on a small frame (catalogue: the bundled Hipparcos)
    const scene = parseScene({
      width: 400, height: 300, seed: 9, optics: { pixelSizeUm: 20, focalLengthMm: 50, binning: 2 },
      stars: { pointing: { raDeg: 83.8, decDeg: -3.5 }, northDeg: -90, k1: -0.02, magLimit: 6, fluxMag0E: 1e6 },
      psf: { kind: 'analytic' },
    });
    const res = renderScene(scene);
    const truth = res.truth;
    expect(truth.stars.length).toBeGreaterThan(10);
    for (const t of truth.stars) {
      expect(t.catalogueId).toMatch(/^HIP \d+$/);
      expect(t.mag).toBeLessThanOrEqual(6);
    }
    // Alnilam (epsilon Ori, HIP 26311, V 1.69) is in the field (the belt's middle star; HIP number from memory)
    expect(truth.stars.map((t) => t.catalogueId)).toContain('HIP 26311');
    expect(truth.global.astrometry).toMatchObject({ pointing: { raDeg: 83.8, decDeg: -3.5 }, parity: 'normal', distortion: { k1: -0.02, k2: 0 } });
    expect(res.cards.find((c) => c.key === 'XBINNING')?.value).toBe(2);
  });

  it('reports unreadable and invalid scene files as one-line errors', async () => {
    const dir = tempDir();
    await expect(simulateToFiles(path.join(dir, 'none.json'), path.join(dir, 'x.fits'))).rejects.toThrow(/^cannot read scene/);
    writeFileSync(path.join(dir, 'bad.json'), '{ width: ');
    await expect(simulateToFiles(path.join(dir, 'bad.json'), path.join(dir, 'x.fits'))).rejects.toThrow(/^scene: .* is not valid JSON/);
    expect(readdirSync(dir).sort()).toEqual(['bad.json']);
  });

  it('derives the truth path from the FITS name', () => {
    expect(truthPathFor('/a/b/demo-frame.fits')).toBe('/a/b/demo-frame.truth.json');
    expect(truthPathFor('x.FIT')).toBe('x.truth.json');
    expect(truthPathFor('x.dat')).toBe('x.dat.truth.json');
  });
});
