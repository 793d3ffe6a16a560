/**
 * The field's real PSF per zone: each zone's clean stars cut out of the sky-subtracted plane,
 * shifted so their fitted centres fall on one pixel centre (Lanczos-3 resampling), scaled to
 * unit flux and combined pixel by pixel (weighted mean after a 3-sigma clip about the median),
 * so the noise averages out and the zone's shape shows. The stack is then measured by the
 * engine's own per-star measurement (core/stars/measure.ts). Pure functions over typed arrays.
 */
import type { Star } from '../stars/types.ts';
import { measureStar } from '../stars/measure.ts';
import { sideName, zoneClass, type Geometry } from './geometry.ts';

/** The plane the stars were measured on, sky subtracted; stars' coordinates map to it by (x - offset) / scale. */
export interface StackPlane {
  data: Float32Array;
  width: number;
  height: number;
  scale: number;
  offset: number;
  /** Per-pixel noise of the plane (sky and read noise), same units as data. */
  skySigma: number;
}

export type { ZonePsf, ZonePsfSection } from './zone-psf-types.ts';
import type { ZonePsf, ZonePsfSection } from './zone-psf-types.ts';

const LANCZOS_A = 3;

/**
 * Lanczos-3 kernel L(x) = sinc(x) sinc(x/3) for |x| < 3 (Duchon 1979, J. Appl. Meteor. 18, 1016;
 * Turkowski 1990, "Filters for common resampling tasks", Graphics Gems).
 */
export function lanczos3(x: number): number {
  const ax = Math.abs(x);
  if (ax < 1e-12) return 1;
  if (ax >= LANCZOS_A) return 0;
  const px = Math.PI * x;
  return (LANCZOS_A * Math.sin(px) * Math.sin(px / LANCZOS_A)) / (px * px);
}

/** The six taps for a sample at fraction f (0 <= f < 1) past pixel 0: pixels -2..3, normalised to sum 1 (a flat image stays flat). */
export function lanczos3Taps(f: number, out = new Float64Array(6)): Float64Array {
  let s = 0;
  for (let k = -2; k <= 3; k++) { const w = lanczos3(f - k); out[k + 2] = w; s += w; }
  for (let k = 0; k < 6; k++) out[k] /= s;
  return out;
}

/**
 * The plane resampled on a side x side grid centred on (cx, cy) (plane px): out[v][u] = I(cx + u - h, cy + v - h),
 * h = (side - 1) / 2. False when the taps leave the plane or touch a missing pixel.
 */
export function alignedCutout(p: Pick<StackPlane, 'data' | 'width' | 'height'>, cx: number, cy: number, side: number, out: Float64Array): boolean {
  const h = (side - 1) / 2;
  const ix = Math.floor(cx);
  const iy = Math.floor(cy);
  if (ix - h - 2 < 0 || iy - h - 2 < 0 || ix + h + 3 > p.width - 1 || iy + h + 3 > p.height - 1) return false;
  const wx = lanczos3Taps(cx - ix);
  const wy = lanczos3Taps(cy - iy);
  const rows = side + 5;
  const tmp = new Float64Array(rows * side);
  for (let r = 0; r < rows; r++) {
    const y = iy - h - 2 + r;
    const base = y * p.width + ix - h - 2;
    for (let u = 0; u < side; u++) {
      let s = 0;
      for (let k = 0; k < 6; k++) s += wx[k] * p.data[base + u + k];
      if (s !== s) return false;
      tmp[r * side + u] = s;
    }
  }
  for (let v = 0; v < side; v++) {
    for (let u = 0; u < side; u++) {
      let s = 0;
      for (let k = 0; k < 6; k++) s += wy[k] * tmp[(v + k) * side + u];
      out[v * side + u] = s;
    }
  }
  return true;
}

/** Clip threshold in robust sigmas (common practice), and the fewest values a pixel keeps. */
const CLIP_K = 3;
const MIN_CLIP_N = 5;

/**
 * Combine n cut-outs (each side*side, unit flux) pixel by pixel: values farther than 3 sigma from
 * the median (sigma = 1.4826 MAD, common practice) are dropped when at least 5 are present, the
 * rest averaged with the weights. Returns the stack and the variance of each stacked pixel
 * propagated from each cut-out's noise `sig[i]` (per pixel, unit-flux units).
 */
