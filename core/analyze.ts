import type { CfaPattern, Frame, Optics } from './frame/types.ts';
import { resolveOptics, type UserOptics } from './frame/optics.ts';
import { toMeasurePlane } from './frame/plane.ts';
import { estimateSkyInBands, subtractSkyInBands } from './image/background.ts';
import { convolveInBands, filteredNoiseFactor } from './image/convolve.ts';
import { detectStars, estimatePsfSigma, flagSaturatedAt, localMaximaInBands, matchedFilterTaps, PSF_PEAK_SIGMA, DEFAULT_DETECT_SIGMA } from './stars/detect.ts';
import { frameSaturation, type Saturation, type SaturationSource } from './frame/saturation.ts';
import { packStamps } from './stars/stamps.ts';
import { implausibleFlags } from './stars/plausible.ts';
import { measureAll } from './stars/measure-batch.ts';
import { shareWith } from './parallel/bands.ts';
import type { WorkerPool } from './parallel/pool.ts';
import { startPool } from './kernels.ts';
import type { Star, StarFlag } from './stars/types.ts';
import { median } from './image/stats.ts';
import { SkyloupeError } from './errors.ts';
import { confirmRegion, findDataRegion, inDataRegion, scaleRegion, type DataRegion } from './image/data-region.ts';
import { pixelShapeFromHeader, type PixelShape } from './diagnose/pixel-shape.ts';
import { analysisWithSky, type SkyStepOptions } from './sky/step.ts';
import type { AstrometrySection } from './sky/section.ts';
import { zonePsfs, type ZonePsfSection } from './field/zone-stack.ts';
import { isUsable } from './field/quantities.ts';

export interface AnalyzeOptions {
  user?: UserOptics;
  /** Treat the frame as a colour-filter mosaic with this layout (overrides the header). */
  cfa?: CfaPattern | null;
  /** Detection threshold in filtered-noise units. */
  threshold?: number;
  /** Worker threads for the per-star work (0 = this thread). */
  workers?: number;
  /** A pool started by the caller (e.g. before reading the frame, so its start-up overlaps the read); left open. */
  pool?: WorkerPool;
  model?: 'auto' | 'gaussian' | 'moffat';
  /** At most this many stars are measured (the most significant); the report says so. */
  maxStars?: number;
  signal?: AbortSignal;
  onProgress?: (stage: string, fraction: number) => void;
  /** Place the frame on the sky after measuring (default true); false skips it. */
  solve?: boolean;
  /** Catalogue and search settings of the plate-solving step. */
  sky?: SkyStepOptions;
}

export interface Analysis {
  readonly frame: {
    readonly width: number;
    readonly height: number;
    readonly format: Frame['format'];
    readonly displayTopRow: Frame['displayTopRow'];
    readonly cfa: CfaPattern | null;
    readonly saturationLevel: number | null;
    /** Where the frame holds sky (full-resolution px): the whole frame, an image circle or a mask. */
    readonly dataRegion: DataRegion;
    /** The stretch a round star takes from the pixels' shape on the sky, per the header WCS; null without one. */
    readonly pixelShape: PixelShape | null;
    /**
     * The level clipped pixels reach, in the frame's units, and which source served
     * (frame/saturation.ts); `pixels`: how many a DQ extension marks saturated.
     */
    readonly saturation: { readonly level: number | null; readonly source: SaturationSource; readonly pixels?: number };
  };
  readonly optics: Optics;
  /** The measured plane: full resolution, or 2x2 superpixels for mosaics (coordinates in stars[] are full resolution). */
  readonly plane: { readonly width: number; readonly height: number; readonly scale: number; readonly offset: number };
  readonly sky: { readonly level: number; readonly sigma: number; readonly boxPx: number };
  readonly detection: {
    readonly threshold: number;
    readonly psfSigmaPx: number;
    readonly candidates: number;
    readonly measured: number;
    /** Detections outside the data region, dropped before measuring. */
    readonly outsideData: number;
    readonly subset: null | { readonly of: number; readonly rule: string };
    readonly flagged: Readonly<Partial<Record<StarFlag, number>>>;
  };
  readonly stars: Star[];
  /** Seconds per stage. */
  readonly timings: Readonly<Record<string, number>>;
  /** Where the frame is on the sky and what the lens does to geometry; absent when the step was skipped. */
  readonly astrometry?: AstrometrySection;
  /** The field's PSF per zone: each 3 x 3 zone's clean stars aligned and stacked (field/zone-stack.ts). */
  readonly zonePsf?: ZonePsfSection;
}

