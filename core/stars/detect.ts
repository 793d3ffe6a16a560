import type { Candidate, StarFlag } from './types.ts';
import { convolveSeparable, filteredNoiseFactor, gaussianTaps } from '../image/convolve.ts';
import { skyNoiseAt, type SkyModel } from '../image/background.ts';
import { median } from '../image/stats.ts';
import { defineKernel, type KernelRunner } from '../parallel/kernel.ts';
import { inBands } from '../parallel/bands.ts';

/** Default detection threshold, in filtered-noise units. */
export const DEFAULT_DETECT_SIGMA = 5;

export interface DetectOptions {
  /** Detection threshold in units of the filtered noise. */
  threshold?: number;
  /** Expected PSF sigma (px); estimated from the brightest stars when absent. */
  psfSigmaPx?: number;
  /** Highest valid raw value; pixels at or above 99.5 % of it mark a star saturated. */
  saturationLevel?: number | null;
  /** Measurement stamp radius (px); stars closer than this to a border are flagged 'edge'. */
  stampRadius?: number;
  /** The residual already convolved with matchedFilterTaps(psfSigmaPx) (e.g. in parallel). */
  filtered?: Float32Array;
  /** localMaximaRows of `filtered` over the whole frame, packed (e.g. found in parallel bands). */
  peaks?: Float64Array;
}

/**
 * The matched filter for a PSF of this sigma: a Gaussian of the same size, cut at 2.5
 * sigma (the part beyond holds 1 - erf(2.5/sqrt 2)^2 = 2.5 % of the kernel and adds
 * nearly nothing to the filtered SNR, while every tap costs a pass over the frame).
 */
export function matchedFilterTaps(psfSigmaPx: number): Float32Array {
  return gaussianTaps(Math.max(0.6, psfSigmaPx), 2.5);
}

export interface Detection {
  readonly candidates: Candidate[];
  readonly psfSigmaPx: number;
  readonly threshold: number;
  readonly stampRadius: number;
  /** Local maxima merged into a brighter neighbour (same object). */
  readonly merged: number;
}

/**
 * Matched-filter detection: convolve the sky-subtracted frame with a Gaussian of the
 * expected PSF size (the optimal linear filter for a known PSF in white noise, common
 * practice as in Source Extractor's FILTER step), threshold in units of the filtered
 * noise, keep local maxima, merge maxima of one object, and flag what should not be
 * measured rather than drop it.
 */
export function detectStars(
  residual: Float32Array,
  raw: Float32Array,
  missing: Uint8Array | null,
  width: number,
  height: number,
  sky: SkyModel,
  opts: DetectOptions = {},
): Detection {
  const threshold = opts.threshold ?? DEFAULT_DETECT_SIGMA;
  const psfSigmaPx = opts.psfSigmaPx ?? estimatePsfSigma(residual, width, height, sky);
  const fwhm = 2.354820045 * psfSigmaPx;
  const stampRadius = opts.stampRadius ?? Math.min(40, Math.max(6, Math.ceil(3 * fwhm) + 1));
  const taps = matchedFilterTaps(psfSigmaPx);
  const filtered = opts.filtered ?? convolveSeparable(residual, width, height, taps);
  const nf = filteredNoiseFactor(taps);
  const peaks = unpackPeaks(opts.peaks ?? localMaximaRows(filtered, width, height, sky, nf, threshold, 0, height));
  const { kept, merged } = mergePeaks(peaks, filtered, width, height, Math.max(3, 4 * psfSigmaPx));
  const candidates = flagCandidates(kept, residual, raw, missing, width, height, psfSigmaPx, stampRadius, opts.saturationLevel ?? null);
  flagStreaks(candidates, kept, filtered, width, height, psfSigmaPx, stampRadius, threshold * nf * minMeshSigma(sky));
  return { candidates, psfSigmaPx, threshold, stampRadius, merged };
}

interface Peak { x: number; y: number; value: number; significance: number }

