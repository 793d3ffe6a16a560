/** The plane that is measured: the frame itself, or 2x2 superpixels of a colour-filter-array mosaic. */
import { unreadable } from '../errors.ts';
import type { CfaPattern, Frame, MeasurePlane } from './types.ts';

/**
 * CFA data (frame.cfa, or opts.cfa when given; `null` there means "not a mosaic"): each 2x2 block
 * becomes the sum of its four pixels (one R, two G, one B whatever the pattern), so no
 * interpolation smears the star. Superpixel (xs, ys) covers full-resolution columns 2xs, 2xs+1,
 * so its centre is x = 2xs + 0.5: scale 2, offset 0.5. An odd last row/column is dropped.
 * Saturation: 4x the per-pixel level, and a block with any single pixel at or above the per-pixel
 * level is set to 4x, so a star clipped in one colour is still flagged; a superpixel with any
 * pixel in the frame's saturated mask (DQ extension) is in the plane's mask.
 * Non-CFA: the frame's own data (no copy), scale 1, offset 0.
 */
export function toMeasurePlane(frame: Frame, opts?: { cfa?: CfaPattern | null }): MeasurePlane {
  const cfa = opts && opts.cfa !== undefined ? opts.cfa : frame.cfa;
  const { width, height, data } = frame;
  const mask = frame.saturatedMask ?? null;
  if (!cfa) return { width, height, data, scale: 1, offset: 0, saturationLevel: frame.saturationLevel, saturatedMask: mask };
  const w2 = Math.floor(width / 2);
  const h2 = Math.floor(height / 2);
  if (w2 < 1 || h2 < 1) throw unreadable(`frame of ${width} x ${height} pixels is too small for 2x2 colour-filter superpixels`);
  const out = new Float32Array(w2 * h2);
  const sat = frame.saturationLevel;
  const s = sat ?? Infinity;
  const s4 = 4 * s;
  for (let ys = 0; ys < h2; ys++) {
    const r0 = 2 * ys * width;
    const r1 = r0 + width;
    const o = ys * w2;
    for (let xs = 0; xs < w2; xs++) {
      const x = 2 * xs;
      const a = data[r0 + x], b = data[r0 + x + 1], c = data[r1 + x], d = data[r1 + x + 1];
      out[o + xs] = a >= s || b >= s || c >= s || d >= s ? s4 : a + b + c + d;
    }
  }
  let planeMask: Uint8Array | null = null;
  if (mask) {
    planeMask = new Uint8Array(w2 * h2);
    for (let ys = 0; ys < h2; ys++) for (let xs = 0; xs < w2; xs++) {
      const k = 2 * ys * width + 2 * xs;
      if (mask[k] | mask[k + 1] | mask[k + width] | mask[k + width + 1]) planeMask[ys * w2 + xs] = 1;
    }
  }
  return { width: w2, height: h2, data: out, scale: 2, offset: 0.5, saturationLevel: sat === null ? null : 4 * sat, saturatedMask: planeMask };
}
