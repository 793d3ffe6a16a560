/**
 * The lens's distortion as a picture: a regular grid as the lens draws it (the radial model
 * r_d = r (1 + k1 q^2 + k2 q^4) about the optical centre), its displacements exaggerated by a
 * stated factor, and the measured displacement of each matched star (where the star is, against
 * where a distortion-free lens would put it) as an arrow, exaggerated by the same factor.
 * distortionFigureData() takes what the figure needs from a report as plain numbers (no labels),
 * so a page can draw it or label it its own way; distortionSvg() draws it.
 */
import type { Report } from '../types.ts';
import type { Theme } from './theme.ts';
import { emptyFigure, esc, r2, svgOpen, text, TITLE_H } from './util.ts';
import { projectionWords } from '../../sky/words.ts';

export interface DistortionFigureData {
  /** Frame size, px, and which stored row is shown at the top. */
  width: number;
  height: number;
  displayTopRow: 'first' | 'last';
  /** Optical centre, px, and the normalising radius R (half the frame diagonal). */
  cx: number;
  cy: number;
  rNormPx: number;
  k1: number;
  k2: number;
  /** Factor applied to every displacement when drawn. */
  exaggeration: number;
  /** Largest shift in the frame, px (not exaggerated). */
  maxShiftPx: number;
  /** Matched stars: measured position (px) and measured shift from a distortion-free lens (px, not exaggerated). */
  arrows: { x: number; y: number; dx: number; dy: number; star: number }[];
}

/** The smallest "nice" factor (1, 2, 5 x 10^n) that draws the largest shift at about `target` px of frame. */
export function niceExaggeration(maxShiftPx: number, targetPx: number): number {
  if (!(maxShiftPx > 0)) return 1;
  const raw = targetPx / maxShiftPx;
  if (raw <= 1) return 1;
  const p = 10 ** Math.floor(Math.log10(raw));
  for (const m of [1, 2, 5, 10]) if (m * p >= raw * 0.7) return m * p;
  return 10 * p;
}

/** The figure's numbers from a report; null when the frame was not placed on the sky. */
export function distortionFigureData(report: Report, maxArrows = 600): DistortionFigureData | null {
  const a = report.astrometry;
  if (!a || !a.solved || !a.model || !a.distortion) return null;
  const W = report.frame.width, H = report.frame.height;
  const maxShift = a.distortion.maxShiftPx;
  const arrows = a.matches
    .filter((m) => Number.isFinite(m.shiftPx.x) && Number.isFinite(m.shiftPx.y) && report.stars[m.star])
    .slice(0, maxArrows)
    .map((m) => ({ x: report.stars[m.star].x, y: report.stars[m.star].y, dx: m.shiftPx.x, dy: m.shiftPx.y, star: m.star }));
  return {
    width: W, height: H, displayTopRow: report.frame.display?.topRow ?? 'first',
    cx: a.model.cxPx, cy: a.model.cyPx, rNormPx: a.model.rNormPx, k1: a.model.k1, k2: a.model.k2,
    exaggeration: niceExaggeration(maxShift, 0.04 * Math.hypot(W, H)),
    maxShiftPx: maxShift,
    arrows,
  };
}

/** Where the lens draws the ideal point (x, y): displaced radially about the centre, exaggerated by e. */
export function distortedPoint(d: Pick<DistortionFigureData, 'cx' | 'cy' | 'rNormPx' | 'k1' | 'k2'>, x: number, y: number, e: number): [number, number] {
  const dx = x - d.cx, dy = y - d.cy;
  const q2 = (dx * dx + dy * dy) / (d.rNormPx * d.rNormPx);
  const k = e * (d.k1 * q2 + d.k2 * q2 * q2);
  return [x + dx * k, y + dy * k];
}

export interface DistortionOptions {
  theme: Theme;
  width?: number;
  /** Grid cells along the longer side. */
  cells?: number;
  /** The title line and the factor's statement above the frame (default true). */
  legend?: boolean;
}

