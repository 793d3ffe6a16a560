/**
 * The tilt words shared by the single frame, the focus pair and the focus series (core/diagnose/words.ts),
 * checked from geometry: a sensor plane z(x) = z0 + t x (z = distance from the lens, t > 0: the right
 * edge farther) under a flat focal surface at z_f. A point is sharp when the focuser has moved it to
 * z_f, i.e. at focuser position P* (x) = P + z_f - z(x): best focus falls to the right by t W, so
 * acrossFrameUm.x = -t W (DESIGN.md: right minus left), and the right edge must come toward the lens.
 */
import { describe, expect, it } from 'vitest';
import { acrossWords, fmtSigned, tiltAdvice, tiltSides } from '../../core/diagnose/words.ts';
import { geometry } from '../../core/field/geometry.ts';

const W = 1200, H = 800;

/** Best-focus positions of the plane above at the left and right edges, and top (y = 0) and bottom (y = H). */
function bestFocusAcross(tx: number, ty: number): { x: number; y: number } {
  const P = 0, zf = 100;
  const z = (x: number, y: number) => 50 + tx * x + ty * y;
  const best = (x: number, y: number) => P + zf - z(x, y);
  return { x: best(W, H / 2) - best(0, H / 2), y: best(W / 2, H) - best(W / 2, 0) };
}

describe('which side must come toward the lens', () => {
  it('right edge farther from the lens: best focus lower on the right, the right side comes toward the lens', () => {
    const across = bestFocusAcross(0.02, 0);
    expect(across.x).toBeCloseTo(-24, 10);
    const g = geometry(W, H, 'first');
    expect(tiltSides(g, across)).toMatchObject({ toward: 'right', away: 'left' });
    expect(tiltAdvice(g, { acrossFrameUm: across, axisDeg: 0, signResolved: true })).toMatch(/^the right side of the sensor must come toward the lens \(its stars focus with the sensor nearer the lens\), or the left side away from it$/);
  });

  it('the +y edge farther: its side depends on which row is shown on top', () => {
    const across = bestFocusAcross(0, 0.02);
    expect(across.y).toBeCloseTo(-16, 10);
    // Rows stored top-down (PNG, TIFF): +y is the bottom; bottom-up (FITS convention): +y is the top.
    expect(tiltSides(geometry(W, H, 'first'), across).toward).toBe('bottom');
    expect(tiltSides(geometry(W, H, 'last'), across).toward).toBe('top');
  });

  it('a diagonal tilt names the corner, from the gradient per pixel (not per frame size)', () => {
    // Focus error grows 24 um across the width and 16 across the height: the same slope per pixel,
    // so the steepest direction is the 45 degree diagonal toward +x, +y.
    const across = bestFocusAcross(0.02, 0.02);
    expect(tiltSides(geometry(W, H, 'first'), across)).toMatchObject({ toward: 'bottom-right', away: 'top-left' });
    expect(tiltSides(geometry(W, H, 'first'), across).downhillDeg).toBeCloseTo(45, 10);
  });

  it('one frame (sign not resolved) names both candidates along the axis', () => {
    const g = geometry(W, H, 'first');
    expect(tiltAdvice(g, { acrossFrameUm: { x: 24, y: 0 }, axisDeg: 0, signResolved: false })).toMatch(/^either the left or the right side of the sensor must come toward the lens; one frame cannot tell which/);
  });

  it('says the changes with their signs, µm and ±', () => {
    const g = geometry(W, H, 'first');
    expect(acrossWords(g, { x: -22, y: 11.9 }, { x: 0.5, y: 0.46 })).toBe('−22 ± 0.5 µm from left to right and +12 ± 0.46 µm from top to bottom');
    expect(fmtSigned(0)).toBe('0.0');
  });
});
