// Camera raw decoding through LibRaw (libraw-wasm), checked on DNG files written here to Adobe's
// DNG Specification 1.4 and TIFF 6.0 (test/helpers/dng.ts): the decoded mosaic must equal the
// stored values minus BlackLevel, the CFA layout must be the CFAPattern written, WhiteLevel sets
// saturation, and the EXIF optics come through (pixel pitch = 1 cm / FocalPlaneXResolution).
// A simulated star field (known truth) stored as a Bayer mosaic must measure like the truth:
// no demosaicing smear.
import { afterAll, describe, expect, it } from 'vitest';
import { SkyloupeError } from '../../core/errors.ts';
import { decodeFrame } from '../../core/frame/read.ts';
import { closeRawDecoder } from '../../core/frame/raw.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { makeDng } from '../helpers/dng.ts';
import { mulberry32 } from '../helpers/rng.ts';

afterAll(() => closeRawDecoder());

function med(a: number[]): number {
  const s = [...a].sort((x, y) => x - y);
  return s.length % 2 ? s[s.length >> 1] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
}

describe('DNG through LibRaw', () => {
  for (const cfa of ['RGGB', 'BGGR', 'GRBG', 'GBRG'] as const) {
    it(`${cfa}: mosaic values, black/white levels, layout and optics`, async () => {
      const w = 96, h = 70, black = 600, white = 15000;
      const rnd = mulberry32(cfa.charCodeAt(0) * 31 + cfa.charCodeAt(1));
      const data = new Uint16Array(w * h);
      for (let i = 0; i < data.length; i++) data[i] = black + Math.floor(rnd() * (white - black));
      data[5] = white; // a clipped pixel
      const dng = makeDng({ width: w, height: h, data, cfa, black, white, make: 'Acme', model: 'Nightcam 9', focalLengthMm: 135, fNumber: 2.8, exposureS: 30, iso: 800, focalPlanePxPerCm: 2000 });
      const f = await decodeFrame(dng, `x-${cfa}.dng`);
      expect(f.format).toBe('raw');
      expect([f.width, f.height]).toEqual([w, h]);
      expect(f.cfa).toBe(cfa);
      let bad = 0;
      for (let i = 0; i < data.length; i++) if (f.data[i] !== data[i] - black) bad++;
      expect(bad).toBe(0);
      expect(f.saturationLevel).toBe(white - black);
      expect(f.data[5]).toBe(f.saturationLevel);
      expect(f.hints).toMatchObject({ from: 'exif', focalLengthMm: 135, fNumber: 2.8, camera: 'Acme Nightcam 9' });
      expect(f.hints!.pixelSizeUm!).toBeCloseTo(10000 / 2000, 6); // 1 cm / (2000 px/cm) = 5 µm
      expect(f.meta.iso).toBe(800);
      expect(f.meta.exposureTimeS).toBe(30);
    });
  }

  it('a DNG is recognised by its DNGVersion tag whatever its name', async () => {
    const data = new Uint16Array(64 * 48).fill(1000);
    const f = await decodeFrame(makeDng({ width: 64, height: 48, data, cfa: 'RGGB' }), 'renamed.tif');
    expect(f.format).toBe('raw');
  });

  it('X-Trans (6x6) mosaic: summed in 3x3 blocks of 5 green, 2 red, 2 blue, no interpolation', async () => {
    // Fujifilm X-Trans layout, rows of six (from memory of published diagrams).
    const xt = 'GGRGGB' + 'GGBGGR' + 'BRGRBG' + 'GGBGGR' + 'GGRGGB' + 'RBGBRG';
    for (let by = 0; by < 6; by += 3) for (let bx = 0; bx < 6; bx += 3) {
      let g = 0, r = 0;
      for (let y = by; y < by + 3; y++) for (let x = bx; x < bx + 3; x++) { if (xt[6 * y + x] === 'G') g++; if (xt[6 * y + x] === 'R') r++; }
      expect([g, r]).toEqual([5, 2]);
    }
    const w = 96, h = 72, black = 1000;
    const rnd = mulberry32(9);
    const data = Uint16Array.from({ length: w * h }, () => black + Math.floor(rnd() * 5000));
    const f = await decodeFrame(makeDng({ width: w, height: h, data, cfa: xt, black, white: 16383 }), 'xtrans.dng');
    expect([f.width, f.height, f.cfa]).toEqual([32, 24, null]);
    expect(f.saturationLevel).toBe(9 * (16383 - black));
    let bad = 0;
    for (let y = 0; y < 24; y++) for (let x = 0; x < 32; x++) {
      let sum = 0;
      for (let dy = 0; dy < 3; dy++) for (let dx = 0; dx < 3; dx++) sum += data[(3 * y + dy) * w + 3 * x + dx] - black;
      if (f.data[y * 32 + x] !== sum) bad++;
    }
    expect(bad).toBe(0);
  });

  it('damaged raw files give a clear SkyloupeError', async () => {
    const data = new Uint16Array(64 * 64).fill(1000);
    const dng = makeDng({ width: 64, height: 64, data, cfa: 'RGGB' });
    for (const [bytes, name] of [
      [dng.subarray(0, 300), 'cut.dng'],
      [new Uint8Array(5000).fill(0x41), 'IMG_1.CR2'],
      [Uint8Array.from([0x49, 0x49, 0x2a, 0, 8, 0, 0, 0, 0, 0]), 'empty.NEF'],
    ] as [Uint8Array, string][]) {
      const err = await decodeFrame(bytes, name).catch((e: unknown) => e);
      expect(err).toBeInstanceOf(SkyloupeError);
      expect((err as Error).message.startsWith(`${name}: `)).toBe(true);
      expect((err as Error).message).not.toContain('\n');
    }
  });
});

