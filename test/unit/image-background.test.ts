import { describe, expect, it } from 'vitest';
import { estimateSky, skyLevelAt, skyNoiseAt, subtractSky } from '../../core/image/background.ts';
import { clippedStats, median, selectKth } from '../../core/image/stats.ts';
import { mulberry32, normal } from '../helpers/rng.ts';

describe('robust statistics', () => {
  it('quickselect and median agree with a full sort', () => {
    const r = mulberry32(1);
    for (const n of [1, 2, 7, 100, 1001]) {
      const a = Float32Array.from({ length: n }, () => r());
      const sorted = Float32Array.from(a).sort();
      const want = n % 2 ? sorted[(n - 1) / 2] : 0.5 * (sorted[n / 2 - 1] + sorted[n / 2]);
      expect(median(Float32Array.from(a), n)).toBeCloseTo(want, 6);
      expect(selectKth(Float32Array.from(a), n, 0)).toBe(sorted[0]);
    }
  });

  it('clipping removes bright outliers (stars) from a Gaussian sky', () => {
    // Bertin & Arnouts 1996: the clipped mode of a sky with sources sits near the true sky level
    const r = mulberry32(2);
    const g = normal(r);
    const n = 4000;
    const buf = new Float32Array(n);
    for (let i = 0; i < n; i++) buf[i] = 1000 + 10 * g() + (i % 50 === 0 ? 500 + 2000 * r() : 0);
    const st = clippedStats(buf, n);
    expect(Math.abs(st.level - 1000)).toBeLessThan(1.5);
    expect(st.sigma).toBeGreaterThan(9.3);
    expect(st.sigma).toBeLessThan(10.5);
  });
});

describe('mesh sky model', () => {
  it('follows a linear gradient and gives the local noise', () => {
    // truth by construction: sky = 500 + 0.05 x + 0.03 y ADU (a strong light-pollution gradient, yet small within one box), noise sigma 8 (left) to 16 (right)
    const w = 640;
    const h = 480;
    const g = normal(mulberry32(3));
    const data = new Float32Array(w * h);
    for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) {
      const s = 8 + (8 * x) / (w - 1);
      data[y * w + x] = 500 + 0.05 * x + 0.03 * y + s * g();
    }
    const sky = estimateSky(data, w, h, { box: 64 });
    for (const [x, y] of [[100, 100], [320, 240], [540, 400]]) {
      expect(Math.abs(skyLevelAt(sky, x, y) - (500 + 0.05 * x + 0.03 * y))).toBeLessThan(1.5);
      const s = 8 + (8 * x) / (w - 1);
      expect(Math.abs(skyNoiseAt(sky, x, y) - s) / s).toBeLessThan(0.06);
    }
    const { residual, missing } = subtractSky(data, sky);
    expect(missing).toBeNull();
    let mean = 0;
    for (let i = 0; i < residual.length; i++) mean += residual[i];
    expect(Math.abs(mean / residual.length)).toBeLessThan(0.5);
    expect(data[0]).not.toBe(residual[0]); // the input array is left as it was
  });

  it('extrapolates a gradient to the corners (no levelling off at the border)', () => {
    // truth by construction: a plane 200 + 0.3 x - 0.2 y with small noise
    const w = 500;
    const h = 330;
    const g = normal(mulberry32(5));
    const data = new Float32Array(w * h);
    for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) data[y * w + x] = 200 + 0.3 * x - 0.2 * y + 2 * g();
    const sky = estimateSky(data, w, h, { box: 50 });
    for (const [x, y] of [[0, 0], [w - 1, 0], [0, h - 1], [w - 1, h - 1], [250, 0], [0, 160]]) {
      expect(Math.abs(skyLevelAt(sky, x, y) - (200 + 0.3 * x - 0.2 * y))).toBeLessThan(1);
    }
  });

  it('keeps NaN pixels out of the statistics and marks them', () => {
    const w = 256;
    const h = 256;
    const g = normal(mulberry32(4));
    const data = new Float32Array(w * h);
    for (let i = 0; i < data.length; i++) data[i] = 100 + 5 * g();
    for (let y = 0; y < 64; y++) for (let x = 0; x < 64; x++) data[y * w + x] = NaN;
    const sky = estimateSky(data, w, h, { box: 32 });
    expect(Math.abs(skyLevelAt(sky, 10, 10) - 100)).toBeLessThan(1.5);
    const { missing } = subtractSky(data, sky);
    expect(missing![0]).toBe(1);
    expect(missing![w * 100 + 100]).toBe(0);
  });
});
