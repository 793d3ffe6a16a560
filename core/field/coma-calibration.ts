/**
 * Adaptive moments of a geometric coma spot convolved with a round Gaussian core, computed in
 * closed form, to read the measured (Gaussian-weighted) coma and size in terms of the
 * geometric sagittal coma S.
 *
 * The spot: pupil zone rho (uniform in rho^2) and angle phi image to S rho^2 (2 + cos 2phi, sin 2phi)
 * along the flare (optics.md 3: each zone a circle of radius S rho^2 displaced by twice that;
 * the unweighted moments are S^2/2 along, S^2/6 across, spin-1 S^3/3, section 1.5). With the
 * core each ray becomes a Gaussian N(m_r, s^2 I), and under the weight exp(-d^T W^-1 d / 2) each
 * product is again a Gaussian, so the weighted sums are exact sums over rays.
 *
 * The adaptive definition replicated (core/stars/moments.ts): fixed point W = 2 M_w with the
 * weighted centroid at the weight centre; the spin-1 moment <d_x r^2, d_y r^2>_w about that
 * centre, normalised by sum(w I) and (tr W / 2)^1.5.
 * Everything scales with s, so the results are tabulated against x = S / s.
 */

import { STORED_CALIBRATION } from './calibration-tables.gen.ts';

export interface AdaptiveSpot {
  /** tr W in units of s^2 (2 for x = 0). */
  T: number;
  /** Along-minus-across (flare direction) second moment of W, units of s^2: D = W_along - W_across. */
  D: number;
  /** Normalised spin-1 moment along the flare (dimensionless, >= 0). */
  c: number;
}

const NR = 16;
const NPHI = 32;

/** Exact (to the pupil quadrature) adaptive moments of the spot with S = x (core sigma s = 1). */
export function adaptiveComaSpot(x: number): AdaptiveSpot {
  if (!(x > 0)) return { T: 2, D: 0, c: 0 };
  const n = NR * NPHI;
  const mx = new Float64Array(n);
  const my = new Float64Array(n);
  let k = 0;
  for (let i = 0; i < NR; i++) {
    const r2 = (i + 0.5) / NR; // midpoint in rho^2: uniform over the pupil area
    for (let j = 0; j < NPHI; j++) {
      const phi = ((j + 0.5) * 2 * Math.PI) / NPHI;
      mx[k] = x * r2 * (2 + Math.cos(2 * phi));
      my[k] = x * r2 * Math.sin(2 * phi);
      k++;
    }
  }
  const a = adaptiveOfRays(mx, my, 1);
  const T = a.wxx + a.wyy;
  return { T, D: a.wxx - a.wyy, c: a.spin1x / Math.pow(T / 2, 1.5) };
}

/**
 * Adaptive moments (W = 2 M_w, weighted centroid at the weight centre) of a mixture of round
 * Gaussians N(m_k, s2 I), equal weights: the image of rays m_k seen through a Gaussian core.
 * Returns the weight covariance and the spin-1 moment <d r^2>_w about the centre.
 */
export function adaptiveOfRays(mx: Float64Array, my: Float64Array, s2: number): { wxx: number; wyy: number; wxy: number; spin1x: number; spin1y: number } {
  const n = mx.length;
  let cx = 0;
  let cy = 0;
  for (let k = 0; k < n; k++) { cx += mx[k]; cy += my[k]; }
  cx /= n; cy /= n;
  let wxx = s2, wyy = s2, wxy = 0;
  for (let k = 0; k < n; k++) {
    wxx += (mx[k] - cx) ** 2 / n;
    wyy += (my[k] - cy) ** 2 / n;
    wxy += ((mx[k] - cx) * (my[k] - cy)) / n;
  }
  for (let it = 0; it < 300; it++) {
    const { sum, ax, ay, mxx, myy, mxy } = weighted(mx, my, s2, cx, cy, wxx, wyy, wxy);
    const ux = ax / sum;
    const uy = ay / sum;
    const nxx = 2 * (mxx / sum - ux * ux);
    const nyy = 2 * (myy / sum - uy * uy);
    const nxy = 2 * (mxy / sum - ux * uy);
    const change = Math.abs(nxx - wxx) + Math.abs(nyy - wyy) + Math.abs(nxy - wxy) + Math.abs(ux) + Math.abs(uy);
    cx += 2 * ux;
    cy += 2 * uy;
    wxx = nxx; wyy = nyy; wxy = nxy;
    if (change < 1e-12 * (wxx + wyy)) break;
  }
  const t = weightedThird(mx, my, s2, cx, cy, wxx, wyy, wxy);
  return { wxx, wyy, wxy, spin1x: t.x, spin1y: t.y };
}

