/**
 * Spacing sweep on rendered frames: four frames at known spacer distances around a best spacing
 * the scene hides (simulator spacingErrorMm = spacing - best). Requirement: best spacing within
 * 0.25 mm of the truth over four frames (optics.md 5 procedure: zero of the signed
 * radial-minus-tangential moment, or the corner-size minimum).
 */
import { describe, expect, it } from 'vitest';
import { runSweep } from '../../core/series/sweep.ts';
import { renderAndAnalyze, scene } from './recovery-render.ts';

describe('sweep', () => {
  it('finds the best spacing within 0.25 mm from four frames', async () => {
    const best = 55.3;
    const at = [52, 54, 56, 58];
    const items = [];
    for (const [k, s] of at.entries()) {
      const { analysis } = await renderAndAnalyze(scene({ seed: 50 + k, pixelSizeUm: 5.94, seeingPx: 2.3 + 0.1 * k, aberrations: { spacingErrorMm: s - best } }));
      items.push({ spacingMm: s, analysis, label: `${s} mm` });
    }
    const r = runSweep(items);
    console.log(`sweep: best ${r.bestSpacingMm?.toFixed(3)} +- ${r.uncertaintyMm?.toFixed(3)} mm (truth ${best}), evidence ${r.evidence}; D per frame ${r.points.map((p) => p.radMinusTanPx2!.toFixed(4)).join(', ')}`);
    expect(r.bestSpacingMm).not.toBeNull();
    expect(Math.abs(r.bestSpacingMm! - best)).toBeLessThan(0.25);
    expect(r.uncertaintyMm!).toBeLessThan(0.5);
    expect(r.evidence).not.toBe('none');
    // The simulator's model turns corners radial for positive errors (scene.ts): measured, not assumed.
    expect(r.trend === null || r.trend === 'radial-with-more-spacing').toBe(true);
  });
});
