/**
 * The shape map: one line per zone (or per star), its length proportional to the elongation
 * a/b - 1, its direction the long axis, with a scale key. A round star draws no line.
 */
import type { Report } from '../types.ts';
import type { Theme } from './theme.ts';
import { elongationFromDistortion, elongationFromEllipticity, emptyFigure, fieldOf, frameBesideKey, num, r2, svgOpen, text, TITLE_H, wrapWords, type FrameMap } from './util.ts';
import { scaleBar } from './scale-bar.ts';

export interface ShapeOptions {
  theme: Theme;
  /** 'zones': the field map's grid (vector-averaged shapes); 'stars': every clean star. */
  mode?: 'zones' | 'stars';
  width?: number;
  maxStars?: number;
}

export interface ShapeVector { x: number; y: number; elongation: number; thetaDeg: number; n: number }

/** The vectors drawn: grid zones with stars (from the field map), or clean stars by falling SNR. */
export function shapeVectors(report: Report, mode: 'zones' | 'stars', maxStars = 3000): ShapeVector[] {
  if (mode === 'zones') {
    const f = fieldOf(report);
    if (!f) return [];
    return f.grid.cells
      .filter((c) => c.n > 0 && c.eMag !== null && c.thetaDeg !== null)
      .map((c) => ({
        x: c.meanX ?? (c.bounds.x0 + c.bounds.x1) / 2,
        y: c.meanY ?? (c.bounds.y0 + c.bounds.y1) / 2,
        elongation: elongationFromDistortion(c.eMag as number),
        thetaDeg: c.thetaDeg as number,
        n: c.n,
      }));
  }
  return report.stars
    .filter((s) => s.flags.length === 0 && Number.isFinite(s.ellipticity) && Number.isFinite(s.thetaDeg))
    .sort((a, b) => b.snr - a.snr)
    .slice(0, maxStars)
    .map((s) => ({ x: s.x, y: s.y, elongation: elongationFromEllipticity(s.ellipticity), thetaDeg: s.thetaDeg, n: 1 }));
}

function vectorLine(m: FrameMap, v: ShapeVector, k: number, stroke: string, width: number, maxL: number): string {
  const L = Math.min(k * (v.elongation - 1), maxL);
  const a = (m.angle(v.thetaDeg) * Math.PI) / 180;
  const dx = (L / 2) * Math.cos(a);
  const dy = (L / 2) * Math.sin(a);
  const cx = m.x(v.x);
  const cy = m.y(v.y);
  return `<line x1="${r2(cx - dx)}" y1="${r2(cy - dy)}" x2="${r2(cx + dx)}" y2="${r2(cy + dy)}" stroke="${stroke}" stroke-width="${width}" stroke-linecap="round" data-elong="${r2(v.elongation * 1000) / 1000}"/>`;
}