/** Weighted zeroth, first and second moments (about the weight centre) of the ray mixture. */
function weighted(mx: Float64Array, my: Float64Array, s2: number, cx: number, cy: number, wxx: number, wyy: number, wxy: number) {
  // Product of N(m, s2 I) and the weight: covariance S' = (I/s2 + W^-1)^-1, mean m' = S'(m/s2 + W^-1 c),
  // scalar factor exp(-0.5 (m - c)^T (s2 I + W)^-1 (m - c)) (constant factors cancel in ratios).
  const det = wxx * wyy - wxy * wxy;
  const ia = wyy / det, ib = -wxy / det, ic = wxx / det; // W^-1
  const pa = 1 / s2 + ia, pb = ib, pc = 1 / s2 + ic; // S'^-1
  const pdet = pa * pc - pb * pb;
  const sa = pc / pdet, sb = -pb / pdet, sc = pa / pdet; // S'
  const qa = s2 + wxx, qb = wxy, qc = s2 + wyy; // s2 I + W
  const qdet = qa * qc - qb * qb;
  const ra = qc / qdet, rb = -qb / qdet, rc = qa / qdet;
  let sum = 0, ax = 0, ay = 0, mxx = 0, myy = 0, mxy = 0;
  for (let k = 0; k < mx.length; k++) {
    const dx = mx[k] - cx;
    const dy = my[k] - cy;
    const f = Math.exp(-0.5 * (ra * dx * dx + 2 * rb * dx * dy + rc * dy * dy));
    // mean of the product relative to c: S' (m/s2 + W^-1 c) - c = S' (m - c)/s2
    const ux = (sa * dx + sb * dy) / s2;
    const uy = (sb * dx + sc * dy) / s2;
    sum += f;
    ax += f * ux;
    ay += f * uy;
    mxx += f * (sa + ux * ux);
    myy += f * (sc + uy * uy);
    mxy += f * (sb + ux * uy);
  }
  return { sum, ax, ay, mxx, myy, mxy };
}

/** Weighted spin-1 moment <d (d_x^2 + d_y^2)>_w about the weight centre. */
function weightedThird(mx: Float64Array, my: Float64Array, s2: number, cx: number, cy: number, wxx: number, wyy: number, wxy: number): { x: number; y: number } {
  const det = wxx * wyy - wxy * wxy;
  const ia = wyy / det, ib = -wxy / det, ic = wxx / det;
  const pa = 1 / s2 + ia, pb = ib, pc = 1 / s2 + ic;
  const pdet = pa * pc - pb * pb;
  const Sxx = pc / pdet, Sxy = -pb / pdet, Syy = pa / pdet;
  const qa = s2 + wxx, qb = wxy, qc = s2 + wyy;
  const qdet = qa * qc - qb * qb;
  const ra = qc / qdet, rb = -qb / qdet, rc = qa / qdet;
  let sum = 0, t = 0, t2 = 0;
  for (let k = 0; k < mx.length; k++) {
    const dx = mx[k] - cx;
    const dy = my[k] - cy;
    const f = Math.exp(-0.5 * (ra * dx * dx + 2 * rb * dx * dy + rc * dy * dy));
    const ux = (Sxx * dx + Sxy * dy) / s2;
    const uy = (Sxy * dx + Syy * dy) / s2;
    // E[d_x r^2] for d ~ N(u, S'): ux^3 + ux uy^2 + 3 ux Sxx + ux Syy + 2 uy Sxy
    t += f * (ux * ux * ux + ux * uy * uy + 3 * ux * Sxx + ux * Syy + 2 * uy * Sxy);
    // E[d_y r^2] = uy^3 + uy ux^2 + 3 uy Syy + uy Sxx + 2 ux Sxy
    t2 += f * (uy * uy * uy + uy * ux * ux + 3 * uy * Syy + uy * Sxx + 2 * ux * Sxy);
    sum += f;
  }
  return { x: t / sum, y: t2 / sum };
}

