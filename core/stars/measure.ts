/**
 * Per-star measurement: adaptive moments (centroid, spin-2 shape, spin-1 coma), PSF fits
 * (elliptical Gaussian and/or Moffat) for size and shape with covariance errors, half-flux
 * diameter, flux and SNR. Pure and allocation-light (module scratch reused across calls),
 * safe to call from worker threads; never throws on bad stamps.
 */

import type { Star, StarFlag, PsfFit } from './types.ts';
import { fitPsfWithSnr } from './psf-fit.ts';
import { adaptiveMoments, adaptiveMomentErrors, fixedMoments, momentsToEllipse, type AdaptiveMoments } from './moments.ts';
import { halfFluxDiameterWithError } from './hfd.ts';
import { selectKth } from '../image/stats.ts';
import { lazyKernel } from '../wasm/instantiate.ts';
import { MEASURE_WASM_BASE64 } from './wasm/measure.wasm.ts';

export interface StampInput {
  stamp: Float32Array;   // background-subtracted pixels, row-major w*h (NaN = missing)
  w: number; h: number;
  originX: number; originY: number;  // plane coords of stamp pixel (0,0)
  skyVariance: number;   // per-pixel sky+read noise variance (ADU^2)
  gain: number | null;   // e-/ADU for source shot noise; null -> sky variance only
  saturated: boolean;    // decided by the caller from raw pixel values
  sigmaGuessPx: number;  // from detection
  flags: readonly StarFlag[]; // flags already set by detection (edge, blended, ...)
}

export interface MeasureOptions {
  model?: 'auto' | 'gaussian' | 'moffat';
  /** Stars whose SNR (below) is under this get 'low-snr'. Default 10 (common practice). */
  minSnr?: number;
}

const FWHM_PER_SIGMA = 2 * Math.sqrt(2 * Math.LN2); // 2.354820045
/** F statistic above which the Moffat counts as significantly better (about 3 sigma for 1 extra parameter). */
const F_MOFFAT = 9;
/** A fitted profile below this matched-filter SNR is not a detection (amplitude consistent with 0). */
const MIN_FIT_SNR = 3;
/**
 * Below this start FWHM (px, as recorded) the fits integrate the model over each pixel. Stars
 * under ~1.5 px (Howell's sampling parameter, optics.md 1.6) are undersampled: a model at pixel
 * centres then depends on the sub-pixel phase. 2.5 px leaves a margin: there the two models give
 * the same recorded FWHM to 0.1 % (stars-measure.test.ts).
 */
export const UNDERSAMPLED_FWHM = 2.5;
/** Gauss-Legendre points per pixel axis: 3 (the pixel integral of a Gaussian of sigma >= 0.5 px to < 1e-3 of its peak), 4 below. */
function nodesFor(sigmaMinIntrinsic: number): number {
  return sigmaMinIntrinsic >= 0.5 ? 3 : 4;
}
/** Below this Gaussian-fit SNR an undersampled star is not fitted with a Moffat in 'auto' (see measureStarJs). */
const MOFFAT_MIN_SNR_UNDERSAMPLED = 30;
/** The box's variance per axis, px^2 (optics.md 1.6). */
const BOX_VAR = 1 / 12;

/**
 * A fit start for the pixel-integrated model from a recorded covariance: less the box's variance,
 * each axis kept at sigma >= 0.2 px (a start only; the fit finds the size).
 */
function intrinsicStart<T extends { ixx: number; iyy: number; ixy: number }>(c: T): T {
  const ixx = Math.max(c.ixx - BOX_VAR, 0.04), iyy = Math.max(c.iyy - BOX_VAR, 0.04);
  const lim = 0.95 * Math.sqrt(ixx * iyy);
  return { ...c, ixx, iyy, ixy: Math.max(-lim, Math.min(lim, c.ixy)) };
}

let VAR = new Float32Array(0);
let INF = new Float32Array(0);
let RING = new Float32Array(0);
let HFDS = new Float32Array(0); // the HFD's sky-subtracted stamp
let MOMS = new Float32Array(0); // the moments' sky-subtracted stamp

