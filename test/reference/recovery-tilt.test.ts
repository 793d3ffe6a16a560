/**
 * Tilt recovered from rendered frames (core/simulate) through the real pipeline (core/analyze.ts).
 * Truth: the simulator's focus plane, delta = delta0 + t_x x + t_y y (optics.md 4), the tilt
 * given as focus change across the full width / height. Requirement: |tilt| within 20 % and
 * axis within 10 deg for 15 um and more across the frame at f/4, seeing 2-3 px.
 */
import { describe, expect, it } from 'vitest';
import { diagnose } from '../../core/diagnose/index.ts';
import { axisDiffDeg } from '../../core/field/stats.ts';
import { ctxOf, renderAndAnalyze, scene } from './recovery-render.ts';

const P = 2.4;

describe('single-frame tilt (magnitude and axis; sign unresolved)', () => {
  it.each([
    { x: 0, y: 15, d0: 0, seeing: 2.5 },
    { x: 10.6, y: 10.6, d0: 0, seeing: 2.5 },
    { x: 15, y: 0, d0: 8, seeing: 2.5 },
    { x: -20, y: 12, d0: 0, seeing: 2 },
    { x: 30, y: 0, d0: 20, seeing: 3 },
  ])('tilt $x / $y um across width / height, centre defocus $d0 um, seeing $seeing px', async ({ x, y, d0, seeing }) => {
    const { analysis, truth } = await renderAndAnalyze(scene({ seed: 3, pixelSizeUm: P, seeingPx: seeing, aberrations: { tiltXUmAcross: x, tiltYUmAcross: y, defocusCenterUm: d0 } }));
    const t = diagnose(analysis.stars, ctxOf(analysis)).diagnosis.tilt;
    const g = truth.global as { tilt: { slopeUmPerMm: { x: number; y: number } } };
    const truthAxis = (Math.atan2(g.tilt.slopeUmPerMm.y, g.tilt.slopeUmPerMm.x) * 180) / Math.PI;
    const ratio = Math.hypot(t.acrossFrameUm.x!, t.acrossFrameUm.y!) / Math.hypot(x, y);
    console.log(`tilt ${x}/${y} um (d0 ${d0}, seeing ${seeing}): found ${t.acrossFrameUm.x!.toFixed(1)}/${t.acrossFrameUm.y!.toFixed(1)} +- ${t.acrossFrameErrUm.x!.toFixed(1)}/${t.acrossFrameErrUm.y!.toFixed(1)} um, ratio ${ratio.toFixed(3)}, axis ${t.axisDeg!.toFixed(1)} vs ${truthAxis.toFixed(1)} deg, ${t.significance.toFixed(1)} sigma`);
    expect(t.significant).toBe(true);
    expect(t.signResolved).toBe(false);
    expect(Math.abs(ratio - 1)).toBeLessThan(0.2);
    expect(axisDiffDeg(t.axisDeg!, truthAxis)).toBeLessThan(10);
    // Per-axis magnitudes too (absolute values while the sign is unresolved).
    expect(Math.abs(t.acrossFrameUm.x! - Math.abs(x))).toBeLessThan(0.2 * Math.hypot(x, y) + 1);
    expect(Math.abs(t.acrossFrameUm.y! - Math.abs(y))).toBeLessThan(0.2 * Math.hypot(x, y) + 1);
  });
});
