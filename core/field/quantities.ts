/**
 * Per-star quantities the field map works on, as columns of typed arrays (no per-star objects
 * downstream). Only clean stars (flags.length === 0) with finite moments are kept.
 */
import type { Star } from '../stars/types.ts';
import { comaFromMeasured } from './coma-calibration.ts';

export interface StarColumns {
  readonly n: number;
  /** Index into the input Star array. */
  readonly index: Int32Array;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly snr: Float64Array;
  /** Second-moment size T = Ixx + Iyy (px^2) and the anisotropic moment M = (Ixx - Iyy) + 2i Ixy (px^2). */
  readonly T: Float64Array;
  readonly M1: Float64Array;
  readonly M2: Float64Array;
  /** 1-sigma noise of T and of each M component (px^2). */
  readonly sigT: Float64Array;
  readonly sigM: Float64Array;
  /** Distortion components e = M / T and their 1-sigma error. */
  readonly e1: Float64Array;
  readonly e2: Float64Array;
  readonly sigE: Float64Array;
  readonly fwhm: Float64Array;
  readonly sigFwhm: Float64Array;
  readonly hfd: Float64Array;
  /** Normalised spin-1 (coma) vector and its relative noise scale (1/snr; scaled in the fits). */
  readonly cx: Float64Array;
  readonly cy: Float64Array;
  readonly sigC: Float64Array;
  /**
   * Coma length vector (px): the geometric sagittal coma S whose adaptive moments give the
   * measured spin-1 moment and size (coma-calibration.ts), along c. S grows linearly with field
   * height where c does not; noise scale in sigS (S of a star whose c is its 1-sigma noise).
   */
  readonly sx: Float64Array;
  readonly sy: Float64Array;
  readonly sigS: Float64Array;
}

/**
 * Fisher-level fallback for shape noise when a star carries no error: sigma(e) = 2/nu and
 * sigma(T)/T = 2/nu for a well-sampled Gaussian (optics.md section 1.6).
 */
function fisherE(snr: number): number {
  return snr > 0 ? 2 / snr : 1;
}

export function isUsable(s: Star): boolean {
  if (s.flags.length !== 0) return false;
  const m = s.moments;
  if (!m) return false;
  const T = m.ixx + m.iyy;
  return Number.isFinite(s.x) && Number.isFinite(s.y) && Number.isFinite(T) && T > 0
    && Number.isFinite(m.ixy) && m.ixx > 0 && m.iyy > 0 && m.ixx * m.iyy - m.ixy * m.ixy > 0;
}

export function starColumns(stars: readonly Star[]): StarColumns {
  const idx: number[] = [];
  for (let i = 0; i < stars.length; i++) if (isUsable(stars[i])) idx.push(i);
  const n = idx.length;
  const col = () => new Float64Array(n);
  const c = {
    n,
    index: Int32Array.from(idx),
    x: col(), y: col(), snr: col(), T: col(), M1: col(), M2: col(), sigT: col(), sigM: col(),
    e1: col(), e2: col(), sigE: col(), fwhm: col(), sigFwhm: col(), hfd: col(), cx: col(), cy: col(), sigC: col(),
    sx: col(), sy: col(), sigS: col(),
  };
  for (let k = 0; k < n; k++) {
    const s = stars[idx[k]];
    const m = s.moments;
    const T = m.ixx + m.iyy;
    c.x[k] = s.x;
    c.y[k] = s.y;
    c.snr[k] = Number.isFinite(s.snr) ? s.snr : 0;
    c.T[k] = T;
    c.M1[k] = m.ixx - m.iyy;
    c.M2[k] = 2 * m.ixy;
    c.e1[k] = c.M1[k] / T;
    c.e2[k] = c.M2[k] / T;
    const ee = [s.err?.e1, s.err?.e2].filter((v): v is number => typeof v === 'number' && Number.isFinite(v) && v > 0);
    const se = ee.length ? Math.max(...ee) : fisherE(c.snr[k]);
    c.sigE[k] = Math.min(1, Math.max(se, 1e-4));
    c.sigT[k] = T * c.sigE[k];
    c.sigM[k] = T * c.sigE[k];
    c.fwhm[k] = s.fwhmPx;
    const sf = s.err?.fwhmPx;
    c.sigFwhm[k] = typeof sf === 'number' && Number.isFinite(sf) && sf > 0 ? sf : 0.5 * s.fwhmPx * fisherE(c.snr[k]);
    c.hfd[k] = s.hfdPx;
    c.cx[k] = Number.isFinite(s.coma?.x) ? s.coma.x : 0;
    c.cy[k] = Number.isFinite(s.coma?.y) ? s.coma.y : 0;
    c.sigC[k] = fisherE(c.snr[k]);
    const cm = Math.hypot(c.cx[k], c.cy[k]);
    const S = comaFromMeasured(cm, T).S;
    c.sx[k] = cm > 0 ? (S * c.cx[k]) / cm : 0;
    c.sy[k] = cm > 0 ? (S * c.cy[k]) / cm : 0;
    c.sigS[k] = Math.max(0.05, comaFromMeasured(c.sigC[k], T).S);
  }
  return c;
}

/** Subset of columns (bootstrap resamples, zones). */
export function subsetColumns(c: StarColumns, pick: ArrayLike<number>): StarColumns {
  const n = pick.length;
  const take = (a: Float64Array) => {
    const o = new Float64Array(n);
    for (let i = 0; i < n; i++) o[i] = a[pick[i]];
    return o;
  };
  const index = new Int32Array(n);
  for (let i = 0; i < n; i++) index[i] = c.index[pick[i]];
  return {
    n, index,
    x: take(c.x), y: take(c.y), snr: take(c.snr), T: take(c.T), M1: take(c.M1), M2: take(c.M2),
    sigT: take(c.sigT), sigM: take(c.sigM), e1: take(c.e1), e2: take(c.e2), sigE: take(c.sigE),
    fwhm: take(c.fwhm), sigFwhm: take(c.sigFwhm), hfd: take(c.hfd), cx: take(c.cx), cy: take(c.cy), sigC: take(c.sigC),
    sx: take(c.sx), sy: take(c.sy), sigS: take(c.sigS),
  };
}

/** Bootstrap resample indices 0..n-1 with replacement. */
export function resampleIndices(n: number, rand: () => number): Int32Array {
  const o = new Int32Array(n);
  for (let i = 0; i < n; i++) o[i] = Math.floor(rand() * n);
  return o;
}
