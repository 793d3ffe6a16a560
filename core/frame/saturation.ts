/**
 * Where a frame saturates, from every source, in this order (the first that applies serves,
 * and the report says which): the SATURATE or DATAMAX keyword, a data-quality (DQ) or mask
 * extension, the raw decoder's white level, the integer ceiling of the encoding when the data
 * reach it, and otherwise a plateau found in the data: many pixels at one value at the top of
 * the histogram (an analogue-to-digital or 8-bit clip below the ceiling: 12-bit data scaled by
 * 16, a 14-bit camera in a 16-bit file, full well / gain + offset, a stretched export).
 * Flat-topped star cores (core/stars/clipped.ts) are the last resort, decided once stars are
 * found. A DQ or mask extension also marks saturated pixels one by one, whatever the level.
 */
import type { Frame } from './types.ts';
import { median } from '../image/stats.ts';

/** Which source gave the saturation level (report: frame.saturation.source). */
export type SaturationSource =
  | 'SATURATE'        // header keyword
  | 'DATAMAX'         // header keyword (FITS 4.0: the largest valid physical value)
  | 'DQ'              // data-quality extension: per-pixel saturation bits
  | 'white-level'     // the raw decoder's white level, less the black level
  | 'integer-ceiling' // the largest value the encoding holds (reached by the data, or nothing else said)
  | 'plateau'         // many pixels at one value at the top of the data
  | 'flat-cores'      // stars whose brightest pixels are equal within the noise
  | 'none';           // float data and nothing says: no level

export interface Saturation {
  /** Pixels at or above (99.5 % of) this value are clipped; null when only a mask or nothing says. */
  readonly level: number | null;
  readonly source: SaturationSource;
  /** Pixels a DQ or mask extension marks saturated (per pixel, whatever the level); null if none. */
  readonly mask: Uint8Array | null;
}

/** What a person reads for each source (CLI, HTML and the desktop program say the same). */
export const SATURATION_SOURCE_WORDS: Readonly<Record<SaturationSource, string>> = {
  SATURATE: 'SATURATE keyword',
  DATAMAX: 'DATAMAX keyword',
  DQ: 'data-quality extension',
  'white-level': 'raw white level',
  'integer-ceiling': 'largest value of the encoding',
  plateau: 'clip found in the data',
  'flat-cores': 'flat-topped star cores',
  none: 'nothing says',
};

/** The frame's saturation in words: "250 (clip found in the data)", "2531 pixels marked (data-quality extension)". */
export function saturationText(s: { level: number | null; source: string; pixels?: number }): string {
  const lvl = s.level === null ? (s.pixels ? `${s.pixels} pixels marked` : 'unknown') : `${Number(s.level.toPrecision(6))}`;
  return `${lvl} (${SATURATION_SOURCE_WORDS[s.source as SaturationSource] ?? s.source})`;
}

/** A plateau needs at least this many pixels in its top band. */
const PLATEAU_MIN_PIXELS = 5;

/**
 * The frame's saturation before any star is found. `frame.saturationSource` says what the
 * decoder knew (keyword, white level, integer ceiling); the data are searched for a clip below
 * the ceiling (or for float data) unless a keyword, the DQ extension or the white level spoke.
 */
export function frameSaturation(frame: Frame): Saturation {
  const mask = frame.saturatedMask ?? null;
  const decoded = frame.saturationSource ?? (frame.saturationLevel === null ? 'none' : 'integer-ceiling');
  if (decoded === 'SATURATE' || decoded === 'DATAMAX' || decoded === 'white-level') {
    return { level: frame.saturationLevel, source: decoded, mask };
  }
  if (mask && frame.qualitySource === 'DQ') return { level: frame.saturationLevel, source: 'DQ', mask };
  const ceiling = decoded === 'integer-ceiling' ? frame.saturationLevel : null;
  const p = findPlateau(frame.data, ceiling, frame.width);
  // the ceiling reached by a pile of pixels is the clip itself (the band under it then holds the
  // clipped stars' edges); a few pixels there (hot ones) leave the search below it to speak
  if (ceiling !== null && p.atCeiling >= PLATEAU_MIN_PIXELS) return { level: ceiling, source: 'integer-ceiling', mask };
  if (p.plateau !== null) return { level: p.plateau, source: 'plateau', mask };
  return { level: ceiling, source: ceiling === null ? 'none' : 'integer-ceiling', mask };
}

