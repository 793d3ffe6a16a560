/**
 * Spacing pattern and coma recovered from rendered frames through the real pipeline.
 * Spacing truth: the simulator's invented corrector model (scene.ts spacingErrorMm: curvature and
 * S-T separation grow with the error; + radial, - tangential with the centre at medial focus),
 * judged by the signed radial-minus-tangential moment (optics.md 5). Coma truth: sagittal coma
 * growing linearly from its centre, flare outward or inward (optics.md 3).
 */
import { describe, expect, it } from 'vitest';
import { diagnose } from '../../core/diagnose/index.ts';
import { ctxOf, renderAndAnalyze, scene, W, H } from './recovery-render.ts';

describe('spacing: the radial/tangential pattern', () => {
  it.each([5, -5])('spacing error %d mm', async (s) => {
    const { analysis, truth } = await renderAndAnalyze(scene({ seed: 21, pixelSizeUm: 5.94, aberrations: { spacingErrorMm: s } }));
    const r = diagnose(analysis.stars, ctxOf(analysis));
    const d = r.diagnosis;
    const expected = (truth.global as { spacing: { expectedPattern: string } }).spacing.expectedPattern;
    console.log(`spacing ${s} mm: pattern ${d.spacing.pattern} (truth ${expected}), corner e_rad ${d.spacing.cornerERadial!.toFixed(4)} +- ${d.spacing.cornerERadialErr!.toFixed(4)}, ${d.spacing.significance.toFixed(1)} sigma`);
    expect(d.spacing.pattern).toBe(expected);
    expect(d.spacing.significant).toBe(true);
    expect(Math.sign(d.spacing.radMinusTanPx2!)).toBe(s > 0 ? 1 : -1);
    expect(d.tilt.significant).toBe(false);
    expect(d.trailing.significant).toBe(false);
    const f = r.findings.find((x) => x.code === 'SPACING')!;
    expect(f.message).toMatch(/depends on the corrector design/);
  });
});

describe('coma: tail direction and centre (within 5 % of the diagonal)', () => {
  it.each([
    { k: 4, centre: null, tail: 'outward' },
    { k: -4, centre: { x: 450, y: 320 }, tail: 'inward' },
    { k: 3, centre: { x: 1050, y: 640 }, tail: 'outward' },
  ])('coma $k um/mm about $centre', async ({ k, centre, tail }) => {
    const { analysis, truth } = await renderAndAnalyze(scene({ seed: 22, aberrations: { comaUmPerMm: k, comaCenterPx: centre } }));
    const d = diagnose(analysis.stars, ctxOf(analysis)).diagnosis;
    const g = truth.global as { coma: { centerPx: { x: number; y: number }; tail: string; pxPerMm: number } };
    const off = Math.hypot(d.coma.centerPx!.x - g.coma.centerPx.x, d.coma.centerPx!.y - g.coma.centerPx.y) / Math.hypot(W, H);
    // Sagittal coma at unit field height: |k| / p um/mm x half-diagonal (mm).
    const S1 = Math.abs(g.coma.pxPerMm) * (0.5 * Math.hypot(W, H) * 2.4) / 1000;
    console.log(`coma ${k} um/mm: tail ${d.coma.tail} (truth ${g.coma.tail}), centre off by ${(100 * off).toFixed(2)} % of the diagonal, S ${d.coma.cornerComaPx!.toFixed(2)} px (truth ${S1.toFixed(2)}), decentred ${d.coma.decentred}`);
    expect(d.coma.significant).toBe(true);
    expect(d.coma.tail).toBe(tail);
    expect(off).toBeLessThan(0.05);
    expect(Math.abs(d.coma.cornerComaPx! / S1 - 1)).toBeLessThan(0.15);
    expect(d.coma.decentred).toBe(centre !== null);
    expect(d.tilt.significant).toBe(false);
    expect(d.spacing.pattern).toBe('none');
  });
});