describe('a simulated star field stored as a Bayer mosaic', () => {
  it('measures like the truth (2x2 superpixels, no interpolation)', async () => {
    const res = renderScene(parseScene({
      width: 800, height: 600, seed: 4242,
      stars: { count: 150, fluxMinE: 40000, fluxMaxE: 400000, minSeparationPx: 20, marginPx: 16 },
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 5.5, fwhmMinorPx: 4.4, thetaDeg: 30 },
      sky: { level: 300 }, noise: { gain: 1, readNoiseE: 3, biasAdu: 0 }, saturationAdu: 60000,
    }));
    // White stars seen through R/G/B filters of different transmission (common practice: R and B lower than G).
    const gain = { R: 0.55, G: 1, B: 0.75 } as const;
    const cfa = 'GRBG';
    const black = 256;
    const data = new Uint16Array(res.width * res.height);
    for (let y = 0; y < res.height; y++) {
      for (let x = 0; x < res.width; x++) {
        const c = cfa[(y & 1) * 2 + (x & 1)] as keyof typeof gain;
        data[y * res.width + x] = Math.min(65535, black + Math.round(res.data[y * res.width + x] * gain[c]));
      }
    }
    const frame = await decodeFrame(makeDng({ width: res.width, height: res.height, data, cfa, black, white: 65535 }), 'sim.dng');
    expect(frame.cfa).toBe(cfa);
    const a = await analyzeFrame(frame, { workers: 0 });
    const good = a.stars.filter((s) => s.flags.length === 0 && s.snr > 50);
    expect(good.length).toBeGreaterThan(100);
    // Truth (simulator): FWHM through the 1-px box; the 2x2 superpixel box adds (4-1)/12 px^2 per axis
    // to the Gaussian variance (boxes convolve: variances add), about 2 % here.
    const t = res.truth.stars;
    const sig2 = (f: number) => (f / 2.3548) ** 2;
    const expectMajor = 2.3548 * Math.sqrt(sig2(med(t.map((s) => s.recordedFwhmMajorPx!))) + 3 / 12);
    const expectMinor = 2.3548 * Math.sqrt(sig2(med(t.map((s) => s.recordedFwhmMinorPx!))) + 3 / 12);
    const major = med(good.map((s) => s.fwhmMajorPx));
    const minor = med(good.map((s) => s.fwhmMinorPx));
    console.log(`mosaic sim: ${good.length} good stars, FWHM major ${major.toFixed(3)} vs ${expectMajor.toFixed(3)}, minor ${minor.toFixed(3)} vs ${expectMinor.toFixed(3)}`);
    expect(Math.abs(major / expectMajor - 1)).toBeLessThan(0.05);
    expect(Math.abs(minor / expectMinor - 1)).toBeLessThan(0.05);
    // Orientation: the truth's 30 degrees (angles from +x toward +y, DESIGN.md).
    expect(Math.abs(med(good.map((s) => s.thetaDeg)) - 30)).toBeLessThan(3);
    // Positions in full-resolution pixels: every good star within 0.3 px of a true star.
    let far = 0;
    for (const s of good) {
      let best = Infinity;
      for (const q of t) best = Math.min(best, Math.hypot(q.x - s.x, q.y - s.y));
      if (best > 0.3) far++;
    }
    expect(far).toBeLessThanOrEqual(good.length * 0.02);
  }, 30_000);
});
