/**
 * Sensor tilt from the size field of one frame (optics.md section 4): the defocus plane
 * delta = delta0 + t.r + c r^2 fitted to T = T0 + K delta^2 (second moments add in quadrature,
 * geometric blur diameter = |delta| / N). One frame gives |delta| only, so the tilt's sign is not
 * resolved; magnitude and axis are, including when best focus crosses the frame (V shape).
 */
import type { FieldAnalysis } from '../field/map.ts';
import { sideName } from '../field/geometry.ts';
import { axialStdDeg, axisDeg, rng, std } from '../field/stats.ts';
import { robustLinearFit } from '../field/lsq.ts';
import { fitDefocus, smartStarts, defaultStarts, qAt, P, type DefocusData, type DefocusFit } from './defocus-fit.ts';
import type { Units } from './context.ts';
import type { CornerDefocus, TiltDiagnosis } from './types.ts';
import { robustSigma } from './zone-check.ts';

const BOOTSTRAP = 24;
/** Delta chi^2 for two extra parameters: chi^2_2 exceeds 16 with probability e^-8 = 3e-4. */
export const TILT_DCHI2 = 16;
/** Practical floor: blur change across the frame at least this fraction of the centre FWHM. */
const TILT_MIN_BLUR_FRACTION = 0.1;

export interface DefocusModel {
  readonly data: DefocusData;
  readonly full: DefocusFit;
  readonly noTilt: DefocusFit | null;
  readonly noCurvature: DefocusFit | null;
  /** Bootstrap fits of the full model, sign-aligned with the full fit. */
  readonly boot: Float64Array[];
  /** Other local solutions that fit almost as well (delta chi^2 < 10): the data allow them too. */
  readonly alternatives: Float64Array[];
}

export function defocusData(fa: FieldAnalysis, correction: Float64Array | null): DefocusData {
  const { cols, geom, centre } = fa;
  const n = cols.n;
  const u = new Float64Array(n);
  const v = new Float64Array(n);
  const T = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    u[i] = (cols.x[i] - centre.x) / geom.scale;
    v[i] = (cols.y[i] - centre.y) / geom.scale;
    T[i] = cols.T[i] - (correction ? correction[i] : 0);
  }
  return { n, u, v, T, sig: cols.sigT, frame: null, beta: fa.core.beta };
}

function resample(d: DefocusData, pick: Int32Array): DefocusData {
  const take = (a: Float64Array) => Float64Array.from(pick, (i) => a[i]);
  return { n: pick.length, u: take(d.u), v: take(d.v), T: take(d.T), sig: take(d.sig), frame: null, beta: d.beta };
}

/** Flip all defocus terms (the single-frame twin solution). */
function twin(p: Float64Array): Float64Array {
  const o = Float64Array.from(p);
  for (const k of [P.a0, P.a1, P.a2, P.a3]) o[k] = -o[k];
  return o;
}

/** The other branch: best focus on the other side of the tilt line (a0 flipped against the tilt). */
function otherBranch(p: Float64Array): Float64Array {
  const o = Float64Array.from(p);
  o[P.a0] = -o[P.a0];
  o[P.T0] = p[P.T0] + p[P.a0] * p[P.a0] - o[P.a0] * o[P.a0];
  return o;
}

/** One of the two sign-twins, chosen by a0 >= 0. */
function canonical(p: Float64Array): Float64Array {
  return p[P.a0] < 0 || (p[P.a0] === 0 && p[P.a1] < 0) ? twin(p) : Float64Array.from(p);
}

/** Relative distance between two solutions' defocus terms. */
function distinct(a: Float64Array, b: Float64Array): number {
  let d = 0;
  let s = 1e-9;
  for (const k of [P.a0, P.a1, P.a2, P.a3]) { d += (a[k] - b[k]) ** 2; s += a[k] * a[k] + b[k] * b[k]; }
  return Math.sqrt(d / s);
}