/** Below this SNR a star is measured but kept out of the field statistics. */
export const MIN_FIELD_SNR = 10;

function checkAbort(signal?: AbortSignal): void {
  if (signal?.aborted) throw new SkyloupeError('cancelled', 'analysis cancelled');
}

/** The single-frame pipeline: plane -> sky -> subtract -> filter -> detect -> measure, each step a pure function. */
export async function analyzeFrame(frame: Frame, opts: AnalyzeOptions = {}): Promise<Analysis> {
  const timings: Record<string, number> = {};
  let t = performance.now();
  const lap = (name: string) => {
    const now = performance.now();
    timings[name] = (now - t) / 1000;
    t = now;
  };
  const progress = opts.onProgress ?? (() => {});
  const cfa = opts.cfa !== undefined ? opts.cfa : frame.cfa;
  // the saturation level from the header, a DQ extension, the white level, the ceiling or a clip in the data
  let saturation: Saturation = frameSaturation(frame);
  const plane = toMeasurePlane({ ...frame, saturationLevel: saturation.level }, { cfa });
  const optics = resolveOptics(frame.hints, opts.user ?? {}, plane.scale);
  checkFrameHasSignal(plane.data);
  // workers start now, so their start-up overlaps the serial steps
  const ownPool = !opts.pool;
  const pool = opts.pool ?? await startPool(opts.workers);
  try {
    // each step below runs its own kernel in bands of rows (or chunks of stars) over the pool
    const data = shareWith(pool, plane.data);
    lap('plane');
    progress('background', 0);
    const sky = await estimateSkyInBands(pool, data, plane.width, plane.height);
    let region = findDataRegion(plane.data, plane.width, plane.height);
    lap('sky');
    const { residual, missing } = await subtractSkyInBands(pool, data, sky);
    lap('subtract');
    checkAbort(opts.signal);
    progress('detect', 0);
    const bright = await localMaximaInBands(pool, residual, plane.width, plane.height, sky, 1, PSF_PEAK_SIGMA);
    const satTest = { level: plane.saturationLevel, mask: plane.saturatedMask ?? null };
    const psfSigmaPx = estimatePsfSigma(residual, plane.width, plane.height, sky, bright, { ...satTest, raw: data });
    lap('psf-size');
    const taps = matchedFilterTaps(psfSigmaPx);
    const filtered = await convolveInBands(pool, residual, plane.width, plane.height, taps);
    lap('filter');
    const threshold = opts.threshold ?? DEFAULT_DETECT_SIGMA;
    const peaks = await localMaximaInBands(pool, filtered, plane.width, plane.height, sky, filteredNoiseFactor(taps), threshold);
    const det = detectStars(residual, data, missing, plane.width, plane.height, sky, {
      threshold,
      saturationLevel: plane.saturationLevel,
      saturatedMask: satTest.mask,
      psfSigmaPx,
      filtered,
      peaks,
    });
    saturation = fromFlatCores(saturation, det, data, plane);
    lap('detect');
    checkAbort(opts.signal);
    if (det.candidates.length === 0) {
      throw new SkyloupeError('no-stars', `no stars found above ${det.threshold} sigma (sky ${fmt(sky.globalLevel)} +/- ${fmt(sky.globalSigma)} ADU): cloudy, empty or heavily defocused frame?`);
    }
    // A detection outside the sky (a fisheye's black corners) is no star; near the edge of the
    // image circle the stamp would take in the black, so a margin of the stamp radius is kept.
    // Stars well inside a part found without sky mean it is dark sky after all.
    region = confirmRegion(region, det.candidates, plane.width, plane.height, det.stampRadius);
    let candidates = region.kind === 'full' ? det.candidates : det.candidates.filter((c) => inDataRegion(region, c.x, c.y, det.stampRadius));
    const outsideData = det.candidates.length - candidates.length;
    if (candidates.length === 0) {
      throw new SkyloupeError('no-stars', `no stars found inside the sky region (${region.note})`);
    }
    let subset: Analysis['detection']['subset'] = null;
    const maxStars = opts.maxStars ?? 30000;
    if (candidates.length > maxStars) {
      candidates = [...candidates].sort((a, b) => b.significance - a.significance).slice(0, maxStars);
      subset = { of: det.candidates.length, rule: `the ${maxStars} most significant detections` };
    }
    const gain = numberMeta(frame.meta, ['GAIN', 'EGAIN']);
    const batch = packStamps(residual, missing, plane.width, plane.height, sky, candidates, det.stampRadius, det.psfSigmaPx, gain);
    lap('stamps');
    progress('measure', 0);
    const measured = await measureAll(pool, batch, {
      model: opts.model,
      signal: opts.signal,
      onProgress: (f) => progress('measure', f),
    });
    lap('measure');
    const finished = finish(frame, cfa, optics, plane, sky, det, subset, measured, timings, lap, progress, { region, outsideData }, saturation);
    // the stacks need the sky-subtracted plane, which lives only here
    const zonePsf = zonePsfs(
      { data: residual, width: plane.width, height: plane.height, scale: plane.scale, offset: plane.offset, skySigma: sky.globalSigma },
      finished.stars, { width: frame.width, height: frame.height, displayTopRow: frame.displayTopRow, clean: (s) => isUsable(s) && Number.isFinite(s.fwhmPx) },
    );
    lap('zone-psf');
    const result: Analysis = { ...finished, zonePsf };
    if (opts.solve === false) return result;
    // the solve runs on this thread without awaiting: let a pending cancel arrive first, and after
    await new Promise((r) => setTimeout(r, 0));
    checkAbort(opts.signal);
    const placed = analysisWithSky(result, frame.meta, { ...opts.sky, signal: opts.signal });
    await new Promise((r) => setTimeout(r, 0));
    checkAbort(opts.signal); // the solver stops its search when cancelled: that is no result
    return placed;
  } finally {
    if (ownPool) void pool.close();
  }
}