function minMeshSigma(sky: SkyModel): number {
  let minSigma = Infinity;
  for (let i = 0; i < sky.meshSigma.length; i++) if (sky.meshSigma[i] < minSigma) minSigma = sky.meshSigma[i];
  if (!(minSigma > 0)) minSigma = sky.globalSigma > 0 ? sky.globalSigma : 1e-12;
  return minSigma;
}

/**
 * Strict 3x3 maxima of f above threshold x the local filtered noise (sky noise x nf) in rows
 * [y0, y1), packed as x, y, value, significance in raster order. Rows are independent, so
 * bands can be searched in parallel and their results concatenated.
 */
export function localMaximaRows(f: Float32Array, width: number, height: number, sky: SkyModel, nf: number, threshold: number, y0: number, y1: number): Float64Array {
  const floor = threshold * minMeshSigma(sky) * nf;
  let out = new Float64Array(256);
  let n = 0;
  for (let y = Math.max(1, y0); y < Math.min(height - 1, y1); y++) {
    const row = y * width;
    for (let x = 1; x < width - 1; x++) {
      const v = f[row + x];
      if (!(v > floor)) continue;
      // strict 3x3 maximum (ties broken toward the first in storage order)
      if (v < f[row + x + 1] || v <= f[row + x - 1] || v < f[row + width + x] || v <= f[row - width + x]) continue;
      if (v < f[row + width + x + 1] || v < f[row + width + x - 1] || v <= f[row - width + x + 1] || v <= f[row - width + x - 1]) continue;
      const noise = skyNoiseAt(sky, x, y) * nf;
      const sig = noise > 0 ? v / noise : Infinity;
      if (sig < threshold) continue;
      if (n + 4 > out.length) { const g = new Float64Array(out.length * 2); g.set(out); out = g; }
      out[n++] = x; out[n++] = y; out[n++] = v; out[n++] = sig;
    }
  }
  return out.slice(0, n);
}

/** localMaximaRows as a pool kernel: rows [y0, y1). */
export const localMaximaRowsKernel = defineKernel('local-maxima-rows',
  (a: { f: Float32Array; width: number; height: number; sky: SkyModel; nf: number; threshold: number; y0: number; y1: number }) =>
    localMaximaRows(a.f, a.width, a.height, a.sky, a.nf, a.threshold, a.y0, a.y1));

/** localMaximaRows over the frame in bands over the pool, concatenated in raster order (as one call would give). */
export async function localMaximaInBands(pool: KernelRunner, f: Float32Array, width: number, height: number, sky: SkyModel, nf: number, threshold: number): Promise<Float64Array> {
  const parts = await inBands(pool, height, (y0, y1) => pool.run(localMaximaRowsKernel, { f, width, height, sky, nf, threshold, y0, y1 }));
  const out = new Float64Array(parts.reduce((s, p) => s + p.length, 0));
  let o = 0;
  for (const p of parts) { out.set(p, o); o += p.length; }
  return out;
}

function unpackPeaks(p: Float64Array): Peak[] {
  const peaks: Peak[] = [];
  for (let i = 0; i + 3 < p.length; i += 4) peaks.push({ x: p[i], y: p[i + 1], value: p[i + 2], significance: p[i + 3] });
  return peaks;
}

/**
 * Maxima of one object (a trailed or comatic star has a ridge with several noise
 * maxima) are merged when the filtered signal along the line to a brighter maximum
 * never drops below 70 % of the fainter one: no saddle, so no second source.
 */
