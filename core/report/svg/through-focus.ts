/**
 * Figures of a focus series, pure functions of plain data: the focus curves of each zone as small
 * multiples laid out as the zones lie in the frame, the best-focus surface as a map with lines of
 * equal focus, and one star's cut-outs across the series. `*Data` helpers build the inputs from a
 * skyloupe.throughfocus/1 result (the page may build them from anything else).
 */
import { contours } from 'd3-contour';
import { scaleLinear } from 'd3-scale';
import type { Report } from '../types.ts';
import type { Theme } from './theme.ts';
import { colorKey, emptyFigure, esc, frameMap, num, pm, r2, svgOpen, text, TITLE_H } from './util.ts';

/** One zone's curve: the points per frame and the fitted w^2 = a + b (P - p0) + c (P - p0)^2. */
export interface CurveCell {
  col: number;
  row: number;
  name: string;
  values: (number | null)[];
  errors: (number | null)[];
  coef: [number, number, number] | null;
  p0: number;
  bestFocus: number | null;
  bestFocusErr: number | null;
  /** The best focus is an extrapolation beyond the series. */
  outside: boolean;
}

export interface FocusCurvesData {
  positions: number[];
  cols: number;
  rows: number;
  /** Which stored row is displayed at the top (FITS: 'last'). */
  topRow: 'first' | 'last';
  metric: string;
  unit: string;
  cells: CurveCell[];
  /** A band to shade about each best focus (the critical focus zone's half width), or null. */
  band: number | null;
}

export interface SurfaceData {
  width: number;
  height: number;
  topRow: 'first' | 'last';
  centrePx: { x: number; y: number };
  scalePx: number;
  /** F = c0 + c1 u + c2 v + c3 (u^2 + v^2), u, v = (x, y - centre) / scale. */
  coef: [number, number, number, number];
  points: { x: number; y: number; focus: number; err: number | null; used: boolean }[];
  unit: string;
  /** Equal-focus lines every this many units (default: about six lines). */
  step?: number | null;
}

export interface StampFrame {
  position: number;
  w: number;
  h: number;
  /** Storage order; null = missing. */
  values: (number | null)[];
}

export interface StampStripData {
  title: string;
  topRow: 'first' | 'last';
  unit: string;
  frames: (StampFrame | null)[];
  /** Mark this position (the best focus), or null. */
  bestFocus: number | null;
}

/** The minimal report-shaped frame that frameMap wants. */
function frameOf(width: number, height: number, topRow: 'first' | 'last'): Pick<Report, 'frame'> {
  return { frame: { width, height, display: { topRow, note: '' } } } as unknown as Pick<Report, 'frame'>;
}

function curveValue(c: CurveCell, P: number): number {
  if (!c.coef) return NaN;
  const x = P - c.p0;
  const w2 = c.coef[0] + c.coef[1] * x + c.coef[2] * x * x;
  return Math.sqrt(Math.max(0, w2));
}

