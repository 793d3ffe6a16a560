/**
 * compare and stop-down on rendered frames through the real pipeline.
 * compare: lens A sharp in the centre with strong field curvature, lens B defocused but flat;
 * the verdicts must give the centre to A and the corners to B.
 * stop-down: the corner FWHM predicted at the next full stop within 15 % of a frame rendered
 * there. Focus errors (um at the sensor) stay and their blur scales as 1/N; coma scales as 1/N^2
 * (optics.md 3 table); the simulator has no diffraction, so the prediction leaves it out
 * (wavelength -> 0).
 */
import { describe, expect, it } from 'vitest';
import { runCompare } from '../../core/series/compare.ts';
import { diagnose } from '../../core/diagnose/index.ts';
import { ctxOf, renderAndAnalyze, scene } from './recovery-render.ts';

describe('compare', () => {
  it('gives the centre to the curved-field lens and the corners to the flat one', async () => {
    const A = await renderAndAnalyze(scene({ seed: 61, aberrations: { curvatureRadiusMm: 40 } }));
    const B = await renderAndAnalyze(scene({ seed: 61, aberrations: { defocusCenterUm: 12 } }));
    const r = runCompare(A.analysis, B.analysis, { A: 'curved', B: 'flat' });
    console.log(`compare: centre ${r.zones.center.better} (${r.zones.center.a.fwhm?.toFixed(3)} vs ${r.zones.center.b.fwhm?.toFixed(3)} ${r.unit}), edges ${r.zones.edges.better}, corners ${r.zones.corners.better} (${r.zones.corners.a.fwhm?.toFixed(3)} vs ${r.zones.corners.b.fwhm?.toFixed(3)})`);
    expect(r.zones.center.better).toBe('A');
    expect(r.zones.corners.better).toBe('B');
    expect(r.unit).toBe('arcsec');
  });
});

describe('stop-down', () => {
  it('predicts the f/5.6 corner FWHM from the f/4 frame within 15 %', async () => {
    const ab = { curvatureRadiusMm: 100, astigmatismUmPerMm2: 3, tiltXUmAcross: 10 };
    const coma4 = 2;
    const f4 = await renderAndAnalyze(scene({ seed: 71, fNumber: 4, aberrations: { ...ab, comaUmPerMm: coma4 } }));
    const d4 = diagnose(f4.analysis.stars, ctxOf(f4.analysis, { wavelengthNm: 1e-6 })).diagnosis;
    const pred = d4.stopDown.predictions.find((p) => p.fNumber === 5.6)!;
    const f56 = await renderAndAnalyze(scene({ seed: 72, fNumber: 5.6, aberrations: { ...ab, comaUmPerMm: coma4 * (4 / 5.6) ** 2 } }));
    const d56 = diagnose(f56.analysis.stars, ctxOf(f56.analysis, { wavelengthNm: 1e-6 }));
    const corners = d56.field.zones.cells.filter((z) => z.zone === 'corners').map((z) => z.fwhmPx!);
    const measured = corners.reduce((s, v) => s + v, 0) / corners.length;
    const now = d4.stopDown.terms;
    const corners4 = diagnose(f4.analysis.stars, ctxOf(f4.analysis)).field.zones.cells.filter((z) => z.zone === 'corners').map((z) => z.fwhmPx!);
    console.log(`stop-down: f/4 corners ${(corners4.reduce((s, v) => s + v, 0) / 4).toFixed(3)} px; predicted f/5.6 corners ${pred.cornerFwhmPx.toFixed(3)} px, measured ${measured.toFixed(3)} px (ratio ${(pred.cornerFwhmPx / measured).toFixed(3)}); terms ${JSON.stringify(now)}`);
    expect(Math.abs(pred.cornerFwhmPx / measured - 1)).toBeLessThan(0.15);
    const centre = d56.field.zones.cells.find((z) => z.zone === 'center')!.fwhmPx!;
    expect(Math.abs(pred.centreFwhmPx / centre - 1)).toBeLessThan(0.15);
  });
});