function mergePeaks(peaks: Peak[], f: Float32Array, width: number, height: number, radius: number): { kept: Peak[]; merged: number } {
  peaks.sort((a, b) => b.value - a.value);
  const cell = Math.max(8, Math.ceil(radius * 4));
  const gw = Math.ceil(width / cell);
  const grid = new Map<number, Peak[]>();
  const kept: Peak[] = [];
  let merged = 0;
  const reach = radius * 4; // ridges of trailed stars can be long
  for (const p of peaks) {
    const gx = Math.floor(p.x / cell);
    const gy = Math.floor(p.y / cell);
    let same = false;
    for (let dy = -1; dy <= 1 && !same; dy++) {
      for (let dx = -1; dx <= 1 && !same; dx++) {
        const list = grid.get((gy + dy) * gw + gx + dx);
        if (!list) continue;
        for (const q of list) {
          const d = Math.hypot(q.x - p.x, q.y - p.y);
          if (d > reach) continue;
          if (noSaddle(f, width, height, p, q, 0.7)) { same = true; break; }
        }
      }
    }
    if (same) { merged++; continue; }
    kept.push(p);
    const key = gy * gw + gx;
    const list = grid.get(key);
    if (list) list.push(p); else grid.set(key, [p]);
  }
  return { kept, merged };
}

function noSaddle(f: Float32Array, width: number, height: number, p: Peak, q: Peak, frac: number): boolean {
  const d = Math.hypot(q.x - p.x, q.y - p.y);
  const n = Math.max(2, Math.ceil(d * 2));
  const floor = frac * p.value;
  for (let i = 1; i < n; i++) {
    const t = i / n;
    const x = Math.round(p.x + (q.x - p.x) * t);
    const y = Math.round(p.y + (q.y - p.y) * t);
    if (x < 0 || y < 0 || x >= width || y >= height) return false;
    if (f[y * width + x] < floor) return false;
  }
  return true;
}

function flagCandidates(
  peaks: Peak[],
  residual: Float32Array,
  raw: Float32Array,
  missing: Uint8Array | null,
  width: number,
  height: number,
  psfSigma: number,
  R: number,
  saturation: number | null,
): Candidate[] {
  const fwhm = 2.354820045 * psfSigma;
  // a hot pixel stands alone: its 4-neighbours carry almost nothing, unlike any PSF
  // that the optics can form (a Gaussian of sigma s gives neighbour/centre = exp(-1/(2 s^2)))
  const starRatio = Math.exp(-1 / (2 * psfSigma * psfSigma));
  const hotRatio = Math.min(0.1, 0.35 * starRatio);
  const satLevel = saturation !== null ? 0.995 * saturation : Infinity;
  const out: Candidate[] = [];
  const grid = new PointGrid(peaks, Math.max(8, Math.ceil(R)), width);
  for (let i = 0; i < peaks.length; i++) {
    const p = peaks[i];
    const flags: StarFlag[] = [];
    if (p.x < R || p.y < R || p.x >= width - R || p.y >= height - R || (missing && anyMissing(missing, width, height, p.x, p.y, R))) flags.push('edge');
    const c = residual[p.y * width + p.x];
    // refine to the brightest pixel of the unfiltered frame within 1 px
    let peak = c;
    let px = p.x;
    let py = p.y;
    for (let dy = -1; dy <= 1; dy++) for (let dx = -1; dx <= 1; dx++) {
      const xx = p.x + dx; const yy = p.y + dy;
      if (xx < 1 || yy < 1 || xx >= width - 1 || yy >= height - 1) continue;
      const v = residual[yy * width + xx];
      if (v > peak) { peak = v; px = xx; py = yy; }
    }
    if (satLevel < Infinity && anySaturated(raw, width, height, px, py, Math.max(2, Math.ceil(fwhm)), satLevel)) flags.push('saturated');
    if (px > 0 && py > 0 && px < width - 1 && py < height - 1 && peak > 0) {
      const n4 = (residual[py * width + px - 1] + residual[py * width + px + 1] + residual[(py - 1) * width + px] + residual[(py + 1) * width + px]) / 4;
      if (n4 < hotRatio * peak) flags.push('hot-pixel');
    }
    // blended: a neighbour close enough and bright enough to bias the moments or the fit
    let blended = false;
    for (const j of grid.around(p.x, p.y)) {
      if (j === i) continue;
      const q = peaks[j];
      // the neighbour's light at this star's centre, relative to this star's peak, for a
      // profile twice the PSF sigma wide (room for Moffat wings): over 2 % biases the fit
      const d = Math.hypot(q.x - p.x, q.y - p.y);
      const ratio = q.value / p.value;
      const spill = ratio * Math.exp((-d * d) / (8 * psfSigma * psfSigma));
      if (spill > 0.02 || (d < R && ratio > 3)) { blended = true; break; }
    }
    if (blended) flags.push('blended');
    out.push({ x: px, y: py, significance: p.significance, peak, flags });
  }
  return out;
}

