/**
 * Colours of the figures. Colours are SVG presentation attributes (never style attributes), so a
 * figure looks the same in the page (strict CSP), in a PNG export and in the HTML report.
 * The night theme uses red only (no green or blue light), for dark-adapted eyes at the telescope.
 */
import { interpolateViridis } from 'd3-scale-chromatic';

export interface Theme {
  name: 'day' | 'night' | 'print';
  bg: string;
  panel: string;
  fg: string;
  muted: string;
  grid: string;
  frame: string;
  star: string;
  flagged: string;
  selected: string;
  vector: string;
  zoneVector: string;
  contour: string;
  good: string;
  bad: string;
  /** Heat-map colour for t in 0..1 (low to high). */
  ramp: (t: number) => string;
  /** Tint the grey sky picture red. */
  redImage: boolean;
  font: string;
}

const FONT = 'system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif';

export const DAY: Theme = {
  name: 'day', bg: '#101418', panel: '#182028', fg: '#e8edf2', muted: '#9aa7b4', grid: '#3a4654', frame: '#c8d2dc',
  star: '#4fd1c5', flagged: '#f6ad55', selected: '#ffe66d', vector: '#90cdf4', zoneVector: '#ffe66d', contour: '#ffffff',
  good: '#68d391', bad: '#fc8181', ramp: interpolateViridis, redImage: false, font: FONT,
};

/** Deep red on black: brightness steps only, no hue changes. */
function redRamp(t: number): string {
  const v = Math.round(28 + 200 * Math.max(0, Math.min(1, t)));
  return `rgb(${v},0,0)`;
}

export const NIGHT: Theme = {
  name: 'night', bg: '#000000', panel: '#0a0000', fg: '#d02818', muted: '#8a1a10', grid: '#3a0a06', frame: '#a02014',
  star: '#e03020', flagged: '#701810', selected: '#ff4030', vector: '#b02418', zoneVector: '#ff4030', contour: '#ff5040',
  good: '#e03020', bad: '#ff4030', ramp: redRamp, redImage: true, font: FONT,
};

export const PRINT: Theme = {
  name: 'print', bg: '#ffffff', panel: '#f4f6f8', fg: '#111418', muted: '#505a66', grid: '#c8ced6', frame: '#222a33',
  star: '#0b7285', flagged: '#c05621', selected: '#d6336c', vector: '#1c5d99', zoneVector: '#c92a2a', contour: '#ffffff',
  good: '#2b8a3e', bad: '#c92a2a', ramp: interpolateViridis, redImage: false, font: FONT,
};

export function themeByName(name: string | undefined): Theme {
  return name === 'night' ? NIGHT : name === 'print' ? PRINT : DAY;
}
