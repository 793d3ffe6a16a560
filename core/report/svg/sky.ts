/**
 * The sky: the stretched frame with a marker on every measured star. Saturated stars get a
 * marker of their own (a ring with four ticks, in the "bad" colour): their sizes are not
 * measurements. The part of the frame that holds sky (report.frame.dataRegion) is outlined: a
 * fisheye's image disc as a circle, a mask's cells without sky shaded. With `labels`, the stars
 * matched to the catalogue carry their name or catalogue number.
 */
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
  /** Label the stars matched to the catalogue (report.astrometry.matches). Default false. */
  labels?: boolean;
  /** At most this many labels, brightest catalogue stars first. */
  maxLabels?: number;
}

/** The matched stars to label: brightest first (by catalogue magnitude), at most `max`. */
export function labelledMatches(report: Report, max: number): { star: number; text: string }[] {
  const a = report.astrometry;
  if (!a || !a.solved) return [];
  return a.matches
    .filter((m) => report.stars[m.star])
    .slice()
    .sort((p, q) => (p.magnitude ?? 99) - (q.magnitude ?? 99))
    .slice(0, max)
    .map((m) => ({ star: m.star, text: m.name ? `${m.name} (${m.catalogueId})` : m.catalogueId }));
}

/** Height of the key strip under the frame, in screen px. */
const KEY_PX = 30;

/** One entry of the key under the sky: the mark as drawn, and its words. */
export interface SkyKeyEntry { cls: string; label: string; mark: (x: number, y: number, u: number) => string }

/**
 * The marks the sky figure draws, for its key (extend this list with new marks). With a report,
 * the marks it has: saturated stars, the image circle or the cells without sky, catalogue names.
 */
export function skyKeyEntries(theme: Theme, report?: Report, opts: { labels?: boolean } = {}): SkyKeyEntry[] {
  const extra: SkyKeyEntry[] = [];
  if (report) {
    const saturated = report.stars.filter((st) => st.flags.includes('saturated')).length;
    if (saturated) extra.push({ cls: 'saturated', label: `saturated (${saturated})`, mark: (x, y, u) => saturatedMark(x, y, 4 * u, u, theme) });
    const d = report.frame.dataRegion;
    if (d?.kind === 'circle') extra.push({ cls: 'region-circle', label: 'edge of the image circle', mark: (x, y, u) => `<path d="M${r2(x - 6 * u)},${r2(y + 5 * u)}A${r2(11 * u)},${r2(11 * u)} 0 0 1 ${r2(x + 6 * u)},${r2(y - 5 * u)}" fill="none" stroke="${theme.contour}" stroke-width="${r2(1.5 * u)}" stroke-dasharray="${r2(4 * u)} ${r2(3 * u)}"/>` });
    if (d?.kind === 'mask') extra.push({ cls: 'region-mask', label: 'no sky', mark: (x, y, u) => `<rect x="${r2(x - 5 * u)}" y="${r2(y - 5 * u)}" width="${r2(10 * u)}" height="${r2(10 * u)}" fill="${theme.bg}" fill-opacity="0.55" stroke="${theme.contour}" stroke-opacity="0.5" stroke-width="${r2(u)}"/>` });
    if (opts.labels && labelledMatches(report, 1).length) extra.push({ cls: 'label', label: 'catalogue name', mark: (x, y, u) => text(x, y + 4 * u, 'A', theme, { size: r2(11 * u), anchor: 'middle' }) });
  }
  return [
    { cls: 'star', label: 'star measured and used', mark: (x, y, u) => `<circle cx="${r2(x)}" cy="${r2(y)}" r="${r2(5 * u)}" fill="none" stroke="${theme.star}" stroke-width="${r2(1.2 * u)}"/>` },
    { cls: 'flagged', label: 'set aside (flagged)', mark: (x, y, u) => `<circle cx="${r2(x)}" cy="${r2(y)}" r="${r2(4 * u)}" fill="none" stroke="${theme.flagged}" stroke-width="${r2(u)}" stroke-dasharray="${r2(3 * u)} ${r2(2 * u)}"/>` },
    { cls: 'selected', label: 'selected star', mark: (x, y, u) => `<circle cx="${r2(x)}" cy="${r2(y)}" r="${r2(6 * u)}" fill="none" stroke="${theme.selected}" stroke-width="${r2(2.5 * u)}"/>` },
    ...extra,
  ];
}

