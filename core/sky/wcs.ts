/**
 * A celestial WCS read from a FITS header: the gnomonic (TAN) projection of the WCS papers
 * (Greisen & Calabretta 2002, A&A 395, 1061; Calabretta & Greisen 2002, A&A 395, 1077), with the
 * SIP distortion polynomials (Shupe et al. 2005, ASP Conf. Ser. 347, 491) or the TPV polynomial
 * (the TPV convention registered with the FITS WCS registry, as SCAMP writes it), and the radial
 * distortion such a WCS implies, as this project's lens model reports it.
 *
 * Pixel coordinates here are this project's (0-based, storage order); FITS pixel = ours + 1.
 */
import { fitLens, type FitData, type FitResult, type Match } from './fit.ts';
import type { LensModel } from './lens.ts';
import { summarizeDistortion, type DistortionSummary } from './distortion.ts';
import { DEG, angleBetween, cross, dot, normalize, radecToVec, rotationFromAxes, vecToRadec, type Vec3 } from './sphere.ts';

export type WcsKind = 'TAN' | 'TAN-SIP' | 'TPV';

export interface HeaderWcs {
  kind: WcsKind;
  /** FITS (1-based) reference pixel. */
  crpix: [number, number];
  /** Reference point, degrees. */
  crval: [number, number];
  /** Linear transformation, degrees per pixel (row-major CD1_1, CD1_2, CD2_1, CD2_2). */
  cd: [number, number, number, number];
  lonpole: number;
  sip: null | { a: Map<string, number>; b: Map<string, number>; order: number; ap: Map<string, number> | null; bp: Map<string, number> | null };
  /** TPV coefficients PV1_0..39 and PV2_0..39 (missing ones 0, except PVi_1 = 1). */
  pv: null | { pv1: Float64Array; pv2: Float64Array };
}

type Meta = Readonly<Record<string, string | number | boolean>>;

function num(meta: Meta, k: string): number | undefined {
  const v = meta[k];
  const x = typeof v === 'number' ? v : typeof v === 'string' && v.trim() !== '' ? Number(v) : NaN;
  return Number.isFinite(x) ? x : undefined;
}

export interface WcsReadResult {
  wcs: HeaderWcs | null;
  /** Why there is none (no WCS, or one this module does not read). */
  note: string | null;
}