export function fitDefocusModel(fa: FieldAnalysis, correction: Float64Array | null, seed = 777): DefocusModel | null {
  const data = defocusData(fa, correction);
  if (data.n < 20) return null;
  const full = fitDefocus(data, { tilt: true, curvature: true, pair: null });
  if (!full) return null;
  const fixed = { robust: full.robust, scatter: full.scatter };
  const noTilt = fitDefocus(data, { tilt: false, curvature: true, pair: null }, smartStarts(data, { tilt: false, curvature: true, pair: null }), fixed);
  const noCurvature = fitDefocus(data, { tilt: true, curvature: false, pair: null }, [...smartStarts(data, { tilt: true, curvature: false, pair: null })], fixed);
  const rand = rng(seed);
  const boot: Float64Array[] = [];
  const ref = full.params;
  // Resamples start from every local solution that competes with the best (within
  // delta chi^2 10), so a bimodal answer shows in the errors instead of hiding.
  const spec = { tilt: true, curvature: true, pair: null };
  const minima: { p: Float64Array; chi2: number }[] = [];
  const grid = defaultStarts(data, spec).filter((p) => p[P.a0] === 0 && p[P.a3] === 0);
  for (const st of [otherBranch(ref), ...smartStarts(data, spec), ...grid]) {
    const f = fitDefocus(data, spec, [st], fixed);
    if (!f || f.chi2 - full.chi2 > 10) continue;
    const c = canonical(f.params);
    if (minima.some((m) => distinct(m.p, c) < 0.05) || distinct(canonical(ref), c) < 0.05) continue;
    minima.push({ p: c, chi2: f.chi2 });
  }
  const bootStarts = [ref, ...minima.sort((a, b) => a.chi2 - b.chi2).slice(0, 2).map((m) => m.p)];
  for (let b = 0; b < BOOTSTRAP; b++) {
    const pick = Int32Array.from({ length: data.n }, () => Math.floor(rand() * data.n));
    const d = resample(data, pick);
    const w = { robust: Float64Array.from(pick, (i) => full.robust[i]), scatter: full.scatter };
    const f = fitDefocus(d, { tilt: true, curvature: true, pair: null }, bootStarts, w);
    if (!f) continue;
    let p = f.params;
    if (p[P.a1] * ref[P.a1] + p[P.a2] * ref[P.a2] + p[P.a0] * ref[P.a0] + p[P.a3] * ref[P.a3] < 0) p = twin(p);
    boot.push(p);
  }
  return { data, full, noTilt, noCurvature, boot, alternatives: minima.map((m) => m.p) };
}

/**
 * The frame's four corners; for an image circle the farthest points with sky along the four
 * diagonals from its centre (the frame's own corners hold no sky).
 */
export function corners(fa: FieldAnalysis): { name: string; x: number; y: number; u: number; v: number }[] {
  const g = fa.geom;
  let pts: [number, number][] = [[-0.5, -0.5], [g.width - 0.5, -0.5], [-0.5, g.height - 0.5], [g.width - 0.5, g.height - 0.5]];
  if (g.circle) {
    const c = g.circle;
    pts = pts.map(([x, y]): [number, number] => {
      const dx = x - c.x;
      const dy = y - c.y;
      const t = Math.min(1, c.r / Math.max(1e-9, Math.hypot(dx, dy)));
      return [c.x + t * dx, c.y + t * dy];
    });
  }
  return pts.map(([x, y]) => ({ name: sideName(g, x - g.cx, y - g.cy), x, y, u: (x - fa.centre.x) / g.scale, v: (y - fa.centre.y) / g.scale }));
}

/** min and max of q over a grid covering the frame. */
export function qRange(fa: FieldAnalysis, p: ArrayLike<number>): { min: number; max: number; minAbs: number } {
  const g = fa.geom;
  let min = Infinity;
  let max = -Infinity;
  let minAbs = Infinity;
  for (let r = 0; r <= 16; r++) for (let c = 0; c <= 16; c++) {
    const x = -0.5 + (c / 16) * g.width;
    const y = -0.5 + (r / 16) * g.height;
    if (g.circle && Math.hypot(x - g.circle.x, y - g.circle.y) > g.circle.r) continue;
    const q = qAt(p, (x - fa.centre.x) / g.scale, (y - fa.centre.y) / g.scale);
    min = Math.min(min, q); max = Math.max(max, q); minAbs = Math.min(minAbs, Math.abs(q));
  }
  return { min, max, minAbs: min < 0 && max > 0 ? 0 : minAbs };
}

