// AssemblyScript source of the per-star measurement's arithmetic (measureStarJs in
// ../measure.ts with fitPsfWithSnr's finish in ../psf-fit.ts, which stay the reference: see the
// method there), compiled with the fit, moments and HFD kernels it calls into one WebAssembly
// module by `npm run build:wasm` (measure.wasm.ts). The caller keeps the flags and builds the
// Star from OUT. test/unit/stars-measure-wasm.test.ts checks both give the same stars, and
// test/unit/wasm-modules.test.ts that the compiled bytes match the sources.
// Why one call per star: the glue between the kernels, run as JavaScript, was the largest part
// of each worker's start (the JIT compiles it afresh in every thread).

import { fit, stampPtr as fitStamp, variancePtr as fitVar, outPtr as fitOut, covariance } from './psf-fit.as';
import { moments, fixedMoments, momentErrors, stampPtr as momStamp, variancePtr as momVar, outPtr as momOut } from './moments.as';
import { hfd, stampPtr as hfdStamp, variancePtr as hfdVar, outPtr as hfdOut } from './hfd.as';
import { selectKth } from '../../image/wasm/select.as';

const CAP: i32 = 16384;
const LN2: f64 = 0.6931471805599453;
const FWHM_PER_SIGMA: f64 = 2.3548200450309493; // 2 sqrt(2 ln 2)
const RAD2DEG: f64 = 180 / Math.PI;
const F_MOFFAT: f64 = 9;
const MIN_FIT_SNR: f64 = 3;
const UNDERSAMPLED_FWHM: f64 = 2.5; // measure.ts: below it the fits integrate over the pixels
const MOFFAT_MIN_SNR_UNDERSAMPLED: f64 = 30;
const BOX_VAR: f64 = 1.0 / 12.0;
const BOX_KAPPA: f64 = (2 * LN2) / 12; // psf-fit.ts boxedShape
const BOXJ = new StaticArray<f64>(9);

const ST = new StaticArray<f32>(CAP);   // the stamp (+-Infinity made NaN)
const VAR = new StaticArray<f32>(CAP);  // per-pixel variance
const RING = new StaticArray<f32>(CAP);
const LIFT = new StaticArray<f32>(CAP); // the stamp less the fit's background
const BORD = new StaticArray<f64>(4 * 128); // border pixels (the stamp is at most 128 x 128)

// Results. Status: 0 measured, 1 fewer than 12 finite pixels.
// [0] status, [1] edge (0/1), [2] px, [3] py (start pixel), [4] model (0 none, 1 gaussian, 2 moffat, 3 moments)
// [5] x, [6] y, [7] flux, [8] snr, [9] fwhmMajor, [10] fwhmMinor (model 3: the rms axes), [11] theta, [12] beta
// [13] err x, [14] err y, [15] err fwhm, [16] err ellipticity, [17] err theta
// [18] hfd, [19] hfd err, [20] momOk, [21..26) ixx iyy ixy e1 e2, [26] comaX, [27] comaY
// [28] err e1, [29] err e2, [30] err x (moments), [31] err y (moments)
const OUT = new StaticArray<f64>(32);

export function capacity(): i32 { return CAP; }
export function stampPtr(): usize { return changetype<usize>(ST); }
export function outPtr(): usize { return changetype<usize>(OUT); }

// one fit's derived quantities (finish in ../psf-fit.ts), kept per model
class Fit {
  ok: bool = false; // usable with matched-filter SNR >= 3
  converged: bool = false;
  x: f64 = NaN; y: f64 = NaN; amp: f64 = NaN; bg: f64 = NaN;
  fMaj: f64 = NaN; fMin: f64 = NaN; theta: f64 = NaN; beta: f64 = NaN; flux: f64 = NaN;
  chi2r: f64 = NaN; snr: f64 = NaN; n: f64 = 0;
  ex: f64 = NaN; ey: f64 = NaN; eMean: f64 = NaN; eEll: f64 = NaN; eTheta: f64 = NaN;
  boxed: bool = false; cxx: f64 = NaN; cyy: f64 = NaN; cxy: f64 = NaN; // recordedCov (integrated fits)
}
const FG = new Fit();
const FM = new Fit();

@inline function f32at(a: StaticArray<f32>, i: i32): f64 { return <f64>unchecked(a[i]); }

let BA: f64 = 0, BB: f64 = 0, BC: f64 = 0; // boxedShape's result
/** psf-fit.ts boxedShape: the half-maximum form of the covariance plus the box's I/12. */
function boxedShape(a: f64, b: f64, c: f64): void {
  const det = a * c - b * b;
  const s11 = c / det + BOX_KAPPA, s22 = a / det + BOX_KAPPA, s12 = -b / det;
  const ds = s11 * s22 - s12 * s12;
  BA = s22 / ds; BB = -s12 / ds; BC = s11 / ds;
}