export function distortionSvg(d: DistortionFigureData | null, opts: DistortionOptions): string {
  const { theme } = opts;
  const width = opts.width ?? 900;
  if (!d) return emptyFigure(width, width * 0.5, 'Distortion', 'not placed on the sky: no distortion to draw', theme);
  const legend = opts.legend ?? true;
  const top = legend ? TITLE_H : 10;
  const s = (width - 20) / d.width;
  const plotH = d.height * s;
  const H = top + plotH + 10;
  const flip = d.displayTopRow === 'last';
  const X = (x: number) => 10 + (x + 0.5) * s;
  const Y = (y: number) => top + (flip ? d.height - 0.5 - y : y + 0.5) * s;
  const e = d.exaggeration;
  let out = svgOpen(width, H, `Distortion: a grid as the lens draws it, shifts x${e}`, theme, undefined);
  out = out.replace('<svg ', `<svg data-exaggeration="${e}" data-arrows="${d.arrows.length}" `);
  if (legend) {
    out += text(10, 20, `Distortion: a square grid as the lens draws it, and the measured shift of each matched star; shifts drawn ${e}x larger`, theme, { size: 13 });
  }
  out += `<rect x="10" y="${r2(top)}" width="${r2(d.width * s)}" height="${r2(plotH)}" fill="${theme.panel}" stroke="${theme.frame}" stroke-width="1"/>`;
  // the ideal grid (faint) and the grid as drawn by the lens (exaggerated)
  const n = opts.cells ?? 12;
  const step = Math.max(d.width, d.height) / n;
  const nx = Math.ceil(d.width / step), ny = Math.ceil(d.height / step);
  const sx = d.width / nx, sy = d.height / ny;
  const seg = 24;
  const path = (pts: [number, number][]) => 'M' + pts.map(([x, y]) => `${r2(X(x))},${r2(Y(y))}`).join('L');
  let ideal = '', bent = '';
  for (let i = 0; i <= nx; i++) {
    const x = Math.min(d.width - 1, Math.max(0, i * sx - 0.5));
    ideal += `<line x1="${r2(X(x))}" x2="${r2(X(x))}" y1="${r2(Y(0))}" y2="${r2(Y(d.height - 1))}"/>`;
    const pts: [number, number][] = [];
    for (let k = 0; k <= seg; k++) pts.push(distortedPoint(d, x, (k / seg) * (d.height - 1), e));
    bent += `<path d="${path(pts)}"/>`;
  }
  for (let j = 0; j <= ny; j++) {
    const y = Math.min(d.height - 1, Math.max(0, j * sy - 0.5));
    ideal += `<line x1="${r2(X(0))}" x2="${r2(X(d.width - 1))}" y1="${r2(Y(y))}" y2="${r2(Y(y))}"/>`;
    const pts: [number, number][] = [];
    for (let k = 0; k <= seg; k++) pts.push(distortedPoint(d, (k / seg) * (d.width - 1), y, e));
    bent += `<path d="${path(pts)}"/>`;
  }
  out += `<clipPath id="dist-clip"><rect x="10" y="${r2(top)}" width="${r2(d.width * s)}" height="${r2(plotH)}"/></clipPath>`;
  out += `<g clip-path="url(#dist-clip)">`;
  out += `<g class="grid-ideal" stroke="${theme.grid}" stroke-width="0.8">${ideal}</g>`;
  out += `<g class="grid-lens" fill="none" stroke="${theme.vector}" stroke-width="1.4">${bent}</g>`;
  // measured shifts of the matched stars
  out += `<g class="shifts" stroke="${theme.zoneVector}" stroke-width="1.2" fill="${theme.zoneVector}">`;
  for (const a of d.arrows) {
    const x0 = X(a.x), y0 = Y(a.y);
    const x1 = X(a.x + e * a.dx), y1 = Y(a.y + e * a.dy);
    out += `<line class="shift" data-star="${a.star}" x1="${r2(x0)}" y1="${r2(y0)}" x2="${r2(x1)}" y2="${r2(y1)}"/><circle cx="${r2(x0)}" cy="${r2(y0)}" r="1.4"/>`;
  }
  out += '</g></g>';
  out += `<circle class="optical-centre" cx="${r2(X(d.cx))}" cy="${r2(Y(d.cy))}" r="4" fill="none" stroke="${theme.fg}" stroke-width="1.2"/>`;
  return out + `<desc>${esc(`radial model k1 ${d.k1}, k2 ${d.k2}, R ${d.rNormPx} px, largest shift ${d.maxShiftPx} px`)}</desc></svg>`;
}