/** The celestial WCS of a header, or why there is none. */
export function readWcs(meta: Meta): WcsReadResult {
  const c1 = typeof meta.CTYPE1 === 'string' ? meta.CTYPE1.trim().toUpperCase() : '';
  const c2 = typeof meta.CTYPE2 === 'string' ? meta.CTYPE2.trim().toUpperCase() : '';
  if (!c1 && !c2) return { wcs: null, note: null };
  const proj1 = c1.slice(5), proj2 = c2.slice(5);
  if (!c1.startsWith('RA--') || !c2.startsWith('DEC-')) return { wcs: null, note: `world coordinates ${c1} / ${c2} are not RA/Dec in this order` };
  let kind: WcsKind;
  if (proj1 === 'TAN' && proj2 === 'TAN') kind = 'TAN';
  else if (proj1 === 'TAN-SIP' && proj2 === 'TAN-SIP') kind = 'TAN-SIP';
  else if (proj1 === 'TPV' && proj2 === 'TPV') kind = 'TPV';
  else return { wcs: null, note: `projection ${proj1 || '?'} is not read (TAN, TAN-SIP and TPV are)` };
  const crpix1 = num(meta, 'CRPIX1'), crpix2 = num(meta, 'CRPIX2');
  const crval1 = num(meta, 'CRVAL1'), crval2 = num(meta, 'CRVAL2');
  if (crpix1 === undefined || crpix2 === undefined || crval1 === undefined || crval2 === undefined) return { wcs: null, note: 'the WCS lacks CRPIX or CRVAL' };
  let cd: [number, number, number, number];
  const cd11 = num(meta, 'CD1_1'), cd12 = num(meta, 'CD1_2'), cd21 = num(meta, 'CD2_1'), cd22 = num(meta, 'CD2_2');
  if (cd11 !== undefined || cd12 !== undefined || cd21 !== undefined || cd22 !== undefined) {
    cd = [cd11 ?? 0, cd12 ?? 0, cd21 ?? 0, cd22 ?? 0];
  } else {
    const d1 = num(meta, 'CDELT1'), d2 = num(meta, 'CDELT2');
    if (d1 === undefined || d2 === undefined) return { wcs: null, note: 'the WCS has neither CD nor CDELT' };
    const pcKeys = ['PC1_1', 'PC1_2', 'PC2_1', 'PC2_2'];
    if (pcKeys.some((k) => num(meta, k) !== undefined)) {
      const pc = [num(meta, 'PC1_1') ?? 1, num(meta, 'PC1_2') ?? 0, num(meta, 'PC2_1') ?? 0, num(meta, 'PC2_2') ?? 1];
      cd = [d1 * pc[0], d1 * pc[1], d2 * pc[2], d2 * pc[3]];
    } else {
      // CROTA2 (the older AIPS convention, Calabretta & Greisen 2002 section 6.1)
      const rho = (num(meta, 'CROTA2') ?? 0) * DEG;
      const c = Math.cos(rho), s = Math.sin(rho);
      cd = [d1 * c, -d2 * s, d1 * s, d2 * c];
    }
  }
  if (!(Math.abs(cd[0] * cd[3] - cd[1] * cd[2]) > 0)) return { wcs: null, note: 'the WCS matrix is singular' };
  const lonpole = num(meta, 'LONPOLE') ?? (crval2 >= 90 ? 0 : 180);
  let sip: HeaderWcs['sip'] = null;
  let pv: HeaderWcs['pv'] = null;
  if (kind === 'TAN-SIP') {
    const poly = (pre: string) => {
      const order = num(meta, `${pre}_ORDER`);
      if (order === undefined) return null;
      const m = new Map<string, number>();
      for (let p = 0; p <= order; p++) for (let q = 0; p + q <= order; q++) {
        const v = num(meta, `${pre}_${p}_${q}`);
        if (v !== undefined && v !== 0) m.set(`${p}_${q}`, v);
      }
      return { m, order };
    };
    const a = poly('A'), b = poly('B');
    if (!a || !b) return { wcs: null, note: 'TAN-SIP without A_ORDER and B_ORDER' };
    const ap = poly('AP'), bp = poly('BP');
    sip = { a: a.m, b: b.m, order: Math.max(a.order, b.order), ap: ap?.m ?? null, bp: bp?.m ?? null };
  }
  if (kind === 'TPV') {
    const pv1 = new Float64Array(40), pv2 = new Float64Array(40);
    pv1[1] = 1; pv2[1] = 1;
    for (let k = 0; k < 40; k++) {
      const v1 = num(meta, `PV1_${k}`), v2 = num(meta, `PV2_${k}`);
      if (v1 !== undefined) pv1[k] = v1;
      if (v2 !== undefined) pv2[k] = v2;
    }
    pv = { pv1, pv2 };
  }
  return { wcs: { kind, crpix: [crpix1, crpix2], crval: [crval1, crval2], cd, lonpole, sip, pv }, note: null };
}

function evalPoly(m: Map<string, number>, u: number, v: number): number {
  let s = 0;
  for (const [k, c] of m) {
    const i = k.indexOf('_');
    s += c * u ** Number(k.slice(0, i)) * v ** Number(k.slice(i + 1));
  }
  return s;
}

/**
 * The TPV polynomial of one axis (x the axis's own coordinate, y the other, r = sqrt(x^2 + y^2)),
 * terms in the registered order: 1, x, y, r, x^2, xy, y^2, x^3, x^2y, xy^2, y^3, r^3, then the
 * 4th to 7th orders with r^5 after the 5th and r^7 after the 7th.
 */
export function tpvPoly(c: Float64Array, x: number, y: number): number {
  const r = Math.hypot(x, y);
  let s = c[0] + c[1] * x + c[2] * y + c[3] * r;
  let k = 4;
  for (let n = 2; n <= 7; n++) {
    for (let j = 0; j <= n; j++) s += c[k++] * x ** (n - j) * y ** j;
    if (n === 3 || n === 5 || n === 7) s += c[k++] * r ** n;
  }
  return s;
}

