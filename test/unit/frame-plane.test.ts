// Measure plane: 2x2 CFA superpixels and their coordinate mapping. Checks are geometric:
// block sums recomputed here directly, and the centroid of a Gaussian star, measured on the
// superpixel plane and mapped back with xFull = scale * x + offset, must land on the true centre.
import { describe, expect, it } from 'vitest';
import { toMeasurePlane } from '../../core/frame/plane.ts';
import type { Frame } from '../../core/frame/types.ts';

function frame(width: number, height: number, data: Float32Array, extra: Partial<Frame> = {}): Frame {
  return { width, height, data, format: 'fits', saturationLevel: 65535, cfa: null, displayTopRow: 'last', hints: null, meta: {}, ...extra };
}

describe('toMeasurePlane', () => {
  it('non-CFA: the frame data itself, scale 1, offset 0', () => {
    const f = frame(4, 3, new Float32Array(12).fill(2));
    const p = toMeasurePlane(f);
    expect(p.data).toBe(f.data);
    expect([p.width, p.height, p.scale, p.offset, p.saturationLevel]).toEqual([4, 3, 1, 0, 65535]);
  });

  it('CFA: each 2x2 block summed; odd last row and column dropped', () => {
    const w = 7;
    const h = 5;
    const d = new Float32Array(w * h).map((_, i) => (i * 29) % 101);
    const p = toMeasurePlane(frame(w, h, d, { cfa: 'RGGB' }));
    expect([p.width, p.height, p.scale, p.offset]).toEqual([3, 2, 2, 0.5]);
    for (let ys = 0; ys < 2; ys++) {
      for (let xs = 0; xs < 3; xs++) {
        const at = (x: number, y: number): number => d[y * w + x];
        const want = at(2 * xs, 2 * ys) + at(2 * xs + 1, 2 * ys) + at(2 * xs, 2 * ys + 1) + at(2 * xs + 1, 2 * ys + 1);
        expect(p.data[ys * 3 + xs]).toBe(want);
      }
    }
  });

  it('a star centroid on the superpixel plane maps back to its full-resolution centre', () => {
    const w = 64;
    const h = 48;
    const x0 = 30.3;
    const y0 = 21.8;
    const sigma = 2.2;
    const d = new Float32Array(w * h);
    for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) d[y * w + x] = 1000 * Math.exp(-((x - x0) ** 2 + (y - y0) ** 2) / (2 * sigma * sigma));
    const p = toMeasurePlane(frame(w, h, d, { cfa: 'GBRG' }));
    let s = 0, sx = 0, sy = 0;
    for (let y = 0; y < p.height; y++) for (let x = 0; x < p.width; x++) { const v = p.data[y * p.width + x]; s += v; sx += v * x; sy += v * y; }
    const xFull = p.scale * (sx / s) + p.offset;
    const yFull = p.scale * (sy / s) + p.offset;
    // The 2x2 box keeps a symmetric profile centred; any scale/offset error would show as >= 0.5 px.
    expect(Math.abs(xFull - x0)).toBeLessThan(0.01);
    expect(Math.abs(yFull - y0)).toBeLessThan(0.01);
  });

  it('saturation: 4x the per-pixel level; one clipped pixel clips its block; NaN stays missing', () => {
    // 4 x 2 mosaic, rows [65535 10 | NaN 1] and [10 10 | 1 1]: two blocks
    const f = frame(4, 2, new Float32Array([65535, 10, NaN, 1, 10, 10, 1, 1]), { cfa: 'RGGB' });
    const p = toMeasurePlane(f);
    expect(p.saturationLevel).toBe(4 * 65535);
    expect(p.data[0]).toBe(4 * 65535);
    expect(Number.isNaN(p.data[1])).toBe(true);
  });

  it('the caller can force CFA on or off', () => {
    const f = frame(4, 4, new Float32Array(16).fill(1), { cfa: 'RGGB' });
    expect(toMeasurePlane(f, { cfa: null }).scale).toBe(1);
    const g = frame(4, 4, new Float32Array(16).fill(1));
    const p = toMeasurePlane(g, { cfa: 'BGGR' });
    expect([p.scale, p.width, p.data[0]]).toEqual([2, 2, 4]);
  });

  it('float frames without a saturation level stay unbounded', () => {
    const p = toMeasurePlane(frame(2, 2, new Float32Array([1, 2, 3, 1e30]), { cfa: 'RGGB', saturationLevel: null }));
    expect(p.saturationLevel).toBeNull();
    expect(p.data[0]).toBe(Math.fround(1e30 + 6));
  });
});
