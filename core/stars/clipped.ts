/**
 * Clipped stars told from the data when no level says so: a star whose brightest pixels are
 * equal within the noise has lost its core to saturation (issue 14: "a star whose brightest
 * pixels are equal within noise is clipped").
 *
 * Why the test holds for unclipped stars of any size: pixels within a fraction t of a smooth
 * peak lie within r^2 < 2 sigma^2 t of it, about 2 pi sigma^2 t pixels, while the area above half
 * maximum is 2 pi sigma^2 ln 2 (Gaussian, optics.md 1.1): their ratio t / ln 2 is 1.4 % for
 * t = 1 %, whatever sigma. A trail's ridge keeps that ratio small too (its half-maximum area
 * grows with the trail). A clipped core puts a good part of the half-maximum area at one level.
 * The pixel grid lets up to 4 pixels tie for a star centred on a pixel corner or on a pixel's
 * edge, so at least 5 are needed. Reference: the third-brightest pixel within 2 px, so one or two
 * spikes (a bleed column's end, a cosmic ray on the core) do not hide the plateau; the plateau's
 * pixels are those within the tolerance of it on both sides, so a sharp peak above a ring of
 * equal pixels (a symmetric sub-pixel phase) is no plateau.
 */

/** Smallest peak, in sky sigmas, tested (fainter cores are equal within the noise anyway). */
export const FLAT_MIN_SNR = 50;
/** At least this many pixels at the top (more than the 4 the grid can tie). */
const FLAT_MIN_PIXELS = 5;
/** ... and at least this fraction of the half-maximum area (an unclipped profile gives ~0.014 at t = 1 %). */
const FLAT_MIN_FRACTION = 0.2;
/** Relative tolerance: flat-field and gain differences between clipped pixels (~1 %, [CP]). */
const FLAT_REL_TOL = 0.01;
/** Half-size of the box searched, px (holds the half-maximum area of a trailed or defocused star). */
const R = 15;

/**
 * A plateau is two-dimensional: its pixels spread at least this much (px^2) across their long
 * axis. A 1-px wide line (a cosmic-ray track, a satellite trail, a bleed column alone) spreads at
 * most 0.125 (a diagonal staircase); 5 pixels in a plus or a 2 x 3 block spread 0.25 to 0.4.
 */
const FLAT_MIN_THICKNESS = 0.2;

const MOM = new Float64Array(6);
let SEEN = new Uint8Array(0);
const STACK: number[] = [];

/**
 * Is the star at (x, y) (its brightest pixel) flat-topped in `img` (sky-subtracted)? `noise` is
 * the sky sigma there. Returns the reference top value (the third-brightest pixel within 2 px),
 * or NaN when the core is not flat (or too faint to tell).
 */
export function flatTop(img: Float32Array, width: number, height: number, x: number, y: number, noise: number): number {
  // the three brightest pixels within 2 px
  let v1 = -Infinity, v2 = -Infinity, v3 = -Infinity;
  for (let yy = Math.max(0, y - 2); yy <= Math.min(height - 1, y + 2); yy++) {
    for (let xx = Math.max(0, x - 2); xx <= Math.min(width - 1, x + 2); xx++) {
      const v = img[yy * width + xx];
      if (!(v > v3)) continue;
      if (v > v1) { v3 = v2; v2 = v1; v1 = v; } else if (v > v2) { v3 = v2; v2 = v; } else v3 = v;
    }
  }
  const ref = v3;
  if (!(ref > FLAT_MIN_SNR * noise)) return NaN;
  const tol = Math.max(FLAT_REL_TOL * ref, 3 * noise);
  // pixels within tol of ref, connected to the peak (through brighter ones too), and the half-maximum area
  const top = region(img, width, height, x, y, ref - tol, ref + tol);
  if (top < FLAT_MIN_PIXELS || minorVariance() < FLAT_MIN_THICKNESS) return NaN;
  const half = region(img, width, height, x, y, 0.5 * ref, Infinity);
  return top >= FLAT_MIN_FRACTION * half ? ref : NaN;
}

/** Variance of the last region's counted pixels across their long axis, px^2 (second moments). */
function minorVariance(): number {
  const n = MOM[0];
  const mx = MOM[1] / n, my = MOM[2] / n;
  const xx = MOM[3] / n - mx * mx, yy = MOM[4] / n - my * my, xy = MOM[5] / n - mx * my;
  return 0.5 * (xx + yy) - Math.sqrt(0.25 * (xx - yy) * (xx - yy) + xy * xy);
}

/** Pixels in [floor, ceil] among those >= floor 4-connected to (x0, y0) within the (2R+1)^2 box. */
function region(img: Float32Array, width: number, height: number, x0: number, y0: number, floor: number, ceil: number): number {
  const size = 2 * R + 1;
  if (SEEN.length < size * size) SEEN = new Uint8Array(size * size);
  SEEN.fill(0);
  STACK.length = 0;
  if (!(img[y0 * width + x0] >= floor)) return 0;
  STACK.push(R * size + R);
  SEEN[R * size + R] = 1;
  let n = 0;
  MOM.fill(0);
  while (STACK.length) {
    const k = STACK.pop()!;
    const ky = (k / size) | 0;
    const kx = k - ky * size;
    if (img[(y0 + ky - R) * width + (x0 + kx - R)] <= ceil) {
      n++;
      MOM[1] += kx; MOM[2] += ky; MOM[3] += kx * kx; MOM[4] += ky * ky; MOM[5] += kx * ky;
    }
    const ly = (k / size) | 0;
    const lx = k - ly * size;
    for (let j = 0; j < 4; j++) {
      const nx = lx + (j === 0 ? -1 : j === 1 ? 1 : 0);
      const ny = ly + (j === 2 ? -1 : j === 3 ? 1 : 0);
      if (nx < 0 || ny < 0 || nx >= size || ny >= size) continue;
      const gx = x0 + nx - R, gy = y0 + ny - R;
      if (gx < 0 || gy < 0 || gx >= width || gy >= height) continue;
      const kk = ny * size + nx;
      if (SEEN[kk]) continue;
      if (img[gy * width + gx] >= floor) { SEEN[kk] = 1; STACK.push(kk); }
    }
  }
  MOM[0] = n;
  return n;
}
