/**
 * Half-flux diameter from the curve of growth (optics.md §1.1: HFD = 2 x the radius, about
 * the given centre, of the circle holding half of the background-subtracted flux inside
 * an aperture of radius maxRadius; Source Extractor's FLUX_RADIUS with fraction 0.5 is the
 * same quantity).
 *
 * Each pixel is a uniform unit square; the flux inside a circle is the sum of pixel values
 * times the exact area of pixel/circle overlap (closed form below), so the curve of growth
 * F(r) is continuous and exact for any r. r50 is found by bracketing on a 0.5 px grid and
 * bisection inside the bracket (the "interpolation between radii" is exact).
 * NaN pixels count as 0 (the caller flags stamps with missing pixels).
 * Spreading each pixel value uniformly over its square adds the pixel box once more to the
 * recorded star (about +1/12 px^2 per axis): a pixel-integrated Gaussian of sigma s reads
 * HFD ~ FWHM sqrt(1 + 1/(6 s^2)), 0.5 % high at s = 4 px.
 */

import { lazyKernel } from '../wasm/instantiate.ts';
import { HFD_WASM_BASE64 } from './wasm/hfd.wasm.ts';

/**
 * Signed area of the disc x^2 + y^2 <= r^2 inside the rectangle [0, x] x [0, y]
 * (negative when x or y is negative), so that a rectangle's overlap follows by
 * inclusion-exclusion over its corners.
 */
function cornerArea(x: number, y: number, r: number): number {
  const sg = (x < 0) !== (y < 0) ? -1 : 1;
  x = Math.abs(x);
  y = Math.abs(y);
  if (x > r) x = r;
  if (y > r) y = r;
  const r2 = r * r;
  if (x * x + y * y <= r2) return sg * x * y;
  // Columns with X < xc are full height y; beyond, the circle bounds: area =
  // y*xc + integral_xc^x sqrt(r^2 - X^2) dX, primitive (X sqrt(r^2-X^2) + r^2 asin(X/r))/2.
  // With xc = sqrt(r^2 - y^2) and sx = sqrt(r^2 - x^2): asin(x/r) - asin(xc/r) = asin((x y - xc sx)/r^2).
  const xc = Math.sqrt(r2 - y * y);
  const sx = Math.sqrt(Math.max(0, r2 - x * x));
  const t = Math.max(-1, Math.min(1, (x * y - xc * sx) / r2));
  return sg * (y * xc + 0.5 * (x * sx - xc * y + r2 * Math.asin(t)));
}

/** Exact area of the unit pixel centred at (dx, dy) (relative to the circle centre) inside radius r. */
export function pixelCircleOverlap(dx: number, dy: number, r: number): number {
  if (r <= 0) return 0;
  const x0 = dx - 0.5, x1 = dx + 0.5, y0 = dy - 0.5, y1 = dy + 0.5;
  return cornerArea(x1, y1, r) - cornerArea(x0, y1, r) - cornerArea(x1, y0, r) + cornerArea(x0, y0, r);
}

/** Flux inside the circle of radius r about (x, y): sum of pixel values times exact pixel/circle overlap. */
export function enclosedFlux(stamp: Float32Array, w: number, h: number, x: number, y: number, r: number): number {
  if (!(r > 0)) return 0;
  const xa = Math.max(0, Math.floor(x - r - 0.5)), xb = Math.min(w - 1, Math.ceil(x + r + 0.5));
  const ya = Math.max(0, Math.floor(y - r - 0.5)), yb = Math.min(h - 1, Math.ceil(y + r + 0.5));
  const rin = r - Math.SQRT1_2, rout = r + Math.SQRT1_2; // pixel fully in / fully out
  const rin2 = rin > 0 ? rin * rin : -1, rout2 = rout * rout;
  let f = 0;
  for (let py = ya; py <= yb; py++) {
    const dy = py - y;
    for (let px = xa; px <= xb; px++) {
      const v = stamp[py * w + px];
      if (v !== v) continue;
      const dx = px - x;
      const d2 = dx * dx + dy * dy;
      if (d2 >= rout2) continue;
      f += d2 <= rin2 ? v : v * pixelCircleOverlap(dx, dy, r);
    }
  }
  return f;
}