/**
 * Measure one star. Coordinates in the returned Star are plane coordinates
 * (x = originX + stamp x). Values that cannot be measured are NaN, with flags saying why.
 *
 * Noise model: variance_k = skyVariance + max(g_k, 0)/gain, g_k the elliptical Gaussian of
 * the adaptive moments (a model rather than the noisy data, which would bias the fit low);
 * without a gain, sky variance only. Missing pixels get no weight.
 *
 * Moments: adaptive, on the stamp as given; measured again on the stamp less the chosen fit's
 * background where that background is significant (sky the mesh missed, see below).
 *
 * Fits: none for a detection flagged 'hot-pixel' (see below); otherwise started from the
 * adaptive moments (the Moffat from the Gaussian fit's shape), over the pixels within
 * max(4, 2.5 x start FWHM along the major axis) of the moments centre, the same pixels for
 * both models. The models are evaluated at pixel centres, so FWHMs describe
 * the star as recorded, pixel box included (see psf-fit.ts). A fit counts only if it
 * converged with a positive amplitude, a centre inside the stamp, a size below the stamp's
 * and a matched-filter SNR >= 3. Pixels that are NaN or +-Infinity count as missing ('edge').
 * Model choice ('auto', the default): both models are fitted with the same weights; the
 * Moffat is reported when it converged and F = (chi2_G - chi2_M) / chi2Reduced_M > 9
 * (an F test for one extra parameter at about 3 sigma), otherwise the Gaussian; if only one
 * fit converged, that one; if none, size and shape come from the adaptive moments
 * (model 'moments', FWHM = 2.3548 x rms axis) and the star is flagged 'fit-failed'.
 *
 * SNR: the optimal (matched-filter) SNR nu = sqrt(sum_k m_k^2 / variance_k) of the fitted
 * profile m (optics.md §1.6; for a Gaussian in sky noise nu = F / (sigma_n sqrt(4 pi sigma^2))).
 * Flux: analytic integral of the fitted profile above background (moments: 2 sum(wI)).
 * HFD: curve of growth about the adaptive centroid, total flux inside the largest circle
 * that fits in the stamp.
 */
export function measureStar(input: StampInput, opts?: MeasureOptions): Star {
  const k = MEASURE_JS ? null : measureKernel();
  const { w, h } = input;
  if (k && Number.isInteger(w) && Number.isInteger(h) && w >= 3 && h >= 3 && w * h <= k.capacity &&
    input.stamp instanceof Float32Array && input.stamp.length >= w * h) return measureStarWasm(k, input, opts);
  return measureStarJs(input, opts);
}

interface MeasureKernel {
  capacity: number;
  stamp: Float32Array;
  out: Float64Array;
  run: (w: number, h: number, skyVar: number, gain: number, sigmaGuess: number, model: number, fitIt: number) => void;
}
/**
 * measureStarJs's arithmetic as one WebAssembly call per star (wasm/measure.as.ts, built with
 * the fit, moments and HFD kernels), once per thread; null where WebAssembly is unavailable,
 * or SKYLOUPE_WASM=0 / SKYLOUPE_MEASURE=js asks for the TypeScript path.
 */
const measureKernel = lazyKernel<MeasureKernel>(MEASURE_WASM_BASE64, 'measure', (m) => {
  const cap = m.int('capacity');
  return { capacity: cap, stamp: m.f32('stampPtr', cap), out: m.f64('outPtr', 32), run: m.fn('measure') };
});
const MEASURE_JS = typeof process !== 'undefined' && process.env?.SKYLOUPE_MEASURE === 'js';
const MODEL_CODE = { auto: 0, gaussian: 1, moffat: 2 } as const;

/** measureStar through the kernel: the flags and the Star are made here, as measureStarJs makes them. */
function measureStarWasm(k: MeasureKernel, input: StampInput, opts?: MeasureOptions): Star {
  const flags: StarFlag[] = [...input.flags];
  if (input.saturated) addFlag(flags, 'saturated');
  const { w, h } = input;
  const ox = input.originX, oy = input.originY;
  k.stamp.set(input.stamp.subarray(0, w * h));
  const gain = input.gain !== null && input.gain > 0 && Number.isFinite(input.gain) ? input.gain : 0;
  const fitIt = triesFit(input);
  k.run(w, h, input.skyVariance, gain, input.sigmaGuessPx, MODEL_CODE[opts?.model ?? 'auto'], fitIt ? 1 : 0);
  const o = k.out;
  if (o[1] === 1) addFlag(flags, 'edge');
  if (o[0] === 1) {
    addFlag(flags, 'fit-failed');
    return emptyStar(flags, ox + (w - 1) / 2, oy + (h - 1) / 2);
  }
  const model = o[4];
  if ((model === 0 || model === 3) && fitIt) addFlag(flags, 'fit-failed');
  if (model === 0) return emptyStar(flags, ox + o[2], oy + o[3], o[18], fitIt);
  const nan = Number.NaN;
  const momOk = o[20] === 1;
  const moments = momOk ? { ixx: o[21], iyy: o[22], ixy: o[23], e1: o[24], e2: o[25] } : { ixx: nan, iyy: nan, ixy: nan, e1: nan, e2: nan };
  const coma = momOk ? { x: o[26], y: o[27] } : { x: nan, y: nan };
  const snr = o[8];
  let star: Star;
  if (model === 3) {
    const a = o[9], b = o[10];
    star = {
      x: ox + o[5], y: oy + o[6], flux: o[7], snr,
      fwhmPx: FWHM_PER_SIGMA * Math.sqrt(a * b), fwhmMajorPx: FWHM_PER_SIGMA * a, fwhmMinorPx: FWHM_PER_SIGMA * b,
      ellipticity: 1 - b / a, thetaDeg: o[11], hfdPx: o[18], coma, flags, model: 'moments', moffatBeta: null, moments,
      err: { x: o[30], y: o[31], fwhmPx: nan, ellipticity: nan, thetaDeg: nan, hfdPx: o[19], e1: o[28], e2: o[29] },
    };
  } else {
    const fMaj = o[9], fMin = o[10];
    star = {
      x: ox + o[5], y: oy + o[6], flux: o[7], snr,
      fwhmPx: Math.sqrt(fMaj * fMin), fwhmMajorPx: fMaj, fwhmMinorPx: fMin, ellipticity: 1 - fMin / fMaj, thetaDeg: o[11],
      hfdPx: o[18], coma, flags, model: model === 2 ? 'moffat' : 'gaussian', moffatBeta: model === 2 ? o[12] : null, moments,
      err: { x: o[13], y: o[14], fwhmPx: o[15], ellipticity: o[16], thetaDeg: o[17], hfdPx: o[19], e1: momOk ? o[28] : nan, e2: momOk ? o[29] : nan },
    };
  }
  if (!(snr >= (opts?.minSnr ?? 10))) addFlag(flags, 'low-snr');
  return star;
}