/**
 * The half-flux diameter must agree: defocus grows every size of a star, so across the stars the
 * HFD^2 must rise with the model's defocus term q^2 (slope > 0). Sizes that grow in moments but not
 * in HFD (or the other way) are something else: crowding, clipped cores, the pixel grid. Robust
 * fit of HFD^2 = a + b q^2 over the stars (Huber weights, intrinsic-scatter floor); the t value of
 * b, or null when there are too few stars or no HFDs.
 */
export function hfdAgreement(fa: FieldAnalysis, model: DefocusModel): number | null {
  const c = fa.cols;
  const d = model.data;
  const p = model.full.params;
  const rows: number[] = [];
  for (let i = 0; i < d.n; i++) if (Number.isFinite(c.hfd[i]) && c.hfd[i] > 0) rows.push(i);
  if (rows.length < 20) return null;
  const n = rows.length;
  const A = new Float64Array(2 * n);
  const y = new Float64Array(n);
  const s = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const i = rows[k];
    const q = qAt(p, d.u[i], d.v[i]);
    A[2 * k] = 1;
    A[2 * k + 1] = q * q;
    y[k] = c.hfd[i] * c.hfd[i];
    // sigma(HFD) ~ HFD / nu at the Fisher level of a size (optics.md 1.6), so sigma(HFD^2) ~ 2 HFD^2 / nu
    s[k] = (2 * y[k]) / Math.max(1, c.snr[i]);
  }
  const f = robustLinearFit(A, y, s, 2, { mode: 'floor' });
  if (!f) return null;
  return f.coef[1] / Math.sqrt(Math.max(1e-300, f.cov[3]));
}

/** The HFD's agreement (t value of its slope against the defocus term) a tilt finding needs. */
export const TILT_HFD_T = 2;

const MODEL = 'T = T0 + K (delta0 + t.r + c r^2)^2, delta = local focus error, K = (1+eps^2)/(8 N^2 p^2) (optics.md section 4)';