/** Intermediate world coordinates (degrees) of a pixel (0-based). */
export function pixelToIntermediate(w: HeaderWcs, x0: number, y0: number): [number, number] {
  let u = x0 + 1 - w.crpix[0], v = y0 + 1 - w.crpix[1];
  if (w.sip) {
    const du = evalPoly(w.sip.a, u, v), dv = evalPoly(w.sip.b, u, v);
    u += du; v += dv;
  }
  let x = w.cd[0] * u + w.cd[1] * v;
  let y = w.cd[2] * u + w.cd[3] * v;
  if (w.pv) {
    const xp = tpvPoly(w.pv.pv1, x, y), yp = tpvPoly(w.pv.pv2, y, x);
    x = xp; y = yp;
  }
  return [x, y];
}

/** Sky direction of intermediate coordinates (degrees) through TAN and the celestial rotation. */
export function intermediateToSky(w: HeaderWcs, x: number, y: number): Vec3 {
  // native spherical coordinates of the zenithal projection (paper II, eqs. 14, 15, 54)
  const rTheta = Math.hypot(x, y);
  const phi = Math.atan2(x, -y);
  const theta = Math.atan2(180 / Math.PI, rTheta);
  // celestial from native (paper II, eq. 2) with the native pole at (crval, lonpole)
  const a0 = w.crval[0] * DEG, d0 = w.crval[1] * DEG, pp = w.lonpole * DEG;
  const ct = Math.cos(theta), st = Math.sin(theta);
  const dphi = phi - pp;
  const ra = a0 + Math.atan2(-ct * Math.sin(dphi), st * Math.cos(d0) - ct * Math.sin(d0) * Math.cos(dphi));
  const dec = Math.asin(Math.max(-1, Math.min(1, st * Math.sin(d0) + ct * Math.cos(d0) * Math.cos(dphi))));
  return radecToVec(ra, dec);
}

/** Sky position (degrees) of a pixel (0-based storage coordinates). */
export function wcsPixelToSky(w: HeaderWcs, x0: number, y0: number): { raDeg: number; decDeg: number; v: Vec3 } {
  const [x, y] = pixelToIntermediate(w, x0, y0);
  const v = intermediateToSky(w, x, y);
  const { ra, dec } = vecToRadec(v);
  return { raDeg: ra / DEG, decDeg: dec / DEG, v };
}

/** Intermediate coordinates (degrees) of a sky direction; null on the far side. */
export function skyToIntermediate(w: HeaderWcs, v: ArrayLike<number>): [number, number] | null {
  const a0 = w.crval[0] * DEG, d0 = w.crval[1] * DEG, pp = w.lonpole * DEG;
  const { ra, dec } = vecToRadec(v);
  const da = ra - a0;
  // native from celestial (paper II, eq. 5)
  const phi = pp + Math.atan2(-Math.cos(dec) * Math.sin(da), Math.sin(dec) * Math.cos(d0) - Math.cos(dec) * Math.sin(d0) * Math.cos(da));
  const theta = Math.asin(Math.max(-1, Math.min(1, Math.sin(dec) * Math.sin(d0) + Math.cos(dec) * Math.cos(d0) * Math.cos(da))));
  if (theta <= 0) return null;
  const rTheta = (180 / Math.PI) * (Math.cos(theta) / Math.sin(theta));
  return [rTheta * Math.sin(phi), -rTheta * Math.cos(phi)];
}

