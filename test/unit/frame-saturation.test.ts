// The saturation level from every source, in order (issue 14 item 1): SATURATE / DATAMAX
// keywords, a DQ extension, the raw white level, the integer ceiling, a clip found in the data.
// Frames are hand-built FITS (FITS Standard 4.0: BITPIX 16 with BZERO 32768 for unsigned data,
// §4.4.2.5) holding rendered Gaussian stars (FWHM = 2 sqrt(2 ln 2) sigma, optics.md 1.1) with a
// steep count of faint stars and a few bright ones, clipped the way cameras clip (common
// practice: an analogue-to-digital converter or an 8-bit export stops at one value).
import { describe, expect, it } from 'vitest';
import { decodeFits } from '../../core/frame/fits.ts';
import { encodeFits } from '../../core/frame/fits-write.ts';
import { findPlateau, frameSaturation } from '../../core/frame/saturation.ts';
import { flatTop } from '../../core/stars/clipped.ts';
import type { FitsCard } from '../../core/frame/fits-card.ts';
import type { Frame } from '../../core/frame/types.ts';
import { mulberry32 } from '../helpers/rng.ts';

const W = 400, H = 300;

/** Sky 1000 +- 10 (Gaussian noise), 150 stars of sigma `s` with peaks from a power law and 6 bright ones near `maxPeak`, then clip and quantise. */
function field(seed: number, o: { s?: number; maxPeak: number; clip: number; step?: number }): Float32Array {
  const u = mulberry32(seed);
  const s = o.s ?? 1.2;
  const img = new Float64Array(W * H);
  for (let k = 0; k < 156; k++) {
    const x0 = 10 + u() * (W - 20), y0 = 10 + u() * (H - 20);
    // dN/dpeak ~ peak^-2 from 200 up (many faint stars), and 6 bright ones up to maxPeak
    const peak = k < 150 ? 1 / (1 / 200 - u() * (1 / 200 - 1 / o.maxPeak)) : o.maxPeak * (0.3 + 0.7 * u());
    const r = Math.ceil(6 * s);
    for (let y = Math.max(0, Math.floor(y0) - r); y <= Math.min(H - 1, Math.floor(y0) + r); y++) {
      for (let x = Math.max(0, Math.floor(x0) - r); x <= Math.min(W - 1, Math.floor(x0) + r); x++) {
        img[y * W + x] += peak * Math.exp(-((x - x0) ** 2 + (y - y0) ** 2) / (2 * s * s));
      }
    }
  }
  const out = new Float32Array(W * H);
  const step = o.step ?? 1;
  for (let i = 0; i < out.length; i++) {
    const g = Math.sqrt(-2 * Math.log(Math.max(u(), 1e-300))) * Math.cos(2 * Math.PI * u());
    const v = Math.round((1000 + img[i] + 10 * g) / step) * step;
    out[i] = Math.min(o.clip, Math.max(0, v));
  }
  return out;
}

function fits16(data: Float32Array, cards: FitsCard[] = []): Frame {
  return decodeFits(encodeFits({ width: W, height: H, data, bitpix: 16, bzero: 32768, bscale: 1, cards }));
}

