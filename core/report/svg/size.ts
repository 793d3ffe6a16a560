/**
 * Heat maps of star size (FWHM in px or arcsec) and ellipticity across the frame, with
 * contour lines (d3-contour, marching squares) and a colour key.
 */
import { contours } from 'd3-contour';
import { scaleLinear } from 'd3-scale';
import type { Report } from '../types.ts';
import { evalSurface } from '../../field/surface.ts';
import { ellipticityFromDistortion } from '../shared-ellipticity.ts';
import type { Surface } from '../../field/types.ts';
import type { Theme } from './theme.ts';
import { colorKey, emptyFigure, fieldOf, frameBesideKey, num, r2, svgOpen, text, TITLE_H, type FrameMap } from './util.ts';
import { scaleBar } from './scale-bar.ts';

export type SizeQuantity = 'fwhmPx' | 'fwhmArcsec' | 'ellipticity';

export const QUANTITY_LABEL: Record<SizeQuantity, string> = {
  fwhmPx: 'FWHM (px)',
  fwhmArcsec: 'FWHM (arcsec)',
  ellipticity: 'Shared ellipticity 1 − b/a',
};

/** The colour key's title (narrower than the figure's). */
const KEY_LABEL: Record<SizeQuantity, string> = { fwhmPx: 'FWHM (px)', fwhmArcsec: 'FWHM (arcsec)', ellipticity: '1 − b/a (shared)' };

/**
 * Values on a regular grid over the frame: cell (q, r) covers frame columns
 * [q dx - 0.5, (q + 1) dx - 0.5) and rows likewise (pixel centres at integers); NaN = no value.
 */
export interface HeatGrid {
  cols: number;
  rows: number;
  dx: number;
  dy: number;
  values: Float64Array;
  /**
   * The same grid with one more cell on every side (the surface beyond the frame, or the edge
   * zones repeated), so contours run off the frame instead of closing along its border.
   */
  padded: Float64Array;
  source: 'surface' | 'zones';
}

/** Pad a grid by repeating its edge cells. */
function padByEdges(v: Float64Array, cols: number, rows: number): Float64Array {
  const out = new Float64Array((cols + 2) * (rows + 2));
  for (let r = 0; r < rows + 2; r++) {
    const rr = Math.min(rows - 1, Math.max(0, r - 1));
    for (let c = 0; c < cols + 2; c++) out[r * (cols + 2) + c] = v[rr * cols + Math.min(cols - 1, Math.max(0, c - 1))];
  }
  return out;
}

export { ellipticityFromDistortion } from '../shared-ellipticity.ts';

/** Why a quantity cannot be mapped, or null when it can. */
export function heatUnavailable(report: Report, q: SizeQuantity): string | null {
  if (!fieldOf(report)) return 'no field map in this report';
  if (q === 'fwhmArcsec' && !report.frame.optics.plateScaleArcsecPerPx) return 'arcseconds need the focal length and the pixel size';
  return null;
}