/** Small multiples: one panel per zone, in the frame's layout as displayed, shared axes. */
export function focusCurvesSvg(d: FocusCurvesData, opts: { theme: Theme; width?: number; id?: string }): string {
  const { theme } = opts;
  const width = opts.width ?? 900;
  const id = opts.id ?? 'focus-curves';
  const label = `Focus curves per zone: ${d.metric}`;
  const gap = 6;
  const left = 46, bottom = 34;
  const cellW = (width - left - 10 - gap * (d.cols - 1)) / d.cols;
  const cellH = Math.max(70, Math.min(150, cellW * 0.7));
  const height = TITLE_H + d.rows * cellH + (d.rows - 1) * gap + bottom;
  if (d.positions.length < 2 || !d.cells.length) return emptyFigure(width, height, label, 'no focus curves', theme);
  const pMin = Math.min(...d.positions), pMax = Math.max(...d.positions);
  const pad = 0.04 * (pMax - pMin || 1);
  const ys = d.cells.flatMap((c) => c.values.map((v, i) => (v === null ? NaN : v + (c.errors[i] ?? 0)))).filter(Number.isFinite);
  const yHi = ys.length ? Math.max(...ys) : 1;
  const x = scaleLinear().domain([pMin - pad, pMax + pad]);
  const y = scaleLinear().domain([0, yHi * 1.05]).nice();
  let out = svgOpen(width, height, label, theme, id);
  out = out.replace('<svg ', `<svg data-zones="${d.cells.length}" `);
  out += text(10, 20, label, theme, { size: 14, weight: '600' });
  const flip = d.topRow === 'last';
  for (const c of d.cells) {
    const dispRow = flip ? d.rows - 1 - c.row : c.row;
    const ox = left + c.col * (cellW + gap);
    const oy = TITLE_H + dispRow * (cellH + gap);
    x.range([ox + 3, ox + cellW - 3]);
    y.range([oy + cellH - 3, oy + 14]);
    out += `<g class="zone" data-col="${c.col}" data-row="${c.row}"${c.bestFocus !== null ? ` data-best="${r2(c.bestFocus)}"` : ''}>`;
    out += `<rect x="${r2(ox)}" y="${r2(oy)}" width="${r2(cellW)}" height="${r2(cellH)}" fill="${theme.panel}" stroke="${theme.grid}" stroke-width="0.5"/>`;
    if (c.bestFocus !== null) {
      const bx = x(c.bestFocus);
      if (d.band && d.band > 0) {
        const a = Math.max(ox, x(c.bestFocus - d.band)), b = Math.min(ox + cellW, x(c.bestFocus + d.band));
        if (b > a) out += `<rect x="${r2(a)}" y="${r2(oy)}" width="${r2(b - a)}" height="${r2(cellH)}" fill="${theme.good}" fill-opacity="0.12"/>`;
      }
      if (bx >= ox && bx <= ox + cellW) out += `<line class="best" x1="${r2(bx)}" x2="${r2(bx)}" y1="${r2(oy)}" y2="${r2(oy + cellH)}" stroke="${c.outside ? theme.flagged : theme.good}" stroke-width="1.5" stroke-dasharray="4 3"/>`;
    }
    if (c.coef) {
      const pts: string[] = [];
      for (let k = 0; k <= 60; k++) {
        const P = pMin - pad + ((pMax - pMin + 2 * pad) * k) / 60;
        const v = curveValue(c, P);
        if (Number.isFinite(v)) pts.push(`${r2(x(P))},${r2(y(Math.min(v, y.domain()[1])))}`);
      }
      if (pts.length > 1) out += `<path d="M${pts.join('L')}" fill="none" stroke="${theme.vector}" stroke-width="1.5"/>`;
    }
    out += `<g fill="${theme.star}" stroke="${theme.star}">`;
    c.values.forEach((v, i) => {
      if (v === null) return;
      const px = x(d.positions[i]), py = y(v);
      const e = c.errors[i];
      if (e) out += `<line x1="${r2(px)}" x2="${r2(px)}" y1="${r2(y(v - e))}" y2="${r2(y(v + e))}" stroke-width="1"/>`;
      out += `<circle cx="${r2(px)}" cy="${r2(py)}" r="2.5"><title>${esc(`${c.name}: ${num(d.positions[i], 1)} ${d.unit}, ${pm(v, e, 2)} px`)}</title></circle>`;
    });
    out += '</g>';
    out += text(ox + 4, oy + 11, c.name, theme, { size: 9, fill: theme.muted });
    if (c.bestFocus !== null) out += text(ox + cellW - 4, oy + 11, `${pm(c.bestFocus, c.bestFocusErr, 1)}${c.outside ? '?' : ''}`, theme, { size: 9, anchor: 'end', fill: c.outside ? theme.flagged : theme.fg, cls: 'best-label' });
    out += '</g>';
    // axis ticks on the bottom row and the left column (as displayed)
    if (dispRow === d.rows - 1) {
      for (const t of x.ticks(Math.max(2, Math.round(cellW / 60)))) {
        out += `<line x1="${r2(x(t))}" x2="${r2(x(t))}" y1="${r2(oy + cellH)}" y2="${r2(oy + cellH + 4)}" stroke="${theme.fg}"/>`;
        out += text(x(t), oy + cellH + 14, x.tickFormat(5)(t), theme, { size: 9, anchor: 'middle' });
      }
    }
    if (c.col === 0) {
      for (const t of y.ticks(3)) out += text(ox - 4, y(t) + 3, y.tickFormat(3)(t), theme, { size: 9, anchor: 'end' });
    }
  }
  out += text(left + (width - left) / 2, height - 6, `focuser position (${d.unit}; larger = sensor farther from the lens)`, theme, { size: 11, anchor: 'middle' });
  out += `<text x="12" y="${r2(TITLE_H + (height - TITLE_H - bottom) / 2)}" font-size="11" fill="${theme.fg}" text-anchor="middle" transform="rotate(-90 12 ${r2(TITLE_H + (height - TITLE_H - bottom) / 2)})">${esc(`${d.metric} (px)`)}</text>`;
  return out + '</svg>';
}