/** x grid of the table: dense where coma is comparable to the core. */
const XMAX = 12;
const NX = 73;
let table: { x: Float64Array; T: Float64Array; D: Float64Array; c: Float64Array } | null = null;

export function comaTable(): { x: Float64Array; T: Float64Array; D: Float64Array; c: Float64Array } {
  if (table) return table;
  table = TABLES_FROM_SOURCES ? computeComaTable() : storedComa() ?? computeComaTable();
  return table;
}

/** comaTable ray-traced afresh (bin/build-calibration.ts stores it; the tests compare the two). */
export function computeComaTable(): { x: Float64Array; T: Float64Array; D: Float64Array; c: Float64Array } {
  const x = new Float64Array(NX);
  const T = new Float64Array(NX);
  const D = new Float64Array(NX);
  const c = new Float64Array(NX);
  for (let i = 0; i < NX; i++) {
    x[i] = XMAX * (i / (NX - 1)) ** 1.5;
    const r = adaptiveComaSpot(x[i]);
    T[i] = r.T; D[i] = r.D; c[i] = r.c;
  }
  return { x, T, D, c };
}

// The tables take about 0.2 s of ray tracing per process; they are stored, computed by the code
// here, in calibration-tables.gen.ts (`npm run build:calibration`), and
// test/unit/calibration-tables.test.ts checks the stored values are what the code computes now,
// bit for bit. SKYLOUPE_TABLES=compute ray-traces them instead.
// (read through globalThis: the page's type check has no Node types, and a page has no process)
const TABLES_FROM_SOURCES = (globalThis as { process?: { env?: Record<string, string | undefined> } }).process?.env?.SKYLOUPE_TABLES === 'compute';
function f64(b64: string): Float64Array {
  const bytes = Uint8Array.from(atob(b64), (ch) => ch.charCodeAt(0));
  return new Float64Array(bytes.buffer, 0, bytes.length / 8);
}
function storedComa(): { x: Float64Array; T: Float64Array; D: Float64Array; c: Float64Array } | null {
  const s = STORED_CALIBRATION.coma;
  if (!s || STORED_CALIBRATION.nx !== NX || STORED_CALIBRATION.xmax !== XMAX) return null;
  return { x: f64(s.x), T: f64(s.T), D: f64(s.D), c: f64(s.c) };
}

function interp(xs: Float64Array, ys: Float64Array, v: number): number {
  if (v <= xs[0]) return ys[0];
  const n = xs.length;
  if (v >= xs[n - 1]) return ys[n - 1];
  let lo = 0, hi = n - 1;
  while (hi - lo > 1) { const m = (lo + hi) >> 1; if (xs[m] <= v) lo = m; else hi = m; }
  const f = (v - xs[lo]) / (xs[hi] - xs[lo]);
  return ys[lo] + f * (ys[hi] - ys[lo]);
}

/** Adaptive moments for coma S with a core of per-axis variance s2 (px^2): T and D in px^2, c dimensionless. */
export function adaptiveComaMoments(S: number, s2: number): AdaptiveSpot {
  const t = comaTable();
  const s = Math.sqrt(s2);
  const x = Math.abs(S) / s;
  return { T: s2 * interp(t.x, t.T, x), D: s2 * interp(t.x, t.D, x), c: interp(t.x, t.c, x) };
}