export function shapeSvg(report: Report, opts: ShapeOptions): string {
  const { theme } = opts;
  const field = fieldOf(report);
  const mode = opts.mode ?? (field ? 'zones' : 'stars');
  const width = opts.width ?? 900;
  const keyW = 170;
  const top = TITLE_H;
  const { m, plotW, plotH } = frameBesideKey(report, width, keyW);
  const s = m.s;
  // room under the plot for the pixel scale bar
  const height = Math.max(plotH + top + 36, 260);
  const vectors = shapeVectors(report, mode, opts.maxStars);
  const label = `Shape map (${mode === 'zones' ? 'per zone' : 'per star'})`;
  if (vectors.length === 0) {
    return emptyFigure(width, height, label, mode === 'zones' ? 'no field map in this report' : 'no clean stars to draw', theme);
  }
  // line length for a/b = 1.2: about 90 % of the spacing between vectors
  const spacing = mode === 'zones' && field
    ? Math.min(field.grid.cellWidthPx, field.grid.cellHeightPx) * s
    : Math.sqrt((plotW * plotH) / vectors.length);
  const k = (0.9 * spacing) / 0.2;
  let out = svgOpen(width, height, label, theme, 'shape-svg');
  out = out.replace('<svg ', `<svg data-vectors="${vectors.length}" data-mode="${mode}" `);
  out += text(10, 20, label, theme, { size: 14, weight: '600' });
  out += `<rect x="${r2(m.ox)}" y="${top}" width="${r2(plotW)}" height="${r2(plotH)}" fill="${theme.panel}" stroke="${theme.frame}" stroke-width="1"/>`;
  if (mode === 'zones' && field) {
    for (const c of field.grid.cells) {
      const x0 = m.x(c.bounds.x0 - 0.5);
      const x1 = m.x(c.bounds.x1 - 0.5);
      const ya = m.y(c.bounds.y0 - 0.5);
      const yb = m.y(c.bounds.y1 - 0.5);
      out += `<rect x="${r2(Math.min(x0, x1))}" y="${r2(Math.min(ya, yb))}" width="${r2(Math.abs(x1 - x0))}" height="${r2(Math.abs(yb - ya))}" fill="none" stroke="${theme.grid}" stroke-width="0.5"/>`;
    }
  }
  // a few odd stars (blends, noise) would draw lines across the frame: cut at two spacings
  const maxL = 2 * spacing;
  const cut = 1 + maxL / k;
  out += `<defs><clipPath id="shape-clip"><rect x="${r2(m.ox)}" y="${top}" width="${r2(plotW)}" height="${r2(plotH)}"/></clipPath></defs>`;
  out += '<g class="vectors" clip-path="url(#shape-clip)">';
  for (const v of vectors) out += vectorLine(m, v, k, mode === 'zones' ? theme.zoneVector : theme.vector, mode === 'zones' ? 2.5 : 1.2, maxL);
  out += '</g>';
  if (field) {
    const cx = m.x(field.centre.x);
    const cy = m.y(field.centre.y);
    out += `<g class="optical-centre" stroke="${theme.bad}" stroke-width="1.5"><line x1="${r2(cx - 7)}" y1="${r2(cy)}" x2="${r2(cx + 7)}" y2="${r2(cy)}"/><line x1="${r2(cx)}" y1="${r2(cy - 7)}" x2="${r2(cx)}" y2="${r2(cy + 7)}"/></g>`;
  }
  out += scaleBar(m.ox + 4, top + plotH + 24, { unitsPerPx: s, maxUnits: plotW * 0.3, plateScale: report.frame.optics.plateScaleArcsecPerPx, u: 1 }, theme);
  // scale key
  const kx = width - keyW + 4;
  let ky = top + 10;
  out += text(kx, ky, 'Line length', theme, { size: 12, weight: '600' });
  ky += 16;
  out += text(kx, ky, 'grows with a/b − 1,', theme, { size: 11, fill: theme.muted });
  ky += 14;
  out += text(kx, ky, 'along the long axis', theme, { size: 11, fill: theme.muted });
  // key lines that fit beside the plot: the largest three of these round elongations
  const keys = [1.01, 1.02, 1.05, 1.1, 1.2, 1.5, 2].filter((e) => k * (e - 1) <= keyW - 70 && k * (e - 1) >= 3).slice(-3);
  for (const e of keys) {
    ky += 24;
    const L = k * (e - 1);
    out += `<line x1="${r2(kx)}" y1="${r2(ky)}" x2="${r2(kx + L)}" y2="${r2(ky)}" stroke="${mode === 'zones' ? theme.zoneVector : theme.vector}" stroke-width="${mode === 'zones' ? 2.5 : 1.2}" stroke-linecap="round"/>`;
    out += text(kx + L + 6, ky + 4, `a/b ${num(e, 2)}`, theme, { size: 11, cls: 'key-label' });
  }
  ky += 28;
  out += text(kx, ky, `${vectors.length} ${mode === 'zones' ? 'zones' : 'stars'}`, theme, { size: 11, fill: theme.muted, cls: 'vector-count' });
  const nCut = vectors.filter((v) => v.elongation > cut).length;
  if (nCut) {
    ky += 16;
    out += text(kx, ky, `${nCut} cut at a/b ${num(cut, 2)}`, theme, { size: 10, fill: theme.muted });
  }
  if (field) {
    ky += 16;
    out += `<line x1="${r2(kx)}" y1="${r2(ky - 4)}" x2="${r2(kx + 10)}" y2="${r2(ky - 4)}" stroke="${theme.bad}" stroke-width="1.5"/>`;
    // wrapped to the key's width, so long words are never cut at the figure's edge
    for (const l of wrapWords(field.centre.source === 'frame-centre' ? 'frame centre (assumed optical centre)' : `optical centre (from ${field.centre.source})`, Math.floor((keyW - 22) / 5.6))) {
      out += text(kx + 14, ky, l, theme, { size: 10, fill: theme.muted, cls: 'key-note' });
      ky += 13;
    }
  }
  return out + '</svg>';
}
