import { describe, expect, it } from 'vitest';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { medianOf } from '../../core/image/stats.ts';

/**
 * The whole engine (FITS bytes -> sky -> detection -> fits in worker threads) against the
 * simulator's truth, for a field of elliptical Gaussian or Moffat stars whose fluxes give
 * SNRs from about 50 upward (a power law, as in a real field). Truth for sizes is the
 * profile convolved with the pixel box ("as recorded", what skyloupe reports), computed
 * by the simulator by quadrature; ellipticity truth is 1 - minor/major of those widths.
 * Targets from the engine issue: median |FWHM error| <= 1 %, |ellipticity error| <= 0.01,
 * angle error <= 2 deg for ellipticity >= 0.1, centroid error <= 0.05 px.
 */
function angleDiff(a: number, b: number): number {
  let d = Math.abs(a - b) % 180;
  if (d > 90) d = 180 - d;
  return d;
}

describe('engine accuracy on simulated fields (SNR >= 50)', () => {
  for (const model of ['gaussian', 'moffat'] as const) {
    it(`${model} stars`, async () => {
      const scene = parseScene({
        width: 1800, height: 1200, seed: model === 'gaussian' ? 41 : 42,
        stars: { count: 450, fluxMinE: 8000, fluxMaxE: 600000, slope: 1.6, minSeparationPx: 30, marginPx: 20 },
        psf: { kind: 'analytic', model, beta: 3.5, fwhmMajorPx: 3, fwhmMinorPx: 3, vary: { fwhmMajorPx: [2.6, 5], axisRatio: [0.6, 1], thetaDeg: [-90, 90], beta: [2.5, 5] } },
        sky: { level: 300, gradientX: 80 },
        noise: { gain: 1, readNoiseE: 3, biasAdu: 500 },
      });
      const sim = renderScene(scene);
      const frame = decodeFits(fitsBytes(sim));
      const a = await analyzeFrame(frame, { workers: 2 });
      const truth = sim.truth.stars;
      const fwhmErr: number[] = [];
      const eErr: number[] = [];
      const angErr: number[] = [];
      const posErr: number[] = [];
      for (const s of a.stars) {
        if (s.flags.length || !(s.snr >= 50)) continue;
        let best = Infinity;
        let t = truth[0];
        for (const c of truth) {
          const d = Math.hypot(c.x - s.x, c.y - s.y);
          if (d < best) { best = d; t = c; }
        }
        if (best > 1.5) continue;
        const maj = t.recordedFwhmMajorPx!;
        const min = t.recordedFwhmMinorPx!;
        fwhmErr.push(Math.abs(s.fwhmPx / Math.sqrt(maj * min) - 1));
        const eTrue = 1 - min / maj;
        eErr.push(Math.abs(s.ellipticity - eTrue));
        if (eTrue >= 0.1) angErr.push(angleDiff(s.thetaDeg, t.thetaDeg!));
        posErr.push(best);
      }
      console.log(`${model}: ${fwhmErr.length} stars, median |FWHM err| ${(100 * medianOf(fwhmErr)).toFixed(2)} %, |e err| ${medianOf(eErr).toFixed(4)}, angle ${medianOf(angErr).toFixed(2)} deg, centroid ${medianOf(posErr).toFixed(3)} px, median SNR ${medianOf(a.stars.filter((s) => s.snr >= 50).map((s) => s.snr)).toFixed(0)}`);
      expect(fwhmErr.length).toBeGreaterThan(200);
      expect(medianOf(fwhmErr)).toBeLessThanOrEqual(0.01);
      expect(medianOf(eErr)).toBeLessThanOrEqual(0.01);
      expect(medianOf(angErr)).toBeLessThanOrEqual(2);
      expect(medianOf(posErr)).toBeLessThanOrEqual(0.05);
    });
  }
});