/**
 * Core variance s^2 and coma S of a star with measured adaptive size T and spin-1 magnitude c:
 * x from c (c rises monotonically with x over the table), then s^2 = T / T(x).
 */
export function comaFromMeasured(c: number, T: number): { S: number; s2: number } {
  const t = comaTable();
  const cm = Math.abs(c);
  let x: number;
  // c is monotonic on the table up to its maximum; beyond it, clamp.
  let imax = 0;
  for (let i = 1; i < t.c.length; i++) if (t.c[i] > t.c[imax]) imax = i;
  if (cm >= t.c[imax]) x = t.x[imax];
  else {
    let lo = 0, hi = imax;
    while (hi - lo > 1) { const m = (lo + hi) >> 1; if (t.c[m] <= cm) lo = m; else hi = m; }
    const f = (cm - t.c[lo]) / (t.c[hi] - t.c[lo]);
    x = t.x[lo] + f * (t.x[hi] - t.x[lo]);
  }
  const s2 = T / interp(t.x, t.T, x);
  return { S: x * Math.sqrt(s2), s2 };
}

/** Core variance s^2 of a star of measured size T whose coma is S (px): solves T = s^2 T(S/s). */
export function coreForComa(S: number, T: number): number {
  let s2 = T / 2;
  for (let k = 0; k < 30; k++) {
    const next = T / (adaptiveComaMoments(S, s2).T / s2);
    if (Math.abs(next - s2) < 1e-10 * s2) return next;
    s2 = next;
  }
  return s2;
}

/**
 * A trail: a uniform segment of length L (unweighted variance L^2/12 along it, optics.md 6)
 * through the same core. Adaptive W_along - W_across in units of s^2 against x = L / s;
 * W_across stays s^2 for any L (the profile and the weight separate along the trail axes).
 */
const NT = 64;
let trailTab: { x: Float64Array; D: Float64Array } | null = null;

export function adaptiveTrail(x: number): { T: number; D: number } {
  if (!(x > 0)) return { T: 2, D: 0 };
  const n = 96;
  const mx = new Float64Array(n);
  const my = new Float64Array(n);
  for (let k = 0; k < n; k++) mx[k] = x * ((k + 0.5) / n - 0.5);
  const a = adaptiveOfRays(mx, my, 1);
  return { T: a.wxx + a.wyy, D: a.wxx - a.wyy };
}

function trailTable(): { x: Float64Array; D: Float64Array } {
  if (trailTab) return trailTab;
  const x = new Float64Array(NT);
  const D = new Float64Array(NT);
  for (let i = 0; i < NT; i++) {
    x[i] = 20 * (i / (NT - 1)) ** 1.5;
    D[i] = adaptiveTrail(x[i]).D;
  }
  trailTab = { x, D };
  return trailTab;
}

/** Trail length L (px) from the adaptive anisotropic moment |M| (px^2) and the core variance s2 = (T - |M|)/2. */
export function trailLengthFromMoments(Mabs: number, T: number): number {
  const s2 = Math.max(1e-6, (T - Mabs) / 2);
  const target = Mabs / s2;
  const t = trailTable();
  if (target <= 0) return 0;
  const n = t.x.length;
  if (target >= t.D[n - 1]) return t.x[n - 1] * Math.sqrt(s2) * Math.sqrt(target / t.D[n - 1]);
  let lo = 0, hi = n - 1;
  while (hi - lo > 1) { const m = (lo + hi) >> 1; if (t.D[m] <= target) lo = m; else hi = m; }
  const f = (target - t.D[lo]) / (t.D[hi] - t.D[lo]);
  return (t.x[lo] + f * (t.x[hi] - t.x[lo])) * Math.sqrt(s2);
}