/**
 * A clip in the data: the largest value below the ceiling (all values when there is none),
 * vmax, and a band of width w = max(one step, 0.5 % of vmax above the sky) under it. A clip
 * piles pixels into the top band: at least 5 there and 3 times as many as in the band of the
 * same width below it (a natural star field thins out toward its brightest pixel, so its top
 * band holds one or two). The sky is the median of a regular subsample, its noise from the
 * median absolute deviation; the top must stand 20 noise sigmas above it (a flat or an empty
 * frame has no stars to clip). Returns the plateau's lowest value in the band (so that the
 * 99.5 % rule downstream takes the whole band), or null; and `atCeiling`, the pixels at or
 * above the ceiling.
 */
export function findPlateau(data: Float32Array, ceiling: number | null, width = data.length): { plateau: number | null; atCeiling: number } {
  const n = data.length;
  const ceil = ceiling ?? Infinity;
  const rows = Math.ceil(n / width);
  // one tight pass for each row's maximum; the few rows that reach the ceiling or the top band
  // are read again (a second full pass cost as much as the first on 24 Mpx)
  const rowMax = new Float32Array(rows);
  for (let r = 0, i = 0; r < rows; r++) {
    let m = -Infinity;
    const end = Math.min(n, i + width);
    for (; i < end; i++) { const v = data[i]; if (v > m) m = v; }
    rowMax[r] = m;
  }
  let vmax = -Infinity;
  let atCeiling = 0;
  for (let r = 0; r < rows; r++) {
    const m = rowMax[r];
    if (m < ceil) { if (m > vmax) vmax = m; continue; }
    for (let i = r * width, end = Math.min(n, i + width); i < end; i++) {
      const v = data[i];
      if (v >= ceil) atCeiling++;
      else if (v > vmax) vmax = v;
    }
  }
  if (!(vmax > -Infinity)) return { plateau: null, atCeiling };
  const { level: sky, sigma, step } = skySample(data);
  if (!(vmax - sky > 20 * Math.max(sigma, 1e-30))) return { plateau: null, atCeiling };
  const w = Math.max(step, 0.005 * (vmax - sky));
  const top = vmax - w, below = vmax - 2 * w;
  let nTop = 0, nBelow = 0, lowest = vmax;
  for (let r = 0; r < rows; r++) {
    if (!(rowMax[r] >= below)) continue;
    for (let i = r * width, end = Math.min(n, i + width); i < end; i++) {
      const v = data[i];
      if (v < below || v >= ceil) continue;
      if (v >= top) { nTop++; if (v < lowest) lowest = v; } else nBelow++;
    }
  }
  const plateau = nTop >= PLATEAU_MIN_PIXELS && nTop >= 3 * Math.max(1, nBelow);
  return { plateau: plateau ? lowest : null, atCeiling };
}

/**
 * Median and MAD sigma of a regular subsample (about 20 000 pixels), and the data's smallest
 * step between distinct sampled values (1 for integer data, 16 for 12-bit data scaled by 16,
 * ~0 for float data).
 */
function skySample(data: Float32Array): { level: number; sigma: number; step: number } {
  const stride = Math.max(1, Math.floor(data.length / 20_000));
  const s = new Float32Array(Math.ceil(data.length / stride));
  let n = 0;
  for (let i = 0; i < data.length; i += stride) { const v = data[i]; if (v === v) s[n++] = v; }
  if (!n) return { level: NaN, sigma: NaN, step: 0 };
  const v = s.subarray(0, n).sort();
  const level = v[n >> 1];
  let step = Infinity;
  for (let i = 1; i < n; i++) { const d = v[i] - v[i - 1]; if (d > 0 && d < step) step = d; }
  for (let i = 0; i < n; i++) v[i] = Math.abs(v[i] - level);
  const sigma = 1.4826 * median(v, n);
  const q = Number.isFinite(step) ? step : 0;
  return { level, sigma: sigma > 0 ? sigma : Math.sqrt(1 / 12) * (q || 1), step: q };
}