/** The best-focus surface over the frame: colour, lines of equal focus, and the zones' own values. */
export function focusSurfaceSvg(d: SurfaceData, opts: { theme: Theme; width?: number; id?: string; title?: string }): string {
  const { theme } = opts;
  const width = opts.width ?? 900;
  const id = opts.id ?? 'focus-surface';
  const label = opts.title ?? 'Best-focus surface';
  const keyW = 120;
  const s = (width - keyW - 20) / d.width;
  const plotW = d.width * s, plotH = d.height * s;
  const m = frameMap(frameOf(d.width, d.height, d.topRow), s, 10, TITLE_H);
  const keyH = Math.max(80, Math.min(plotH - 40, 260));
  const height = Math.max(plotH + TITLE_H + 30, TITLE_H + keyH + 70);
  if (!(d.width > 0 && d.height > 0) || !d.coef.every(Number.isFinite)) return emptyFigure(width, height, label, 'no focus surface', theme);
  const at = (x: number, y: number) => {
    const u = (x - d.centrePx.x) / d.scalePx, v = (y - d.centrePx.y) / d.scalePx;
    return d.coef[0] + d.coef[1] * u + d.coef[2] * v + d.coef[3] * (u * u + v * v);
  };
  // The surface on a grid with one cell more on every side (contours run off the frame).
  const cols = 48, rows = Math.max(2, Math.round((cols * d.height) / d.width));
  const dx = d.width / cols, dy = d.height / rows;
  const padded: number[] = [];
  let lo = Infinity, hi = -Infinity;
  for (let r = -1; r <= rows; r++) {
    for (let c = -1; c <= cols; c++) {
      const v = at((c + 0.5) * dx - 0.5, (r + 0.5) * dy - 0.5);
      padded.push(v);
      if (r >= 0 && r < rows && c >= 0 && c < cols) { lo = Math.min(lo, v); hi = Math.max(hi, v); }
    }
  }
  for (const p of d.points) { lo = Math.min(lo, p.focus); hi = Math.max(hi, p.focus); }
  if (hi - lo < 1e-6) { lo -= 0.5; hi += 0.5; }
  const t = scaleLinear().domain([lo, hi]).range([0, 1]).clamp(true);
  let out = svgOpen(width, height, label, theme, id);
  out = out.replace('<svg ', `<svg data-min="${r2(lo)}" data-max="${r2(hi)}" `);
  out += text(10, 20, label, theme, { size: 14, weight: '600' });
  out += `<defs><clipPath id="${id}-clip"><rect x="${r2(m.ox)}" y="${TITLE_H}" width="${r2(plotW)}" height="${r2(plotH)}"/></clipPath></defs>`;
  out += '<g class="surface" shape-rendering="crispEdges">';
  for (let r = 0; r < rows; r++) {
    for (let c = 0; c < cols; c++) {
      const v = padded[(r + 1) * (cols + 2) + c + 1];
      const xa = m.x(c * dx - 0.5), xb = m.x((c + 1) * dx - 0.5);
      const ya = m.y(r * dy - 0.5), yb = m.y((r + 1) * dy - 0.5);
      out += `<rect x="${r2(Math.min(xa, xb))}" y="${r2(Math.min(ya, yb))}" width="${r2(Math.abs(xb - xa) + 0.3)}" height="${r2(Math.abs(yb - ya) + 0.3)}" fill="${theme.ramp(t(v))}"/>`;
    }
  }
  out += '</g>';
  const step = d.step && d.step > 0 ? d.step : null;
  const levels = step
    ? Array.from({ length: Math.floor(hi / step) - Math.ceil(lo / step) + 1 }, (_, k) => (Math.ceil(lo / step) + k) * step).filter((v) => v > lo && v < hi)
    : scaleLinear().domain([lo, hi]).ticks(6).filter((v) => v > lo && v < hi);
  const fmt = scaleLinear().domain([lo, hi]).tickFormat(6);
  const polys = contours().size([cols + 2, rows + 2]).thresholds(levels)(padded);
  const gx = (u: number) => (u - 1) * dx - 0.5, gy = (v: number) => (v - 1) * dy - 0.5;
  out += `<g class="contours" fill="none" stroke="${theme.contour}" stroke-opacity="0.8" stroke-width="1" clip-path="url(#${id}-clip)">`;
  let labels = '';
  for (const p of polys) {
    let path = '';
    let best: [number, number] | null = null, bestIn = 0.05 * Math.min(d.width, d.height);
    for (const poly of p.coordinates) {
      for (const ring of poly) {
        path += 'M' + ring.map(([u, v]) => `${r2(m.x(gx(u)))},${r2(m.y(gy(v)))}`).join('L') + 'Z';
        for (const [u, v] of ring) {
          const X = gx(u), Y = gy(v);
          const inside = Math.min(X + 0.5, d.width - 0.5 - X, Y + 0.5, d.height - 0.5 - Y);
          if (inside > bestIn) { bestIn = inside; best = [X, Y]; }
        }
      }
    }
    if (!path) continue;
    out += `<path d="${path}" data-level="${p.value}"/>`;
    if (best) labels += `<text x="${r2(m.x(best[0]))}" y="${r2(m.y(best[1]) + 4)}" font-size="11" fill="${theme.fg}" stroke="${theme.bg}" stroke-width="3" paint-order="stroke" text-anchor="middle" class="contour-label">${fmt(p.value)}</text>`;
  }
  out += '</g>' + labels;
  out += `<g class="zone-values">`;
  for (const p of d.points) {
    const px = m.x(p.x), py = m.y(p.y);
    out += `<circle cx="${r2(px)}" cy="${r2(py)}" r="3" fill="${p.used ? theme.fg : 'none'}" stroke="${theme.fg}"><title>${esc(`${pm(p.focus, p.err, 1)} ${d.unit}${p.used ? '' : ' (outside the series, not fitted)'}`)}</title></circle>`;
    out += `<text x="${r2(px)}" y="${r2(py - 6)}" font-size="10" fill="${theme.fg}" stroke="${theme.bg}" stroke-width="2.5" paint-order="stroke" text-anchor="middle">${esc(num(p.focus, 1))}</text>`;
  }
  out += '</g>';
  out += `<rect x="${r2(m.ox)}" y="${TITLE_H}" width="${r2(plotW)}" height="${r2(plotH)}" fill="none" stroke="${theme.frame}" stroke-width="1"/>`;
  out += colorKey(width - keyW + 10, TITLE_H + 24, keyH, lo, hi, `best focus (${d.unit})`, theme, `${id}-key`);
  out += text(width - keyW + 10, TITLE_H + keyH + 46, 'higher = sharpest', theme, { size: 10, fill: theme.muted });
  out += text(width - keyW + 10, TITLE_H + keyH + 60, 'with the sensor', theme, { size: 10, fill: theme.muted });
  out += text(width - keyW + 10, TITLE_H + keyH + 74, 'farther out', theme, { size: 10, fill: theme.muted });
  return out + '</svg>';
}

