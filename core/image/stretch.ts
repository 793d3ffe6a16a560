/**
 * Display stretch of a linear frame to 8-bit grey: black just below the sky, white at a high
 * percentile, then an asinh curve (Lupton et al. 2004, PASP 116, 133) so faint stars and bright
 * cores both stay visible. Pure functions over typed arrays.
 */
import { selectKth } from './stats.ts';

export interface Stretch {
  black: number;
  white: number;
  /** asinh softening: larger = more contrast in the faint end. */
  beta: number;
}

/** Black at sky - 1 sigma, white at the 99.9th percentile of a subsample (at least sky + 20 sigma). */
export function chooseStretch(data: Float32Array, sky: { level: number; sigma: number }): Stretch {
  const step = Math.max(1, Math.floor(data.length / 500_000));
  const sample = new Float32Array(Math.ceil(data.length / step));
  let n = 0;
  for (let i = 0; i < data.length; i += step) {
    const v = data[i];
    if (v === v) sample[n++] = v;
  }
  const sigma = sky.sigma > 0 && Number.isFinite(sky.sigma) ? sky.sigma : 1;
  const level = Number.isFinite(sky.level) ? sky.level : 0;
  const black = level - sigma;
  const p999 = n ? selectKth(sample, n, Math.min(n - 1, Math.floor(0.999 * n))) : level + 100 * sigma;
  const white = Math.max(p999, level + 20 * sigma);
  return { black, white, beta: 12 };
}

export interface Rect { x0: number; y0: number; w: number; h: number }

/**
 * Stretch a rectangle of the frame to 8-bit grey, block-averaged by `factor` (>= 1, integer), and
 * flipped so that the displayed top row comes first when `flipY` (FITS frames: last stored row on top).
 * Missing (NaN) pixels are black. Output rows are ceil(h / factor), columns ceil(w / factor).
 */
export function stretchGrey(data: Float32Array, width: number, rect: Rect, factor: number, flipY: boolean, s: Stretch): { pixels: Uint8Array; width: number; height: number } {
  const f = Math.max(1, Math.floor(factor));
  const ow = Math.ceil(rect.w / f);
  const oh = Math.ceil(rect.h / f);
  const out = new Uint8Array(ow * oh);
  const span = s.white - s.black || 1;
  const norm = 255 / Math.asinh(s.beta);
  for (let oy = 0; oy < oh; oy++) {
    // output row oy shows frame rows [ya, yb) of the rectangle, from the displayed top
    const ya = oy * f;
    const yb = Math.min(rect.h, ya + f);
    for (let ox = 0; ox < ow; ox++) {
      const xa = ox * f;
      const xb = Math.min(rect.w, xa + f);
      let sum = 0;
      let cnt = 0;
      for (let ry = ya; ry < yb; ry++) {
        const y = flipY ? rect.y0 + rect.h - 1 - ry : rect.y0 + ry;
        const base = y * width + rect.x0;
        for (let rx = xa; rx < xb; rx++) {
          const v = data[base + rx];
          if (v === v) { sum += v; cnt++; }
        }
      }
      if (cnt === 0) continue;
      const t = (sum / cnt - s.black) / span;
      const g = t <= 0 ? 0 : Math.asinh(s.beta * t) * norm;
      out[oy * ow + ox] = g >= 255 ? 255 : g;
    }
  }
  return { pixels: out, width: ow, height: oh };
}