describe('saturation level: the order of the sources', () => {
  it('SATURATE wins over DATAMAX and over a clip in the data; the report names it', () => {
    const d = field(1, { maxPeak: 2e5, clip: 62500 });
    expect(frameSaturation(fits16(d, [{ key: 'SATURATE', value: 60000 }, { key: 'DATAMAX', value: 65000 }]))).toMatchObject({ level: 60000, source: 'SATURATE' });
    expect(frameSaturation(fits16(d, [{ key: 'DATAMAX', value: 65000 }]))).toMatchObject({ level: 65000, source: 'DATAMAX' });
  });

  it('the integer ceiling serves when the data reach it', () => {
    const s = frameSaturation(fits16(field(2, { maxPeak: 2e5, clip: 65535 })));
    expect(s).toMatchObject({ level: 65535, source: 'integer-ceiling' });
  });

  it.each([
    { name: 'full well / gain + offset', clip: 62500, step: 1 },
    { name: '12-bit data scaled by 16', clip: 4095 * 16, step: 16 },
    { name: '14-bit data in a 16-bit file', clip: 16383, step: 1 },
  ])('a clip below the ceiling is found in the data ($name: $clip)', ({ clip, step }) => {
    const s = frameSaturation(fits16(field(3, { maxPeak: 10 * clip, clip, step })));
    expect(s.source).toBe('plateau');
    // the band under the top value is taken whole (0.5 % of the range above the sky, at least one step)
    expect(s.level!).toBeLessThanOrEqual(clip);
    expect(s.level!).toBeGreaterThanOrEqual(clip - Math.max(step, 0.005 * (clip - 1000)));
  });

  it('an unclipped field has no plateau: the ceiling stays, nominal', () => {
    const s = frameSaturation(fits16(field(4, { maxPeak: 30000, clip: 65535 })));
    expect(s).toMatchObject({ level: 65535, source: 'integer-ceiling' });
    expect(findPlateau(field(4, { maxPeak: 30000, clip: 65535 }), 65535).plateau).toBeNull();
  });

  it('an 8-bit export clipped at 251 with noise on the clip (values 250 and 251): the plateau takes both', () => {
    const d = field(5, { maxPeak: 2000, clip: 1e9 });
    // a stretch to 8 bits that tops out at 251, as the star-tracker frame in shared/data/real does
    const u = mulberry32(9);
    for (let i = 0; i < d.length; i++) { const v = Math.round((d[i] - 980) / 4); d[i] = Math.max(0, v >= 251 ? 251 - (u() < 0.5 ? 1 : 0) : v); }
    const f = decodeFits(encodeFits({ width: W, height: H, data: d, bitpix: 8, cards: [] }));
    const s = frameSaturation(f);
    expect(s.source).toBe('plateau');
    expect(s.level).toBe(250);
  });

  it('float data without a keyword: no level, source none (flat-topped cores decide later)', () => {
    const d = field(6, { maxPeak: 30000, clip: 1e9 });
    for (let i = 0; i < d.length; i++) d[i] += 0.37;
    const f = decodeFits(encodeFits({ width: W, height: H, data: d, bitpix: -32, cards: [] }));
    expect(frameSaturation(f)).toMatchObject({ level: null, source: 'none' });
  });

  it('the raw white level is taken as given', () => {
    const f: Frame = { ...fits16(field(7, { maxPeak: 3e4, clip: 65535 })), saturationLevel: 15000, saturationSource: 'white-level' };
    expect(frameSaturation(f)).toMatchObject({ level: 15000, source: 'white-level' });
  });
});

describe('flat-topped cores (clipped.ts)', () => {
  /** One star of sigma s (px) at (x0, y0) on a 61 x 61 stamp, optional trail along x, clipped at `clip`. */
  function star(s: number, x0: number, y0: number, peak: number, clip = Infinity, trail = 0): Float32Array {
    const n = 61;
    const img = new Float32Array(n * n);
    const steps = Math.max(1, Math.ceil(trail * 4));
    for (let y = 0; y < n; y++) for (let x = 0; x < n; x++) {
      let v = 0;
      for (let k = 0; k < steps; k++) {
        const cx = x0 + (trail ? -trail / 2 + (trail * (k + 0.5)) / steps : 0);
        v += Math.exp(-((x - cx) ** 2 + (y - y0) ** 2) / (2 * s * s)) / steps;
      }
      img[y * n + x] = Math.min(clip, peak * v);
    }
    return img;
  }
  const brightest = (img: Float32Array) => { let k = 0; for (let i = 1; i < img.length; i++) if (img[i] > img[k]) k = i; return [k % 61, Math.floor(k / 61)]; };

  it.each([0.6, 0.9, 1.5, 3, 6])('an unclipped star of sigma %s px at any sub-pixel phase is not flat', (s) => {
    for (const [dx, dy] of [[0, 0], [0.5, 0], [0.5, 0.5], [0.25, 0.7]]) {
      const img = star(s, 30 + dx, 30 + dy, 1e4);
      const [x, y] = brightest(img);
      expect(flatTop(img, 61, 61, x, y, 10)).toBeNaN();
    }
  });

  it('a trailed unclipped star (trail 20 px, sigma 2) is not flat', () => {
    const img = star(2, 30, 30, 1e4, Infinity, 20);
    const [x, y] = brightest(img);
    expect(flatTop(img, 61, 61, x, y, 10)).toBeNaN();
  });

  it.each([0.8, 1.5, 3])('a star of sigma %s px clipped at a tenth of its peak is flat, with its plateau as the top', (s) => {
    const img = star(s, 30.3, 29.8, 1e5, 1e4);
    const [x, y] = brightest(img);
    expect(flatTop(img, 61, 61, x, y, 10)).toBe(1e4);
  });

  it('a cosmic-ray track (a 1-px line of equal values, straight or diagonal) is no plateau', () => {
    for (const diagonal of [false, true]) {
      const img = new Float32Array(61 * 61);
      for (let k = 0; k < 8; k++) {
        img[(30 + (diagonal ? k >> 1 : 0)) * 61 + 26 + k] = 1600 + 40 * (k % 2);
      }
      expect(flatTop(img, 61, 61, 26, 30, 30)).toBeNaN();
    }
  });

  it('a faint core (below 50 sky sigmas) is never called flat', () => {
    const img = star(1.5, 30, 30, 3e3, 400);
    const [x, y] = brightest(img);
    expect(flatTop(img, 61, 61, x, y, 10)).toBeNaN();
  });
});