/**
 * Defocus: a uniform disk (annulus for a central obstruction eps) of diameter d through the core.
 * Unweighted, it adds q^2 = d^2 (1 + eps^2) / 8 to T (optics.md 1.1); the adaptive moments add
 * q^2 H(y) with y = q^2 / s^2, H -> 1 for small blur and > 1 once the flat-topped disk dominates.
 * Tabulated against y per obstruction.
 */
const defocusTabs = new Map<number, { y: Float64Array; H: Float64Array }>();

export function adaptiveDefocusT(d: number, eps = 0): number {
  if (!(d > 0)) return 2;
  const nr = 24;
  const nphi = 48;
  const mx = new Float64Array(nr * nphi);
  const my = new Float64Array(nr * nphi);
  let k = 0;
  for (let i = 0; i < nr; i++) {
    // uniform in area between eps d/2 and d/2
    const f = (i + 0.5) / nr;
    const r = (d / 2) * Math.sqrt(eps * eps + f * (1 - eps * eps));
    for (let j = 0; j < nphi; j++) {
      const p = ((j + 0.5) * 2 * Math.PI) / nphi;
      mx[k] = r * Math.cos(p);
      my[k] = r * Math.sin(p);
      k++;
    }
  }
  const a = adaptiveOfRays(mx, my, 1);
  return a.wxx + a.wyy;
}

export interface GainTable { readonly y: Float64Array; readonly H: Float64Array }

/**
 * The tabulated gain H(y) for this obstruction (cached per eps to 0.001), through a Gaussian core,
 * or through a Moffat core of power index `beta` (moffatDefocusTable) when one is given.
 */
export function defocusTable(eps: number, beta: number | null = null): GainTable {
  if (beta !== null && Number.isFinite(beta) && beta < MOFFAT_GAUSSIAN_BETA) return moffatDefocusTable(beta, eps);
  const key = Math.round(eps * 1000) / 1000;
  const hit = defocusTabs.get(key);
  if (hit) return hit;
  const stored = STORED_CALIBRATION.defocus[String(key)];
  const tab = !TABLES_FROM_SOURCES && stored ? { y: f64(stored.y), H: f64(stored.H) } : computeDefocusTable(key);
  defocusTabs.set(key, tab);
  return tab;
}

/** defocusTable ray-traced afresh for one obstruction (rounded to 0.001). */
export function computeDefocusTable(key: number): GainTable {
  const n = 48;
  const y = new Float64Array(n);
  const H = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const d = 24 * (i / (n - 1)) ** 1.5; // d / s from 0 to 24
    const q2 = (d * d * (1 + key * key)) / 8;
    y[i] = q2;
    H[i] = i === 0 ? 1 : (adaptiveDefocusT(d, key) - 2) / q2;
  }
  return { y, H };
}

/** H(y) and dH/dy for the adaptive defocus gain (see defocusTable). */
export function defocusGain(yv: number, eps = 0, beta: number | null = null): { H: number; dH: number } {
  const H = gainAt(defocusTable(eps, beta), yv, DH);
  return { H, dH: DH[0] };
}

const DH = new Float64Array(1);

/**
 * H(yv) from a table, with dH/dy written to dOut[0]: the allocation-free form for fits that
 * evaluate it for every star at every step.
 */
export function gainAt(t: GainTable, yv: number, dOut: Float64Array): number {
  const n = t.y.length;
  if (!(yv > 0)) { dOut[0] = (t.H[1] - t.H[0]) / (t.y[1] - t.y[0]); return t.H[0]; }
  if (yv >= t.y[n - 1]) { dOut[0] = 0; return t.H[n - 1]; }
  let lo = 0, hi = n - 1;
  while (hi - lo > 1) { const m = (lo + hi) >> 1; if (t.y[m] <= yv) lo = m; else hi = m; }
  const dH = (t.H[hi] - t.H[lo]) / (t.y[hi] - t.y[lo]);
  dOut[0] = dH;
  return t.H[lo] + dH * (yv - t.y[lo]);
}