// 5-point Gauss-Legendre on a pixel (../psf-fit.ts HW_T, HW_W)
const HW_T = new StaticArray<f64>(5);
const HW_W = new StaticArray<f64>(5);
unchecked(HW_T[0] = -0.4530899229693320); unchecked(HW_T[1] = -0.2692346550528416); unchecked(HW_T[2] = 0);
unchecked(HW_T[3] = 0.2692346550528416); unchecked(HW_T[4] = 0.4530899229693320);
unchecked(HW_W[0] = 0.1184634425280945); unchecked(HW_W[1] = 0.2393143352496832); unchecked(HW_W[2] = 0.2844444444444444);
unchecked(HW_W[3] = 0.2393143352496832); unchecked(HW_W[4] = 0.1184634425280945);

/** ../psf-fit.ts boxedProfile. */
function boxedProfile(a: f64, b: f64, c: f64, kh: f64, beta: f64, vx: f64, vy: f64): f64 {
  let s: f64 = 0;
  for (let j = 0; j < 5; j++) {
    const dy = vy + unchecked(HW_T[j]);
    let sj: f64 = 0;
    for (let i = 0; i < 5; i++) {
      const dx = vx + unchecked(HW_T[i]);
      const q = dx * (a * dx + 2 * b * dy) + c * dy * dy;
      sj += unchecked(HW_W[i]) * (kh > 0 ? Math.exp(-beta * Math.log(1 + kh * q)) : Math.exp(-LN2 * q));
    }
    s += unchecked(HW_W[j]) * sj;
  }
  return s;
}

/** ../psf-fit.ts recordedHalfWidth. */
function recordedHalfWidth(a: f64, b: f64, c: f64, kh: f64, beta: f64, ux: f64, uy: f64, h0: f64, peak: f64): f64 {
  const half = 0.5 * peak;
  let lo = 0.95 * h0;
  let flo = boxedProfile(a, b, c, kh, beta, lo * ux, lo * uy) - half;
  if (!(flo > 0)) { lo = 0; flo = peak - half; }
  let hi = 1.2 * h0;
  let fhi = boxedProfile(a, b, c, kh, beta, hi * ux, hi * uy) - half;
  for (let k = 0; k < 30 && fhi > 0; k++) { lo = hi; flo = fhi; hi *= 2; fhi = boxedProfile(a, b, c, kh, beta, hi * ux, hi * uy) - half; }
  let side = 0;
  for (let it = 0; it < 100 && hi - lo > 1e-12 * (1 + hi); it++) {
    const r = (lo * fhi - hi * flo) / (fhi - flo);
    const fr = boxedProfile(a, b, c, kh, beta, r * ux, r * uy) - half;
    if (fr > 0) { lo = r; flo = fr; if (side == 1) fhi *= 0.5; side = 1; }
    else if (fr < 0) { hi = r; fhi = fr; if (side == -1) flo *= 0.5; side = -1; }
    else { lo = r; hi = r; }
  }
  return 0.5 * (lo + hi);
}

let RMAJ: f64 = NaN, RMIN: f64 = NaN;
/** ../psf-fit.ts recordedFwhms, into RMAJ, RMIN. */
function recordedFwhms(a: f64, b: f64, c: f64, moffat: bool, gamma: f64): void {
  const kh = moffat ? Math.pow(2, gamma) - 1 : 0;
  const beta = moffat ? 1 / gamma : 0;
  const t = 0.5 * Math.atan2(-2 * b, c - a);
  const ct = Math.cos(t), st = Math.sin(t);
  const peak = boxedProfile(a, b, c, kh, beta, 0, 0);
  boxedShape(a, b, c);
  const bm = 0.5 * (BA + BC), bd = Math.sqrt(0.25 * (BA - BC) * (BA - BC) + BB * BB);
  RMAJ = 2 * recordedHalfWidth(a, b, c, kh, beta, ct, st, 1 / Math.sqrt(bm - bd), peak);
  RMIN = 2 * recordedHalfWidth(a, b, c, kh, beta, -st, ct, 1 / Math.sqrt(bm + bd), peak);
}

