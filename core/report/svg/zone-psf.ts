/**
 * Stacked stars per zone: each 3 x 3 zone's stack (report.zonePsf, core/field/zone-stack.ts)
 * where the zone lies in the frame as displayed, all on one intensity scale (light per pixel as
 * a fraction of the star's light; asinh stretch, Lupton et al. 2004), with contour lines at
 * fixed fractions of each stack's own peak (half the peak traces the FWHM; common practice),
 * and each stack's star count and measured FWHM, HFD and ellipticity beneath it.
 */
import { contours } from 'd3-contour';
import type { Report } from '../types.ts';
import type { ZonePsf, ZonePsfSection } from '../../field/zone-psf-types.ts';
import type { Theme } from './theme.ts';
import { emptyFigure, esc, num, pm, r2, svgOpen, text, wrapWords } from './util.ts';

export interface ZonePsfOptions { theme: Theme; width?: number; /** Fit into this height too. */ maxHeight?: number; id?: string; /** The page lists a zone's stars on a click (the HTML report cannot). */ interactive?: boolean }

/** Contour levels, fractions of each stack's own peak: 0.5 is the half-maximum line. */
export const PSF_CONTOURS = [0.5, 0.2, 0.05];
/** asinh softening: values below peak / BETA are shown nearly linearly (Lupton et al. 2004). */
const BETA = 30;

export function zonePsfOf(report: Report): ZonePsfSection | null {
  const z = report.zonePsf as Partial<ZonePsfSection> | undefined;
  return z && z.schema === 'skyloupe.zonepsf/1' && Array.isArray(z.zones) ? (z as ZonePsfSection) : null;
}

/** The stack in display orientation (rows flipped when the last stored row is shown on top). */
export function displayedStack(z: ZonePsf, side: number, flipY: boolean): Float64Array | null {
  if (!z.ppm) return null;
  const out = new Float64Array(side * side);
  for (let r = 0; r < side; r++) {
    const src = flipY ? side - 1 - r : r;
    for (let c = 0; c < side; c++) out[r * side + c] = z.ppm[src * side + c];
  }
  return out;
}

function stretch(v: number, peak: number): number {
  return Math.asinh((BETA * Math.max(0, v)) / peak) / Math.asinh(BETA);
}

/** Words under a stack: stars, FWHM, HFD, ellipticity, the same names as everywhere. */
export function zoneWords(z: ZonePsf): [string, string] {
  if (!z.ppm) return [`${z.clean} clean star${z.clean === 1 ? '' : 's'}`, 'no stack'];
  const stars = z.stacked === z.clean ? `${z.stacked} star${z.stacked === 1 ? '' : 's'}` : `${z.stacked} of ${z.clean} stars`;
  return [
    `${stars} · FWHM ${num(z.fwhmPx, 2)}${z.fwhmErrPx !== null ? ` ± ${z.fwhmErrPx < 0.01 ? z.fwhmErrPx.toFixed(3) : num(z.fwhmErrPx, 2)}` : ''} px`,
    `HFD ${num(z.hfdPx, 2)} px · ellipticity ${pm(z.ellipticity, z.ellipticityErr, 3)}`,
  ];
}

const NAME: Record<string, string> = {
  'top-left': 'Top left', top: 'Top', 'top-right': 'Top right', left: 'Left', centre: 'Centre', right: 'Right',
  'bottom-left': 'Bottom left', bottom: 'Bottom', 'bottom-right': 'Bottom right',
};