/**
 * Detections on a long straight feature get 'streak'. Two tests, both far beyond any PSF:
 * (1) a continuous trail (satellite, meteor): the filtered image stays above the detection
 * threshold, within a factor 2, along one axis at d to 3 d on both sides, d = 4 FWHM + 8 px,
 * while across it, at d and 2 d, it is below a quarter of the lowest. A star's own filtered
 * profile (sigma sqrt 2 sigma_psf) is down to exp(-(d / 2 sigma)^2) < 2 % of its peak there,
 * and a round halo or a diffuse glow fails the across test. Detections whose stamp the line
 * crosses are flagged with it;
 * (2) a dotted line (aircraft strobes): at least CHAIN detections of similar filtered value,
 * each the same step on from the last (within 1.5 px), which chance alignments in a dense
 * field rarely give (each extra link at a star density n has a chance of about 7 n).
 */
const CHAIN = 6;
const ALONG = [-3, -2.5, -2, -1.5, -1, 1, 1.5, 2, 2.5, 3];

function flagStreaks(cands: Candidate[], peaks: Peak[], f: Float32Array, width: number, height: number, psfSigma: number, R: number, floor: number): void {
  const fwhm = 2.354820045 * psfSigma;
  const d = 4 * fwhm + 8;
  const at = (x: number, y: number) => {
    const xi = Math.round(x);
    const yi = Math.round(y);
    return xi < 0 || yi < 0 || xi >= width || yi >= height ? NaN : f[yi * width + xi];  // NaN: outside
  };
  const streak = new Uint8Array(cands.length);
  const angle = new Float64Array(cands.length).fill(NaN); // trail direction, rad
  // angle steps fine enough that the farthest sample stays within 1 px of the line
  const ANGLES = Math.ceil((Math.PI * 3 * d) / 2);
  const COS = Float64Array.from({ length: ANGLES }, (_, k) => Math.cos((k * Math.PI) / ANGLES));
  const SIN = Float64Array.from({ length: ANGLES }, (_, k) => Math.sin((k * Math.PI) / ANGLES));
  for (let i = 0; i < peaks.length; i++) {
    const p = peaks[i];
    for (let k = 0; k < ANGLES; k++) {
      const a = (k * Math.PI) / ANGLES;
      const c = COS[k];
      const s = SIN[k];
      // a trail runs off the frame: samples outside it do not count against, but at least
      // one full side lies inside
      let along = true;
      let inside = 0;
      let low = Infinity;
      let high = 0;
      for (const t of ALONG) {
        const v = at(p.x + t * d * c, p.y + t * d * s);
        if (v !== v) continue;
        inside++;
        if (!(v >= floor)) { along = false; break; }
        if (v < low) low = v;
        if (v > high) high = v;
      }
      // a trail is nearly uniform; chance hits on stars in a crowded field are not
      if (!along || inside < ALONG.length / 2 || high > 2 * low) continue;
      // across: low on both sides at d and 2 d (NaN outside the frame counts as low)
      let across = true;
      for (const t of [-2 * d, -d, d, 2 * d]) if (at(p.x - t * s, p.y + t * c) >= 0.25 * low) { across = false; break; }
      if (across) { streak[i] = 1; angle[i] = a; break; }
    }
  }
  const maxStep = 12 * fwhm + 20;
  const cell = Math.max(8, Math.ceil(maxStep));
  const grid = new PointGrid(peaks, cell, width);
  // a star whose stamp the trail crosses (within R of the line through a trail detection, no
  // farther along it than the 3 d the ridge was checked over) has the trail's light in it;
  // a detection right on the line carries the line on (a faint trail's ridge test fails here
  // and there, and near the frame border)
  const reach = 3 * d;
  const cells = Math.ceil(reach / cell);
  const queue: number[] = [];
  for (let i = 0; i < peaks.length; i++) if (angle[i] === angle[i]) queue.push(i);
  for (let qi = 0; qi < queue.length; qi++) {
    const j = queue[qi];
    const q = peaks[j];
    const cs = Math.cos(angle[j]);
    const sn = Math.sin(angle[j]);
    for (const i of grid.around(q.x, q.y, cells)) {
      if (streak[i]) continue;
      const p = peaks[i];
      const across = Math.abs(-(p.x - q.x) * sn + (p.y - q.y) * cs);
      if (across > R || Math.hypot(p.x - q.x, p.y - q.y) > reach) continue;
      streak[i] = 1;
      if (across <= fwhm) { angle[i] = angle[j]; queue.push(i); }
    }
  }
  // dotted lines
  const tol = 1.5;
  const nearest = (x: number, y: number, ref: number): number => {
    let best = -1;
    let bd = tol;
    for (const j of grid.around(x, y)) {
      const q = peaks[j];
      const r = q.value / ref;
      if (r < 1 / 3 || r > 3) continue;
      const dd = Math.hypot(q.x - x, q.y - y);
      if (dd <= bd) { bd = dd; best = j; }
    }
    return best;
  };
  const chain: number[] = [];
  for (let i = 0; i < peaks.length; i++) {
    const p = peaks[i];
    for (const j of grid.around(p.x, p.y)) {
      const q = peaks[j];
      // each line is walked once, from its end with the smaller (y, x)
      if (q.y < p.y || (q.y === p.y && q.x <= p.x)) continue;
      const sx = q.x - p.x;
      const sy = q.y - p.y;
      const step = Math.hypot(sx, sy);
      if (step < 2 * fwhm || step > maxStep) continue;
      const r = q.value / p.value;
      if (r < 1 / 3 || r > 3) continue;
      // p must be the first link: nothing one step before it
      if (nearest(p.x - sx, p.y - sy, p.value) >= 0) continue;
      chain.length = 0;
      chain.push(i, j);
      let vx = sx;
      let vy = sy;
      while (true) {
        const last = peaks[chain[chain.length - 1]];
        const nxt = nearest(last.x + vx, last.y + vy, last.value);
        if (nxt < 0) break;
        chain.push(nxt);
        const n = chain.length - 1;
        vx = (peaks[nxt].x - p.x) / n;
        vy = (peaks[nxt].y - p.y) / n;
        if (chain.length > 10000) break;
      }
      if (chain.length >= CHAIN) for (const k of chain) streak[k] = 1;
    }
  }
  for (let i = 0; i < cands.length; i++) {
    if (streak[i] && !cands[i].flags.includes('streak')) (cands[i].flags as StarFlag[]).push('streak');
  }
}