/** sqrt(g^T C g) over the shape parameters 4..6 (finish's shapeErr); g taken back through BOXJ for an integrated fit. */
function shapeErr(cov: usize, m: i32, g4in: f64, g5in: f64, g6in: f64, boxed: bool): f64 {
  if (cov == 0) return NaN;
  let g4 = g4in, g5 = g5in, g6 = g6in;
  if (boxed) {
    g4 = g4in * unchecked(BOXJ[0]) + g5in * unchecked(BOXJ[3]) + g6in * unchecked(BOXJ[6]);
    g5 = g4in * unchecked(BOXJ[1]) + g5in * unchecked(BOXJ[4]) + g6in * unchecked(BOXJ[7]);
    g6 = g4in * unchecked(BOXJ[2]) + g5in * unchecked(BOXJ[5]) + g6in * unchecked(BOXJ[8]);
  }
  let v: f64 = 0;
  for (let i = 4; i < 7; i++) {
    const gi = i == 4 ? g4 : i == 5 ? g5 : g6;
    for (let j = 4; j < 7; j++) {
      const gj = j == 4 ? g4 : j == 5 ? g5 : g6;
      v += gi * load<f64>(cov + <usize>(i * m + j) * 8) * gj;
    }
  }
  return Math.sqrt(Math.max(v, 0));
}

/** One PSF fit (the stamp and variance already in the fit kernel), then finish's derived quantities and the usable test. */
function runFit(f: Fit, w: i32, h: i32, moffat: bool, radius: f64, ix: f64, iy: f64, ixx: f64, iyy: f64, ixy: f64, amp: f64, bg: f64, nodes: i32): void {
  const status = fit(w, h, moffat, 100, radius, -1, ix, iy, ixx, iyy, ixy, amp, bg, nodes);
  const o = fitOut();
  const m: i32 = moffat ? 8 : 7;
  f.ok = false; f.converged = false;
  f.n = load<f64>(o + 75 * 8);
  if (status != 0) return;
  const P0 = load<f64>(o), P1 = load<f64>(o + 8), P2 = load<f64>(o + 16), P3 = load<f64>(o + 24);
  const a0 = load<f64>(o + 32), b0 = load<f64>(o + 40), c0 = load<f64>(o + 48), P7 = load<f64>(o + 56);
  // an integrated fit reports the star as recorded: its shape plus the box (finish in ../psf-fit.ts)
  const boxed = nodes > 1;
  let a = a0, b = b0, c = c0;
  if (boxed) {
    for (let i = 0; i < 9; i++) unchecked(BOXJ[i] = i == 0 || i == 4 || i == 8 ? 1 : 0);
    if (a0 * c0 - b0 * b0 > 0) {
      boxedShape(a0, b0, c0);
      a = BA; b = BB; c = BC;
      const hs = 1e-6 * (a0 + c0);
      for (let j = 0; j < 3; j++) {
        const pa = a0 + (j == 0 ? hs : 0), pb = b0 + (j == 1 ? hs : 0), pc = c0 + (j == 2 ? hs : 0);
        boxedShape(pa, pb, pc);
        const u0 = BA, u1 = BB, u2 = BC;
        boxedShape(2 * a0 - pa, 2 * b0 - pb, 2 * c0 - pc);
        unchecked(BOXJ[j] = (u0 - BA) / (2 * hs)); unchecked(BOXJ[3 + j] = (u1 - BB) / (2 * hs)); unchecked(BOXJ[6 + j] = (u2 - BC) / (2 * hs));
      }
    }
  }
  const chi2 = load<f64>(o + 72 * 8);
  const conv = load<f64>(o + 74 * 8) == 1 && P2 > 0;
  const dof = f.n - <f64>m;
  const chi2r = chi2 / dof;
  const beta = moffat ? 1 / P7 : 0;
  const kh = moffat ? Math.pow(2, P7) - 1 : 0;
  const det = a * c - b * b;
  const det0 = a0 * c0 - b0 * b0;
  const half = 0.5 * (a + c);
  const D = Math.sqrt(0.25 * (a - c) * (a - c) + b * b);
  const l1 = half - D, l2 = half + D;
  const fMaj = 2 / Math.sqrt(l1), fMin = 2 / Math.sqrt(l2);
  const fMean = Math.sqrt(fMaj * fMin);
  let repMaj = fMaj, repMin = fMin;
  if (boxed && det0 > 0 && P2 > 0) { recordedFwhms(a0, b0, c0, moffat, P7); repMaj = RMAJ; repMin = RMIN; }
  const theta0 = 0.5 * Math.atan2(-2 * b, c - a) * RAD2DEG;
  f.x = P0; f.y = P1; f.amp = P2; f.bg = P3;
  f.fMaj = repMaj; f.fMin = repMin; f.theta = theta0 <= -90 ? theta0 + 180 : theta0;
  f.boxed = boxed && det > 0;
  f.cxx = c / (det * 2 * LN2); f.cyy = a / (det * 2 * LN2); f.cxy = -b / (det * 2 * LN2);
  f.beta = moffat ? beta : NaN;
  f.flux = moffat ? (Math.PI * P2) / ((beta - 1) * kh * Math.sqrt(det0)) : (Math.PI * P2) / (LN2 * Math.sqrt(det0));
  f.chi2r = chi2r;
  f.snr = load<f64>(o + 76 * 8);
  f.converged = conv && isFinite(fMean) && isFinite(repMaj) && isFinite(repMin);
  const cov = covariance(m, Math.max(1, chi2r));
  const sr = D > 0 ? (a - c) / (2 * D) : 0;
  const br = D > 0 ? b / D : 0;
  const dl1a = 0.5 - 0.5 * sr, dl1b = -br, dl1c = 0.5 + 0.5 * sr;
  const dl2a = 0.5 + 0.5 * sr, dl2b = br, dl2c = 0.5 - 0.5 * sr;
  f.eMean = (shapeErr(cov, m, (-fMean / 4) * (c / det), (fMean / 4) * ((2 * b) / det), (-fMean / 4) * (a / det), boxed) * Math.sqrt(repMaj * repMin)) / fMean;
  const de1 = -0.5 / Math.sqrt(l1 * l2), de2 = (0.5 * Math.sqrt(l1)) / Math.pow(l2, 1.5);
  f.eEll = shapeErr(cov, m, de1 * dl1a + de2 * dl2a, de1 * dl1b + de2 * dl2b, de1 * dl1c + de2 * dl2c, boxed);
  const X = c - a, Y = -2 * b, R2 = X * X + Y * Y;
  f.eTheta = 90;
  if (R2 > 0) f.eTheta = Math.min(90, shapeErr(cov, m, (0.5 * Y) / R2, -X / R2, (-0.5 * Y) / R2, boxed) * RAD2DEG);
  f.ex = cov != 0 ? Math.sqrt(load<f64>(cov)) : NaN;
  f.ey = cov != 0 ? Math.sqrt(load<f64>(cov + <usize>(m + 1) * 8)) : NaN;
  // usable (measure.ts): converged, positive amplitude, centre inside, size below the stamp's
  const usable = f.converged && P2 > 0 && P0 >= -0.5 && P0 <= <f64>w - 0.5 && P1 >= -0.5 && P1 <= <f64>h - 0.5 &&
    repMin > 0.3 && repMaj < <f64>max(w, h);
  f.ok = usable && f.snr >= MIN_FIT_SNR;
}

