/** The sky: the stretched frame with a marker on every measured star. */
import type { Report } from '../types.ts';
import type { Preview } from './types.ts';
import type { Theme } from './theme.ts';
import { esc, frameMap, r2, svgOpen } from './util.ts';

export interface SkyOptions {
  theme: Theme;
  preview?: Preview | null;
  /** Width the figure is drawn at, px (marker sizes are chosen for it). */
  width?: number;
  /** At most this many markers (clean stars first, by signal-to-noise). */
  maxMarkers?: number;
  selected?: number | null;
}

/** Indices of the stars to mark: clean stars by falling SNR, then flagged ones, at most `max`. */
export function markedStars(report: Report, max: number): { clean: number[]; flagged: number[] } {
  const clean: number[] = [];
  const flagged: number[] = [];
  report.stars.forEach((s, i) => (s.flags.length === 0 ? clean : flagged).push(i));
  const bySnr = (a: number, b: number) => report.stars[b].snr - report.stars[a].snr;
  clean.sort(bySnr);
  flagged.sort(bySnr);
  const c = clean.slice(0, max);
  return { clean: c, flagged: flagged.slice(0, Math.max(0, max - c.length)) };
}

/** A red-only view of the grey picture (luminance into the red channel), for night mode. */
export const RED_FILTER = '<filter id="sl-red" color-interpolation-filters="sRGB"><feColorMatrix type="matrix" values="0.8 0 0 0 0  0 0 0 0 0  0 0 0 0 0  0 0 0 1 0"/></filter>';

export function skySvg(report: Report, opts: SkyOptions): string {
  const { theme } = opts;
  const W = report.frame.width;
  const H = report.frame.height;
  const width = opts.width ?? 1000;
  const s = width / W;
  const m = frameMap(report, 1);
  const minR = 5 / s;
  const { clean, flagged } = markedStars(report, opts.maxMarkers ?? 4000);
  let out = svgOpen(W, H, `Sky: ${report.frame.path}, ${clean.length} clean stars marked`, theme, 'sky-svg', { width, height: H * s });
  out = out.replace('<svg ', `<svg data-clean-marked="${clean.length}" data-flagged-marked="${flagged.length}" preserveAspectRatio="xMidYMid meet" `);
  out += `<defs>${RED_FILTER}</defs><g class="zoom-layer">`;
  if (opts.preview) {
    out += `<image href="${esc(opts.preview.href)}" x="0" y="0" width="${W}" height="${H}" preserveAspectRatio="none"${theme.redImage ? ' filter="url(#sl-red)"' : ''}/>`;
  } else {
    out += `<rect x="0" y="0" width="${W}" height="${H}" fill="${theme.panel}"/>`;
  }
  out += `<g class="stars" fill="none" stroke="${theme.star}" stroke-width="1.2">`;
  for (const i of clean) {
    const st = report.stars[i];
    const r = Math.max(1.5 * (Number.isFinite(st.fwhmPx) ? st.fwhmPx : 0), minR);
    out += `<circle class="star" data-star="${i}" cx="${r2(m.x(st.x))}" cy="${r2(m.y(st.y))}" r="${r2(r)}" vector-effect="non-scaling-stroke"/>`;
  }
  out += `</g><g class="flagged" fill="none" stroke="${theme.flagged}" stroke-width="1" stroke-dasharray="3 2">`;
  for (const i of flagged) {
    const st = report.stars[i];
    out += `<circle class="star flagged" data-star="${i}" cx="${r2(m.x(st.x))}" cy="${r2(m.y(st.y))}" r="${r2(minR * 0.8)}" vector-effect="non-scaling-stroke"/>`;
  }
  out += '</g>';
  if (opts.selected !== undefined && opts.selected !== null && report.stars[opts.selected]) {
    const st = report.stars[opts.selected];
    out += `<circle class="selected" cx="${r2(m.x(st.x))}" cy="${r2(m.y(st.y))}" r="${r2(Math.max(3 * st.fwhmPx, 2 * minR))}" fill="none" stroke="${theme.selected}" stroke-width="2" vector-effect="non-scaling-stroke"/>`;
  }
  out += `<rect x="0" y="0" width="${W}" height="${H}" fill="none" stroke="${theme.frame}" stroke-width="1" vector-effect="non-scaling-stroke"/>`;
  return out + '</g></svg>';
}