/**
 * HFD (px) about (x, y), stamp coordinates, of a background-subtracted stamp; the total
 * flux is the flux inside maxRadius. NaN when the total is not positive or no crossing
 * exists. With noise the curve of growth may cross half-flux more than once; the first
 * crossing outward on the 0.5 px grid is taken.
 */
export function halfFluxDiameter(stamp: Float32Array, w: number, h: number, x: number, y: number, maxRadius: number): { hfdPx: number; totalFlux: number } {
  const r = halfFluxDiameterWithError(stamp, null, w, h, x, y, maxRadius);
  return { hfdPx: r.hfdPx, totalFlux: r.totalFlux };
}

/**
 * halfFluxDiameter plus its 1-sigma error from pixel noise (first order) when `variance`
 * is given: F(r50) - F(R)/2 = 0 gives var(r50) = (1/4) sum_{aperture} o_k^2 var_k / F'(r50)^2
 * (pixels inside r50 enter with +1/2, the rest of the aperture with -1/2; o_k = overlap
 * with the aperture), F' by a finite difference of the curve of growth across the
 * bracket that holds r50; err(HFD) = 2 err(r50).
 */
export function halfFluxDiameterWithError(stamp: Float32Array, variance: Float32Array | number | null, w: number, h: number, x: number, y: number, maxRadius: number, r50Guess?: number): { hfdPx: number; totalFlux: number; errPx: number } {
  const k = hfdKernel();
  if (!k || !(w > 0 && h > 0 && w * h <= k.stamp.length)) return halfFluxDiameterWithErrorJs(stamp, variance, w, h, x, y, maxRadius, r50Guess);
  const n = w * h;
  k.stamp.set(stamp.subarray(0, n));
  let mode = 0, c = 0;
  if (typeof variance === 'number') { mode = 1; c = variance; } else if (variance) { mode = 2; k.variance.set(variance.subarray(0, n)); }
  k.run(w, h, x, y, maxRadius, mode, c, r50Guess !== undefined && r50Guess > 0 ? r50Guess : 0);
  return { hfdPx: k.out[0], totalFlux: k.out[1], errPx: k.out[2] };
}

interface HfdKernel {
  stamp: Float32Array;
  variance: Float32Array;
  out: Float64Array;
  run: (w: number, h: number, x: number, y: number, maxRadius: number, varMode: number, constVar: number, r50Guess: number) => void;
}
/** halfFluxDiameterWithErrorJs compiled to WebAssembly (wasm/hfd.as.ts), once per thread. */
const hfdKernel = lazyKernel<HfdKernel>(HFD_WASM_BASE64, 'hfd', (m) => {
  const cap = m.int('capacity');
  return { stamp: m.f32('stampPtr', cap), variance: m.f32('variancePtr', cap), out: m.f64('outPtr', 3), run: m.fn('hfd') };
});