/**
 * Defocus through a Moffat core (Moffat 1969, optics.md 1.1). Gaussian-weighted moments see a
 * disk through a Moffat core grow faster than through a Gaussian core of the same adaptive size:
 * as the weight widens with the disk it takes in more of the Moffat wings (at beta 2.5 the gain
 * for a small disk is about 1.46 instead of 1, measured on pixel-integrated renderings), so the
 * Gaussian table reads focus errors 5-20 % high on Moffat seeing. A Moffat profile is a scale
 * mixture of Gaussians: from the Gamma-function integral, (1 + r^2/alpha^2)^-beta =
 * Gamma(beta)^-1 int t^(beta-1) e^-t exp(-t r^2/alpha^2) dt, i.e. normalised Gaussians of
 * variance alpha^2/(2t) with t ~ Gamma(beta - 1) [DER]. For a round disk through a round core
 * the adaptive weight stays round and centred, and each ring of the disk (radius rho) through
 * one Gaussian component (variance s2) under the weight exp(-r^2/(2w)) gives exact sums:
 * flux w/(s2 + w) exp(-rho^2/(2(s2 + w))), <r^2> = rho^2 w^2/(s2 + w)^2 + 2 s2 w/(s2 + w).
 * The fixed point w = <r^2>_w is the adaptive per-axis weight (core/stars/moments.ts: W = 2 M).
 * Tabulated like the Gaussian table: y = 2 q^2 / T0, H = (T - T0) / q^2 with T0 the core's own
 * adaptive size, cached per beta (to 0.05) and obstruction. The pixel box is left out (it makes
 * small cores slightly more Gaussian).
 */
export const MOFFAT_GAUSSIAN_BETA = 12;
const moffatTabs = new Map<string, GainTable>();

export function moffatDefocusTable(beta: number, eps = 0): GainTable {
  const b = Math.min(MOFFAT_GAUSSIAN_BETA, Math.max(1.5, Math.round(beta * 20) / 20));
  const e = Math.round(eps * 1000) / 1000;
  const key = `${b}/${e}`;
  const hit = moffatTabs.get(key);
  if (hit) return hit;
  const { s2, a } = moffatMixture(b);
  const T0 = 2 * roundAdaptiveW(new Float64Array([0]), new Float64Array([1]), s2, a, 1);
  const sEff = Math.sqrt(T0 / 2);
  const n = 48;
  const y = new Float64Array(n);
  const H = new Float64Array(n);
  const nr = 48;
  const rho2 = new Float64Array(nr);
  const wr = new Float64Array(nr).fill(1 / nr);
  let w = T0 / 2;
  for (let i = 0; i < n; i++) {
    // the same grid in d / s as the Gaussian table; the first point a tiny disk for the y -> 0 limit
    const d = sEff * Math.max(0.1, 24 * (i / (n - 1)) ** 1.5);
    for (let k = 0; k < nr; k++) rho2[k] = (d / 2) ** 2 * (e * e + ((k + 0.5) / nr) * (1 - e * e));
    w = roundAdaptiveW(rho2, wr, s2, a, w);
    const q2 = (d * d * (1 + e * e)) / 8;
    y[i] = i === 0 ? 0 : (2 * q2) / T0;
    H[i] = (2 * w - T0) / q2;
  }
  const tab = { y, H };
  moffatTabs.set(key, tab);
  return tab;
}

/** Normalised Gaussian components (variances s2, weights a) of a unit-alpha Moffat of index beta > 1. */
function moffatMixture(beta: number): { s2: Float64Array; a: Float64Array } {
  // t ~ Gamma(beta - 1) on a log grid: density t^(beta-2) e^-t dt = t^(beta-1) e^-t d(ln t)
  const m = 240;
  const lo = Math.log(1e-7);
  const hi = Math.log(80);
  const s2 = new Float64Array(m);
  const a = new Float64Array(m);
  let sum = 0;
  for (let k = 0; k < m; k++) {
    const t = Math.exp(lo + ((k + 0.5) * (hi - lo)) / m);
    s2[k] = 1 / (2 * t);
    a[k] = Math.exp((beta - 1) * Math.log(t) - t);
    sum += a[k];
  }
  for (let k = 0; k < m; k++) a[k] /= sum;
  return { s2, a };
}