export function heatGrid(report: Report, q: SizeQuantity, cols = 64): HeatGrid | null {
  const f = fieldOf(report);
  if (!f || heatUnavailable(report, q)) return null;
  const W = report.frame.width;
  const H = report.frame.height;
  const plate = report.frame.optics.plateScaleArcsecPerPx ?? NaN;
  const conv = q === 'fwhmArcsec' ? (v: number) => v * plate : (v: number) => v;
  const useSurface = q === 'ellipticity' ? !!(f.surfaces.e1 && f.surfaces.e2) : !!f.surfaces.fwhm;
  if (useSurface) {
    const rows = Math.max(2, Math.round((cols * H) / W));
    const dx = W / cols;
    const dy = H / rows;
    const at = (c: number, r: number) => {
      const x = (c + 0.5) * dx - 0.5;
      const y = (r + 0.5) * dy - 0.5;
      return q === 'ellipticity'
        ? ellipticityFromDistortion(Math.hypot(evalSurface(f.surfaces.e1 as Surface, x, y), evalSurface(f.surfaces.e2 as Surface, x, y)))
        : conv(evalSurface(f.surfaces.fwhm as Surface, x, y));
    };
    const values = new Float64Array(cols * rows);
    const padded = new Float64Array((cols + 2) * (rows + 2));
    for (let r = -1; r <= rows; r++) {
      for (let c = -1; c <= cols; c++) {
        const v = at(c, r);
        padded[(r + 1) * (cols + 2) + c + 1] = v;
        if (r >= 0 && r < rows && c >= 0 && c < cols) values[r * cols + c] = v;
      }
    }
    return { cols, rows, dx, dy, values, padded, source: 'surface' };
  }
  const g = f.grid;
  const values = new Float64Array(g.cols * g.rows).fill(NaN);
  for (const c of g.cells) {
    const v = q === 'ellipticity' ? (c.eMag === null ? NaN : ellipticityFromDistortion(c.eMag)) : c.fwhmPx === null ? NaN : conv(c.fwhmPx);
    values[c.row * g.cols + c.col] = v;
  }
  return { cols: g.cols, rows: g.rows, dx: g.cellWidthPx, dy: g.cellHeightPx, values, padded: padByEdges(values, g.cols, g.rows), source: 'zones' };
}

export function finiteRange(values: ArrayLike<number>): [number, number] | null {
  let lo = Infinity;
  let hi = -Infinity;
  for (let i = 0; i < values.length; i++) {
    const v = values[i];
    if (Number.isFinite(v)) { if (v < lo) lo = v; if (v > hi) hi = v; }
  }
  return lo <= hi ? [lo, hi] : null;
}

/** Padded-grid coordinates (u, v) to frame coordinates: cell u covers [(u - 1) dx - 0.5, u dx - 0.5). */
const gx = (u: number, g: HeatGrid) => (u - 1) * g.dx - 0.5;
const gy = (v: number, g: HeatGrid) => (v - 1) * g.dy - 0.5;

function ringPath(ring: number[][], m: FrameMap, g: HeatGrid): string {
  return 'M' + ring.map(([u, v]) => `${r2(m.x(gx(u, g)))},${r2(m.y(gy(v, g)))}`).join('L') + 'Z';
}

export interface SizeOptions {
  theme: Theme;
  quantity: SizeQuantity;
  width?: number;
  /** Shared colour range (compare view); default the range of this map. */
  domain?: [number, number];
  /** Id prefix, so several maps can share one page. */
  id?: string;
  title?: string;
}