/** A saturated star's mark: a solid ring with four ticks pointing out (light spilling over). */
function saturatedMark(x: number, y: number, r: number, w: number, theme: Theme, attrs = ''): string {
  const t = r * 0.6;
  return `<g class="saturated-mark" fill="none" stroke="${theme.bad}" stroke-width="${r2(1.6 * w)}"><circle${attrs} cx="${r2(x)}" cy="${r2(y)}" r="${r2(r)}"/>`
    + `<path d="M${r2(x - r - t)},${r2(y)}h${r2(t)}M${r2(x + r)},${r2(y)}h${r2(t)}M${r2(x)},${r2(y - r - t)}v${r2(t)}M${r2(x)},${r2(y + r)}v${r2(t)}"/></g>`;
}

/** Height of one extra row of the key, screen px. */
const KEY_ROW_PX = 20;

/** Where each key entry goes: left to right, a new row when the next would reach the scale bar's place. */
function keyLayout(entries: SkyKeyEntry[], W: number, u: number): { x: number; row: number }[] {
  let x = 8 * u, row = 0;
  return entries.map((e) => {
    const w = (24 + 6.6 * e.label.length) * u;
    if (x > 8 * u && x + w > W * 0.55) { row++; x = 8 * u; }
    const at = { x, row };
    x += w;
    return at;
  });
}

/** Extra height the key takes beyond its first row, figure units. */
function keyExtra(report: Report, theme: Theme, u: number, opts: { labels?: boolean }): number {
  const lay = keyLayout(skyKeyEntries(theme, report, opts), report.frame.width, u);
  return (lay.length ? lay[lay.length - 1].row : 0) * KEY_ROW_PX * u;
}

/**
 * The key strip under the frame: the marks with their words and a scale bar for zoom `k`.
 * `u` is figure units per screen px. The page redraws it when the zoom changes.
 */
