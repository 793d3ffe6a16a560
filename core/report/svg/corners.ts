/**
 * Corner close-ups beside the centre: the four corner crops and the central crop of the frame,
 * all at one zoom, with each crop's median star size and shape measured from the stars in it.
 */
import type { Report, ReportStar } from '../types.ts';
import type { Tile, TileName } from './types.ts';
import type { Theme } from './theme.ts';
import { RED_FILTER } from './sky.ts';
import { formatQuantity, quantityPhrase } from '../words.ts';
import { medianOf } from '../../image/stats.ts';
import { emptyFigure, esc, num, r2, svgOpen, text } from './util.ts';

export interface CornersOptions { theme: Theme; width?: number; /** Fit into this height too. */ maxHeight?: number }

/** Column and row of each crop: corners left and right in two rows, the centre between them. */
const PLACE: Record<TileName, [number, number]> = {
  'top-left': [0, 0], 'top-right': [2, 0], center: [1, 0.5], 'bottom-left': [0, 1], 'bottom-right': [2, 1],
};

const LABEL: Record<TileName, string> = {
  'top-left': 'Top left', 'top-right': 'Top right', center: 'Centre', 'bottom-left': 'Bottom left', 'bottom-right': 'Bottom right',
};

function median(v: number[]): number | null {
  const m = medianOf(v);
  return Number.isFinite(m) ? m : null;
}

export interface TileStats { name: TileName; stars: number; medianFwhmPx: number | null; medianEllipticity: number | null }

/** Clean stars whose centres fall inside a crop. */
export function starsInTile(report: Report, t: Pick<Tile, 'x0' | 'y0' | 'w' | 'h'>): ReportStar[] {
  return report.stars.filter((s) => s.flags.length === 0 && s.x >= t.x0 - 0.5 && s.x < t.x0 + t.w - 0.5 && s.y >= t.y0 - 0.5 && s.y < t.y0 + t.h - 0.5);
}

export function tileStats(report: Report, t: Tile): TileStats {
  const st = starsInTile(report, t);
  return { name: t.name, stars: st.length, medianFwhmPx: median(st.map((s) => s.fwhmPx)), medianEllipticity: median(st.map((s) => s.ellipticity)) };
}

export function cornersSvg(report: Report, tiles: Tile[] | null | undefined, opts: CornersOptions): string {
  const { theme } = opts;
  const width = opts.width ?? 900;
  if (!tiles || tiles.length === 0) return emptyFigure(width, 300, 'Corners', 'no close-ups for this frame', theme);
  const gap = 14;
  const labelH = 48;
  const S = Math.max(...tiles.map((t) => t.w));
  const head = 28;
  let cell = Math.floor((width - 4 * gap) / 3);
  if (opts.maxHeight) cell = Math.min(cell, Math.floor((opts.maxHeight - head - 3 * gap) / 2 - labelH));
  cell = Math.max(cell, 40);
  // whole-number zooms keep every frame pixel the same size on screen
  const zoom = cell >= S ? Math.floor(cell / S) : cell / S;
  const used = S * zoom;
  const height = head + 2 * (used + labelH) + 3 * gap;
  const totalW = Math.max(3 * used + 4 * gap, 420);
  const flipY = report.frame.display?.topRow === 'last';
  let out = svgOpen(totalW, height, 'Corners and centre at the same zoom', theme, 'corners-svg');
  out = out.replace('<svg ', `<svg data-zoom="${r2(zoom)}" `);
  out += `<defs>${RED_FILTER}</defs>`;
  out += text(gap, 18, `Corners and centre, ${num(zoom, 2)}× (1 frame px = ${num(zoom, 1)} screen px)`, theme, { size: 13, weight: '600' });
  for (const t of tiles) {
    const [col, row] = PLACE[t.name];
    const X = gap + col * (used + gap);
    const Y = head + gap + row * (used + labelH + gap);
    const w = t.w * zoom;
    const h = t.h * zoom;
    const st = tileStats(report, t);
    out += `<g class="tile" data-tile="${t.name}" data-stars="${st.stars}">`;
    out += `<image href="${esc(t.href)}" x="${r2(X)}" y="${r2(Y)}" width="${r2(w)}" height="${r2(h)}" preserveAspectRatio="none" image-rendering="pixelated"${theme.redImage ? ' filter="url(#sl-red)"' : ''}/>`;
    out += `<g fill="none" stroke="${theme.star}" stroke-width="1" stroke-opacity="0.8">`;
    for (const s of starsInTile(report, t)) {
      const px = X + (s.x - t.x0 + 0.5) * zoom;
      const py = Y + (flipY ? t.y0 + t.h - 0.5 - s.y : s.y - t.y0 + 0.5) * zoom;
      const a = (flipY ? -s.thetaDeg : s.thetaDeg);
      // an ellipse twice the fitted FWHM, so the star itself stays visible inside it
      out += `<ellipse cx="${r2(px)}" cy="${r2(py)}" rx="${r2(s.fwhmMajorPx * zoom)}" ry="${r2(s.fwhmMinorPx * zoom)}" transform="rotate(${r2(a)} ${r2(px)} ${r2(py)})"/>`;
    }
    out += '</g>';
    out += `<rect x="${r2(X)}" y="${r2(Y)}" width="${r2(w)}" height="${r2(h)}" fill="none" stroke="${theme.frame}" stroke-width="1"/>`;
    out += text(X, Y + h + 15, LABEL[t.name], theme, { size: 12, weight: '600' });
    out += text(X, Y + h + 30, `${st.stars} star${st.stars === 1 ? '' : 's'} · FWHM ${formatQuantity('medianFwhmPx', st.medianFwhmPx)} px`, theme, { size: 11, fill: theme.muted, cls: 'tile-numbers' });
    out += text(X, Y + h + 44, quantityPhrase('medianEllipticity', st.medianEllipticity), theme, { size: 11, fill: theme.muted, cls: 'tile-numbers' });
    out += '</g>';
  }
  return out + '</svg>';
}