let SXX: f64 = 0, SYY: f64 = 0, SXY: f64 = 0; // startShape's result
/** The fit's start covariance: as given, or less the box for an integrated fit (measure.ts intrinsicStart). */
function startShape(xx: f64, yy: f64, xy: f64, integrated: bool): void {
  if (!integrated) { SXX = xx; SYY = yy; SXY = xy; return; }
  SXX = Math.max(xx - BOX_VAR, 0.04); SYY = Math.max(yy - BOX_VAR, 0.04);
  const lim = 0.95 * Math.sqrt(SXX * SYY);
  SXY = Math.max(-lim, Math.min(lim, xy));
}

/** Start amplitude without a Gaussian fit: the largest finite pixel of the 3x3 box about (x, y), background 0 (startLevels in ../psf-fit.ts). */
function peakNear(w: i32, h: i32, x: f64, y: f64): f64 {
  const cx = <i32>Math.round(x), cy = <i32>Math.round(y);
  let pk = -Infinity;
  for (let yy = max(0, cy - 1); yy <= min(h - 1, cy + 1); yy++) for (let xx = max(0, cx - 1); xx <= min(w - 1, cx + 1); xx++) {
    const v = f32at(ST, yy * w + xx);
    if (isFinite(v) && v > pk) pk = v;
  }
  return isFinite(pk) ? pk : 0;
}

/** The moments (adaptiveMoments) of the given stamp copy, from (x0, y0) with sigma0; OUT of moments.as. */
function runMoments(src: StaticArray<f32>, w: i32, h: i32, x0: f64, y0: f64, s0: f64): usize {
  memory.copy(momStamp(), changetype<usize>(src), <usize>(w * h) * 4);
  moments(w, h, x0, y0, s0);
  return momOut();
}

@inline function momGood(o: usize): bool {
  return load<f64>(o + 80) == 1 && load<f64>(o + 56) > 0 && load<f64>(o + 16) > 0 && load<f64>(o + 24) > 0;
}

const RDEV = new StaticArray<f32>(CAP);
/** measure.ts clippedRingMean of RING[0..nr). */
function clippedRingMean(nr: i32): f64 {
  const med = <f64>selectKth(RING, nr, nr >> 1);
  let ss: f64 = 0;
  for (let i = 0; i < nr; i++) { const d = <f64>unchecked(RING[i]) - med; unchecked(RDEV[i] = <f32>Math.abs(d)); ss += d * d; }
  let sigma = 1.4826 * <f64>selectKth(RDEV, nr, nr >> 1);
  if (!(sigma > 0)) sigma = Math.sqrt(ss / <f64>nr);
  const lim = 5 * sigma;
  let sum: f64 = 0, m = 0;
  for (let i = 0; i < nr; i++) { const v = <f64>unchecked(RING[i]); if (Math.abs(v - med) <= lim) { sum += v; m++; } }
  RING_ERR = m > 0 ? sigma / Math.sqrt(<f64>m) : 0;
  return m > 0 ? sum / <f64>m : med;
}
let RING_ERR: f64 = 0; // measure.ts: the ring sky's standard error
const MAX_HFD_REL_ERR: f64 = 0.25;