/** measureStar in TypeScript (the kernels it calls may be WebAssembly): the reference for measureStarWasm, and the fallback. */
export function measureStarJs(input: StampInput, opts?: MeasureOptions): Star {
  const flags: StarFlag[] = [...input.flags];
  if (input.saturated) addFlag(flags, 'saturated');
  const { w, h } = input;
  let stamp = input.stamp;
  const ox = input.originX, oy = input.originY;
  if (!(Number.isInteger(w) && Number.isInteger(h) && w >= 3 && h >= 3) || !(stamp instanceof Float32Array) || stamp.length < w * h) {
    addFlag(flags, 'fit-failed');
    return emptyStar(flags, ox + (w - 1) / 2, oy + (h - 1) / 2);
  }
  const n = w * h;
  let finite = 0, nNaN = 0;
  for (let i = 0; i < n; i++) {
    const v = stamp[i];
    if (v - v === 0) finite++; // finite
    else if (v !== v) nNaN++;
  }
  if (finite + nNaN < n) {
    // +-Infinity: treat as missing, on a copy (the input is never modified).
    if (INF.length < n) INF = new Float32Array(Math.max(n, 2 * INF.length));
    const c = INF.subarray(0, n);
    for (let i = 0; i < n; i++) c[i] = Number.isFinite(stamp[i]) ? stamp[i] : NaN;
    stamp = c;
  }
  if (finite < n) addFlag(flags, 'edge');
  if (finite < 12) {
    addFlag(flags, 'fit-failed');
    return emptyStar(flags, ox + (w - 1) / 2, oy + (h - 1) / 2);
  }

  let skyVar = input.skyVariance;
  if (!(skyVar > 0) || !Number.isFinite(skyVar)) skyVar = borderVariance(stamp, w, h);
  const gain = input.gain !== null && input.gain > 0 && Number.isFinite(input.gain) ? input.gain : null;
  const sigmaGuess = Number.isFinite(input.sigmaGuessPx) && input.sigmaGuessPx > 0.3 ? input.sigmaGuessPx : 1.5;

  // Start at the brightest pixel near the stamp centre.
  const cx0 = (w - 1) / 2, cy0 = (h - 1) / 2;
  const rs = Math.max(2, 1.5 * sigmaGuess);
  let px = Math.round(cx0), py = Math.round(cy0), best = -Infinity;
  for (let y = Math.max(0, Math.ceil(cy0 - rs)); y <= Math.min(h - 1, Math.floor(cy0 + rs)); y++) {
    for (let x = Math.max(0, Math.ceil(cx0 - rs)); x <= Math.min(w - 1, Math.floor(cx0 + rs)); x++) {
      const v = stamp[y * w + x];
      if (v > best && (x - cx0) ** 2 + (y - cy0) ** 2 <= rs * rs) { best = v; px = x; py = y; }
    }
  }
  let momStamp = stamp;
  let mom = adaptiveMoments(momStamp, w, h, px, py, sigmaGuess);
  let momOk = mom.converged && mom.flux > 0 && mom.ixx > 0 && mom.iyy > 0;

  // Per-pixel variance (module scratch).
  if (VAR.length < n) VAR = new Float32Array(Math.max(n, 2 * VAR.length));
  const variance = VAR.subarray(0, n);
  fillVariance(variance, stamp, w, h, skyVar, gain, momOk ? mom : null);

  const init = momOk
    ? { x: mom.x, y: mom.y, ixx: mom.ixx, iyy: mom.iyy, ixy: mom.ixy, background: 0 }
    : { x: px, y: py, ixx: sigmaGuess * sigmaGuess, iyy: sigmaGuess * sigmaGuess, ixy: 0, background: 0 };
  const want = opts?.model ?? 'auto';
  // A single-pixel spike (detection's 'hot-pixel') is narrower than any PSF of the optics, so
  // no PSF model describes it: the fits would only run to their iteration cap (on the bench
  // frame these 7 % of candidates took half of all fit iterations) and fail or collapse to a
  // point. It keeps its moments and HFD for the star table, and is never used for the field;
  // 'fit-failed' is not added (no fit was tried; 'hot-pixel' already sets it aside).
  const fitIt = triesFit(input);
  // Fit window: 2.5 x the start FWHM along the major axis (at least 4 px) about the start
  // centre, the same for both models so that their chi2 compare (a beta = 2.5 Moffat is at
  // ~0.4 % of its peak there, a Gaussian at 2^-25; the accuracy tests did not change
  // between 2.5 and 3 FWHM).
  const lmax = 0.5 * (init.ixx + init.iyy) + Math.sqrt(0.25 * (init.ixx - init.iyy) ** 2 + init.ixy * init.ixy);
  const radius = Math.max(4, 2.5 * FWHM_PER_SIGMA * Math.sqrt(lmax));
  // Undersampled stars: both models integrated over each pixel, started from the covariance less the box.
  const lmin = 0.5 * (init.ixx + init.iyy) - Math.sqrt(0.25 * (init.ixx - init.iyy) ** 2 + init.ixy * init.ixy);
  const startFwhm = FWHM_PER_SIGMA * Math.sqrt(Math.sqrt(Math.max(lmax * lmin, 0)));
  const pixelNodes = startFwhm < UNDERSAMPLED_FWHM ? nodesFor(Math.sqrt(Math.max(lmin - BOX_VAR, 0))) : 1;
  const fitStart = <T extends { ixx: number; iyy: number; ixy: number }>(c: T): T => (pixelNodes > 1 ? intrinsicStart(c) : c);
  const rG = fitIt && want !== 'moffat' ? fitPsfWithSnr(stamp, w, h, { model: 'gaussian', variance, init: fitStart(init), radius, pixelNodes }) : null;
  const fitG = rG ? rG.fit : null;
  // The Moffat starts from the Gaussian fit when there is one (same half-maximum contour;
  // the start centre, which also centres the window, stays the same).
  const initM = fitG !== null && fitG.converged ? { ...initFromFit(fitG), x: init.x, y: init.y } : init;
  // An undersampled star fainter than SNR 30 gets no Moffat in 'auto': its wings are too faint
  // for the F test to prefer one (test/bench/undersampled.bench.ts: beta 3 stars of FWHM 1.3-1.8 px
  // were preferred 0-1 times in 120 at SNR 10-20, 3-8 at SNR 30, 26-32 at 50), and the integrated
  // Moffat is the costliest fit (a log and an exp per node).
  const skipM = pixelNodes > 1 && want === 'auto' && rG !== null && rG.fit.converged && rG.snr < MOFFAT_MIN_SNR_UNDERSAMPLED;
  const rM = fitIt && want !== 'gaussian' && !skipM ? fitPsfWithSnr(stamp, w, h, { model: 'moffat', variance, init: fitStart(initM), radius, pixelNodes }) : null;
  const fitM = rM ? rM.fit : null;
  let fit: PsfFit | null = null;
  const snrG = rG && usable(rG.fit, w, h) ? rG.snr : NaN;
  const snrM = rM && usable(rM.fit, w, h) ? rM.snr : NaN;
  const gOk = snrG >= MIN_FIT_SNR;
  const mOk = snrM >= MIN_FIT_SNR;
  if (gOk && mOk) {
    const fM = fitM as PsfFit, fG = fitG as PsfFit;
    const nFit = (rM as { nPixels: number }).nPixels;
    const chi2M = fM.chi2Reduced * (nFit - 8), chi2G = fG.chi2Reduced * (nFit - 7);
    fit = (chi2G - chi2M) / fM.chi2Reduced > F_MOFFAT ? fM : fG;
  } else if (gOk) fit = fitG;
  else if (mOk) fit = fitM;
  if (!fit && fitIt) addFlag(flags, 'fit-failed');
  // The mesh sky misses structure smaller than its boxes (nebulosity, a galaxy's halo), and an
  // offset left under a star widens its moments, the sizes the field map reads. The fit's
  // background term is that local level, free of the star's own wings (the profile is fitted
  // with it); where it differs from zero by more than 3 of its standard errors (about
  // sigma / sqrt(pixels fitted)), the moments are measured again on the stamp less it.
  // (A large offset can keep the first moments from converging at all: they restart from the fit.)
  if (fit && fit.background !== 0) {
    const nFit = fit === fitG ? (rG as { nPixels: number }).nPixels : (rM as { nPixels: number }).nPixels;
    if (nFit > 0 && Math.abs(fit.background) > (3 * Math.sqrt(skyVar)) / Math.sqrt(nFit)) {
      if (MOMS.length < n) MOMS = new Float32Array(Math.max(n, 2 * MOMS.length));
      const lifted = minus(stamp, fit.background, MOMS.subarray(0, n));
      const s0 = momOk ? Math.sqrt(0.5 * (mom.ixx + mom.iyy)) : Math.sqrt(fit.fwhmMajorPx * fit.fwhmMinorPx) / FWHM_PER_SIGMA;
      const again = adaptiveMoments(lifted, w, h, momOk ? mom.x : fit.x, momOk ? mom.y : fit.y, s0);
      if (again.converged && again.flux > 0 && again.ixx > 0 && again.iyy > 0) { mom = again; momStamp = lifted; momOk = true; }
    }
  }

  // Undersampled stars: the adaptive iteration has no fixed point there (a star narrower than
  // about 1 px sigma, sampled at pixel centres, shrinks the weighted variance with the weight), and
  // where it converges it does so for the stars that happen to read wide (at FWHM 1.5 px their
  // size T came out 3 % high on average, against 0.3 % from the fit). The Gaussian fit, integrated
  // over the pixels, gives the covariance as recorded (box included, the adaptive moments' own
  // definition for a Gaussian star); the third moments and the errors then use that fixed weight
  // (fixedMoments), on the stamp less the fit's background. So for every star of a frame whose PSF
  // (the detection's estimate, sigmaGuess) is undersampled: one kind of moment per frame, as the
  // field map compares stars across it. Not where the reported fit is a Moffat 25 % off the
  // Gaussian's size (a blend or an odd profile, whose Gaussian covariance would misstate it); nor
  // in a well-sampled frame, where failed adaptive moments mark such a star (on the demo frame, 8
  // of 1447, whose Gaussian fits read 2-4x the size of their reported fit).
  const fitSizeAgrees = fit === fitG || (fit !== null && gOk && Math.abs(Math.sqrt(((fitG as PsfFit).fwhmMajorPx * (fitG as PsfFit).fwhmMinorPx) / (fit.fwhmMajorPx * fit.fwhmMinorPx)) - 1) < 0.25);
  if (FWHM_PER_SIGMA * sigmaGuess < UNDERSAMPLED_FWHM && gOk && fitSizeAgrees) {
    const f = fitG as PsfFit;
    let cov = f.recordedCov;
    if (!cov) {
      const s1 = f.fwhmMajorPx / FWHM_PER_SIGMA, s2 = f.fwhmMinorPx / FWHM_PER_SIGMA;
      const t = (f.thetaDeg * Math.PI) / 180, ct = Math.cos(t), st = Math.sin(t);
      cov = { ixx: s1 * s1 * ct * ct + s2 * s2 * st * st, iyy: s1 * s1 * st * st + s2 * s2 * ct * ct, ixy: (s1 * s1 - s2 * s2) * ct * st };
    }
    if (MOMS.length < n) MOMS = new Float32Array(Math.max(n, 2 * MOMS.length));
    const lifted = minus(stamp, f.background, MOMS.subarray(0, n));
    const fm = fixedMoments(lifted, w, h, f.x, f.y, cov.ixx, cov.iyy, cov.ixy);
    if (fm.converged) { mom = fm; momStamp = lifted; momOk = true; }
  }

  // Centre for HFD and as fallback position.
  const hx = momOk ? mom.x : fit ? fit.x : px;
  const hy = momOk ? mom.y : fit ? fit.y : py;
  // the curve of growth runs out to 4 FWHM of the fit (a Moffat of beta 2.5 keeps about
  // 99 % of its flux inside, optics.md 1.1), not the whole stamp: less room for neighbours
  const stampR = Math.min(hx + 0.5, w - 0.5 - hx, hy + 0.5, h - 0.5 - hy);
  const fitFwhm = fit ? Math.sqrt(fit.fwhmMajorPx * fit.fwhmMinorPx) : NaN;
  const maxR = Number.isFinite(fitFwhm) ? Math.min(stampR, Math.max(5, 4 * fitFwhm)) : stampR;
  // r50 guess: the Gaussian value 1.1774 sigma (optics.md §1.1) from the moments.
  const r50Guess = momOk ? 1.1774 * Math.sqrt(0.5 * (mom.ixx + mom.iyy)) : 1.1774 * sigmaGuess;
  const hfdStamp = localSkySubtracted(stamp, w, h, hx, hy, maxR);
  const hfd = halfFluxDiameterWithError(hfdStamp, variance, w, h, hx, hy, maxR, r50Guess);
  // The ring's sky level is uncertain by its sigma / sqrt(pixels); over the aperture that moves
  // the total flux, which a faint star's half-flux radius follows (on the star-tracker frame: HFDs
  // of 20-35 px for SNR 10-20 stars of FWHM 6-9 px, against 10 px for bright ones). The HFD read
  // again with the sky raised by that much gives the term; an HFD uncertain by more than a quarter
  // is no measurement (NaN), so it cannot reach a median.
  let hfdPx = hfd.hfdPx;
  let hfdErr = hfd.errPx;
  if (RING_ERR > 0 && Number.isFinite(hfdPx)) {
    if (HFD2.length < n) HFD2 = new Float32Array(Math.max(n, 2 * HFD2.length));
    const again = halfFluxDiameterWithError(minus(hfdStamp, RING_ERR, HFD2.subarray(0, n)), variance, w, h, hx, hy, maxR, r50Guess);
    const skyTerm = Math.abs(again.hfdPx - hfdPx);
    hfdErr = Math.sqrt(hfdErr * hfdErr + skyTerm * skyTerm);
    if (!(hfdErr <= MAX_HFD_REL_ERR * hfdPx)) { hfdPx = Number.NaN; hfdErr = Number.NaN; }
  }
  const merr = momOk ? adaptiveMomentErrors(momStamp, variance, w, h, mom) : { x: NaN, y: NaN, e1: NaN, e2: NaN };

  const nan = Number.NaN;
  let snr = nan;
  const moments = momOk
    ? { ixx: mom.ixx, iyy: mom.iyy, ixy: mom.ixy, e1: mom.e1, e2: mom.e2 }
    : { ixx: nan, iyy: nan, ixy: nan, e1: nan, e2: nan };
  const coma = momOk ? { x: mom.comaX, y: mom.comaY } : { x: nan, y: nan };
  let star: Star;
  if (fit) {
    snr = fit === fitG ? snrG : snrM;
    star = {
      x: ox + fit.x,
      y: oy + fit.y,
      flux: fit.flux,
      snr,
      fwhmPx: Math.sqrt(fit.fwhmMajorPx * fit.fwhmMinorPx),
      fwhmMajorPx: fit.fwhmMajorPx,
      fwhmMinorPx: fit.fwhmMinorPx,
      ellipticity: 1 - fit.fwhmMinorPx / fit.fwhmMajorPx,
      thetaDeg: fit.thetaDeg,
      hfdPx,
      coma,
      flags,
      model: fit.model,
      moffatBeta: fit.beta,
      moments,
      err: { x: fit.err.x, y: fit.err.y, fwhmPx: fit.err.fwhmPx, ellipticity: fit.err.ellipticity, thetaDeg: fit.err.thetaDeg, hfdPx: hfdErr, e1: merr.e1, e2: merr.e2 },
    };
  } else if (momOk) {
    const el = momentsToEllipse(mom.ixx, mom.iyy, mom.ixy);
    // Matched-filter SNR of the moments' Gaussian.
    const det = mom.ixx * mom.iyy - mom.ixy * mom.ixy;
    let s = 0;
    const amp = mom.flux / (2 * Math.PI * Math.sqrt(det));
    for (let y = 0; y < h; y++) {
      for (let x = 0; x < w; x++) {
        const v = variance[y * w + x];
        if (!(v > 0) || !Number.isFinite(v)) continue;
        const dx = x - mom.x, dy = y - mom.y;
        const m = amp * Math.exp((-0.5 * (mom.iyy * dx * dx - 2 * mom.ixy * dx * dy + mom.ixx * dy * dy)) / det);
        s += (m * m) / v;
      }
    }
    snr = Math.sqrt(s);
    star = {
      x: ox + mom.x,
      y: oy + mom.y,
      flux: mom.flux,
      snr,
      fwhmPx: FWHM_PER_SIGMA * Math.sqrt(el.a * el.b),
      fwhmMajorPx: FWHM_PER_SIGMA * el.a,
      fwhmMinorPx: FWHM_PER_SIGMA * el.b,
      ellipticity: 1 - el.b / el.a,
      thetaDeg: el.thetaDeg,
      hfdPx,
      coma,
      flags,
      model: 'moments',
      moffatBeta: null,
      moments,
      err: { x: merr.x, y: merr.y, fwhmPx: nan, ellipticity: nan, thetaDeg: nan, hfdPx: hfdErr, e1: merr.e1, e2: merr.e2 },
    };
  } else {
    return emptyStar(flags, ox + px, oy + py, hfdPx, fitIt);
  }
  // the star holds `flags` itself, so a late flag lands in it
  if (!(snr >= (opts?.minSnr ?? 10))) addFlag(flags, 'low-snr');
  return star;
}

