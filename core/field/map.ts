/** The field map: zones, surfaces, spin fits and the optical centre estimated from the data. */
import type { Star } from '../stars/types.ts';
import { geometry, type Geometry } from './geometry.ts';
import { starColumns, type StarColumns } from './quantities.ts';
import { fitSpin1, fitSpin2 } from './spin.ts';
import { fitSurface, evalSurface } from './surface.ts';
import { adaptiveDims, radialColumns, radialProfile, zoneGrid, type RadialColumns } from './zones.ts';
import type { FieldMap, OpticalCentre, Spin1Field, Spin2Field, XY } from './types.ts';
import { coreProfile, type CoreProfile } from './profile.ts';
import type { DataRegion } from '../image/data-region.ts';

export interface FieldContext {
  readonly width: number;
  readonly height: number;
  readonly displayTopRow?: 'first' | 'last';
  /** Where the frame holds sky; absent or null: the whole frame. */
  readonly region?: DataRegion | null;
}

/** The map plus the per-star columns the diagnosis modules reuse (not serialised). */
export interface FieldAnalysis {
  readonly map: FieldMap;
  readonly cols: StarColumns;
  readonly geom: Geometry;
  /** Radial quantities about the optical centre, uniform elongation removed. */
  readonly rad: RadialColumns;
  readonly centre: XY;
  /** Uniform (frame-wide) part of M removed before the radial decomposition, px^2. */
  readonly uniform: { re: number; im: number };
  /** The seeing core's profile (Moffat beta or Gaussian), for the defocus model's gain. */
  readonly core: CoreProfile;
}

/** Significance needed before a pattern is allowed to locate the optical centre. */
const CENTRE_SIGNIFICANCE = 5;
const MIN_CENTRE_ERR = 0.5;

/**
 * A spin-2 pattern that is rank-1 (size grows only as much as |M|) and keeps the minor axis
 * the same everywhere may be field rotation (its centre is not optical).
 */
export function spin2LooksRank1(s: Spin2Field): boolean {
  if (s.excessRatio === null || s.minorAxisFlat !== true) return false;
  const err = s.excessRatioErr ?? Infinity;
  return s.excessRatio < 1.35 || s.excessRatio - 1 < 2 * err;
}

export function estimateCentre(g: Geometry, s2: Spin2Field | null, s1: Spin1Field | null): OpticalCentre {
  const cands: { x: number; y: number; ex: number; ey: number; src: 'spin1' | 'spin2' }[] = [];
  if (s1 && s1.centrePx && s1.centreErrPx && s1.alphaSignificance >= CENTRE_SIGNIFICANCE) {
    cands.push({ ...s1.centrePx, ex: Math.max(MIN_CENTRE_ERR, s1.centreErrPx.x), ey: Math.max(MIN_CENTRE_ERR, s1.centreErrPx.y), src: 'spin1' });
  }
  if (s2 && s2.centrePx && s2.centreErrPx && s2.aSignificance >= CENTRE_SIGNIFICANCE) {
    const rotationLike = s2.a.re < 0 && spin2LooksRank1(s2);
    if (!rotationLike) cands.push({ ...s2.centrePx, ex: Math.max(MIN_CENTRE_ERR, s2.centreErrPx.x), ey: Math.max(MIN_CENTRE_ERR, s2.centreErrPx.y), src: 'spin2' });
  }
  if (cands.length === 0) {
    return { x: g.cx, y: g.cy, errX: null, errY: null, source: 'frame-centre', note: 'no significant symmetric pattern locates the optical centre; the frame centre is assumed' };
  }
  if (cands.length === 1) {
    const c = cands[0];
    return { x: c.x, y: c.y, errX: c.ex, errY: c.ey, source: c.src, note: c.src === 'spin1' ? 'symmetry centre of the coma pattern' : 'symmetry centre of the elongation pattern' };
  }
  const [a, b] = cands;
  const chi = Math.hypot((a.x - b.x) / Math.hypot(a.ex, b.ex), (a.y - b.y) / Math.hypot(a.ey, b.ey));
  if (chi > 3) {
    const best = a.ex * a.ey <= b.ex * b.ey ? a : b;
    return {
      x: best.x, y: best.y, errX: best.ex, errY: best.ey, source: best.src,
      note: `the coma and elongation patterns have different centres (${chi.toFixed(1)} sigma apart), a sign of decentring; the better-determined one is used`,
    };
  }
  const wx = [1 / a.ex ** 2, 1 / b.ex ** 2];
  const wy = [1 / a.ey ** 2, 1 / b.ey ** 2];
  return {
    x: (a.x * wx[0] + b.x * wx[1]) / (wx[0] + wx[1]),
    y: (a.y * wy[0] + b.y * wy[1]) / (wy[0] + wy[1]),
    errX: 1 / Math.sqrt(wx[0] + wx[1]), errY: 1 / Math.sqrt(wy[0] + wy[1]),
    source: 'spin1+spin2', note: 'weighted mean of the coma and elongation symmetry centres',
  };
}

