/**
 * The radial light distribution of one star: radii of the circles about its centroid that hold
 * 20, 50 and 80 % of its light (the curve of growth; the 50 % radius is half the HFD, optics.md
 * §1.1). Through focus these radii tell the core from
 * the rim of a defocused disc: with spherical aberration the zones of the pupil focus at
 * different distances, so the radius holding the inner light and the one holding the outer
 * light reach their minima at different focuser positions (focus-series.ts uses that).
 *
 * Also the unweighted second moments inside the aperture: under convolution they add exactly
 * (optics.md §4), so their sum against focuser position is exactly the defocused cone's
 * parabola, whatever the profile (focus-curve.ts).
 *
 * Sky: the median of an annulus 6 to 12 px outside the aperture (nearer, a defocused disc's blurred
 * edge lifts it, and the stars' moments come out smaller the farther from focus).
 */

/** Fractions of the light whose radii are measured. */
export const PROFILE_FRACTIONS = [0.2, 0.5, 0.8] as const;

export interface StarProfile {
  /** Radii holding PROFILE_FRACTIONS of the light, px (NaN when not asked for). */
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

/**
 * The aperture for a star of this HFD (or, for a first look, of this rms radius sqrt(Ixx + Iyy)
 * from the pipeline's robust adaptive moments): the defocused disc (about 0.71 HFD, or 1.4 rms
 * radii, in radius) plus the blur of its edge. Kept tight: the sky noise in a second moment grows
 * as the cube of the aperture's radius (on a rendered series, 0.8 HFD + 2.5 px gave four times
 * smaller errors of the tilt and curvature than 1.2 HFD + 4 px, as close to the truth).
 */
export function apertureFor(hfdPx: number, rmsPx?: number): number {
  if (rmsPx !== undefined && Number.isFinite(rmsPx) && rmsPx > 0) return Math.min(60, Math.max(6, 2.5 * rmsPx + 4));
  const h = Number.isFinite(hfdPx) && hfdPx > 0 ? hfdPx : 4;
  return Math.min(60, Math.max(6, 0.8 * h + 2.5));
}

/** The k-th smallest of a[0..n) (Hoare's selection; reorders a). */
function select(a: Float64Array, n: number, k: number): number {
  let lo = 0, hi = n - 1;
  while (hi > lo) {
    const pivot = a[(lo + hi) >> 1];
    let i = lo, j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) { const t = a[i]; a[i] = a[j]; a[j] = t; i++; j--; }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return a[k];
  }
  return a[k];
}

let scratch = new Float64Array(1024);
let scratch2 = new Float64Array(1024);

function annulusSky(data: Float32Array, w: number, h: number, x: number, y: number, r0: number, r1: number): { sky: number; sigma: number } | null {
  const xa = Math.max(0, Math.floor(x - r1)), xb = Math.min(w - 1, Math.ceil(x + r1));
  const ya = Math.max(0, Math.floor(y - r1)), yb = Math.min(h - 1, Math.ceil(y + r1));
  const need = (xb - xa + 1) * (yb - ya + 1);
  if (scratch.length < need) { scratch = new Float64Array(need); scratch2 = new Float64Array(need); }
  const a2 = r0 * r0, b2 = r1 * r1;
  let n = 0;
  for (let py = ya; py <= yb; py++) {
    const dy2 = (py - y) * (py - y);
    for (let px = xa; px <= xb; px++) {
      const d2 = (px - x) * (px - x) + dy2;
      if (d2 < a2 || d2 > b2) continue;
      const v = data[py * w + px];
      if (v === v) scratch[n++] = v;
    }
  }
  if (n < 12) return null;
  // The median (robust to a neighbour in the annulus) and the MAD-based scatter.
  const med = select(scratch, n, n >> 1);
  for (let i = 0; i < n; i++) scratch2[i] = Math.abs(scratch[i] - med);
  const ss = (1.4826 * select(scratch2, n, n >> 1)) ** 2 * (n - 1);
  return { sky: med, sigma: Math.sqrt(ss / Math.max(1, n - 1)) };
}

/** Radial bin width of the curve of growth, px. */
const BIN = 0.02;

/**
 * The star's curve of growth about (x, y) (frame pixels of `data`), or null when the aperture and
 * its sky annulus do not fit in the frame or hold no light. Each pixel's light is spread evenly
 * over its square (as in hfd.ts), sampled on a k x k grid of sub-pixels (k = 3, or 2 for apertures
 * beyond 12 px) and summed in radial bins of 0.02 px; radii between bin edges by linear
 * interpolation. The second moments come from the same sub-pixels (a pixel's own box included).
 */
export function starProfile(data: Float32Array, w: number, h: number, x: number, y: number, hfdPx: number, fractions: readonly number[] = PROFILE_FRACTIONS, opts: { rmsPx?: number; radii?: boolean } = {}): StarProfile | null {
  const R = apertureFor(hfdPx, opts.rmsPx);
  const wantRadii = opts.radii ?? true;
  const r1 = R + 12;
  if (!(x - r1 >= 0 && y - r1 >= 0 && x + r1 <= w - 1 && y + r1 <= h - 1)) return null;
  const s = annulusSky(data, w, h, x, y, R + 6, r1);
  if (!s) return null;
  const k = R > 12 ? 2 : 3;
  const nb = Math.ceil(R / BIN) + 1;
  const bins = new Float64Array(nb);
  const R2 = R * R;
  let sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0, total = 0;
  const xa = Math.floor(x - R - 1), xb = Math.ceil(x + R + 1);
  const ya = Math.floor(y - R - 1), yb = Math.ceil(y + R + 1);
  const sub = 1 / k;
  for (let py = ya; py <= yb; py++) {
    for (let px = xa; px <= xb; px++) {
      const v = data[py * w + px];
      if (v !== v) continue;
      const f = (v - s.sky) * sub * sub;
      for (let j = 0; j < k; j++) {
        const dy = py - 0.5 + (j + 0.5) * sub - y;
        for (let i = 0; i < k; i++) {
          const dx = px - 0.5 + (i + 0.5) * sub - x;
          const d2 = dx * dx + dy * dy;
          if (d2 > R2) continue;
          if (wantRadii) bins[Math.floor(Math.sqrt(d2) / BIN)] += f;
          total += f;
          sx += f * dx;
          sy += f * dy;
          sxx += f * dx * dx;
          syy += f * dy * dy;
          sxy += f * dx * dy;
        }
      }
    }
  }
  if (!(total > 0)) return null;
  // Radii: the first bin edge where the cumulative light passes f of the total, interpolated.
  const radii = !wantRadii ? fractions.map(() => NaN) : fractions.map((fr) => {
    const target = fr * total;
    let acc = 0;
    for (let b = 0; b < nb; b++) {
      const next = acc + bins[b];
      if (next >= target) return bins[b] > 0 ? (b + (target - acc) / bins[b]) * BIN : b * BIN;
      acc = next;
    }
    return NaN;
  });
  // The sub-pixel sampling leaves a box of 1/k per axis (variance 1/(12 k^2)); the pixel's own box is 1/12.
  const box = 1 / 12 - 1 / (12 * k * k);
  // Moments about the aperture's own centroid (an offset centre would add its square to them).
  const mx = sx / total, my = sy / total;
  return { radiiPx: radii, flux: total, apertureRadiusPx: R, sky: s.sky, skySigma: s.sigma, ixx: sxx / total - mx * mx + box, iyy: syy / total - my * my + box, ixy: sxy / total - mx * my };
}