/** Fit start from a Gaussian fit: the covariance whose half-maximum contour is the fit's, its amplitude and background. */
function initFromFit(f: PsfFit): { x: number; y: number; ixx: number; iyy: number; ixy: number; amplitude: number; background: number } {
  const s1 = f.fwhmMajorPx / FWHM_PER_SIGMA, s2 = f.fwhmMinorPx / FWHM_PER_SIGMA;
  const t = (f.thetaDeg * Math.PI) / 180, c = Math.cos(t), s = Math.sin(t);
  return {
    x: f.x, y: f.y,
    ixx: s1 * s1 * c * c + s2 * s2 * s * s, iyy: s1 * s1 * s * s + s2 * s2 * c * c, ixy: (s1 * s1 - s2 * s2) * c * s,
    amplitude: f.amplitude, background: f.background,
  };
}

/** A fit is used if it converged with a positive amplitude, a centre inside the stamp and a size below the stamp's. */
function usable(f: PsfFit, w: number, h: number): boolean {
  return (
    f.converged &&
    f.amplitude > 0 &&
    f.x >= -0.5 && f.x <= w - 0.5 && f.y >= -0.5 && f.y <= h - 0.5 &&
    f.fwhmMinorPx > 0.3 && f.fwhmMajorPx < Math.max(w, h)
  );
}