/** One star's cut-outs across the series, each with its own asinh stretch (Lupton et al. 2004). */
export function stampStripSvg(d: StampStripData, opts: { theme: Theme; width?: number; id?: string }): string {
  const { theme } = opts;
  const width = opts.width ?? 900;
  const id = opts.id ?? 'focus-stamps';
  const n = d.frames.length;
  const gap = 6;
  const cell = Math.min(140, (width - 20 - gap * (n - 1)) / Math.max(1, n));
  const height = TITLE_H + cell + 34;
  if (!d.frames.some((f) => f)) return emptyFigure(width, height, d.title, 'no cut-outs of this star', theme);
  let out = svgOpen(width, height, d.title, theme, id);
  out += text(10, 20, d.title, theme, { size: 14, weight: '600' });
  // A mild asinh stretch (Lupton et al. 2004) from the sky (the cut-out's median) to its peak, one
  // pixel scale for every cut-out so the discs' growth shows.
  const beta = 3, norm = 1 / Math.asinh(beta);
  const side = Math.max(...d.frames.map((f) => (f ? Math.max(f.w, f.h) : 0)));
  const k = cell / side;
  d.frames.forEach((f, i) => {
    const ox = 10 + i * (cell + gap), oy = TITLE_H;
    out += `<rect x="${r2(ox)}" y="${oy}" width="${r2(cell)}" height="${r2(cell)}" fill="${theme.redImage ? '#000' : 'rgb(0,0,0)'}" stroke="${theme.grid}" stroke-width="0.5"/>`;
    if (!f) { out += text(ox + cell / 2, oy + cell / 2, 'not measured', theme, { size: 9, anchor: 'middle', fill: theme.muted }); return; }
    const finite = f.values.filter((v): v is number => v !== null).sort((a, b) => a - b);
    const lo = finite.length ? finite[finite.length >> 1] : 0;
    let hi = finite.length ? finite[finite.length - 1] : 1;
    if (!(hi > lo)) hi = lo + 1;
    const x0 = ox + (cell - f.w * k) / 2, y0 = oy + (cell - f.h * k) / 2;
    out += `<g shape-rendering="crispEdges" data-position="${f.position}">`;
    for (let r = 0; r < f.h; r++) {
      for (let c = 0; c < f.w; c++) {
        const v = f.values[r * f.w + c];
        if (v === null || v <= lo) continue;
        const g = Math.round(255 * Math.asinh(beta * Math.min(1, (v - lo) / (hi - lo))) * norm);
        if (g < 4) continue;
        const fill = theme.redImage ? `rgb(${Math.round(g * 0.8)},0,0)` : `rgb(${g},${g},${g})`;
        const ry = d.topRow === 'last' ? f.h - 1 - r : r;
        out += `<rect x="${r2(x0 + c * k)}" y="${r2(y0 + ry * k)}" width="${r2(k + 0.3)}" height="${r2(k + 0.3)}" fill="${fill}"/>`;
      }
    }
    out += '</g>';
    const best = d.bestFocus !== null && Math.abs(f.position - d.bestFocus) === Math.min(...d.frames.map((q) => (q ? Math.abs(q.position - (d.bestFocus as number)) : Infinity)));
    out += text(ox + cell / 2, oy + cell + 16, `${num(f.position, 0)} ${d.unit}`, theme, { size: 11, anchor: 'middle', fill: best ? theme.good : theme.fg, weight: best ? '600' : undefined });
  });
  out += text(10, height - 4, 'nearer the lens  ←   →  farther from the lens', theme, { size: 10, fill: theme.muted });
  return out + '</svg>';
}

