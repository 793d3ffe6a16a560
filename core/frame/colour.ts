/**
 * Colour to one linear plane.
 *
 * Luminance is the plain mean of R, G and B. Why not Rec. 709 weights
 * (0.2126, 0.7152, 0.0722)? Those hold only for linear sRGB/Rec. 709 primaries,
 * while astro cameras store their own uncalibrated RGB; star shapes need signal
 * from every channel, and with similar per-channel noise equal weights give the
 * best signal-to-noise. It also keeps all colours of a star in the measurement
 * (a blue halo from longitudinal colour stays visible instead of being weighted 7%).
 *
 * A pixel clipped in any one channel is set to the saturation level, so the
 * usual "value >= saturationLevel" test downstream still catches a star that
 * is saturated in green only (the mean alone would hide it).
 */

/**
 * sRGB transfer function decoded to linear light, IEC 61966-2-1:1999 (sRGB):
 * V <= 0.04045: L = V / 12.92, else L = ((V + 0.055) / 1.055)^2.4; V and L in [0, 1].
 */
export function srgbToLinear(v: number): number {
  return v <= 0.04045 ? v / 12.92 : Math.pow((v + 0.055) / 1.055, 2.4);
}

/** Lookup table code value 0..255 -> linear light scaled to 0..255 (so 255 stays 255). */
export function srgbLinearTable8(): Float32Array {
  const t = new Float32Array(256);
  for (let c = 0; c < 256; c++) t[c] = 255 * srgbToLinear(c / 255);
  return t;
}

/**
 * Interleaved samples (channels per pixel, colour first, extras such as alpha ignored)
 * to one plane. `read(i)` gives sample i as a linear value. For 3+ colour channels
 * the mean of the first three; with `clip` set, a pixel with any colour sample >= clip
 * becomes `clip` (see above).
 */
export function interleavedToPlane(
  n: number,
  channels: number,
  colour: 1 | 3,
  samples: ArrayLike<number>,
  lut: Float32Array | null,
  clipStored: number | null,
  clipLinear: number | null,
): Float32Array {
  const out = new Float32Array(n);
  if (colour === 1) {
    for (let i = 0, p = 0; i < n; i++, p += channels) {
      const s = samples[p];
      out[i] = lut ? lut[s] : s;
    }
    return out;
  }
  const third = 1 / 3;
  for (let i = 0, p = 0; i < n; i++, p += channels) {
    const r = samples[p];
    const g = samples[p + 1];
    const b = samples[p + 2];
    if (clipStored !== null && (r >= clipStored || g >= clipStored || b >= clipStored)) {
      out[i] = clipLinear as number;
      continue;
    }
    out[i] = lut ? (lut[r] + lut[g] + lut[b]) * third : (r + g + b) * third;
  }
  return out;
}