function fillVariance(out: Float32Array, stamp: Float32Array, w: number, h: number, skyVar: number, gain: number | null, mom: AdaptiveMoments | null): void {
  const n = w * h;
  if (gain === null || mom === null) {
    for (let i = 0; i < n; i++) out[i] = stamp[i] === stamp[i] ? skyVar : Infinity;
    return;
  }
  const det = mom.ixx * mom.iyy - mom.ixy * mom.ixy;
  const ia = mom.iyy / det, ib = -mom.ixy / det, ic = mom.ixx / det;
  const amp = mom.flux / (2 * Math.PI * Math.sqrt(det));
  for (let y = 0; y < h; y++) {
    const dy = y - mom.y;
    for (let x = 0; x < w; x++) {
      const i = y * w + x;
      if (stamp[i] !== stamp[i]) { out[i] = Infinity; continue; }
      const dx = x - mom.x;
      const g = amp * Math.exp(-0.5 * (dx * (ia * dx + 2 * ib * dy) + ic * dy * dy));
      out[i] = skyVar + (g > 0 ? g / gain : 0);
    }
  }
}

/** Sky variance from the stamp border when the caller gave none: (1.4826 MAD)^2. */
function borderVariance(stamp: Float32Array, w: number, h: number): number {
  const vals: number[] = [];
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      if (y !== 0 && y !== h - 1 && x !== 0 && x !== w - 1) continue;
      const v = stamp[y * w + x];
      if (v === v) vals.push(v);
    }
  }
  if (vals.length < 3) return 1;
  vals.sort((a, b) => a - b);
  const med = vals[vals.length >> 1];
  const dev = vals.map((v) => Math.abs(v - med)).sort((a, b) => a - b);
  const s = 1.4826 * dev[dev.length >> 1];
  return s > 0 ? s * s : 1;
}

