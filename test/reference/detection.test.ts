import { describe, expect, it } from 'vitest';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { estimateSky, subtractSky } from '../../core/image/background.ts';
import { detectStars } from '../../core/stars/detect.ts';

/**
 * Completeness and purity of detection against the simulator's truth, on frames with
 * a sky gradient and hot pixels. Truth SNR of a star: F / sqrt(F + NEA * b) with the
 * noise-equivalent area NEA = 4 pi sigma_x sigma_y of a Gaussian (King 1983, PASP 95,
 * 163; from memory) and b the sky plus read-noise variance per pixel in electrons.
 */
function scene(seed: number, model: 'gaussian' | 'moffat') {
  return parseScene({
    width: 1600, height: 1100, seed,
    stars: { count: 1100, fluxMinE: 500, fluxMaxE: 300000, minSeparationPx: 14 },
    psf: { kind: 'analytic', model, fwhmMajorPx: 3.0, fwhmMinorPx: 2.6, beta: 3.5, vary: { fwhmMajorPx: [2.4, 3.6], axisRatio: [0.75, 1], thetaDeg: [-90, 90] } },
    sky: { level: 300, gradientX: 200, gradientY: -100, quadraticAdu: 80 },
    noise: { gain: 1.5, readNoiseE: 4, biasAdu: 400 },
    hotPixels: { count: 150, minAdu: 800, maxAdu: 30000 },
  });
}

describe('detection against simulated truth (gradient + hot pixels)', () => {
  for (const [seed, model] of [[11, 'gaussian'], [12, 'moffat']] as const) {
    it(`finds >= 98 % of SNR >= 20 stars with <= 1 % spurious (${model}, seed ${seed})`, () => {
      const sim = renderScene(scene(seed, model));
      const { width, height, data } = sim;
      const sky = estimateSky(data, width, height);
      const { residual, missing } = subtractSky(data, sky);
      const det = detectStars(residual, data, missing, width, height, sky, { saturationLevel: 65535 });
      const gain = 1.5;
      const grid = new Map<number, number[]>();
      const key = (x: number, y: number) => Math.floor(y / 8) * 1000 + Math.floor(x / 8);
      det.candidates.forEach((c, i) => {
        const k = key(c.x, c.y);
        (grid.get(k) ?? grid.set(k, []).get(k)!).push(i);
      });
      const near = (x: number, y: number, r: number) => {
        const out: number[] = [];
        for (let dy = -1; dy <= 1; dy++) for (let dx = -1; dx <= 1; dx++) {
          for (const i of grid.get(key(x, y) + dy * 1000 + dx) ?? []) {
            const c = det.candidates[i];
            if (Math.hypot(c.x - x, c.y - y) <= r) out.push(i);
          }
        }
        return out;
      };
      let bright = 0;
      let found = 0;
      const matched = new Set<number>();
      for (const s of sim.truth.stars) {
        for (const i of near(s.x, s.y, 2.5)) matched.add(i);
        if (s.x < 12 || s.y < 12 || s.x > width - 13 || s.y > height - 13) continue;
        const sx = s.fwhmMajorPx! / 2.354820045;
        const sy = s.fwhmMinorPx! / 2.354820045;
        const skyE = (300 + 200 * ((s.x - width / 2) / width) - 100 * ((s.y - height / 2) / height)) * gain;
        const b = skyE + 16;
        const snr = s.fluxE / Math.sqrt(s.fluxE + 4 * Math.PI * sx * sy * b);
        if (snr < 20) continue;
        bright++;
        if (near(s.x, s.y, 2.5).length > 0) found++;
      }
      const hot = sim.truth.global.hotPixels as { x: number; y: number }[];
      const hotSet = new Set(hot.map((h) => h.y * width + h.x));
      let spurious = 0;
      let usedDetections = 0;
      let hotUnflagged = 0;
      det.candidates.forEach((c, i) => {
        if (c.flags.includes('hot-pixel')) return;
        usedDetections++;
        if (hotSet.has(c.y * width + c.x) && !matched.has(i)) hotUnflagged++;
        if (!matched.has(i)) spurious++;
      });
      expect(bright).toBeGreaterThan(300);
      expect(found / bright).toBeGreaterThanOrEqual(0.98);
      expect(spurious / usedDetections).toBeLessThanOrEqual(0.01);
      // hot pixels are not silently dropped: most carry the flag
      const hotFlagged = det.candidates.filter((c) => c.flags.includes('hot-pixel') && hotSet.has(c.y * width + c.x)).length;
      expect(hotFlagged).toBeGreaterThan(0.8 * hot.filter((h) => near(h.x, h.y, 0).length > 0).length);
      expect(hotUnflagged).toBeLessThanOrEqual(2);
    });
  }
});
