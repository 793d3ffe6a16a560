/**
 * The radial light distribution of one star: radii of the circles about its centroid that hold
 * 20, 50 and 80 % of its light (the curve of growth, exact pixel/circle overlap as in hfd.ts;
 * the 50 % radius is half the HFD, optics.md §1.1). Through focus these radii tell the core from
 * the rim of a defocused disc: with spherical aberration the zones of the pupil focus at
 * different distances, so the radius holding the inner light and the one holding the outer
 * light reach their minima at different focuser positions (focus-series.ts uses that).
 *
 * Also the unweighted second moments inside the aperture: under convolution they add exactly
 * (optics.md §4), so their sum against focuser position is exactly the defocused cone's
 * parabola, whatever the profile (focus-curve.ts).
 *
 * Sky: the median of an annulus just outside the aperture, after 3-sigma clipping.
 */
import { enclosedFlux, pixelCircleOverlap } from '../stars/hfd.ts';

/** Fractions of the light whose radii are measured. */
export const PROFILE_FRACTIONS = [0.2, 0.5, 0.8] as const;

export interface StarProfile {
  /** Radii holding PROFILE_FRACTIONS of the light, px. */
  readonly radiiPx: readonly number[];
  /** Light inside the aperture above the sky, in the frame's units. */
  readonly flux: number;
  readonly apertureRadiusPx: number;
  /** Sky level under the star (annulus median) and its per-pixel scatter. */
  readonly sky: number;
  readonly skySigma: number;
  /** Unweighted second moments about (x, y) inside the aperture, px^2 (the pixel box included). */
  readonly ixx: number;
  readonly iyy: number;
  readonly ixy: number;
}

/** Unweighted second moments of the sky-subtracted light inside radius R (edge pixels by their overlap). */
function apertureMoments(data: Float32Array, w: number, x: number, y: number, R: number, sky: number, total: number): { ixx: number; iyy: number; ixy: number } {
  const xa = Math.floor(x - R - 0.5), xb = Math.ceil(x + R + 0.5);
  const ya = Math.floor(y - R - 0.5), yb = Math.ceil(y + R + 0.5);
  const rin2 = (R - Math.SQRT1_2) ** 2, rout2 = (R + Math.SQRT1_2) ** 2;
  let sxx = 0, syy = 0, sxy = 0;
  for (let py = ya; py <= yb; py++) {
    const dy = py - y;
    for (let px = xa; px <= xb; px++) {
      const v = data[py * w + px];
      if (v !== v) continue;
      const dx = px - x;
      const d2 = dx * dx + dy * dy;
      if (d2 >= rout2) continue;
      const a = d2 <= rin2 ? 1 : pixelCircleOverlap(dx, dy, R);
      const f = (v - sky) * a;
      // A pixel's own box adds 1/12 to its x^2 and y^2 (uniform over the square).
      sxx += f * (dx * dx + 1 / 12);
      syy += f * (dy * dy + 1 / 12);
      sxy += f * dx * dy;
    }
  }
  return { ixx: sxx / total, iyy: syy / total, ixy: sxy / total };
}

/** The aperture for a star of this HFD: the defocused disc (about 0.71 HFD in radius) plus the blur of its edge. */
export function apertureFor(hfdPx: number): number {
  const h = Number.isFinite(hfdPx) && hfdPx > 0 ? hfdPx : 4;
  return Math.min(60, Math.max(6, 1.2 * h + 4));
}

function annulusSky(data: Float32Array, w: number, h: number, x: number, y: number, r0: number, r1: number): { sky: number; sigma: number } | null {
  const vals: number[] = [];
  const xa = Math.max(0, Math.floor(x - r1)), xb = Math.min(w - 1, Math.ceil(x + r1));
  const ya = Math.max(0, Math.floor(y - r1)), yb = Math.min(h - 1, Math.ceil(y + r1));
  const a2 = r0 * r0, b2 = r1 * r1;
  for (let py = ya; py <= yb; py++) {
    for (let px = xa; px <= xb; px++) {
      const d2 = (px - x) ** 2 + (py - y) ** 2;
      if (d2 < a2 || d2 > b2) continue;
      const v = data[py * w + px];
      if (v === v) vals.push(v);
    }
  }
  if (vals.length < 12) return null;
  let kept = Float64Array.from(vals).sort();
  for (let it = 0; it < 3; it++) {
    const med = kept[kept.length >> 1];
    const mad = 1.4826 * Float64Array.from(kept, (v) => Math.abs(v - med)).sort()[kept.length >> 1];
    if (!(mad > 0)) break;
    const next = kept.filter((v) => Math.abs(v - med) <= 3 * mad);
    if (next.length === kept.length || next.length < 12) break;
    kept = next;
  }
  const med = kept[kept.length >> 1];
  let ss = 0;
  for (const v of kept) ss += (v - med) ** 2;
  return { sky: med, sigma: Math.sqrt(ss / Math.max(1, kept.length - 1)) };
}

/**
 * The star's curve of growth about (x, y) (frame pixels of `data`), or null when the aperture and
 * its sky annulus do not fit in the frame or hold no light.
 */
export function starProfile(data: Float32Array, w: number, h: number, x: number, y: number, hfdPx: number, fractions: readonly number[] = PROFILE_FRACTIONS): StarProfile | null {
  const R = apertureFor(hfdPx);
  const r1 = R + 6;
  if (!(x - r1 >= 0 && y - r1 >= 0 && x + r1 <= w - 1 && y + r1 <= h - 1)) return null;
  const s = annulusSky(data, w, h, x, y, R + 2, r1);
  if (!s) return null;
  const grown = (r: number) => enclosedFlux(data, w, h, x, y, r) - s.sky * Math.PI * r * r;
  const total = grown(R);
  if (!(total > 0)) return null;
  const radii = fractions.map((f) => {
    const target = f * total;
    // First crossing outward on a 0.25 px grid, then bisection inside the bracket.
    let lo = 0, flo = -target;
    for (let r = 0.25; r <= R + 1e-9; r += 0.25) {
      const v = grown(r) - target;
      if (v >= 0) {
        let a = lo, b = r, fa = flo;
        for (let k = 0; k < 30 && b - a > 1e-4; k++) {
          const m = 0.5 * (a + b);
          const fm = grown(m) - target;
          if ((fm < 0) === (fa < 0)) { a = m; fa = fm; } else b = m;
        }
        return 0.5 * (a + b);
      }
      lo = r; flo = v;
    }
    return NaN;
  });
  return { radiiPx: radii, flux: total, apertureRadiusPx: R, sky: s.sky, skySigma: s.sigma, ...apertureMoments(data, w, x, y, R, s.sky, total) };
}
