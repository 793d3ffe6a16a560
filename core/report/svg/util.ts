/** Small pure helpers shared by the figures: escaping, numbers, the frame-to-figure mapping, keys. */
import { format } from 'd3-format';
import { scaleLinear } from 'd3-scale';
import type { Report } from '../types.ts';
import type { FieldMap } from '../../field/types.ts';
import type { Diagnosis } from '../../diagnose/types.ts';
import type { Theme } from './theme.ts';

const ESC: Record<string, string> = { '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' };

/** Escape text for XML/HTML content and attribute values. */
export function esc(s: unknown): string {
  return String(s).replace(/[&<>"']/g, (c) => ESC[c]);
}

const f2 = format('.2f');
const f3 = format('.3f');
const f1 = format('.1f');
const g3 = format('.3~g');

/** A number for a label: `digits` decimals, an en dash for null or non-finite. */
export function num(v: number | null | undefined, digits = 2): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '–';
  return digits === 1 ? f1(v) : digits === 3 ? f3(v) : digits === 0 ? String(Math.round(v)) : digits === -1 ? g3(v) : f2(v);
}

/** Value with its 1-sigma uncertainty, e.g. "2.31 ± 0.05". */
export function pm(v: number | null | undefined, err: number | null | undefined, digits = 2): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '–';
  return err === null || err === undefined || !Number.isFinite(err) ? num(v, digits) : `${num(v, digits)} ± ${num(err, digits)}`;
}

/** Round to 2 decimals for coordinates in the markup (keeps files small). */
export const r2 = (v: number) => Math.round(v * 100) / 100;

/** The field map of a report, when the report carries one of the known schema. */
export function fieldOf(report: Report): FieldMap | null {
  const f = report.field as Partial<FieldMap> | undefined;
  return f && typeof f === 'object' && f.schema === 'skyloupe.field/1' ? (f as FieldMap) : null;
}

/** The diagnosis of a report, when present. */
export function diagnosisOf(report: Report): Diagnosis | null {
  const d = report.diagnosis as Partial<Diagnosis> | undefined;
  return d && typeof d === 'object' && d.tilt && typeof d.tilt === 'object' ? (d as Diagnosis) : null;
}

/**
 * Maps frame coordinates (x = column, y = stored row, pixel centres at integers) to figure
 * coordinates: the frame spans [ox, ox + W*s] x [oy, oy + H*s], displayed top row first
 * (FITS frames are shown with the last stored row at the top, report.frame.display).
 */
export interface FrameMap {
  width: number;
  height: number;
  s: number;
  ox: number;
  oy: number;
  flipY: boolean;
  x(x: number): number;
  y(y: number): number;
  /** A storage angle (degrees from +x toward +y) as an SVG angle (y down). */
  angle(deg: number): number;
}

export function frameMap(report: Pick<Report, 'frame'>, s: number, ox = 0, oy = 0): FrameMap {
  const { width, height } = report.frame;
  const flipY = report.frame.display?.topRow === 'last';
  return {
    width, height, s, ox, oy, flipY,
    x: (x) => ox + (x + 0.5) * s,
    y: flipY ? (y) => oy + (height - 0.5 - y) * s : (y) => oy + (y + 0.5) * s,
    angle: flipY ? (d) => -d : (d) => d,
  };
}

/** Top margin of a figure for its title line (px). */
export const TITLE_H = 34;

/**
 * The frame drawn at the left of a figure `width` wide, under its title, with a key keyW wide
 * at its right (10 px margins): the map, and the plot's drawn width and height.
 */
export function frameBesideKey(report: Pick<Report, 'frame'>, width: number, keyW: number): { m: FrameMap; plotW: number; plotH: number } {
  const s = (width - keyW - 20) / report.frame.width;
  return { m: frameMap(report, s, 10, TITLE_H), plotW: report.frame.width * s, plotH: report.frame.height * s };
}