export function combineCutouts(cuts: Float64Array[], weights: Float64Array, sig: Float64Array, side: number): { image: Float64Array; variance: Float64Array } {
  const n = cuts.length;
  const m = side * side;
  const image = new Float64Array(m);
  const variance = new Float64Array(m);
  const vals = new Float64Array(n);
  const dev = new Float64Array(n);
  for (let p = 0; p < m; p++) {
    for (let i = 0; i < n; i++) vals[i] = cuts[i][p];
    let lo = -Infinity;
    let hi = Infinity;
    if (n >= MIN_CLIP_N) {
      const sorted = vals.slice().sort();
      const med = n % 2 ? sorted[(n - 1) / 2] : 0.5 * (sorted[n / 2 - 1] + sorted[n / 2]);
      for (let i = 0; i < n; i++) dev[i] = Math.abs(vals[i] - med);
      const d = dev.slice().sort();
      const mad = n % 2 ? d[(n - 1) / 2] : 0.5 * (d[n / 2 - 1] + d[n / 2]);
      const s = 1.4826 * mad;
      if (s > 0) { lo = med - CLIP_K * s; hi = med + CLIP_K * s; }
    }
    let sw = 0;
    let swv = 0;
    let sw2v = 0;
    for (let i = 0; i < n; i++) {
      const v = vals[i];
      if (v < lo || v > hi) continue;
      const w = weights[i];
      sw += w; swv += w * v; sw2v += w * w * sig[i] * sig[i];
    }
    image[p] = sw > 0 ? swv / sw : 0;
    variance[p] = sw > 0 ? sw2v / (sw * sw) : Infinity;
  }
  return { image, variance };
}

/** Stars at or above this SNR count equally: the brightest stars do not stand for the zone alone. */
const WEIGHT_SNR_CAP = 100;
/** At most this many stars per zone, the highest SNR first (enough for the noise to fall by 10x). */
export const MAX_PER_ZONE = 150;
/** Half the stack side in FWHMs: 2.5 FWHM holds > 99 % of a Gaussian's light and the start of a Moffat's wings. */
const HALF_SIDE_FWHM = 2.5;
/**
 * Below this median FWHM (px, as recorded) resampling widens the stack measurably: simulated
 * round Gaussians stack 1 % wide at 2.1 px, 5 % at 1.75 px, 11 % at 1.4 px (field-zone-stack.test.ts).
 */
export const STACK_SHARP_FWHM = 2.2;

export interface StackResult {
  image: Float64Array;
  variance: Float64Array;
  used: number[];
}

/**
 * Stack the given stars (indices into `stars`, frame coordinates) on the plane: aligned cut-outs
 * divided by each star's fitted flux, weighted by min(SNR, 100)^2 (inverse variance of a
 * sky-limited unit-flux cut-out), combined by combineCutouts, and scaled so the stack's square
 * holds unit light.
 */
export function stackStars(p: StackPlane, stars: readonly Star[], pick: readonly number[], side: number): StackResult | null {
  const cuts: Float64Array[] = [];
  const w: number[] = [];
  const sg: number[] = [];
  const used: number[] = [];
  for (const i of pick) {
    const s = stars[i];
    if (!(s.flux > 0) || !Number.isFinite(s.x) || !Number.isFinite(s.y)) continue;
    const out = new Float64Array(side * side);
    if (!alignedCutout(p, (s.x - p.offset) / p.scale, (s.y - p.offset) / p.scale, side, out)) continue;
    for (let k = 0; k < out.length; k++) out[k] /= s.flux;
    cuts.push(out);
    const snr = Math.min(Number.isFinite(s.snr) ? s.snr : 0, WEIGHT_SNR_CAP);
    w.push(Math.max(snr, 1) ** 2);
    sg.push(p.skySigma / s.flux);
    used.push(i);
  }
  if (!cuts.length) return null;
  const { image, variance } = combineCutouts(cuts, Float64Array.from(w), Float64Array.from(sg), side);
  let sum = 0;
  for (const v of image) sum += v;
  if (!(sum > 0)) return null;
  for (let k = 0; k < image.length; k++) { image[k] /= sum; variance[k] /= sum * sum; }
  return { image, variance, used };
}

export interface ZonePsfOptions {
  width: number;
  height: number;
  displayTopRow: Geometry['displayTopRow'];
  cols?: number;
  rows?: number;
  maxPerZone?: number;
  /** A star counts when this says so (default: no flags and a finite FWHM). */
  clean?: (s: Star) => boolean;
}

const defaultClean = (s: Star): boolean => s.flags.length === 0 && Number.isFinite(s.fwhmPx) && s.fwhmPx > 0;

function median(v: number[]): number {
  const a = v.filter(Number.isFinite).sort((x, y) => x - y);
  if (!a.length) return NaN;
  const n = a.length;
  return n % 2 ? a[(n - 1) / 2] : 0.5 * (a[n / 2 - 1] + a[n / 2]);
}

const r4 = (v: number): number | null => (Number.isFinite(v) ? Math.round(v * 1e4) / 1e4 : null);

/** Measure a stack with the per-star measurement; sizes in plane px. */
export function measureStack(image: Float64Array, variance: Float64Array, side: number, fwhmGuessPx: number): Star {
  // parts per million of the light: numbers of a comfortable size for the fit
  const K = 1e6;
  const stamp = new Float32Array(side * side);
  for (let k = 0; k < stamp.length; k++) stamp[k] = image[k] * K;
  // the fit weighs every pixel alike (no gain): the sky-limited variance of the outer pixels
  const vs: number[] = [];
  for (let k = 0; k < variance.length; k++) if (Number.isFinite(variance[k])) vs.push(variance[k]);
  const skyVar = Math.max(median(vs) * K * K, 1e-6);
  return measureStar({
    stamp, w: side, h: side, originX: 0, originY: 0, skyVariance: skyVar, gain: null, saturated: false,
    sigmaGuessPx: Math.max(0.5, fwhmGuessPx / 2.354820045), flags: [],
  }, { minSnr: 0 });
}