/** Plain-data builders from a through-focus result (structural types: no import of the series code). */
interface TfZone {
  col: number; row: number; name: string; insideSeries: boolean; centrePx: { x: number; y: number };
  bestFocusUm: number | null; errUm: number | null;
  rms: TfCurve; hfd: TfCurve; fwhm: TfCurve;
  rmsPx: (number | null)[]; rmsErrPx: (number | null)[]; hfdPx: (number | null)[]; hfdErrPx: (number | null)[]; fwhmPx: (number | null)[]; fwhmErrPx: (number | null)[];
}
interface TfCurve { bestFocusUm: number | null; errUm: number | null; coef: [number, number, number] | null; p0Um: number }
export interface ThroughFocusLike {
  positionsUm: number[];
  grid: { cols: number; rows: number };
  frame: { width: number; height: number; displayTopRow: 'first' | 'last' };
  zones: TfZone[];
  surface: { centrePx: { x: number; y: number }; scalePx: number; coef: { centreUm: number; xUm: number; yUm: number; curvatureUm: number } } | null;
  criticalFocusZone: { halfWidthUm: number } | null;
  stamps: { zoneName: string; star: { x: number; y: number }; frames: ({ positionUm: number; w: number; h: number; values: (number | null)[] } | null)[]; zone: number }[];
}