/** Fixed point w = <r^2>_w of a round image: rings rho2 (weights wr) through Gaussian components (s2, a). */
function roundAdaptiveW(rho2: Float64Array, wr: Float64Array, s2: Float64Array, a: Float64Array, start: number): number {
  let w = start;
  for (let it = 0; it < 400; it++) {
    let f0 = 0;
    let f2 = 0;
    for (let j = 0; j < s2.length; j++) {
      const sw = s2[j] + w;
      const g = (a[j] * w) / sw;
      const u = w / sw;
      const v = (2 * s2[j] * w) / sw;
      for (let k = 0; k < rho2.length; k++) {
        const f = wr[k] * g * Math.exp(-rho2[k] / (2 * sw));
        f0 += f;
        f2 += f * (rho2[k] * u * u + v);
      }
    }
    const next = f2 / f0;
    if (Math.abs(next - w) < 1e-13 * w) return next;
    w = next;
  }
  return w;
}

/**
 * Coma with defocus. The ray errors of the two aberrations add at the same pupil point (they are
 * one wavefront), so the spot is not a convolution: its spin-1 moment gains a cross term (for
 * unweighted moments 7 D^2 S / 6 with D the disk radius, from <|z|^2 z> of
 * z = D rho e^{i phi} + S rho^2 (2 + e^{2 i phi}) - S; even in D), and a defocused star shows
 * more coma than a sharp one. Rays: defocus disk radius D = d/2 plus the coma spot.
 */
export function adaptiveComaDefocus(xS: number, xD: number, eps = 0, nr = NR, nphi = NPHI): AdaptiveSpot {
  const NR_ = nr;
  const NPHI_ = nphi;
  const n = NR_ * NPHI_;
  const mx = new Float64Array(n);
  const my = new Float64Array(n);
  let k = 0;
  for (let i = 0; i < NR_; i++) {
    const f = (i + 0.5) / NR_;
    const r2 = eps * eps + f * (1 - eps * eps); // rho^2 uniform over the (annular) pupil area
    const r = Math.sqrt(r2);
    for (let j = 0; j < NPHI_; j++) {
      const phi = ((j + 0.5) * 2 * Math.PI) / NPHI_;
      mx[k] = (xD / 2) * r * Math.cos(phi) + xS * r2 * (2 + Math.cos(2 * phi));
      my[k] = (xD / 2) * r * Math.sin(phi) + xS * r2 * Math.sin(2 * phi);
      k++;
    }
  }
  const a = adaptiveOfRays(mx, my, 1);
  const T = a.wxx + a.wyy;
  return { T, D: a.wxx - a.wyy, c: a.spin1x / Math.pow(T / 2, 1.5) };
}

const CD_NS = 29;
const CD_ND = 15;
const cdTabs = new Map<number, { xs: Float64Array; xd: Float64Array; T: Float64Array; D: Float64Array; c: Float64Array }>();

/**
 * Unweighted references the table is stored against (so that bilinear interpolation acts on
 * slowly varying ratios): T = 2 + (2/3) xS^2 + (1 + eps^2) xD^2 / 8, D = xS^2 / 3 (defocus adds
 * none), spin-1 = xS^3/3 + 7 (xD/2)^2 xS / 6 (the cross term above; eps = 0 form).
 */
function refT(xS: number, xD: number, eps: number): number {
  return 2 + (2 / 3) * xS * xS + ((1 + eps * eps) * xD * xD) / 8;
}
function refD(xS: number): number {
  return (xS * xS) / 3 + 1e-12;
}
function refC(xS: number, xD: number, eps: number): number {
  return (xS ** 3 / 3 + (7 * (xD / 2) ** 2 * xS) / 6 + 1e-15) / Math.pow(refT(xS, xD, eps) / 2, 1.5);
}

