import { describe, expect, it } from 'vitest';
import { convolveBand, convolveSeparable, filteredNoiseFactor, gaussianTaps } from '../../core/image/convolve.ts';
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

  it('matches the direct, border-renormalised 2-D sum at every pixel, for any tap count and band split', () => {
    // reference: the definition, sum_ij t_i t_j src / (sum of in-frame t_i)(sum of in-frame t_j)
    const r = mulberry32(11);
    for (const [w, h, sigma] of [[23, 17, 0.6], [23, 17, 1.3], [9, 31, 2.2], [7, 5, 4]] as const) {
      const src = Float32Array.from({ length: w * h }, () => r() * 100);
      const taps = gaussianTaps(sigma, 2.5);
      const R = (taps.length - 1) / 2;
      const out = convolveSeparable(src, w, h, taps);
      const banded = new Float32Array(w * h);
      convolveBand(src, w, h, taps, 0, 3, banded);
      convolveBand(src, w, h, taps, 3, h, banded);
      let worst = 0;
      for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) {
        let s = 0, wi = 0, wj = 0;
        for (let i = -R; i <= R; i++) if (x + i >= 0 && x + i < w) wi += taps[i + R];
        for (let j = -R; j <= R; j++) if (y + j >= 0 && y + j < h) wj += taps[j + R];
        for (let j = -R; j <= R; j++) for (let i = -R; i <= R; i++) {
          if (x + i < 0 || x + i >= w || y + j < 0 || y + j >= h) continue;
          s += taps[i + R] * taps[j + R] * src[(y + j) * w + x + i];
        }
        worst = Math.max(worst, Math.abs(out[y * w + x] - s / (wi * wj)));
        expect(banded[y * w + x]).toBe(out[y * w + x]);
      }
      expect(worst).toBeLessThan(1e-3); // float32 storage of the intermediate row
    }
  });
});