export function skyKey(report: Report, theme: Theme, u: number, k = 1, opts: { labels?: boolean } = {}): string {
  const W = report.frame.width;
  const H = report.frame.height;
  const y = H + (KEY_PX / 2 + 4) * u;
  let out = `<g class="sky-key" data-zoom="${r2(k)}">`;
  const entries = skyKeyEntries(theme, report, opts);
  const lay = keyLayout(entries, W, u);
  let right = 8 * u;
  entries.forEach((e, i) => {
    const { x, row } = lay[i];
    const yy = y + row * KEY_ROW_PX * u;
    out += `<g class="key-entry" data-mark="${e.cls}">${e.mark(x + 6 * u, yy - 4 * u, u)}${text(x + 16 * u, yy, e.label, theme, { size: r2(12 * u), fill: theme.fg })}</g>`;
    if (row === 0) right = x + (24 + 6.6 * e.label.length) * u;
  });
  const barX = Math.max(right + 12 * u, W * 0.55);
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
  const { clean, flagged: setAside } = markedStars(report, opts.maxMarkers ?? 4000);
  const isSaturated = (i: number) => report.stars[i].flags.includes('saturated');
  const saturated = setAside.filter(isSaturated);
  const flagged = setAside.filter((i) => !isSaturated(i));
  const region = report.frame.dataRegion;
  const labels = opts.labels ? labelledMatches(report, opts.maxLabels ?? 300) : [];
  const u = 1 / s;
  const HK = H + (KEY_PX + 8) * u + keyExtra(report, theme, u, { labels: labels.length > 0 });
  let out = svgOpen(W, HK, `Sky: ${report.frame.path}, ${clean.length} clean stars marked`, theme, 'sky-svg', { width, height: HK * s });
  out = out.replace('<svg ', `<svg data-clean-marked="${clean.length}" data-flagged-marked="${flagged.length}" data-saturated-marked="${saturated.length}" data-region="${region?.kind ?? 'full'}" data-labels="${labels.length}" data-frame-width="${W}" preserveAspectRatio="xMidYMid meet" `);
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
  // saturated: sized to the star, drawn apart from the other set-aside stars
  out += `<g class="saturated">`;
  for (const i of saturated) {
    const st = report.stars[i];
    const r = Math.max(1.5 * (Number.isFinite(st.fwhmPx) ? st.fwhmPx : 0), 1.3 * minR);
    out += saturatedMark(m.x(st.x), m.y(st.y), r, 1, theme, ` class="star saturated" data-star="${i}" vector-effect="non-scaling-stroke"`).replace('<path ', '<path vector-effect="non-scaling-stroke" ');
  }
  out += '</g>';
  out += regionOutline(report, m, theme);
  if (labels.length) {
    const size = 11 / s;
    out += `<g class="catalogue-labels" font-size="${r2(size)}" fill="${theme.fg}" stroke="${theme.bg}" stroke-width="${r2(2.5 / s)}" paint-order="stroke">`;
    for (const l of labels) {
      const st = report.stars[l.star];
      out += `<text class="catalogue-label" data-star="${l.star}" x="${r2(m.x(st.x) + 1.2 * minR)}" y="${r2(m.y(st.y) - 1.2 * minR)}">${esc(l.text)}</text>`;
    }
    out += '</g>';
  }
  if (opts.selected !== undefined && opts.selected !== null && report.stars[opts.selected]) {
    const st = report.stars[opts.selected];
    out += `<circle class="selected" cx="${r2(m.x(st.x))}" cy="${r2(m.y(st.y))}" r="${r2(Math.max(3 * st.fwhmPx, 2 * minR))}" fill="none" stroke="${theme.selected}" stroke-width="2" vector-effect="non-scaling-stroke"/>`;
  }
  out += `<rect x="0" y="0" width="${W}" height="${H}" fill="none" stroke="${theme.frame}" stroke-width="1" vector-effect="non-scaling-stroke"/>`;
  out += '</g></g>';
  out += skyKey(report, theme, u, opts.zoom ?? 1, { labels: labels.length > 0 });
  return out + '</svg>';
}

/** The part of the frame that holds sky: nothing for the whole frame, the image disc, or the cells without sky shaded. */
function regionOutline(report: Report, m: ReturnType<typeof frameMap>, theme: Theme): string {
  const d = report.frame.dataRegion;
  if (!d || d.kind === 'full') return '';
  if (d.kind === 'circle' && d.circle) {
    const c = d.circle;
    return `<circle class="data-region" data-kind="circle" cx="${r2(m.x(c.xPx))}" cy="${r2(m.y(c.yPx))}" r="${r2(c.radiusPx * m.s)}" fill="none" stroke="${theme.contour}" stroke-opacity="0.8" stroke-width="1.5" stroke-dasharray="8 5" vector-effect="non-scaling-stroke"/>`;
  }
  if (d.kind === 'mask' && d.mask) {
    const k = d.mask;
    let path = '';
    for (let r = 0; r < k.rows; r++) for (let c = 0; c < k.cols; c++) {
      if (k.cells[r * k.cols + c] !== '0') continue;
      const x0 = c * k.cellPx, y0 = r * k.cellPx;
      const x1 = Math.min(report.frame.width, x0 + k.cellPx), y1 = Math.min(report.frame.height, y0 + k.cellPx);
      // frame pixel edges -0.5 .. +0.5 about the centres; flipY swaps which edge is on top
      const ya = m.y(y0 - 0.5), yb = m.y(y1 - 0.5);
      path += `M${r2(m.x(x0 - 0.5))},${r2(Math.min(ya, yb))}H${r2(m.x(x1 - 0.5))}V${r2(Math.max(ya, yb))}H${r2(m.x(x0 - 0.5))}Z`;
    }
    return path ? `<path class="data-region" data-kind="mask" d="${path}" fill="${theme.bg}" fill-opacity="0.55" stroke="${theme.contour}" stroke-opacity="0.5" stroke-width="1" vector-effect="non-scaling-stroke"/>` : '';
  }
  return '';
}
