/** A star's stamp: its pixels (asinh stretch over the stamp) with the fitted FWHM ellipse. */
import type { ReportStar } from '../types.ts';
import type { Theme } from './theme.ts';
import { r2, svgOpen, text } from './util.ts';
import { scaleBar } from './scale-bar.ts';

export interface StampInput {
  x0: number;
  y0: number;
  w: number;
  h: number;
  /** Storage order, null = missing. */
  values: (number | null)[];
  flipY: boolean;
  star: ReportStar;
}

export function stampSvg(st: StampInput, opts: { theme: Theme; size?: number }): string {
  const { theme } = opts;
  const size = opts.size ?? 220;
  const k = size / Math.max(st.w, st.h);
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of st.values) if (v !== null) { if (v < lo) lo = v; if (v > hi) hi = v; }
  if (!(hi > lo)) hi = lo + 1;
  // asinh stretch (Lupton et al. 2004) between the stamp's lowest and highest pixel
  const beta = 10;
  const norm = 1 / Math.asinh(beta);
  // under the pixels: a scale bar in frame pixels and the grey (or red) key of the stretch
  const keyH = 58;
  const pw = st.w * k;
  const ph = st.h * k;
  let out = svgOpen(pw, ph + keyH, `Stamp of star ${st.star.x.toFixed(1)}, ${st.star.y.toFixed(1)}`, theme, 'stamp-svg');
  out += '<g shape-rendering="crispEdges">';
  for (let r = 0; r < st.h; r++) {
    for (let c = 0; c < st.w; c++) {
      const v = st.values[r * st.w + c];
      if (v === null) continue;
      const g = Math.round(255 * Math.asinh(beta * ((v - lo) / (hi - lo))) * norm);
      const fill = theme.redImage ? `rgb(${Math.round(g * 0.8)},0,0)` : `rgb(${g},${g},${g})`;
      const dy = st.flipY ? st.h - 1 - r : r;
      out += `<rect x="${r2(c * k)}" y="${r2(dy * k)}" width="${r2(k + 0.3)}" height="${r2(k + 0.3)}" fill="${fill}"/>`;
    }
  }
  out += '</g>';
  const s = st.star;
  const px = (s.x - st.x0 + 0.5) * k;
  const py = (st.flipY ? st.y0 + st.h - 0.5 - s.y : s.y - st.y0 + 0.5) * k;
  const a = st.flipY ? -s.thetaDeg : s.thetaDeg;
  if (Number.isFinite(s.fwhmMajorPx) && Number.isFinite(s.fwhmMinorPx)) {
    out += `<ellipse cx="${r2(px)}" cy="${r2(py)}" rx="${r2((s.fwhmMajorPx / 2) * k)}" ry="${r2((s.fwhmMinorPx / 2) * k)}" transform="rotate(${r2(a)} ${r2(px)} ${r2(py)})" fill="none" stroke="${theme.selected}" stroke-width="1.5"/>`;
  }
  out += scaleBar(4, ph + 18, { unitsPerPx: k, maxUnits: pw * 0.45, plateScale: null, u: 1 }, theme);
  const stops = Array.from({ length: 11 }, (_, i) => {
    const g = Math.round(255 * Math.asinh(beta * (i / 10)) * norm);
    return `<stop offset="${i / 10}" stop-color="${theme.redImage ? `rgb(${Math.round(g * 0.8)},0,0)` : `rgb(${g},${g},${g})`}"/>`;
  }).join('');
  const ky = ph + 30;
  out += `<defs><linearGradient id="stamp-key" x1="0" x2="1" y1="0" y2="0">${stops}</linearGradient></defs>`;
  out += `<g class="stamp-key"><rect x="4" y="${r2(ky)}" width="${r2(Math.min(pw - 8, 160))}" height="8" fill="url(#stamp-key)" stroke="${theme.frame}" stroke-width="0.5"/>`;
  out += text(4, ky + 22, `faintest ${Math.round(lo)} → brightest ${Math.round(hi)} (asinh stretch)`, theme, { size: 10, fill: theme.muted });
  out += '</g>';
  return out + '</svg>';
}