export function zonePsfSvg(report: Report, opts: ZonePsfOptions): string {
  const { theme } = opts;
  const width = opts.width ?? 900;
  const id = opts.id ?? 'zpsf';
  const label = 'Stacked stars per zone';
  const zp = zonePsfOf(report);
  if (!zp || !zp.zones.some((z) => z.ppm)) return emptyFigure(width, 300, label, 'no clean stars to stack in this frame', theme);
  const flipY = report.frame.display?.topRow === 'last';
  const side = zp.side;
  const gap = 16;
  const keyW = 120;
  const words = 40;
  let cell = Math.floor((width - keyW - 4 * gap) / zp.cols);
  if (opts.maxHeight) cell = Math.min(cell, Math.floor((opts.maxHeight - 58 - (zp.rows + 1) * gap) / zp.rows - words - 16));
  cell = Math.max(cell, 90);
  const k = cell / side; // screen px per stack px
  // a column is as wide as the words beneath its square (11 px text, about 6.3 px a character)
  const colW = Math.max(cell, Math.max(...zp.zones.map((z) => Math.max(...zoneWords(z).map((w) => w.length)))) * 6.3);
  const figW = gap * (zp.cols + 1) + zp.cols * colW + keyW;
  const notes = wrapWords(`Each zone's clean stars aligned on their centres and averaged, on one brightness scale; each square is ${num(side * zp.pixelScale, 0)} × ${num(side * zp.pixelScale, 0)} frame px. Lines at ${PSF_CONTOURS.map((c) => `${Math.round(c * 100)} %`).join(', ')} of each stack's own peak: the ${Math.round(PSF_CONTOURS[0] * 100)} % line traces the FWHM.${opts.interactive ? ' Click a zone for its stars.' : ''}${zp.note ? ` Note: ${zp.note}.` : ''}`, Math.floor((figW - 2 * gap) / 6.2));
  const head = 30 + notes.length * 14;
  const height = head + zp.rows * (cell + words + 16 + gap) + gap;
  const peak = Math.max(...zp.zones.map((z) => (z.ppm ? Math.max(...z.ppm) : 0)), 1);
  let out = svgOpen(figW, height, label, theme, 'zone-psf-svg');
  out = out.replace('<svg ', `<svg data-side="${side}" data-peak="${peak}" `);
  out += text(gap, 22, label, theme, { size: 15, weight: '600' });
  notes.forEach((l, i) => { out += text(gap, 40 + i * 14, l, theme, { size: 11, fill: theme.muted, cls: 'zone-psf-note' }); });
  for (const z of zp.zones) {
    const drow = flipY ? zp.rows - 1 - z.row : z.row;
    const X = gap + z.col * (colW + gap);
    const Y = head + gap + drow * (cell + words + 16 + gap);
    out += `<g class="zone-psf" data-zone="${esc(z.name)}" data-col="${z.col}" data-row="${z.row}" data-stars="${z.stacked}" tabindex="0" role="button" aria-label="${esc(`${NAME[z.name] ?? z.name}: ${zoneWords(z).join(', ')}`)}">`;
    out += text(X, Y - 4, NAME[z.name] ?? z.name, theme, { size: 12, weight: '600' });
    out += `<rect x="${r2(X)}" y="${r2(Y)}" width="${r2(cell)}" height="${r2(cell)}" fill="${theme.ramp(0)}" stroke="none"/>`;
    const img = displayedStack(z, side, flipY);
    if (img) {
      out += '<g shape-rendering="crispEdges">';
      for (let r = 0; r < side; r++) for (let c = 0; c < side; c++) {
        const t = stretch(img[r * side + c], peak);
        if (t <= 0.002) continue;
        out += `<rect x="${r2(X + c * k)}" y="${r2(Y + r * k)}" width="${r2(k + 0.3)}" height="${r2(k + 0.3)}" fill="${theme.ramp(t)}"/>`;
      }
      out += '</g>';
      const own = Math.max(...img);
      if (own > 0) {
        const polys = contours().size([side, side]).thresholds(PSF_CONTOURS.map((f) => f * own))(Array.from(img));
        out += `<g class="psf-contours" fill="none" stroke="${theme.contour}" stroke-width="1">`;
        for (const p of polys) {
          let d = '';
          for (const poly of p.coordinates) for (const ring of poly) {
            d += ring.map(([u, v], i) => `${i ? 'L' : 'M'}${r2(X + u * k)},${r2(Y + v * k)}`).join('') + 'Z';
          }
          if (d) out += `<path d="${d}" data-fraction="${r2(p.value / own)}" stroke-opacity="${p.value / own >= 0.5 ? 0.95 : 0.6}"${p.value / own < 0.5 ? ' stroke-dasharray="3 2"' : ''}/>`;
        }
        out += '</g>';
      }
    } else {
      out += text(X + cell / 2, Y + cell / 2, 'no clean stars', theme, { size: 12, anchor: 'middle', fill: theme.muted });
    }
    // the border last, so the pixels do not cover it
    out += `<rect class="zone-border" x="${r2(X)}" y="${r2(Y)}" width="${r2(cell)}" height="${r2(cell)}" fill="none" stroke="${theme.frame}" stroke-width="1"/>`;
    const [w1, w2] = zoneWords(z);
    out += text(X, Y + cell + 16, w1, theme, { size: 11, cls: 'zone-words' });
    out += text(X, Y + cell + 31, w2, theme, { size: 11, fill: theme.muted, cls: 'zone-words' });
    out += '</g>';
  }
  out += intensityKey(gap * (zp.cols + 1) + zp.cols * colW + 14, head + gap + 20, Math.min(260, height - head - 60), peak, theme, id);
  return out + '</svg>';
}

/** The shared brightness key: light per pixel in parts per thousand of a star's light, on the asinh stretch. */
function intensityKey(x: number, y: number, h: number, peak: number, theme: Theme, id: string): string {
  const steps = 24;
  // stops follow the stretch, so the bar shows the colours the panels use
  const grad = Array.from({ length: steps + 1 }, (_, i) => `<stop offset="${r2(i / steps)}" stop-color="${theme.ramp(1 - i / steps)}"/>`).join('');
  let out = `<defs><linearGradient id="${id}-key" x1="0" y1="0" x2="0" y2="1">${grad}</linearGradient></defs>`;
  out += text(x, y - 22, 'light per pixel', theme, { size: 11, fill: theme.muted });
  out += text(x, y - 9, '(‰ of the star)', theme, { size: 11, fill: theme.muted });
  out += `<rect x="${r2(x)}" y="${r2(y)}" width="14" height="${r2(h)}" fill="url(#${id}-key)" stroke="${theme.frame}" stroke-width="0.5"/>`;
  for (const f of [1, 0.3, 0.1, 0.03, 0.01]) {
    const ty = y + h * (1 - stretch(f * peak, peak));
    const v = (f * peak) / 1000; // ppm -> per mille
    out += `<line x1="${r2(x + 14)}" x2="${r2(x + 18)}" y1="${r2(ty)}" y2="${r2(ty)}" stroke="${theme.fg}" stroke-width="1"/>`;
    out += text(x + 21, ty + 4, v >= 10 ? num(v, 0) : v >= 1 ? num(v, 1) : num(v, 2), theme, { size: 11 });
  }
  return out;
}