/** halfFluxDiameterWithError in TypeScript: the reference for the WebAssembly kernel, and the fallback. */
export function halfFluxDiameterWithErrorJs(stamp: Float32Array, variance: Float32Array | number | null, w: number, h: number, x: number, y: number, maxRadius: number, r50Guess?: number): { hfdPx: number; totalFlux: number; errPx: number } {
  const nan = Number.NaN;
  if (!(maxRadius > 0) || !Number.isFinite(x) || !Number.isFinite(y)) return { hfdPx: nan, totalFlux: nan, errPx: nan };
  // Total flux, and the aperture variance sum when asked.
  const R = maxRadius;
  const xa = Math.max(0, Math.floor(x - R - 0.5)), xb = Math.min(w - 1, Math.ceil(x + R + 0.5));
  const ya = Math.max(0, Math.floor(y - R - 0.5)), yb = Math.min(h - 1, Math.ceil(y + R + 0.5));
  const rin = R - Math.SQRT1_2, rout2 = (R + Math.SQRT1_2) ** 2, rin2 = rin > 0 ? rin * rin : -1;
  const withVar = variance !== null;
  const constVar = typeof variance === 'number';
  let total = 0, sv = 0;
  for (let py = ya; py <= yb; py++) {
    const dy = py - y;
    for (let px = xa; px <= xb; px++) {
      const i = py * w + px;
      const v = stamp[i];
      if (v !== v) continue;
      const dx = px - x;
      const d2 = dx * dx + dy * dy;
      if (d2 >= rout2) continue;
      const o = d2 <= rin2 ? 1 : pixelCircleOverlap(dx, dy, R);
      total += o * v;
      if (withVar) {
        const s2 = constVar ? (variance as number) : (variance as Float32Array)[i];
        if (s2 > 0 && Number.isFinite(s2)) sv += o * o * s2;
      }
    }
  }
  if (!(total > 0)) return { hfdPx: nan, totalFlux: total, errPx: nan };
  const half = 0.5 * total;
  let lo = 0, hi = -1, glo = -half, ghi = 0;
  if (r50Guess !== undefined && r50Guess > 0 && r50Guess < R) {
    // Bracket from the guess, stepping by 1.3x outward or inward.
    let r = r50Guess;
    let g = enclosedFlux(stamp, w, h, x, y, r) - half;
    if (g >= 0) {
      hi = r; ghi = g;
      for (;;) {
        r /= 1.3;
        if (r < 0.05) { lo = 0; glo = -half; break; }
        g = enclosedFlux(stamp, w, h, x, y, r) - half;
        if (g < 0) { lo = r; glo = g; break; }
        hi = r; ghi = g;
      }
    } else {
      lo = r; glo = g;
      for (;;) {
        r = Math.min(R, r * 1.3);
        g = enclosedFlux(stamp, w, h, x, y, r) - half;
        if (g >= 0) { hi = r; ghi = g; break; }
        lo = r; glo = g;
        if (r >= R) break;
      }
    }
  } else {
    // First crossing outward on a 0.5 px grid.
    for (let r = 0.5; ; r += 0.5) {
      const rr = Math.min(r, R);
      const g = enclosedFlux(stamp, w, h, x, y, rr) - half;
      if (g >= 0) { hi = rr; ghi = g; break; }
      lo = rr; glo = g;
      if (rr >= R) break;
    }
  }
  if (hi < 0) return { hfdPx: nan, totalFlux: total, errPx: nan };
  // Slope of the curve of growth across the bracket (a finite difference over ~0.5 px or
  // ~30 % of r50), for the error below.
  const slope = hi > lo ? (ghi - glo) / (hi - lo) : Number.NaN;
  // Illinois (modified regula falsi) on g(r) = F(r) - F/2 inside the bracket, to 1e-4 px;
  // F(r) is smooth between pixel-corner radii, so this converges in a few evaluations.
  let side = 0;
  for (let it = 0; it < 60 && hi - lo > 1e-4; it++) {
    let r = ghi !== glo ? hi - (ghi * (hi - lo)) / (ghi - glo) : 0.5 * (lo + hi);
    if (!(r > lo && r < hi)) r = 0.5 * (lo + hi);
    const g = enclosedFlux(stamp, w, h, x, y, r) - half;
    if (g === 0 || Math.abs(g) < 1e-12 * total) { lo = hi = r; break; }
    if (g > 0) {
      hi = r; ghi = g;
      if (side === 1) glo *= 0.5;
      side = 1;
    } else {
      lo = r; glo = g;
      if (side === -1) ghi *= 0.5;
      side = -1;
    }
  }
  const hfdPx = lo + hi;
  let errPx = nan;
  if (withVar && slope > 0) errPx = Math.sqrt(sv) / slope; // 2 * (1/2) sqrt(sv) / F'(r50)
  return { hfdPx, totalFlux: total, errPx };
}