/**
 * The zone stacks of a frame: a cols x rows grid (3 x 3) over the frame, the same zone edges as
 * the field map's; one stack side for all zones, 2.5 x the largest zone's median FWHM each side.
 */
export function zonePsfs(p: StackPlane, stars: readonly Star[], o: ZonePsfOptions): ZonePsfSection {
  const cols = o.cols ?? 3;
  const rows = o.rows ?? 3;
  const maxN = o.maxPerZone ?? MAX_PER_ZONE;
  const clean = o.clean ?? defaultClean;
  const cw = o.width / cols;
  const ch = o.height / rows;
  const members: number[][] = Array.from({ length: cols * rows }, () => []);
  stars.forEach((s, i) => {
    if (!clean(s)) return;
    const c = Math.min(cols - 1, Math.max(0, Math.floor((s.x + 0.5) / cw)));
    const r = Math.min(rows - 1, Math.max(0, Math.floor((s.y + 0.5) / ch)));
    members[r * cols + c].push(i);
  });
  const zoneFwhm = members.map((m) => median(m.map((i) => stars[i].fwhmPx / p.scale)));
  const big = Math.max(...zoneFwhm.filter(Number.isFinite), 1);
  const allFwhm = median(members.flat().map((i) => stars[i].fwhmPx / p.scale));
  const half = Math.max(6, Math.min(40, Math.ceil(HALF_SIDE_FWHM * big)));
  const side = 2 * half + 1;
  const g = { displayTopRow: o.displayTopRow } as Geometry;
  const zones: ZonePsf[] = [];
  for (let r = 0; r < rows; r++) {
    for (let q = 0; q < cols; q++) {
      const all = members[r * cols + q].slice().sort((a, b) => stars[b].snr - stars[a].snr);
      const pick = all.slice(0, maxN);
      const z: ZonePsf = {
        col: q, row: r,
        name: cols === 3 && rows === 3 ? sideName(g, q - 1, r - 1) : `${q},${r}`,
        zone: cols === 3 && rows === 3 ? zoneClass(q, r) : 'edges',
        bounds: { x0: q * cw - 0.5, y0: r * ch - 0.5, x1: (q + 1) * cw - 0.5, y1: (r + 1) * ch - 0.5 },
        clean: all.length, stacked: 0, members: [], ppm: null,
        fwhmPx: null, fwhmErrPx: null, fwhmMajorPx: null, fwhmMinorPx: null, hfdPx: null, hfdErrPx: null,
        ellipticity: null, ellipticityErr: null, thetaDeg: null, model: null, moffatBeta: null, snr: null,
      };
      const st = pick.length ? stackStars(p, stars, pick, side) : null;
      if (st) {
        z.stacked = st.used.length;
        z.members = st.used;
        z.ppm = Array.from(st.image, (v) => Math.round(v * 1e6));
        const m = measureStack(st.image, st.variance, side, Number.isFinite(zoneFwhm[r * cols + q]) ? zoneFwhm[r * cols + q] : big);
        const k = p.scale;
        if (Number.isFinite(m.fwhmPx)) {
          z.fwhmPx = r4(k * m.fwhmPx); z.fwhmErrPx = r4(k * m.err.fwhmPx);
          z.fwhmMajorPx = r4(k * m.fwhmMajorPx); z.fwhmMinorPx = r4(k * m.fwhmMinorPx);
          z.ellipticity = r4(m.ellipticity); z.ellipticityErr = r4(m.err.ellipticity);
          z.thetaDeg = r4(m.thetaDeg); z.model = m.model; z.moffatBeta = m.moffatBeta === null ? null : r4(m.moffatBeta);
        }
        z.hfdPx = r4(k * m.hfdPx); z.hfdErrPx = r4(k * m.err.hfdPx); z.snr = r4(m.snr);
      }
      zones.push(z);
    }
  }
  return {
    schema: 'skyloupe.zonepsf/1', cols, rows, side, pixelScale: p.scale,
    method: {
      resampling: 'Lanczos-3 (Duchon 1979; Turkowski 1990), each star shifted so its fitted centre falls on the central pixel',
      combine: 'per pixel: values beyond 3 sigma of the median (sigma = 1.4826 MAD, at least 5 stars) dropped, the rest averaged',
      weights: 'each star divided by its fitted flux, weighted by min(SNR, 100)^2',
      measure: 'the per-star measurement (PSF fit, half-flux diameter) run on the stack',
    },
    zones,
    note: allFwhm < STACK_SHARP_FWHM
      ? `the stars are undersampled (median FWHM ${allFwhm.toFixed(2)} plane px): resampling widens each stack by a few per cent up to about 10 % at 1.4 px, so compare the stacks with each other rather than with single stars`
      : null,
  };
}