function finish(
  frame: Frame, cfa: CfaPattern | null, optics: Optics,
  plane: { width: number; height: number; scale: number; offset: number },
  sky: { globalLevel: number; globalSigma: number; box: number },
  det: { threshold: number; psfSigmaPx: number; candidates: readonly unknown[] },
  subset: Analysis['detection']['subset'], measured: Star[],
  timings: Record<string, number>, lap: (n: string) => void, progress: (stage: string, f: number) => void,
  where: { region: DataRegion; outsideData: number },
  saturation: Saturation,
): Analysis {
  const stars = finishStars(measured, plane.scale, plane.offset, plane.width, plane.height, 2.354820045 * det.psfSigmaPx);
  const flagged: Partial<Record<StarFlag, number>> = {};
  for (const s of stars) for (const f of s.flags) flagged[f] = (flagged[f] ?? 0) + 1;
  lap('finish');
  progress('done', 1);
  return {
    frame: {
      width: frame.width, height: frame.height, format: frame.format, displayTopRow: frame.displayTopRow, cfa,
      saturationLevel: saturation.level,
      saturation: { level: saturation.level, source: saturation.source, ...(frame.qualityCounts?.saturated ? { pixels: frame.qualityCounts.saturated } : {}) },
      dataRegion: scaleRegion(where.region, plane.scale, plane.offset), pixelShape: pixelShapeFromHeader(frame.meta),
    },
    optics,
    plane: { width: plane.width, height: plane.height, scale: plane.scale, offset: plane.offset },
    sky: { level: sky.globalLevel, sigma: sky.globalSigma, boxPx: sky.box * plane.scale },
    detection: { threshold: det.threshold, psfSigmaPx: det.psfSigmaPx * plane.scale, candidates: det.candidates.length, measured: stars.length, outsideData: where.outsideData, subset, flagged },
    stars,
    timings,
  };
}