/**
 * The sky level of the pixels in the ring rMax - 2 <= r <= rMax about (x, y) (their clipped
 * mean, clippedRingMean), and their count. Uses the RING scratch.
 */
function ringLevel(stamp: Float32Array, w: number, h: number, x: number, y: number, rMax: number): { level: number; n: number } {
  const r0 = (rMax - 2) * (rMax - 2);
  const r1 = rMax * rMax;
  const ya = Math.max(0, Math.ceil(y - rMax)), yb = Math.min(h - 1, Math.floor(y + rMax));
  const xa = Math.max(0, Math.ceil(x - rMax)), xb = Math.min(w - 1, Math.floor(x + rMax));
  if (RING.length < w * h) RING = new Float32Array(Math.max(w * h, 2 * RING.length));
  let n = 0;
  for (let j = ya; j <= yb; j++) {
    const dy2 = (j - y) * (j - y);
    for (let i = xa; i <= xb; i++) {
      const d = (i - x) * (i - x) + dy2;
      const v = stamp[j * w + i];
      if (d >= r0 && d <= r1 && v === v) RING[n++] = v;
    }
  }
  return { level: n > 0 ? clippedRingMean(RING, n) : Number.NaN, n };
}

let RDEV = new Float32Array(0);
let HFD2 = new Float32Array(0); // the HFD's stamp with the sky raised by its uncertainty
/** The last ring sky's standard error (sigma / sqrt(pixels averaged)); 0 when no ring was measured. */
let RING_ERR = 0;
/** An HFD less certain than this (relative, noise and the ring sky's uncertainty) is reported as NaN. */
const MAX_HFD_REL_ERR = 0.25;
/**
 * Mean of ring[0..n) within 5 sigma of its median (sigma = 1.4826 x the median absolute
 * deviation, or the rms about the median when most values are equal, as in quantised dark sky).
 * The curve of growth sums pixels, so the sky under it is the ring's mean, not its median: on
 * skewed sky (8-bit data floored at 0, a few counts per pixel) the median is 0 while the mean is
 * not, and the difference times a large aperture swamps a faint star. The clip keeps neighbours'
 * cores out, as the median did; at 5 sigma it keeps the sky's own skewed tail (the 1-count pixels
 * of a floored sky of rms 0.3). Sets RING_ERR. `ring` is reordered.
 */
