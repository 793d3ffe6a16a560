/**
 * A frame with more detections than opts.maxStars: only the most significant are measured,
 * and the report and the CLI summary say so and how they were chosen. Checked against the
 * simulator's truth: the measured stars are the brightest truth stars (for one PSF and a flat
 * sky the matched-filter significance grows with flux, so the top of the flux list is the
 * top of the significance list, give or take noise at the cut).
 */
import { describe, expect, it } from 'vitest';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene } from '../../core/simulate/scene.ts';
import { fitsBytes } from '../../core/simulate/write.ts';
import { decodeFits } from '../../core/frame/fits.ts';
import { analyzeFrame } from '../../core/analyze.ts';
import { reportFromAnalysis } from '../../core/report/from-analysis.ts';
import { formatSummary } from '../../core/cli/summary.ts';

describe('measuring a subset', () => {
  it('maxStars 80 of about 300: the 80 brightest, and the report and summary say so', async () => {
    const sim = renderScene(parseScene({
      width: 800, height: 600, seed: 77,
      stars: { count: 300, fluxMinE: 3000, fluxMaxE: 300000, minSeparationPx: 14 },
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 3, fwhmMinorPx: 3 },
      sky: { level: 600 },
      noise: { gain: 1, readNoiseE: 3, biasAdu: 500 },
    }));
    const a = await analyzeFrame(decodeFits(fitsBytes(sim)), { workers: 0, maxStars: 80 });
    expect(a.stars).toHaveLength(80);
    expect(a.detection.measured).toBe(80);
    expect(a.detection.subset).not.toBeNull();
    expect(a.detection.subset!.of).toBe(a.detection.candidates);
    expect(a.detection.subset!.of).toBeGreaterThan(250); // about 300 rendered
    expect(a.detection.subset!.rule).toMatch(/80 most significant/);
    // the 80 brightest truth stars away from the border: nearly all measured
    const top = [...sim.truth.stars].filter((t) => t.x > 15 && t.y > 15 && t.x < 785 && t.y < 585)
      .sort((p, q) => q.fluxE - p.fluxE).slice(0, 70);
    const hit = top.filter((t) => a.stars.some((s) => Math.hypot(s.x - t.x, s.y - t.y) < 2.5)).length;
    console.log(`subset: ${a.detection.candidates} detections, measured ${a.stars.length}; ${hit} of the 70 brightest truth stars among them`);
    expect(hit).toBeGreaterThanOrEqual(66);
    const r = reportFromAnalysis(a, 'subset.fits');
    expect(r.detection.subset).toEqual(a.detection.subset);
    expect(r.stars).toHaveLength(80);
    expect(formatSummary(r)).toContain(`note: measured a subset, the 80 most significant detections of ${a.detection.candidates}`);
  });

  it('no subset note when every detection is measured', async () => {
    const sim = renderScene(parseScene({
      width: 400, height: 300, seed: 78,
      stars: { count: 40, fluxMinE: 5000, fluxMaxE: 200000 },
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 3, fwhmMinorPx: 3 },
      sky: { level: 600 },
    }));
    const a = await analyzeFrame(decodeFits(fitsBytes(sim)), { workers: 0 });
    expect(a.detection.subset).toBeNull();
    expect(formatSummary(reportFromAnalysis(a, 'all.fits'))).not.toContain('subset');
  });
});