/** Indices of points bucketed in square cells, for neighbour look-ups without an all-pairs scan. */
class PointGrid {
  private readonly map = new Map<number, number[]>();
  private readonly gw: number;
  constructor(points: readonly { x: number; y: number }[], readonly cell: number, width: number) {
    this.gw = Math.ceil(width / cell);
    points.forEach((p, i) => {
      const k = this.key(Math.floor(p.x / cell), Math.floor(p.y / cell));
      const l = this.map.get(k);
      if (l) l.push(i); else this.map.set(k, [i]);
    });
  }

  private key(gx: number, gy: number): number {
    return gy * this.gw + gx;
  }

  /** Indices in the cells within `cells` of the cell holding (x, y). */
  around(x: number, y: number, cells = 1): number[] {
    const gx = Math.floor(x / this.cell);
    const gy = Math.floor(y / this.cell);
    const out: number[] = [];
    for (let dy = -cells; dy <= cells; dy++) for (let dx = -cells; dx <= cells; dx++) {
      const l = this.map.get(this.key(gx + dx, gy + dy));
      if (l) for (const i of l) out.push(i);
    }
    return out;
  }
}

function anyMissing(m: Uint8Array, width: number, height: number, x: number, y: number, r: number): boolean {
  for (let yy = Math.max(0, y - r); yy <= Math.min(height - 1, y + r); yy++) {
    const row = yy * width;
    for (let xx = Math.max(0, x - r); xx <= Math.min(width - 1, x + r); xx++) if (m[row + xx]) return true;
  }
  return false;
}