function clippedRingMean(ring: Float32Array, n: number): number {
  const med = selectKth(ring, n, n >> 1);
  if (RDEV.length < n) RDEV = new Float32Array(Math.max(n, 2 * RDEV.length));
  let ss = 0;
  for (let i = 0; i < n; i++) { const d = ring[i] - med; RDEV[i] = Math.abs(d); ss += d * d; }
  let sigma = 1.4826 * selectKth(RDEV, n, n >> 1);
  if (!(sigma > 0)) sigma = Math.sqrt(ss / n);
  const lim = 5 * sigma;
  let sum = 0, m = 0;
  for (let i = 0; i < n; i++) { const v = ring[i]; if (Math.abs(v - med) <= lim) { sum += v; m++; } }
  RING_ERR = m > 0 ? sigma / Math.sqrt(m) : 0;
  return m > 0 ? sum / m : med;
}

/** stamp - level into the given scratch (the input is never modified). */
function minus(stamp: Float32Array, level: number, out: Float32Array): Float32Array {
  for (let k = 0; k < stamp.length; k++) out[k] = stamp[k] - level;
  return out;
}

/**
 * The stamp less its local sky: the clipped mean of an outer ring (2 px wide) about the star.
 * The mesh sky can be off near bright stars or in crowded fields, and any offset
 * enters the curve of growth times the aperture area (common practice: a local
 * annulus background for aperture photometry).
 */
