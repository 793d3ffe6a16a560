/** The sky: the stretched frame with a marker on every measured star. */
import type { Report } from '../types.ts';
import type { Preview } from './types.ts';
import type { Theme } from './theme.ts';
import { esc, frameMap, r2, svgOpen, text } from './util.ts';
import { scaleBar } from './scale-bar.ts';

export interface SkyOptions {
  theme: Theme;
  preview?: Preview | null;
  /** Width the figure is drawn at, px (marker sizes are chosen for it). */
  width?: number;
  /** At most this many markers (clean stars first, by signal-to-noise). */
  maxMarkers?: number;
  selected?: number | null;
  /** Zoom factor of the picture (the page's zoom; 1 = whole frame): the scale bar follows it. */
  zoom?: number;
}

/** Height of the key strip under the frame, in screen px. */
const KEY_PX = 30;

/** One entry of the key under the sky: the mark as drawn, and its words. */
export interface SkyKeyEntry { cls: string; label: string; mark: (x: number, y: number, u: number) => string }

/** The marks the sky figure draws, for its key (extend this list with new marks). */
export function skyKeyEntries(theme: Theme): SkyKeyEntry[] {
  return [
    { cls: 'star', label: 'star measured and used', mark: (x, y, u) => `<circle cx="${r2(x)}" cy="${r2(y)}" r="${r2(5 * u)}" fill="none" stroke="${theme.star}" stroke-width="${r2(1.2 * u)}"/>` },
    { cls: 'flagged', label: 'set aside (flagged)', mark: (x, y, u) => `<circle cx="${r2(x)}" cy="${r2(y)}" r="${r2(4 * u)}" fill="none" stroke="${theme.flagged}" stroke-width="${r2(u)}" stroke-dasharray="${r2(3 * u)} ${r2(2 * u)}"/>` },
    { cls: 'selected', label: 'selected star', mark: (x, y, u) => `<circle cx="${r2(x)}" cy="${r2(y)}" r="${r2(6 * u)}" fill="none" stroke="${theme.selected}" stroke-width="${r2(2.5 * u)}"/>` },
  ];
}

/**
 * The key strip under the frame: the marks with their words and a scale bar for zoom `k`.
 * `u` is figure units per screen px. The page redraws it when the zoom changes.
 */
export function skyKey(report: Report, theme: Theme, u: number, k = 1): string {
  const W = report.frame.width;
  const H = report.frame.height;
  const y = H + (KEY_PX / 2 + 4) * u;
  let out = `<g class="sky-key" data-zoom="${r2(k)}">`;
  let x = 8 * u;
  for (const e of skyKeyEntries(theme)) {
    out += `<g class="key-entry" data-mark="${e.cls}">${e.mark(x + 6 * u, y - 4 * u, u)}${text(x + 16 * u, y, e.label, theme, { size: r2(12 * u), fill: theme.fg })}</g>`;
    x += (24 + 6.6 * e.label.length) * u;
  }
  const barX = Math.max(x + 12 * u, W * 0.55);
  out += scaleBar(barX, y, { unitsPerPx: k, maxUnits: Math.min(W * 0.25, W - barX - 110 * u), plateScale: report.frame.optics.plateScaleArcsecPerPx, u }, theme);
  return out + '</g>';
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
  const u = 1 / s;
  const HK = H + (KEY_PX + 8) * u;
  let out = svgOpen(W, HK, `Sky: ${report.frame.path}, ${clean.length} clean stars marked`, theme, 'sky-svg', { width, height: HK * s });
  out = out.replace('<svg ', `<svg data-clean-marked="${clean.length}" data-flagged-marked="${flagged.length}" data-frame-width="${W}" preserveAspectRatio="xMidYMid meet" `);
  // the zoomed picture stays inside the frame's rectangle, above the key
  out += `<defs>${RED_FILTER}<clipPath id="sl-sky-clip"><rect x="0" y="0" width="${W}" height="${H}"/></clipPath></defs>`;
  out += `<g clip-path="url(#sl-sky-clip)"><g class="zoom-layer">`;
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
  out += '</g></g>';
  out += skyKey(report, theme, u, opts.zoom ?? 1);
  return out + '</svg>';
}