/** Stars found clipped by their flat cores at least this often make the frame's level (when nothing else gave one that the data reach). */
const FLAT_CORES_FOR_LEVEL = 3;

/**
 * The last source in the order (frame/saturation.ts): when no keyword, DQ extension, white level
 * or clip in the data gave a level (float data, or an integer ceiling nothing reaches), and at
 * least 3 stars are flat-topped, their median top less 2 % (the spread of a soft full-well
 * plateau, [CP]) is the frame's level, in the frame's units; stars reaching it are flagged too.
 */
function fromFlatCores(
  sat: Saturation, det: { candidates: import('./stars/types.ts').Candidate[]; flatCoreLevels: number[]; psfSigmaPx: number },
  data: Float32Array, plane: { width: number; height: number; scale: number },
): Saturation {
  if (sat.source !== 'none' && sat.source !== 'integer-ceiling') return sat;
  const tops = det.flatCoreLevels;
  if (tops.length < FLAT_CORES_FOR_LEVEL) return sat;
  const planeLevel = 0.98 * median(Float64Array.from(tops), tops.length);
  if (sat.level !== null && planeLevel >= 0.995 * sat.level * plane.scale * plane.scale) return sat;
  flagSaturatedAt(det.candidates, data, plane.width, plane.height, det.psfSigmaPx, { level: planeLevel, mask: null });
  // a superpixel sums four pixels: the frame's own level is a quarter of the plane's
  return { level: plane.scale === 2 ? planeLevel / 4 : planeLevel, source: 'flat-cores', mask: sat.mask };
}

function fmt(v: number): string {
  return Number.isFinite(v) ? v.toPrecision(4) : String(v);
}

function numberMeta(meta: Frame['meta'], keys: string[]): number | null {
  for (const k of keys) {
    const v = meta[k];
    if (typeof v === 'number' && v > 0 && Number.isFinite(v)) return v;
  }
  return null;
}

/** A frame that is all missing or flat has no stars; say so instead of measuring noise. */
function checkFrameHasSignal(data: Float32Array): void {
  let lo = Infinity;
  let hi = -Infinity;
  let valid = 0;
  const step = Math.max(1, Math.floor(data.length / 2_000_000));
  for (let i = 0; i < data.length; i += step) {
    const v = data[i];
    if (v === v) { valid++; if (v < lo) lo = v; if (v > hi) hi = v; }
  }
  if (valid === 0) throw new SkyloupeError('no-stars', 'every pixel is missing (NaN or BLANK): nothing to measure');
  if (hi === lo) throw new SkyloupeError('no-stars', `the frame is constant (every pixel ${fmt(lo)}): nothing to measure`);
}

/**
 * Map plane coordinates to the full-resolution frame, and add the flags that need the
 * whole population: no star of this frame by its size or concentration (a cosmic ray, a
 * noise blob: stars/plausible.ts), or too faint.
 */
function finishStars(stars: Star[], scale: number, offset: number, width: number, height: number, psfFwhmPx: number): Star[] {
  const extra = implausibleFlags(stars, width, height, psfFwhmPx);
  return stars.map((s, i) => {
    const flags = [...s.flags];
    for (const f of extra[i]) if (!flags.includes(f)) flags.push(f);
    if (!(s.snr >= MIN_FIELD_SNR) && !flags.includes('low-snr')) flags.push('low-snr');
    if (scale === 1 && offset === 0 && flags.length === s.flags.length) return s;
    const k = scale;
    return {
      ...s,
      x: k * s.x + offset,
      y: k * s.y + offset,
      fwhmPx: k * s.fwhmPx,
      fwhmMajorPx: k * s.fwhmMajorPx,
      fwhmMinorPx: k * s.fwhmMinorPx,
      hfdPx: k * s.hfdPx,
      moments: { ...s.moments, ixx: k * k * s.moments.ixx, iyy: k * k * s.moments.iyy, ixy: k * k * s.moments.ixy },
      err: { ...s.err, x: k * s.err.x, y: k * s.err.y, fwhmPx: k * s.err.fwhmPx, hfdPx: k * s.err.hfdPx },
      flags,
    };
  });
}