function localSkySubtracted(stamp: Float32Array, w: number, h: number, x: number, y: number, rMax: number): Float32Array {
  RING_ERR = 0;
  if (!(rMax > 6)) return stamp;
  const ring = ringLevel(stamp, w, h, x, y, rMax);
  if (ring.n < 12) { RING_ERR = 0; return stamp; }
  const sky = ring.level;
  if (!Number.isFinite(sky) || sky === 0) return stamp;
  if (HFDS.length < stamp.length) HFDS = new Float32Array(Math.max(stamp.length, 2 * HFDS.length));
  return minus(stamp, sky, HFDS.subarray(0, stamp.length));
}

/** Adds f once (a plain array: a Set here made the optimised code bail out on every new call site). */
function addFlag(flags: StarFlag[], f: StarFlag): void {
  if (!flags.includes(f)) flags.push(f);
}

/** No PSF fit for a detection flagged 'hot-pixel' (see measureStarJs). */
function triesFit(input: StampInput): boolean {
  return !input.flags.includes('hot-pixel');
}

/** A star without size or shape; flagged 'fit-failed' unless no fit was tried (a hot pixel). */
function emptyStar(flags: StarFlag[], x: number, y: number, hfdPx = Number.NaN, fitTried = true): Star {
  const nan = Number.NaN;
  if (fitTried) addFlag(flags, 'fit-failed');
  return {
    x, y, flux: nan, snr: nan, fwhmPx: nan, fwhmMajorPx: nan, fwhmMinorPx: nan, ellipticity: nan, thetaDeg: nan,
    hfdPx, coma: { x: nan, y: nan }, flags, model: 'moments', moffatBeta: null,
    moments: { ixx: nan, iyy: nan, ixy: nan, e1: nan, e2: nan },
    err: { x: nan, y: nan, fwhmPx: nan, ellipticity: nan, thetaDeg: nan, hfdPx: nan, e1: nan, e2: nan },
  };
}