/** An <svg> element with a title and a background; `display` sets the drawn size when it differs from the viewBox. */
export function svgOpen(w: number, h: number, label: string, theme: Theme, id?: string, display?: { width: number; height: number }): string {
  const dw = display?.width ?? w;
  const dh = display?.height ?? h;
  return `<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" viewBox="0 0 ${r2(w)} ${r2(h)}" width="${r2(dw)}" height="${r2(dh)}" role="img" aria-label="${esc(label)}"${id ? ` id="${esc(id)}"` : ''} font-family="${esc(theme.font)}" data-theme="${theme.name}">`
    + `<title>${esc(label)}</title><rect x="0" y="0" width="${r2(w)}" height="${r2(h)}" fill="${theme.bg}"/>`;
}

export function text(x: number, y: number, s: string, theme: Theme, opts: { size?: number; anchor?: 'start' | 'middle' | 'end'; fill?: string; weight?: string; cls?: string } = {}): string {
  return `<text x="${r2(x)}" y="${r2(y)}" font-size="${opts.size ?? 12}" fill="${opts.fill ?? theme.fg}" text-anchor="${opts.anchor ?? 'start'}"${opts.weight ? ` font-weight="${opts.weight}"` : ''}${opts.cls ? ` class="${opts.cls}"` : ''}>${esc(s)}</text>`;
}

/** Words wrapped into lines of at most `chars` characters (a longer word gets its own line). */
export function wrapWords(s: string, chars: number): string[] {
  const out: string[] = [];
  let cur = '';
  for (const w of s.split(/\s+/).filter(Boolean)) {
    if (cur && (cur + ' ' + w).length > chars) { out.push(cur); cur = w; } else cur = cur ? `${cur} ${w}` : w;
  }
  if (cur) out.push(cur);
  return out;
}

/** A message in place of a figure the data cannot support. */
export function emptyFigure(w: number, h: number, label: string, message: string, theme: Theme): string {
  return svgOpen(w, h, label, theme) + text(w / 2, h / 2, message, theme, { anchor: 'middle', fill: theme.muted, size: 14, cls: 'figure-note' }) + '</svg>';
}

/** A vertical colour key: the ramp over [lo, hi] with a few round ticks. */
export function colorKey(x: number, y: number, h: number, lo: number, hi: number, label: string, theme: Theme, id: string): string {
  const steps = 24;
  const grad = Array.from({ length: steps + 1 }, (_, i) => `<stop offset="${r2(i / steps)}" stop-color="${theme.ramp(1 - i / steps)}"/>`).join('');
  const sc = scaleLinear().domain([lo, hi === lo ? lo + 1 : hi]).range([y + h, y]);
  const ticks = sc.ticks(5);
  const fmt = sc.tickFormat(5);
  let out = `<defs><linearGradient id="${id}" x1="0" y1="0" x2="0" y2="1">${grad}</linearGradient></defs>`;
  out += `<rect x="${r2(x)}" y="${r2(y)}" width="14" height="${r2(h)}" fill="url(#${id})" stroke="${theme.frame}" stroke-width="0.5"/>`;
  for (const t of ticks) {
    const ty = sc(t);
    out += `<line x1="${r2(x + 14)}" x2="${r2(x + 18)}" y1="${r2(ty)}" y2="${r2(ty)}" stroke="${theme.fg}" stroke-width="1"/>`;
    out += text(x + 21, ty + 4, fmt(t), theme, { size: 11 });
  }
  out += text(x, y - 8, label, theme, { size: 11, fill: theme.muted });
  return out;
}

/** Elongation a/b from the distortion |e| = (a^2 - b^2)/(a^2 + b^2) (optics.md 1.3: q^2 = (1 - e)/(1 + e)). */
export function elongationFromDistortion(e: number): number {
  const c = Math.min(Math.abs(e), 0.999);
  return Math.sqrt((1 + c) / (1 - c));
}

/** Elongation a/b from the ellipticity 1 - b/a. */
export function elongationFromEllipticity(ell: number): number {
  return 1 / (1 - Math.min(Math.max(ell, 0), 0.999));
}