export function analyzeField(stars: readonly Star[], ctx: FieldContext): FieldAnalysis {
  const region = ctx.region ?? null;
  const g = geometry(ctx.width, ctx.height, ctx.displayTopRow ?? 'first', region?.kind === 'circle' ? region.circle : null);
  const cols = starColumns(stars);
  const spin2 = fitSpin2(cols, g);
  const spin1 = fitSpin1(cols, g);
  const centre = estimateCentre(g, spin2, spin1);
  const uniform = spin2 && spin2.cSignificance >= 4 ? spin2.c : { re: 0, im: 0 };
  const rad = radialColumns(cols, g, centre, uniform);
  const zones = zoneGrid(cols, g, rad, 3, 3, true, region);
  const dims = adaptiveDims(cols.n, g);
  const grid = zoneGrid(cols, g, rad, dims.cols, dims.rows, false, region);
  const surf = (v: Float64Array, s: Float64Array, q: string, unit: string, deg: number, mode: 'floor' | 'scale' = 'floor') =>
    cols.n >= 6 ? fitSurface(g, cols.x, cols.y, v, s, q, unit, deg, mode) : null;
  const surfaces = {
    size: surf(cols.T, cols.sigT, 'second-moment size Ixx+Iyy', 'px^2', 4),
    fwhm: surf(cols.fwhm, cols.sigFwhm, 'FWHM', 'px', 4),
    e1: surf(cols.e1, cols.sigE, 'e1', '1', 2),
    e2: surf(cols.e2, cols.sigE, 'e2', '1', 2),
    comaX: surf(cols.cx, cols.sigC, 'coma x', '1', 1, 'scale'),
    comaY: surf(cols.cy, cols.sigC, 'coma y', '1', 1, 'scale'),
  };
  let radialTangential: FieldMap['radialTangential'] = null;
  if (surfaces.e1 && surfaces.e2) {
    const xs = surfaces.e1.samples.x;
    const ys = surfaces.e1.samples.y;
    const eRadial: number[] = [];
    const eCross: number[] = [];
    const comaRadial: number[] = [];
    for (let k = 0; k < xs.length; k++) {
      const phi = Math.atan2(ys[k] - centre.y, xs[k] - centre.x);
      const T = surfaces.size ? evalSurface(surfaces.size, xs[k], ys[k]) : NaN;
      const u1 = T > 0 ? uniform.re / T : 0;
      const u2 = T > 0 ? uniform.im / T : 0;
      const e1 = surfaces.e1.samples.values[k] - u1;
      const e2 = surfaces.e2.samples.values[k] - u2;
      eRadial.push(e1 * Math.cos(2 * phi) + e2 * Math.sin(2 * phi));
      eCross.push(-e1 * Math.sin(2 * phi) + e2 * Math.cos(2 * phi));
      const cx = surfaces.comaX ? surfaces.comaX.samples.values[k] : 0;
      const cy = surfaces.comaY ? surfaces.comaY.samples.values[k] : 0;
      comaRadial.push(cx * Math.cos(phi) + cy * Math.sin(phi));
    }
    radialTangential = { x: xs, y: ys, eRadial, eCross, comaRadial };
  }
  const map: FieldMap = {
    schema: 'skyloupe.field/1',
    width: g.width,
    height: g.height,
    starsGiven: stars.length,
    starsUsed: cols.n,
    conventions: 'pixel coordinates 0-based (x column, y stored row); angles from +x toward +y; field height in half-diagonals; radial/cross parts about the estimated optical centre after removing the frame-wide uniform elongation',
    centre,
    zones,
    grid,
    surfaces,
    radialTangential,
    radialProfile: radialProfile(cols, rad),
    spin2,
    spin1,
  };
  return { map, cols, geom: g, rad, centre, uniform, core: coreProfile(stars, cols) };
}

export function buildFieldMap(stars: readonly Star[], ctx: FieldContext): FieldMap {
  return analyzeField(stars, ctx).map;
}
