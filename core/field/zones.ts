/** Robust per-zone statistics on a regular grid (3x3, or finer where stars are dense). */
import type { Geometry } from './geometry.ts';
import { sideName, zoneClass } from './geometry.ts';
import type { StarColumns } from './quantities.ts';
import { clippedMean, medianWithErr } from './stats.ts';
import type { RadialBin, XY, ZoneGrid, ZoneStats } from './types.ts';
import { regionFractionOf, type DataRegion } from '../image/data-region.ts';

const nn = (v: number): number | null => (Number.isFinite(v) ? v : null);

/** Per-star radial quantities about a centre: position angle phi, e_rad, e_cross, D, c_rad. */
export interface RadialColumns {
  rho: Float64Array;
  eRad: Float64Array;
  eCross: Float64Array;
  D: Float64Array;
  cRad: Float64Array;
}

/**
 * e_rad = e1 cos 2phi + e2 sin 2phi (positive = radial), e_cross = -e1 sin 2phi + e2 cos 2phi,
 * D = I_rad - I_tan = M1 cos 2phi + M2 sin 2phi (optics.md section 5); c_rad = c . r_hat.
 * `uniform` (px^2) is removed from M before rotating, so a uniform trail does not leak in.
 */
export function radialColumns(c: StarColumns, g: Geometry, centre: XY, uniform: { re: number; im: number } = { re: 0, im: 0 }): RadialColumns {
  const n = c.n;
  const out = { rho: new Float64Array(n), eRad: new Float64Array(n), eCross: new Float64Array(n), D: new Float64Array(n), cRad: new Float64Array(n) };
  for (let i = 0; i < n; i++) {
    const dx = c.x[i] - centre.x;
    const dy = c.y[i] - centre.y;
    const r = Math.hypot(dx, dy);
    out.rho[i] = r / g.scale;
    const phi = Math.atan2(dy, dx);
    const c2 = Math.cos(2 * phi);
    const s2 = Math.sin(2 * phi);
    const m1 = c.M1[i] - uniform.re;
    const m2 = c.M2[i] - uniform.im;
    const e1 = m1 / c.T[i];
    const e2 = m2 / c.T[i];
    out.eRad[i] = e1 * c2 + e2 * s2;
    out.eCross[i] = -e1 * s2 + e2 * c2;
    out.D[i] = m1 * c2 + m2 * s2;
    out.cRad[i] = r > 0 ? (c.cx[i] * dx + c.cy[i] * dy) / r : 0;
  }
  return out;
}

function statsFor(c: StarColumns, rad: RadialColumns, pick: number[], col: number, row: number, bounds: ZoneStats['bounds']): ZoneStats {
  const n = pick.length;
  const get = (a: Float64Array) => Float64Array.from(pick, (i) => a[i]);
  const base: ZoneStats = {
    col, row, bounds, n,
    meanX: null, meanY: null, fieldHeight: null,
    fwhmPx: null, fwhmErrPx: null, hfdPx: null, hfdErrPx: null,
    sizePx2: null, sizeErrPx2: null, momentFwhmPx: null,
    e1: null, e2: null, eErr: null, eMag: null, thetaDeg: null, eRadial: null, eCross: null,
    radMinusTanPx2: null, radMinusTanErrPx2: null, coma: null, comaErr: null, comaRadial: null,
  };
  if (n === 0) return base;
  const mx = clippedMean(get(c.x), 99).mean;
  const my = clippedMean(get(c.y), 99).mean;
  const fw = medianWithErr(get(c.fwhm));
  const hf = medianWithErr(get(c.hfd));
  const T = clippedMean(get(c.T));
  const e1 = clippedMean(get(c.e1));
  const e2 = clippedMean(get(c.e2));
  const er = clippedMean(get(rad.eRad));
  const ex = clippedMean(get(rad.eCross));
  const D = clippedMean(get(rad.D));
  const cx = clippedMean(get(c.cx));
  const cy = clippedMean(get(c.cy));
  const cr = clippedMean(get(rad.cRad));
  const eErr = Math.sqrt(0.5 * ((e1.err || 0) ** 2 + (e2.err || 0) ** 2));
  return {
    ...base,
    meanX: nn(mx), meanY: nn(my), fieldHeight: nn(clippedMean(get(rad.rho), 99).mean),
    fwhmPx: nn(fw.value), fwhmErrPx: nn(fw.err), hfdPx: nn(hf.value), hfdErrPx: nn(hf.err),
    sizePx2: nn(T.mean), sizeErrPx2: nn(T.err), momentFwhmPx: nn(2.354820045 * Math.sqrt(T.mean / 2)),
    e1: nn(e1.mean), e2: nn(e2.mean), eErr: n > 1 ? nn(eErr) : null, eMag: nn(Math.hypot(e1.mean, e2.mean)),
    thetaDeg: nn((0.5 * Math.atan2(e2.mean, e1.mean) * 180) / Math.PI),
    eRadial: nn(er.mean), eCross: nn(ex.mean), radMinusTanPx2: nn(D.mean), radMinusTanErrPx2: nn(D.err),
    coma: Number.isFinite(cx.mean) ? { x: cx.mean, y: cy.mean } : null,
    comaErr: n > 1 ? nn(Math.sqrt(0.5 * ((cx.err || 0) ** 2 + (cy.err || 0) ** 2))) : null,
    comaRadial: nn(cr.mean),
  };
}