const METRIC_LABEL = { rms: 'rms radius', hfd: 'HFD', fwhm: 'FWHM' } as const;

export function focusCurvesData(r: ThroughFocusLike, metric: 'rms' | 'hfd' | 'fwhm' = 'hfd'): FocusCurvesData {
  const vals = (z: TfZone) => (metric === 'rms' ? [z.rmsPx, z.rmsErrPx] : metric === 'hfd' ? [z.hfdPx, z.hfdErrPx] : [z.fwhmPx, z.fwhmErrPx]);
  return {
    positions: r.positionsUm, cols: r.grid.cols, rows: r.grid.rows, topRow: r.frame.displayTopRow,
    metric: METRIC_LABEL[metric], unit: 'µm', band: r.criticalFocusZone?.halfWidthUm ?? null,
    cells: r.zones.map((z) => {
      const c = z[metric];
      const [v, e] = vals(z);
      return { col: z.col, row: z.row, name: z.name, values: v, errors: e, coef: c.coef, p0: c.p0Um, bestFocus: c.bestFocusUm, bestFocusErr: c.errUm, outside: !z.insideSeries };
    }),
  };
}

export function focusSurfaceData(r: ThroughFocusLike): SurfaceData | null {
  if (!r.surface) return null;
  const c = r.surface.coef;
  return {
    width: r.frame.width, height: r.frame.height, topRow: r.frame.displayTopRow,
    centrePx: r.surface.centrePx, scalePx: r.surface.scalePx, coef: [c.centreUm, c.xUm, c.yUm, c.curvatureUm], unit: 'µm',
    points: r.zones.filter((z) => z.bestFocusUm !== null).map((z) => ({ x: z.centrePx.x, y: z.centrePx.y, focus: z.bestFocusUm as number, err: z.errUm, used: z.insideSeries })),
  };
}

export function stampStripData(r: ThroughFocusLike, which = 0): StampStripData | null {
  const s = r.stamps[which];
  if (!s) return null;
  const z = r.zones[s.zone];
  return {
    title: `One star through focus: ${s.zoneName} zone (x ${num(s.star.x, 0)}, y ${num(s.star.y, 0)})`,
    topRow: r.frame.displayTopRow, unit: 'µm', bestFocus: z?.bestFocusUm ?? null,
    frames: s.frames.map((f) => (f ? { position: f.positionUm, w: f.w, h: f.h, values: f.values } : null)),
  };
}
