/**
 * Trailing and field rotation (optics.md 6: rank-1, no optical fault) and clean frames, from
 * rendered frames through the real pipeline. Trailing must be found with its angle within
 * 5 deg and never reported as tilt, astigmatism or spacing.
 */
import { describe, expect, it } from 'vitest';
import { diagnose } from '../../core/diagnose/index.ts';
import { axisDiffDeg } from '../../core/field/stats.ts';
import { ctxOf, renderAndAnalyze, scene, W, H } from './recovery-render.ts';

describe('trailing', () => {
  it.each([
    { L: 3, angle: 30 },
    { L: 6, angle: -75 },
  ])('uniform trail $L px at $angle deg', async ({ L, angle }) => {
    const { analysis } = await renderAndAnalyze(scene({ seed: 31, trailing: { lengthPx: L, angleDeg: angle } }));
    const r = diagnose(analysis.stars, ctxOf(analysis));
    const d = r.diagnosis;
    console.log(`trail ${L} px at ${angle}: kind ${d.trailing.kind}, angle ${d.trailing.angleDeg!.toFixed(2)} +- ${d.trailing.angleErrDeg!.toFixed(2)}, length ${d.trailing.lengthPx!.toFixed(2)} +- ${d.trailing.lengthErrPx!.toFixed(2)} px`);
    expect(d.trailing.significant).toBe(true);
    expect(d.trailing.kind).toBe('uniform');
    expect(axisDiffDeg(d.trailing.angleDeg!, angle)).toBeLessThan(5);
    expect(Math.abs(d.trailing.lengthPx! / L - 1)).toBeLessThan(0.1);
    expect(d.tilt.significant).toBe(false);
    expect(d.astigmatism.significant).toBe(false);
    expect(d.spacing.pattern).toBe('none');
    expect(r.findings.find((f) => f.code === 'TRAILING')!.message).toMatch(/not the optics/);
  });

  it.each([
    { centre: { x: 300, y: 800 }, angle: 0.004 },
    { centre: { x: -500, y: 1400 }, angle: 0.003 },
  ])('field rotation about $centre', async ({ centre, angle }) => {
    const { analysis } = await renderAndAnalyze(scene({ seed: 32, rotation: { centerPx: centre, angleRad: angle } }));
    const d = diagnose(analysis.stars, ctxOf(analysis)).diagnosis;
    // Trail length at the farthest frame corner: w t |r - r_c| (optics.md 6).
    const far = Math.max(...[[-0.5, -0.5], [W - 0.5, -0.5], [-0.5, H - 0.5], [W - 0.5, H - 0.5]].map(([x, y]) => Math.hypot(x - centre.x, y - centre.y)));
    const rc = d.trailing.rotation?.centerPx;
    console.log(`rotation about ${centre.x},${centre.y}: kind ${d.trailing.kind}, centre ${rc ? `${rc.x.toFixed(0)},${rc.y.toFixed(0)}` : 'none'}, far-corner trail ${d.trailing.lengthPx!.toFixed(2)} px (truth ${(angle * far).toFixed(2)})`);
    expect(d.trailing.kind).toBe('rotation');
    expect(Math.abs(d.trailing.lengthPx! / (angle * far) - 1)).toBeLessThan(0.15);
    expect(d.tilt.significant).toBe(false);
    expect(d.astigmatism.significant).toBe(false);
    expect(d.spacing.pattern).toBe('none');
  });
});

describe('clean frames', () => {
  it('three rendered seeds: no significant finding, and the frame is called clean', async () => {
    // The 40-seed requirement runs on synthetic stars (test/unit/diagnose-faults.test.ts); these
    // rendered seeds check the real pipeline adds no pattern of its own.
    for (const seed of [41, 42, 43]) {
      const { analysis } = await renderAndAnalyze(scene({ seed, seeingPx: 2 + 0.5 * (seed - 41) }));
      const r = diagnose(analysis.stars, ctxOf(analysis));
      const sig = r.findings.filter((f) => f.severity !== 'info');
      console.log(`clean seed ${seed}: ${r.diagnosis.starsUsed} stars, findings ${r.findings.map((f) => f.code).join(', ')}`);
      expect(sig).toEqual([]);
      expect(r.diagnosis.clean).toBe(true);
    }
  });
});
