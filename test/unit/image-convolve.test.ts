import { describe, expect, it } from 'vitest';
import { convolveSeparable, filteredNoiseFactor, gaussianTaps } from '../../core/image/convolve.ts';
import { mulberry32, normal } from '../helpers/rng.ts';

describe('separable Gaussian filter', () => {
  it('equals a direct 2-D convolution with the outer-product kernel (interior pixels)', () => {
    const w = 40;
    const h = 30;
    const r = mulberry32(7);
    const src = Float32Array.from({ length: w * h }, () => r());
    const taps = gaussianTaps(1.3);
    const out = convolveSeparable(src, w, h, taps);
    const R = (taps.length - 1) / 2;
    for (const [x, y] of [[10, 10], [20, 15], [R, R], [w - 1 - R, h - 1 - R]]) {
      let s = 0;
      for (let j = -R; j <= R; j++) for (let i = -R; i <= R; i++) s += taps[i + R] * taps[j + R] * src[(y + j) * w + x + i];
      expect(out[y * w + x]).toBeCloseTo(s, 5);
    }
  });

  it('scales white noise by the kernel L2 norm', () => {
    // variance of a linear filter of white noise = sigma^2 * sum(k^2) (standard result)
    const w = 300;
    const h = 300;
    const g = normal(mulberry32(8));
    const src = Float32Array.from({ length: w * h }, () => g());
    const taps = gaussianTaps(1.5);
    const out = convolveSeparable(src, w, h, taps);
    let s2 = 0;
    let n = 0;
    for (let y = 20; y < h - 20; y++) for (let x = 20; x < w - 20; x++) { s2 += out[y * w + x] ** 2; n++; }
    expect(Math.sqrt(s2 / n) / filteredNoiseFactor(taps)).toBeGreaterThan(0.97);
    expect(Math.sqrt(s2 / n) / filteredNoiseFactor(taps)).toBeLessThan(1.03);
  });
});