function cdTable(eps: number) {
  const key = Math.round(eps * 100) / 100;
  const hit = cdTabs.get(key);
  if (hit) return hit;
  const xs = Float64Array.from({ length: CD_NS }, (_, i) => 10 * (i / (CD_NS - 1)) ** 1.5);
  const xd = Float64Array.from({ length: CD_ND }, (_, i) => 12 * (i / (CD_ND - 1)) ** 1.5);
  const T = new Float64Array(CD_NS * CD_ND);
  const D = new Float64Array(CD_NS * CD_ND);
  const c = new Float64Array(CD_NS * CD_ND);
  for (let i = 0; i < CD_NS; i++) for (let j = 0; j < CD_ND; j++) {
    // x = 0 rows: ratios from a tiny coma (their limits), so interpolation stays smooth.
    const xS = Math.max(xs[i], 1e-3);
    const r = adaptiveComaDefocus(xS, xd[j], key, 12, 24);
    T[i * CD_ND + j] = r.T / refT(xS, xd[j], key);
    D[i * CD_ND + j] = r.D / refD(xS);
    c[i * CD_ND + j] = r.c / refC(xS, xd[j], key);
  }
  const tab = { xs, xd, T, D, c };
  cdTabs.set(key, tab);
  return tab;
}

function bracket(a: Float64Array, v: number): [number, number] {
  const n = a.length;
  if (v <= a[0]) return [0, 0];
  if (v >= a[n - 1]) return [n - 2, 1];
  let lo = 0, hi = n - 1;
  while (hi - lo > 1) { const m = (lo + hi) >> 1; if (a[m] <= v) lo = m; else hi = m; }
  return [lo, (v - a[lo]) / (a[lo + 1] - a[lo])];
}

/** Adaptive moments of coma S with a defocus disk of diameter d (px) through a core of variance s2: T, D in px^2, c. */
export function comaDefocusMoments(S: number, d: number, s2: number, eps = 0): AdaptiveSpot {
  if (!(d > 0)) return adaptiveComaMoments(S, s2);
  const t = cdTable(eps);
  const s = Math.sqrt(s2);
  const xS = Math.abs(S) / s;
  const xD = Math.abs(d) / s;
  const [i, fi] = bracket(t.xs, xS);
  const [j, fj] = bracket(t.xd, xD);
  const k00 = i * CD_ND + j;
  const k10 = k00 + CD_ND;
  const w00 = (1 - fi) * (1 - fj), w01 = (1 - fi) * fj, w10 = fi * (1 - fj), w11 = fi * fj;
  const rT = w00 * t.T[k00] + w01 * t.T[k00 + 1] + w10 * t.T[k10] + w11 * t.T[k10 + 1];
  const rD = w00 * t.D[k00] + w01 * t.D[k00 + 1] + w10 * t.D[k10] + w11 * t.D[k10 + 1];
  const rC = w00 * t.c[k00] + w01 * t.c[k00 + 1] + w10 * t.c[k10] + w11 * t.c[k10 + 1];
  return { T: s2 * rT * refT(xS, xD, eps), D: s2 * rD * refD(xS), c: rC * refC(xS, xD, eps) };
}

/** Core variance s^2 of a star of measured size T with coma S and defocus disk d: solves T = s^2 T(S/s, d/s). */
export function coreForComaDefocus(S: number, d: number, T: number, eps = 0): number {
  if (!(d > 0)) return coreForComa(S, T);
  let s2 = T / 2;
  for (let k = 0; k < 30; k++) {
    const next = T / (comaDefocusMoments(S, d, s2, eps).T / s2);
    if (Math.abs(next - s2) < 1e-9 * s2) return next;
    s2 = next;
  }
  return s2;
}
