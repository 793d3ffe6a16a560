/** Plain-language helpers: directions on the displayed frame and number formatting. */
import type { Geometry } from '../field/geometry.ts';
import { sideName } from '../field/geometry.ts';

export function fmt(v: number | null | undefined, digits = 2): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '?';
  const a = Math.abs(v);
  if (a >= 100) return v.toFixed(0);
  if (a >= 10) return v.toFixed(Math.max(0, digits - 1));
  return v.toFixed(digits);
}

/** An uncertainty: two significant digits below 1, so small errors do not print as 0. */
export function fmtErr(v: number | null | undefined): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '?';
  const a = Math.abs(v);
  if (a === 0) return '0';
  if (a < 1) return v.toPrecision(1 + (a < 0.1 ? 0 : 1)).replace(/\.?0+$/, '');
  return fmt(v, 1);
}

/** The side of the frame a direction (pixel axes, degrees) points to, in display words. */
export function towards(g: Geometry, deg: number): string {
  const r = (deg * Math.PI) / 180;
  const dx = Math.cos(r);
  const dy = Math.sin(r);
  const sx = Math.abs(dx) > 0.38 ? Math.sign(dx) : 0; // 22.5-degree sectors
  const sy = Math.abs(dy) > 0.38 ? Math.sign(dy) : 0;
  return sideName(g, sx, sy);
}

/** "left-right", "top-left to bottom-right" etc. for an axis (mod 180). */
export function axisWords(g: Geometry, deg: number): string {
  const a = towards(g, deg + 180);
  const b = towards(g, deg);
  return `${a} to ${b}`;
}

export function pct(v: number): string {
  return `${Math.round(v * 100)} %`;
}
