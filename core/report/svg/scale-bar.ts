/** Scale bars: a round length of frame pixels (and its angle on the sky when the plate scale is known). */
import type { Theme } from './theme.ts';
import { num, r2, text } from './util.ts';

/** The largest 1, 2 or 5 x 10^n not above `max` (common practice for scale bars); 0 when max <= 0. */
export function roundLength(max: number): number {
  if (!(max > 0) || !Number.isFinite(max)) return 0;
  const p = 10 ** Math.floor(Math.log10(max));
  for (const m of [5, 2, 1]) if (m * p <= max) return m * p;
  return p;
}

/** An angle in arcseconds as words: ″ below 2′, ′ below 2°, else °. */
export function angleWords(arcsec: number): string {
  if (arcsec < 120) return `${num(arcsec, arcsec < 10 ? 1 : 0)}″`;
  if (arcsec < 7200) return `${num(arcsec / 60, arcsec < 600 ? 1 : 0)}′`;
  return `${num(arcsec / 3600, 1)}°`;
}

export interface ScaleBarSpec {
  /** Figure units per frame pixel. */
  unitsPerPx: number;
  /** Longest bar allowed, figure units. */
  maxUnits: number;
  /** Arcseconds per pixel, or null when unknown. */
  plateScale: number | null;
  /** Figure units per screen pixel (text and strokes keep their size on screen). */
  u: number;
}

/**
 * A bar from (x, y) to the right: a round number of frame pixels, labelled in px and, with a
 * plate scale, as an angle on the sky. data-px holds its length in frame pixels.
 */
export function scaleBar(x: number, y: number, spec: ScaleBarSpec, theme: Theme): string {
  const px = roundLength(spec.maxUnits / spec.unitsPerPx);
  if (!px) return '';
  const len = px * spec.unitsPerPx;
  const { u } = spec;
  const label = `${num(px, 0)} px${spec.plateScale ? ` · ${angleWords(px * spec.plateScale)}` : ''}`;
  let out = `<g class="scale-bar" data-px="${px}" data-len="${r2(len)}">`;
  out += `<path d="M${r2(x)} ${r2(y - 4 * u)}V${r2(y)}H${r2(x + len)}V${r2(y - 4 * u)}" fill="none" stroke="${theme.fg}" stroke-width="${r2(1.5 * u)}"/>`;
  out += text(x + len + 6 * u, y, label, theme, { size: r2(12 * u), cls: 'scale-label' });
  return out + '</g>';
}