/** Sky variance from the stamp border, (1.4826 MAD)^2 (measure.ts borderVariance). */
function borderVariance(w: i32, h: i32): f64 {
  let n = 0;
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) {
    if (y != 0 && y != h - 1 && x != 0 && x != w - 1) continue;
    const v = unchecked(ST[y * w + x]);
    if (v == v && n < 4 * 128) { unchecked(BORD[n] = <f64>v); n++; }
  }
  if (n < 3) return 1;
  const med = sortedMiddle(n);
  for (let i = 0; i < n; i++) unchecked(BORD[i] = Math.abs(unchecked(BORD[i]) - med));
  const s = 1.4826 * sortedMiddle(n);
  return s > 0 ? s * s : 1;
}

/** BORD[0..n) sorted (insertion sort: a border's length), its element n >> 1. */
function sortedMiddle(n: i32): f64 {
  for (let i = 1; i < n; i++) {
    const v = unchecked(BORD[i]);
    let j = i - 1;
    while (j >= 0 && unchecked(BORD[j]) > v) { unchecked(BORD[j + 1] = unchecked(BORD[j])); j--; }
    unchecked(BORD[j + 1] = v);
  }
  return unchecked(BORD[n >> 1]);
}

/**
 * measureStarJs's arithmetic on the stamp in ST (w x h, the caller has checked the shape):
 * skyVar <= 0 or not finite means "from the border", gain <= 0 none, model 0 auto /
 * 1 gaussian / 2 moffat, fitIt 0 for no PSF fits (a hot pixel). Results in OUT.
 */