export function zoneGrid(c: StarColumns, g: Geometry, rad: RadialColumns, cols: number, rows: number, names = false, region: DataRegion | null = null): ZoneGrid {
  const cw = g.width / cols;
  const ch = g.height / rows;
  const members: number[][] = Array.from({ length: cols * rows }, () => []);
  for (let i = 0; i < c.n; i++) {
    // Pixel i covers [i - 0.5, i + 0.5): zone edges in that continuous coordinate.
    const ci = Math.min(cols - 1, Math.max(0, Math.floor((c.x[i] + 0.5) / cw)));
    const ri = Math.min(rows - 1, Math.max(0, Math.floor((c.y[i] + 0.5) / ch)));
    members[ri * cols + ci].push(i);
  }
  const cells: ZoneStats[] = [];
  for (let r = 0; r < rows; r++) {
    for (let q = 0; q < cols; q++) {
      const bounds = { x0: q * cw - 0.5, y0: r * ch - 0.5, x1: (q + 1) * cw - 0.5, y1: (r + 1) * ch - 0.5 };
      const z = statsFor(c, rad, members[r * cols + q], q, r, bounds);
      // share of the zone that holds sky: below a quarter it is a "no data" zone (a fisheye's corners)
      z.dataFraction = region ? regionFractionOf(region, bounds.x0, bounds.y0, bounds.x1, bounds.y1) : 1;
      if (names) {
        z.zone = zoneClass(q, r);
        z.name = sideName(g, q - 1, r - 1);
      }
      cells.push(z);
    }
  }
  return { cols, rows, cellWidthPx: cw, cellHeightPx: ch, cells };
}

/** Grid dimensions that keep about `perCell` stars per cell, aspect following the frame, 3..12 a side. */
export function adaptiveDims(n: number, g: Geometry, perCell = 25): { cols: number; rows: number } {
  const cells = Math.max(9, n / perCell);
  const aspect = g.width / g.height;
  let cols = Math.round(Math.sqrt(cells * aspect));
  let rows = Math.round(cells / Math.max(1, cols));
  cols = Math.min(12, Math.max(3, cols));
  rows = Math.min(12, Math.max(3, rows));
  return { cols, rows };
}

/** Radial profile about the optical centre in bins of normalised field height. */
export function radialProfile(c: StarColumns, rad: RadialColumns, edges = [0, 0.2, 0.4, 0.6, 0.8, 1.0, 1.6]): RadialBin[] {
  const bins: RadialBin[] = [];
  for (let b = 0; b + 1 < edges.length; b++) {
    const pick: number[] = [];
    for (let i = 0; i < c.n; i++) if (rad.rho[i] >= edges[b] && rad.rho[i] < edges[b + 1]) pick.push(i);
    const get = (a: Float64Array) => Float64Array.from(pick, (i) => a[i]);
    const T = clippedMean(get(c.T));
    const er = clippedMean(get(rad.eRad));
    const ex = clippedMean(get(rad.eCross));
    const D = clippedMean(get(rad.D));
    const cr = clippedMean(get(rad.cRad));
    bins.push({
      from: edges[b], to: edges[b + 1], n: pick.length,
      sizePx2: nn(T.mean), sizeErrPx2: nn(T.err), fwhmPx: nn(medianWithErr(get(c.fwhm)).value),
      eRadial: nn(er.mean), eCross: nn(ex.mean), eErr: nn(Math.sqrt(0.5 * ((er.err || 0) ** 2 + (ex.err || 0) ** 2))),
      radMinusTanPx2: nn(D.mean), radMinusTanErrPx2: nn(D.err), comaRadial: nn(cr.mean), comaErr: nn(cr.err),
    });
  }
  return bins;
}