/** The plate solution as an HTML table (HTML report; the page may use it too). */
export function astrometryTableHtml(report: Report): string {
  const a = report.astrometry;
  if (!a) return '<p class="src">Plate solving was skipped.</p>';
  if (!a.solved) return `<p>Not placed on the sky: ${esc(a.reason)}</p>`;
  const rows: [string, string][] = [];
  const c = a.centre;
  const n = (v: number | null | undefined, d: number) => (v === null || v === undefined || !Number.isFinite(v) ? '–' : v.toFixed(d));
  // the error to two significant digits, the value to the same decimals
  const pm = (v: number | null | undefined, e: number | null | undefined, d: number) => {
    if (e === null || e === undefined || !Number.isFinite(e) || e <= 0) return n(v, d);
    const dd = Math.max(d, Math.min(8, 1 - Math.floor(Math.log10(e))));
    return `${n(v, dd)} ± ${e.toPrecision(2)}`;
  };
  if (c) rows.push(['Frame centre', `${esc(sexa(c.raDeg, c.decDeg))} (RA ${n(c.raDeg, 4)}°, Dec ${n(c.decDeg, 4)}°, ICRS)`]);
  rows.push(['North', `${n(a.rotationDeg, 1)}° from +x toward +y; ${esc(a.parity ?? '–')} parity`]);
  rows.push(['Sky scale', `${pm(a.scaleArcsecPerPx, a.scaleErrArcsecPerPx, 4)} ″/px at the optical centre`]);
  rows.push(['Focal length', a.focalLengthMm !== null ? `${pm(a.focalLengthMm, a.focalLengthErrMm, 2)} mm (measured)` : 'needs the pixel size']);
  rows.push(['Projection', esc(a.projection ? projectionWords(a.projection) : '–')]);
  const d = a.distortion;
  if (d) {
    rows.push(['Distortion', `${esc(d.pattern)}: ${pm(d.cornerPercent, d.cornerPercentErr, 3)} % at the corners, ${n(d.edgePercent.x, 3)} % / ${n(d.edgePercent.y, 3)} % at the side / top edges, largest shift ${n(d.maxShiftPx, 1)} px`]);
    rows.push(['Radial terms', `k1 ${pm(d.k1, d.k1Err, 5)}${d.k2Err !== null ? `, k2 ${pm(d.k2, d.k2Err, 5)}` : ', k2 not supported by the stars'} (r_d = r (1 + k1 q² + k2 q⁴), q = r / half diagonal)`]);
  }
  const oc = a.opticalCentre;
  if (oc) rows.push(['Optical centre', oc.fitted ? `x ${pm(oc.xPx, oc.xErrPx, 1)}, y ${pm(oc.yPx, oc.yErrPx, 1)} px (fitted)` : `x ${n(oc.xPx, 1)}, y ${n(oc.yPx, 1)} px (frame centre, assumed)`]);
  rows.push(['Matched', `${a.starsMatched} stars of ${esc(a.catalogue.name)}${a.catalogue.file ? ` (${esc(a.catalogue.file)})` : ' (bundled)'}, rms ${n(a.rmsArcsec, 2)}″ (${n(a.rmsPx, 2)} px)`]);
  rows.push(['Verification', `log-odds ${n(a.search.logOdds, 1)} (accepts above ${n(a.search.acceptLogOdds, 1)}); chance that unrelated dots pass: below ${a.search.falsePositiveBound.toPrecision(2)}`]);
  const hw = a.headerWcs;
  if (hw && hw.kind) {
    const hd = (hw as { distortion: { pattern: string; cornerPercent: number } }).distortion;
    rows.push(['WCS in the header', `${esc(hw.kind)}: ${esc(hd.pattern)}, ${n(hd.cornerPercent, 3)} % at the corners`]);
  }
  for (const note of a.notes) rows.push(['Note', esc(note)]);
  return '<table class="astrometry">' + rows.map(([k, v]) => `<tr><th>${esc(k)}</th><td>${v}</td></tr>`).join('') + '</table>';
}

function sexa(raDeg: number, decDeg: number): string {
  let t = (((raDeg % 360) + 360) % 360) / 15;
  const h = Math.floor(t); t = (t - h) * 60;
  const m = Math.floor(t); const s = (t - m) * 60;
  const sign = decDeg < 0 ? '−' : '+';
  let u = Math.abs(decDeg);
  const dd = Math.floor(u); u = (u - dd) * 60;
  const am = Math.floor(u); const as = (u - am) * 60;
  const p2 = (v: number) => String(v).padStart(2, '0');
  return `${p2(h)}h ${p2(m)}m ${s.toFixed(1).padStart(4, '0')}s ${sign}${p2(dd)}° ${p2(am)}′ ${as.toFixed(0).padStart(2, '0')}″`;
}