function anySaturated(raw: Float32Array, width: number, height: number, x: number, y: number, r: number, level: number): boolean {
  for (let yy = Math.max(0, y - r); yy <= Math.min(height - 1, y + r); yy++) {
    const row = yy * width;
    for (let xx = Math.max(0, x - r); xx <= Math.min(width - 1, x + r); xx++) if (raw[row + xx] >= level) return true;
  }
  return false;
}

/**
 * PSF size from the brightest isolated maxima: the area above half maximum gives
 * FWHM = 2 sqrt(A / pi) for a round profile (common practice), median over stars.
 */
/** Threshold (sky sigmas) of the unfiltered maxima estimatePsfSigma measures. */
export const PSF_PEAK_SIGMA = 15;

export function estimatePsfSigma(residual: Float32Array, width: number, height: number, sky: SkyModel, packedPeaks?: Float64Array): number {
  // maxima of the unfiltered frame at 15 sigma: no noise peak gets there, and no extra pass is needed
  const peaks = unpackPeaks(packedPeaks ?? localMaximaRows(residual, width, height, sky, 1, PSF_PEAK_SIGMA, 0, height));
  peaks.sort((a, b) => b.value - a.value);
  const R = 15;
  const sizes: number[] = [];
  for (const p of peaks) {
    if (sizes.length >= 200) break;
    if (p.x < R || p.y < R || p.x >= width - R || p.y >= height - R) continue;
    const c = residual[p.y * width + p.x];
    if (!(c > 0)) continue;
    const half = c / 2;
    // the 4-connected region above half maximum
    const area = halfMaxArea(residual, width, p.x, p.y, R, half);
    if (area < 1) continue;
    const n4 = (residual[p.y * width + p.x - 1] + residual[p.y * width + p.x + 1]) / 2;
    if (n4 < 0.05 * c) continue; // hot pixel
    sizes.push(2 * Math.sqrt(area / Math.PI) / 2.354820045);
  }
  if (sizes.length === 0) return 1.2;
  const arr = Float64Array.from(sizes);
  return Math.min(10, Math.max(0.5, median(arr, arr.length)));
}

function halfMaxArea(img: Float32Array, width: number, x0: number, y0: number, R: number, half: number): number {
  const size = 2 * R + 1;
  const seen = new Uint8Array(size * size);
  const stack: number[] = [R * size + R];
  seen[R * size + R] = 1;
  let area = 0;
  while (stack.length) {
    const k = stack.pop()!;
    const ly = Math.floor(k / size);
    const lx = k - ly * size;
    area++;
    const nb = [k - 1, k + 1, k - size, k + size];
    const ok = [lx > 0, lx < size - 1, ly > 0, ly < size - 1];
    for (let j = 0; j < 4; j++) {
      if (!ok[j]) continue;
      const n = nb[j];
      if (seen[n]) continue;
      const ny = Math.floor(n / size);
      const nx = n - ny * size;
      if (img[(y0 + ny - R) * width + (x0 + nx - R)] > half) { seen[n] = 1; stack.push(n); }
    }
  }
  return area;
}