/** Pixel (0-based) of a sky direction: the linear inverse, then Newton steps through the full forward map. */
export function wcsSkyToPixel(w: HeaderWcs, v: ArrayLike<number>): [number, number] | null {
  const t = skyToIntermediate(w, v);
  if (!t) return null;
  const det = w.cd[0] * w.cd[3] - w.cd[1] * w.cd[2];
  const lin = (x: number, y: number): [number, number] => [(w.cd[3] * x - w.cd[1] * y) / det, (-w.cd[2] * x + w.cd[0] * y) / det];
  let [u, vv] = lin(t[0], t[1]);
  let px = u + w.crpix[0] - 1, py = vv + w.crpix[1] - 1;
  if (!w.sip && !w.pv) return [px, py];
  for (let it = 0; it < 50; it++) {
    const f = pixelToIntermediate(w, px, py);
    const fx = pixelToIntermediate(w, px + 1e-3, py), fy = pixelToIntermediate(w, px, py + 1e-3);
    const j11 = (fx[0] - f[0]) / 1e-3, j21 = (fx[1] - f[1]) / 1e-3, j12 = (fy[0] - f[0]) / 1e-3, j22 = (fy[1] - f[1]) / 1e-3;
    const ex = t[0] - f[0], ey = t[1] - f[1];
    const dj = j11 * j22 - j12 * j21;
    if (!(Math.abs(dj) > 0)) return null;
    const sx = (j22 * ex - j12 * ey) / dj, sy = (-j21 * ex + j11 * ey) / dj;
    px += sx; py += sy;
    if (Math.hypot(sx, sy) < 1e-9) break;
  }
  return [px, py];
}

export interface WcsDistortion {
  kind: WcsKind;
  /** The distortion of the WCS as this project's radial model about the frame centre. */
  distortion: DistortionSummary;
  /** Sky scale at the frame centre, arcsec/px. */
  scaleArcsecPerPx: number;
  /** Largest departure of the WCS from the radial model over the frame (the non-radial part), px. */
  nonRadialPx: number;
}

/** A lens model about the frame centre whose first-order mapping matches sky(x, y). */
export function modelFromSkyFunction(sky: (x: number, y: number) => Vec3 | null, W: number, H: number): LensModel | null {
  const cx = (W - 1) / 2, cy = (H - 1) / 2;
  const Z = sky(cx, cy), dx = sky(cx + 1, cy), dy = sky(cx, cy + 1);
  if (!Z || !dx || !dy) return null;
  const along = (v: Vec3): Vec3 => { const d = dot(v, Z); return normalize([v[0] - d * Z[0], v[1] - d * Z[1], v[2] - d * Z[2]]); };
  const X = along(dx);
  const Y = cross(Z, X);
  const parity: 1 | -1 = dot(along(dy), Y) >= 0 ? 1 : -1;
  return { rot: rotationFromAxes(X, Y, Z), fPx: 1 / angleBetween(Z, dx), cx, cy, parity, projection: 'rectilinear', k1: 0, k2: 0, rNorm: Math.hypot(W, H) / 2 };
}

/**
 * The radial distortion a WCS implies over a W x H frame: the lens model (rectilinear, optical
 * centre at the frame centre, k1 and k2) fitted to the WCS on a grid of pixels.
 */
export function wcsDistortion(w: HeaderWcs, W: number, H: number): WcsDistortion | null {
  const sky = (x: number, y: number) => wcsPixelToSky(w, x, y).v;
  const m0 = modelFromSkyFunction(sky, W, H);
  if (!m0) return null;
  const n = 21;
  const xs: number[] = [], ys: number[] = [], xyz: number[] = [];
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) {
    const x = (i / (n - 1)) * (W - 1), y = (j / (n - 1)) * (H - 1);
    const v = sky(x, y);
    xs.push(x); ys.push(y); xyz.push(v[0], v[1], v[2]);
  }
  const data: FitData = { x: Float64Array.from(xs), y: Float64Array.from(ys), sigma: new Float64Array(xs.length).fill(0.01), xyz: Float64Array.from(xyz) };
  const matches: Match[] = xs.map((_, k) => ({ star: k, cat: k }));
  let fit: FitResult = fitLens(m0, data, matches, { k1: true, k2: false, centre: false });
  fit = fitLens(fit.model, data, matches, { k1: true, k2: true, centre: false });
  let nonRadial = 0;
  for (let k = 0; k < matches.length; k++) nonRadial = Math.max(nonRadial, Math.hypot(fit.dx[k], fit.dy[k]));
  const distortion = summarizeDistortion({
    k1: fit.model.k1, k2: fit.model.k2, covK: fit.covK, k2Fitted: true,
    rNorm: fit.model.rNorm, width: W, height: H, cx: fit.model.cx, cy: fit.model.cy,
  });
  return { kind: w.kind, distortion, scaleArcsecPerPx: (180 * 3600) / Math.PI / fit.model.fPx, nonRadialPx: nonRadial };
}
