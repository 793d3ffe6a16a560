/**
 * The seeing core's profile, for the defocus model: Moffat (power index beta) or Gaussian. Read
 * from the PSF fits of the sharper half of the clean stars (the defocus disk flattens the core
 * of blurred stars and raises their fitted beta). Moffat when at least a third of those stars
 * chose the Moffat fit (core/stars/measure.ts picks it only when it fits clearly better).
 */
import type { Star } from '../stars/types.ts';
import type { StarColumns } from './quantities.ts';
import { median } from './stats.ts';

export interface CoreProfile {
  /** Moffat power index of the core, or null for a Gaussian core. */
  beta: number | null;
  /** Stars it rests on: the sharper half, and how many of them chose the Moffat fit. */
  stars: number;
  moffatStars: number;
}

const MIN_MOFFAT_SHARE = 1 / 3;

export function coreProfile(stars: readonly Star[], cols: StarColumns): CoreProfile {
  const n = cols.n;
  if (n < 6) return { beta: null, stars: n, moffatStars: 0 };
  const cut = median(cols.T);
  const betas: number[] = [];
  let sharp = 0;
  for (let k = 0; k < n; k++) {
    if (!(cols.T[k] <= cut)) continue;
    sharp++;
    const s = stars[cols.index[k]];
    if (s.model === 'moffat' && s.moffatBeta !== null && Number.isFinite(s.moffatBeta) && s.moffatBeta > 1) betas.push(s.moffatBeta);
  }
  if (betas.length < MIN_MOFFAT_SHARE * sharp || betas.length < 3) return { beta: null, stars: sharp, moffatStars: betas.length };
  return { beta: median(betas), stars: sharp, moffatStars: betas.length };
}