export function diagnoseTilt(fa: FieldAnalysis, u: Units, model: DefocusModel | null, zoneSig: number | null = null): TiltDiagnosis {
  const none = (note: string, supported: boolean): TiltDiagnosis => ({
    significant: false, supported, note,
    axisDeg: null, axisErrDeg: null,
    acrossFrameUm: { x: null, y: null }, acrossFrameErrUm: { x: null, y: null },
    acrossFrameBlurPx: { x: null, y: null }, acrossFrameBlurErrPx: { x: null, y: null },
    tiltMrad: null, tiltErrMrad: null, signResolved: false, bestFocusInFrame: null,
    corners: [], worstCornerRatio: null, significance: 0, zoneSignificance: null, hfdAgreement: null, deltaChi2: 0, starsUsed: fa.cols.n, model: MODEL,
  });
  if (!model) return none(`too few clean stars (${fa.cols.n}) to fit a focus plane; at least 20 are needed, better a few hundred`, false);
  const g = fa.geom;
  const p = model.full.params;
  const dchi2 = model.noTilt ? Math.max(0, model.noTilt.chi2 - model.full.chi2) : 0;
  const sK = u.sqrtK;
  const acrossQ = (pp: ArrayLike<number>) => ({ x: Math.abs(pp[P.a1]) * (g.width / g.scale), y: Math.abs(pp[P.a2]) * (g.height / g.scale) });
  const aq = acrossQ(p);
  const bootAcross = model.boot.map(acrossQ);
  // A competing solution widens the error to reach it: one frame allows both.
  const alts = model.alternatives.map(acrossQ);
  const errX = Math.max(std(bootAcross.map((b) => b.x)), ...alts.map((a) => Math.abs(a.x - aq.x)));
  const errY = Math.max(std(bootAcross.map((b) => b.y)), ...alts.map((a) => Math.abs(a.y - aq.y)));
  const axis = axisDeg((Math.atan2(p[P.a2], p[P.a1]) * 180) / Math.PI);
  const axisErr = axialStdDeg(model.boot.map((b) => (Math.atan2(b[P.a2], b[P.a1]) * 180) / Math.PI), axis);
  const gradQ = Math.hypot(p[P.a1], p[P.a2]) / g.scale; // q per px
  const gradErr = std(model.boot.map((b) => Math.hypot(b[P.a1], b[P.a2]) / g.scale));
  const range = qRange(fa, p);
  const T0 = p[P.T0];
  const cs: CornerDefocus[] = corners(fa).map((c) => {
    const q = Math.abs(qAt(p, c.u, c.v));
    const qe = std(model.boot.map((b) => Math.abs(qAt(b, c.u, c.v))));
    return {
      name: c.name, xPx: c.x, yPx: c.y,
      defocusUm: sK ? q / sK : null, defocusErrUm: sK ? qe / sK : null,
      blurDiameterPx: q * u.blurPerQ, blurDiameterErrPx: qe * u.blurPerQ,
    };
  });
  const bestT = T0 + range.minAbs * range.minAbs;
  const worstQ = Math.max(...corners(fa).map((c) => Math.abs(qAt(p, c.u, c.v))));
  const worstCornerRatio = bestT > 0 ? Math.sqrt((T0 + worstQ * worstQ) / bestT) : null;
  const blurX = aq.x * u.blurPerQ;
  const blurY = aq.y * u.blurPerQ;
  const centreFwhm = 2.354820045 * Math.sqrt(Math.max(bestT, 1e-6) / 2);
  const blurMax = Math.max(blurX, blurY);
  const relErr = Math.hypot(errX, errY) / Math.max(1e-12, Math.hypot(aq.x, aq.y));
  const sigma = robustSigma(Math.sqrt(dchi2), zoneSig);
  const hfdT = hfdAgreement(fa, model);
  const hfdAgrees = hfdT === null || hfdT >= TILT_HFD_T;
  const significant = sigma >= Math.sqrt(TILT_DCHI2) && blurMax >= TILT_MIN_BLUR_FRACTION * centreFwhm && relErr < 0.5 && hfdAgrees;
  let note: string | null = null;
  if (!u.micrometres) note = u.why;
  if (!hfdAgrees && sigma >= Math.sqrt(TILT_DCHI2)) note = [note, `the second moments show a focus gradient (${sigma.toFixed(1)} sigma) that the half-flux diameters do not follow (t = ${hfdT!.toFixed(1)}): crowding, clipped cores or the pixel grid rather than defocus`].filter(Boolean).join('; ');
  else if (!significant && dchi2 >= TILT_DCHI2 && sigma < Math.sqrt(TILT_DCHI2)) note = [note, `the stars show a focus gradient (${Math.sqrt(dchi2).toFixed(1)} sigma) that the zone medians do not confirm (${sigma.toFixed(1)} sigma): a few stars, not the frame`].filter(Boolean).join('; ');
  else if (!significant && dchi2 >= TILT_DCHI2) note = [note, 'a focus gradient is detected but too small to matter (below a tenth of the star size across the frame)'].filter(Boolean).join('; ');
  const altBig = alts.filter((a) => Math.hypot(a.x - aq.x, a.y - aq.y) > 0.3 * Math.max(1e-9, Math.hypot(aq.x, aq.y), Math.hypot(a.x, a.y)));
  if (altBig.length) {
    const a = altBig[0];
    const words = sK ? `${(Math.hypot(a.x, a.y) / sK).toFixed(0)} µm` : `${(Math.hypot(a.x, a.y) * u.blurPerQ).toFixed(1)} px of blur`;
    note = [note, `the frame also fits a different focus surface almost as well (${words} across the frame, e.g. a tilt instead of curvature with a defocused centre); a focus pair settles it`].filter(Boolean).join('; ');
  }
  return {
    significant, supported: true, note,
    axisDeg: axis, axisErrDeg: Number.isFinite(axisErr) ? axisErr : null,
    acrossFrameUm: { x: sK ? aq.x / sK : null, y: sK ? aq.y / sK : null },
    acrossFrameErrUm: { x: sK ? errX / sK : null, y: sK ? errY / sK : null },
    acrossFrameBlurPx: { x: blurX, y: blurY },
    acrossFrameBlurErrPx: { x: errX * u.blurPerQ, y: errY * u.blurPerQ },
    tiltMrad: sK && u.pixelSizeUm ? gradQ / sK / (u.pixelSizeUm / 1000) : null,
    tiltErrMrad: sK && u.pixelSizeUm ? gradErr / sK / (u.pixelSizeUm / 1000) : null,
    signResolved: false,
    bestFocusInFrame: range.min < 0 && range.max > 0,
    corners: cs,
    worstCornerRatio,
    significance: sigma,
    zoneSignificance: zoneSig,
    hfdAgreement: hfdT,
    deltaChi2: dchi2,
    starsUsed: model.data.n,
    model: MODEL,
  };
}