export function measure(w: i32, h: i32, skyVarIn: f64, gainIn: f64, sigmaGuessIn: f64, model: i32, fitIt: bool): void {
  const n = w * h;
  const nan: f64 = NaN;
  for (let i = 0; i < 32; i++) unchecked(OUT[i] = nan);
  let finite = 0;
  for (let i = 0; i < n; i++) {
    const v = unchecked(ST[i]);
    if (v - v == 0) finite++;
    else if (v == v) unchecked(ST[i] = NaN); // +-Infinity: missing
  }
  unchecked(OUT[1] = finite < n ? 1 : 0);
  if (finite < 12) { unchecked(OUT[0] = 1); return; }
  unchecked(OUT[0] = 0);
  let skyVar = skyVarIn;
  if (!(skyVar > 0) || !isFinite(skyVar)) skyVar = borderVariance(w, h);
  const gain = gainIn > 0 && isFinite(gainIn) ? gainIn : 0;
  const sigmaGuess = isFinite(sigmaGuessIn) && sigmaGuessIn > 0.3 ? sigmaGuessIn : 1.5;

  // brightest pixel near the stamp centre
  const cx0 = <f64>(w - 1) / 2, cy0 = <f64>(h - 1) / 2;
  const rs = Math.max(2, 1.5 * sigmaGuess);
  let px = Math.round(cx0), py = Math.round(cy0), best = -Infinity;
  const ylo = <i32>Math.max(0, Math.ceil(cy0 - rs)), yhi = <i32>Math.min(<f64>(h - 1), Math.floor(cy0 + rs));
  const xlo = <i32>Math.max(0, Math.ceil(cx0 - rs)), xhi = <i32>Math.min(<f64>(w - 1), Math.floor(cx0 + rs));
  for (let y = ylo; y <= yhi; y++) {
    for (let x = xlo; x <= xhi; x++) {
      const v = f32at(ST, y * w + x);
      if (v > best && (<f64>x - cx0) * (<f64>x - cx0) + (<f64>y - cy0) * (<f64>y - cy0) <= rs * rs) { best = v; px = <f64>x; py = <f64>y; }
    }
  }
  unchecked(OUT[2] = px); unchecked(OUT[3] = py);
  let mo = runMoments(ST, w, h, px, py, sigmaGuess);
  let momOk = momGood(mo);
  let mx = load<f64>(mo), my = load<f64>(mo + 8), mxx = load<f64>(mo + 16), myy = load<f64>(mo + 24), mxy = load<f64>(mo + 32);
  let me1 = load<f64>(mo + 40), me2 = load<f64>(mo + 48), mflux = load<f64>(mo + 56), mcx = load<f64>(mo + 64), mcy = load<f64>(mo + 72);
  let momLifted = false;

  // variance: sky, plus the moments' Gaussian over the gain (fillVariance)
  if (gain == 0 || !momOk) {
    for (let i = 0; i < n; i++) { const v = unchecked(ST[i]); unchecked(VAR[i] = v == v ? <f32>skyVar : <f32>Infinity); }
  } else {
    const det = mxx * myy - mxy * mxy;
    const ia = myy / det, ib = -mxy / det, ic = mxx / det;
    const amp = mflux / (2 * Math.PI * Math.sqrt(det));
    for (let y = 0; y < h; y++) {
      const dy = <f64>y - my;
      for (let x = 0; x < w; x++) {
        const i = y * w + x;
        const v = unchecked(ST[i]);
        if (v != v) { unchecked(VAR[i] = <f32>Infinity); continue; }
        const dx = <f64>x - mx;
        const g = amp * Math.exp(-0.5 * (dx * (ia * dx + 2 * ib * dy) + ic * dy * dy));
        unchecked(VAR[i] = <f32>(skyVar + (g > 0 ? g / gain : 0)));
      }
    }
  }

  const ix = momOk ? mx : px, iy = momOk ? my : py;
  const ixx = momOk ? mxx : sigmaGuess * sigmaGuess, iyy = momOk ? myy : sigmaGuess * sigmaGuess, ixy = momOk ? mxy : 0;
  const lmax = 0.5 * (ixx + iyy) + Math.sqrt(0.25 * (ixx - iyy) * (ixx - iyy) + ixy * ixy);
  const radius = Math.max(4, 2.5 * FWHM_PER_SIGMA * Math.sqrt(lmax));
  // undersampled: both fits integrated over the pixels, from the covariance less the box (measure.ts)
  const lmin = 0.5 * (ixx + iyy) - Math.sqrt(0.25 * (ixx - iyy) * (ixx - iyy) + ixy * ixy);
  const startFwhm = FWHM_PER_SIGMA * Math.sqrt(Math.sqrt(Math.max(lmax * lmin, 0)));
  const nodes: i32 = startFwhm < UNDERSAMPLED_FWHM ? (Math.sqrt(Math.max(lmin - BOX_VAR, 0)) >= 0.5 ? 3 : 4) : 1;
  const doG = fitIt && model != 2;
  let doM = fitIt && model != 1;
  if (doG || doM) {
    memory.copy(fitStamp(), changetype<usize>(ST), <usize>n * 4);
    memory.copy(fitVar(), changetype<usize>(VAR), <usize>n * 4);
  }
  if (doG) {
    startShape(ixx, iyy, ixy, nodes > 1);
    runFit(FG, w, h, false, radius, ix, iy, SXX, SYY, SXY, peakNear(w, h, ix, iy), 0, nodes);
  }
  // measure.ts: no Moffat in 'auto' for an undersampled star below SNR 30
  if (doM && nodes > 1 && model == 0 && doG && FG.converged && FG.snr < MOFFAT_MIN_SNR_UNDERSAMPLED) doM = false;
  if (doM) {
    if (doG && FG.converged) {
      // the Gaussian fit's half-maximum contour, amplitude and background (initFromFit)
      const s1 = FG.fMaj / FWHM_PER_SIGMA, s2 = FG.fMin / FWHM_PER_SIGMA;
      const t = (FG.theta * Math.PI) / 180, c = Math.cos(t), s = Math.sin(t);
      startShape(s1 * s1 * c * c + s2 * s2 * s * s, s1 * s1 * s * s + s2 * s2 * c * c, (s1 * s1 - s2 * s2) * c * s, nodes > 1);
      runFit(FM, w, h, true, radius, ix, iy, SXX, SYY, SXY, FG.amp, FG.bg, nodes);
    } else {
      startShape(ixx, iyy, ixy, nodes > 1);
      runFit(FM, w, h, true, radius, ix, iy, SXX, SYY, SXY, peakNear(w, h, ix, iy), 0, nodes);
    }
  }
  const gOk = doG && FG.ok, mOk = doM && FM.ok;
  let f: Fit | null = null;
  if (gOk && mOk) {
    const nFit = FM.n;
    const chi2M = FM.chi2r * (nFit - 8), chi2G = FG.chi2r * (nFit - 7);
    f = (chi2G - chi2M) / FM.chi2r > F_MOFFAT ? FM : FG;
  } else if (gOk) f = FG;
  else if (mOk) f = FM;

  // the moments again on the stamp less a significant fit background (see measureStarJs)
  if (f !== null && f.bg != 0) {
    const nFit = f.n;
    if (nFit > 0 && Math.abs(f.bg) > (3 * Math.sqrt(skyVar)) / Math.sqrt(nFit)) {
      const lv = f.bg;
      for (let i = 0; i < n; i++) unchecked(LIFT[i] = <f32>(<f64>unchecked(ST[i]) - lv));
      const s0 = momOk ? Math.sqrt(0.5 * (mxx + myy)) : Math.sqrt(f.fMaj * f.fMin) / FWHM_PER_SIGMA;
      const o2 = runMoments(LIFT, w, h, momOk ? mx : f.x, momOk ? my : f.y, s0);
      if (momGood(o2)) {
        mo = o2; momOk = true; momLifted = true;
        mx = load<f64>(mo); my = load<f64>(mo + 8); mxx = load<f64>(mo + 16); myy = load<f64>(mo + 24); mxy = load<f64>(mo + 32);
        me1 = load<f64>(mo + 40); me2 = load<f64>(mo + 48); mflux = load<f64>(mo + 56); mcx = load<f64>(mo + 64); mcy = load<f64>(mo + 72);
      }
    }
  }

  // undersampled: the moments from the Gaussian fit's covariance with that fixed weight (measure.ts)
  const fitSizeAgrees = f === FG || (f !== null && gOk && Math.abs(Math.sqrt((FG.fMaj * FG.fMin) / (f!.fMaj * f!.fMin)) - 1) < 0.25);
  if (FWHM_PER_SIGMA * sigmaGuess < UNDERSAMPLED_FWHM && gOk && fitSizeAgrees) {
    let cxx = FG.cxx, cyy = FG.cyy, cxy = FG.cxy;
    if (!FG.boxed) {
      const s1 = FG.fMaj / FWHM_PER_SIGMA, s2 = FG.fMin / FWHM_PER_SIGMA;
      const t = (FG.theta * Math.PI) / 180, ct = Math.cos(t), st = Math.sin(t);
      cxx = s1 * s1 * ct * ct + s2 * s2 * st * st; cyy = s1 * s1 * st * st + s2 * s2 * ct * ct; cxy = (s1 * s1 - s2 * s2) * ct * st;
    }
    const lv = FG.bg;
    for (let i = 0; i < n; i++) unchecked(LIFT[i] = <f32>(<f64>unchecked(ST[i]) - lv));
    memory.copy(momStamp(), changetype<usize>(LIFT), <usize>n * 4);
    fixedMoments(w, h, FG.x, FG.y, cxx, cyy, cxy);
    const o3 = momOut();
    if (load<f64>(o3 + 80) == 1) {
      mo = o3; momOk = true; momLifted = true;
      mx = load<f64>(mo); my = load<f64>(mo + 8); mxx = load<f64>(mo + 16); myy = load<f64>(mo + 24); mxy = load<f64>(mo + 32);
      me1 = load<f64>(mo + 40); me2 = load<f64>(mo + 48); mflux = load<f64>(mo + 56); mcx = load<f64>(mo + 64); mcy = load<f64>(mo + 72);
    }
  }

  // HFD about the moments centre, out to 4 FWHM of the fit, on the stamp less its ring sky
  const hx = momOk ? mx : f !== null ? f.x : px;
  const hy = momOk ? my : f !== null ? f.y : py;
  const stampR = Math.min(Math.min(hx + 0.5, <f64>w - 0.5 - hx), Math.min(hy + 0.5, <f64>h - 0.5 - hy));
  const fitFwhm = f !== null ? Math.sqrt(f.fMaj * f.fMin) : NaN;
  const maxR = isFinite(fitFwhm) ? Math.min(stampR, Math.max(5, 4 * fitFwhm)) : stampR;
  const r50Guess = momOk ? 1.1774 * Math.sqrt(0.5 * (mxx + myy)) : 1.1774 * sigmaGuess;
  memory.copy(hfdStamp(), changetype<usize>(ST), <usize>n * 4);
  RING_ERR = 0;
  if (maxR > 6) {
    const r0 = (maxR - 2) * (maxR - 2), r1 = maxR * maxR;
    const ya = <i32>Math.max(0, Math.ceil(hy - maxR)), yb = <i32>Math.min(<f64>(h - 1), Math.floor(hy + maxR));
    const xa = <i32>Math.max(0, Math.ceil(hx - maxR)), xb = <i32>Math.min(<f64>(w - 1), Math.floor(hx + maxR));
    let nr = 0;
    for (let j = ya; j <= yb; j++) {
      const dy2 = (<f64>j - hy) * (<f64>j - hy);
      for (let i = xa; i <= xb; i++) {
        const d = (<f64>i - hx) * (<f64>i - hx) + dy2;
        const v = unchecked(ST[j * w + i]);
        if (d >= r0 && d <= r1 && v == v) { unchecked(RING[nr] = v); nr++; }
      }
    }
    if (nr < 12) RING_ERR = 0;
    if (nr >= 12) {
      const sky = clippedRingMean(nr);
      if (isFinite(sky) && sky != 0) {
        const hs = hfdStamp();
        for (let i = 0; i < n; i++) store<f32>(hs + <usize>i * 4, <f32>(<f64>unchecked(ST[i]) - sky));
      }
    }
  }
  memory.copy(hfdVar(), changetype<usize>(VAR), <usize>n * 4);
  hfd(w, h, hx, hy, maxR, 2, 0, r50Guess > 0 ? r50Guess : 0);
  const ho = hfdOut();
  let hfdPx = load<f64>(ho), hfdErr = load<f64>(ho + 16);
  // measure.ts: the ring sky's uncertainty, and no HFD less certain than a quarter
  if (RING_ERR > 0 && isFinite(hfdPx)) {
    const hs = hfdStamp();
    const re = RING_ERR;
    for (let i = 0; i < n; i++) store<f32>(hs + <usize>i * 4, <f32>(<f64>load<f32>(hs + <usize>i * 4) - re));
    hfd(w, h, hx, hy, maxR, 2, 0, r50Guess > 0 ? r50Guess : 0);
    const skyTerm = Math.abs(load<f64>(ho) - hfdPx);
    hfdErr = Math.sqrt(hfdErr * hfdErr + skyTerm * skyTerm);
    if (!(hfdErr <= MAX_HFD_REL_ERR * hfdPx)) { hfdPx = NaN; hfdErr = NaN; }
  }
  unchecked(OUT[18] = hfdPx); unchecked(OUT[19] = hfdErr);

  unchecked(OUT[20] = momOk ? 1 : 0);
  if (momOk) {
    memory.copy(momStamp(), changetype<usize>(momLifted ? LIFT : ST), <usize>n * 4);
    memory.copy(momVar(), changetype<usize>(VAR), <usize>n * 4);
    momentErrors(w, h, 2, 0, mx, my, mxx, myy, mxy);
    const eo = momOut();
    unchecked(OUT[30] = load<f64>(eo + 96)); unchecked(OUT[31] = load<f64>(eo + 104));
    unchecked(OUT[28] = load<f64>(eo + 112)); unchecked(OUT[29] = load<f64>(eo + 120));
    unchecked(OUT[21] = mxx); unchecked(OUT[22] = myy); unchecked(OUT[23] = mxy); unchecked(OUT[24] = me1); unchecked(OUT[25] = me2);
    unchecked(OUT[26] = mcx); unchecked(OUT[27] = mcy);
  }
  if (f !== null) {
    unchecked(OUT[4] = f === FM ? 2 : 1);
    unchecked(OUT[5] = f.x); unchecked(OUT[6] = f.y); unchecked(OUT[7] = f.flux); unchecked(OUT[8] = f.snr);
    unchecked(OUT[9] = f.fMaj); unchecked(OUT[10] = f.fMin); unchecked(OUT[11] = f.theta); unchecked(OUT[12] = f.beta);
    unchecked(OUT[13] = f.ex); unchecked(OUT[14] = f.ey); unchecked(OUT[15] = f.eMean); unchecked(OUT[16] = f.eEll); unchecked(OUT[17] = f.eTheta);
    return;
  }
  if (!momOk) { unchecked(OUT[4] = 0); return; }
  // the moments' ellipse (momentsToEllipse) and its Gaussian's matched-filter SNR
  unchecked(OUT[4] = 3);
  const mean = 0.5 * (mxx + myy);
  const d = Math.sqrt(0.25 * (mxx - myy) * (mxx - myy) + mxy * mxy);
  let th = 0.5 * Math.atan2(2 * mxy, mxx - myy) * (180 / Math.PI);
  if (th <= -90) th += 180;
  const det = mxx * myy - mxy * mxy;
  const amp = mflux / (2 * Math.PI * Math.sqrt(det));
  let s: f64 = 0;
  for (let y = 0; y < h; y++) {
    for (let x = 0; x < w; x++) {
      const v = f32at(VAR, y * w + x);
      if (!(v > 0) || !isFinite(v)) continue;
      const dx = <f64>x - mx, dy = <f64>y - my;
      const mk = amp * Math.exp((-0.5 * (myy * dx * dx - 2 * mxy * dx * dy + mxx * dy * dy)) / det);
      s += (mk * mk) / v;
    }
  }
  unchecked(OUT[5] = mx); unchecked(OUT[6] = my); unchecked(OUT[7] = mflux); unchecked(OUT[8] = Math.sqrt(s));
  unchecked(OUT[9] = Math.sqrt(mean + d)); unchecked(OUT[10] = Math.sqrt(Math.max(mean - d, 0))); // rms axes a, b
  unchecked(OUT[11] = th);
  unchecked(OUT[13] = unchecked(OUT[30])); unchecked(OUT[14] = unchecked(OUT[31]));
}