export function sizeSvg(report: Report, opts: SizeOptions): string {
  const { theme, quantity } = opts;
  const id = opts.id ?? `size-${quantity}`;
  const width = opts.width ?? 900;
  const keyW = 110;
  const top = TITLE_H;
  const W = report.frame.width;
  const H = report.frame.height;
  const { m, plotW, plotH } = frameBesideKey(report, width, keyW);
  // room for the colour key and its two note lines beside short plots
  const keyH = Math.max(80, Math.min(plotH - 40, 260));
  // room under the plot for the pixel scale bar
  const height = Math.max(plotH + top + 36, top + 24 + keyH + 56);
  const label = opts.title ?? `Size map: ${QUANTITY_LABEL[quantity]}`;
  const why = heatUnavailable(report, quantity);
  const g = why ? null : heatGrid(report, quantity);
  const range = g ? finiteRange(g.values) : null;
  if (!g || !range) return emptyFigure(width, height, label, why ?? 'no zone has enough stars', theme);
  let [lo, hi] = opts.domain ?? range;
  if (hi - lo < 1e-9) { lo -= 0.05 * Math.abs(lo || 1); hi += 0.05 * Math.abs(hi || 1); }
  const t = scaleLinear().domain([lo, hi]).range([0, 1]).clamp(true);
  let out = svgOpen(width, height, label, theme, id);
  out = out.replace('<svg ', `<svg data-min="${range[0]}" data-max="${range[1]}" data-source="${g.source}" `);
  out += text(10, 20, label, theme, { size: 14, weight: '600' });
  out += `<rect x="${r2(m.ox)}" y="${top}" width="${r2(plotW)}" height="${r2(plotH)}" fill="${theme.panel}"/>`;
  out += '<g class="heat" shape-rendering="crispEdges">';
  for (let r = 0; r < g.rows; r++) {
    for (let c = 0; c < g.cols; c++) {
      const v = g.values[r * g.cols + c];
      if (!Number.isFinite(v)) continue;
      const xa = m.x(c * g.dx - 0.5);
      const xb = m.x((c + 1) * g.dx - 0.5);
      const ya = m.y(r * g.dy - 0.5);
      const yb = m.y((r + 1) * g.dy - 0.5);
      // a hair wider than the cell, so no seams show between cells
      out += `<rect x="${r2(Math.min(xa, xb))}" y="${r2(Math.min(ya, yb))}" width="${r2(Math.abs(xb - xa) + 0.3)}" height="${r2(Math.abs(yb - ya) + 0.3)}" fill="${theme.ramp(t(v))}"/>`;
    }
  }
  out += '</g>';
  const levels = scaleLinear().domain([lo, hi]).ticks(6).filter((v) => v > range[0] && v < range[1]);
  const fmt = scaleLinear().domain([lo, hi]).tickFormat(6);
  const polys = contours().size([g.cols + 2, g.rows + 2]).thresholds(levels)(Array.from(g.padded));
  const W1 = W - 0.5;
  const H1 = H - 0.5;
  out += `<defs><clipPath id="${id}-clip"><rect x="${r2(m.ox)}" y="${top}" width="${r2(plotW)}" height="${r2(plotH)}"/></clipPath></defs>`;
  out += `<g class="contours" fill="none" stroke="${theme.contour}" stroke-opacity="0.75" stroke-width="1" clip-path="url(#${id}-clip)">`;
  let labels = '';
  for (const p of polys) {
    let d = '';
    // the label goes where the line is farthest inside the frame
    let best: [number, number] | null = null;
    let bestIn = 0.04 * Math.min(W, H);
    for (const poly of p.coordinates) {
      for (const ring of poly) {
        d += ringPath(ring, m, g);
        for (const [u, v] of ring) {
          const x = gx(u, g);
          const y = gy(v, g);
          const inside = Math.min(x + 0.5, W1 - x, y + 0.5, H1 - y);
          if (inside > bestIn) { bestIn = inside; best = [x, y]; }
        }
      }
    }
    if (!d) continue;
    out += `<path d="${d}" data-level="${p.value}"/>`;
    if (best) {
      labels += `<text x="${r2(m.x(best[0]))}" y="${r2(m.y(best[1]) + 4)}" font-size="11" fill="${theme.fg}" stroke="${theme.bg}" stroke-width="3" paint-order="stroke" text-anchor="middle" class="contour-label">${fmt(p.value)}</text>`;
    }
  }
  out += '</g>' + labels;
  out += `<rect x="${r2(m.ox)}" y="${top}" width="${r2(plotW)}" height="${r2(plotH)}" fill="none" stroke="${theme.frame}" stroke-width="1"/>`;
  out += scaleBar(m.ox + 4, top + plotH + 24, { unitsPerPx: m.s, maxUnits: plotW * 0.3, plateScale: report.frame.optics.plateScaleArcsecPerPx, u: 1 }, theme);
  out += colorKey(width - keyW + 10, top + 24, keyH, lo, hi, KEY_LABEL[quantity], theme, `${id}-key`);
  const ky = top + keyH + 46;
  out += text(width - keyW + 10, ky, g.source === 'surface' ? 'smooth fit' : quantity === 'ellipticity' ? 'zone vector means' : 'zone medians', theme, { size: 10, fill: theme.muted });
  out += text(width - keyW + 10, ky + 14, `${num(range[0], 2)} – ${num(range[1], 2)}`, theme, { size: 10, fill: theme.muted, cls: 'heat-range' });
  return out + '</svg>';
}
