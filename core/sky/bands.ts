/**
 * The asterism size bands (a factor sqrt(2) apart, as the index scales of Lang et al. 2010) and
 * their indexes, built on first use and kept for the life of the thread.
 */
import { buildBandIndex, DEFAULT_INDEX, type BandIndex } from './asterism.ts';
import { loadBand, saveBand } from './band-cache.ts';
import type { Catalogue } from './catalogue.ts';
import { DEG } from './sphere.ts';

/** Smallest asterism size indexed, and the number of bands above it. */
export const BAND_MIN_DEG = 0.5;
export const BAND_COUNT = 14;

export function bandRange(k: number): { dLo: number; dHi: number } {
  const dLo = BAND_MIN_DEG * DEG * Math.SQRT2 ** k;
  return { dLo, dHi: dLo * Math.SQRT2 };
}

const cache = new WeakMap<Catalogue, Map<number, BandIndex>>();

export function bandIndex(cat: Catalogue, k: number): BandIndex {
  let m = cache.get(cat);
  if (!m) cache.set(cat, (m = new Map()));
  let b = m.get(k);
  if (!b) {
    const { dLo, dHi } = bandRange(k);
    const o = DEFAULT_INDEX;
    const key = cat.fingerprint ? `${cat.fingerprint}-${k}-${o.perCell}-${o.innerStars}-${o.perCellQuads}` : null;
    b = (key ? loadBand(key, cat, dLo, dHi) : null) ?? undefined;
    if (!b) {
      b = buildBandIndex(cat, dLo, dHi);
      if (key) saveBand(key, b);
    }
    m.set(k, b);
  }
  return b;
}

/** Bands whose asterisms span 18-60 % of a field diagonal of `diagRad` (the sizes a frame shows best). */
export function bandsForField(diagRadLo: number, diagRadHi: number): number[] {
  const out: number[] = [];
  for (let k = 0; k < BAND_COUNT; k++) {
    const { dLo, dHi } = bandRange(k);
    const mid = Math.sqrt(dLo * dHi);
    if (mid >= 0.18 * diagRadLo && mid <= 0.6 * diagRadHi) out.push(k);
  }
  return out;
}
