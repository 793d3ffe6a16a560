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

/** A signed number with its sign always shown ("+3.2", "−1.0"): for changes across the frame. */
export function fmtSigned(v: number | null | undefined, digits = 1): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '?';
  const s = fmt(Math.abs(v), digits);
  return Number(s) === 0 ? s : `${v < 0 ? '−' : '+'}${s}`;
}

/**
 * One meaning of a tilt for every command (DESIGN.md, report contract): acrossFrameUm is the change
 * of best-focus position across the width (right minus left, +x) and the height (+y minus y = 0),
 * µm, positions larger = sensor farther from the lens. Where best focus is lower, that part of the
 * sensor needs the sensor nearer the lens to be sharp: it sits too far from the lens and must come
 * toward it. Best focus falls fastest along minus the gradient (ax / W, ay / H) per pixel.
 * Returns the side that must come toward the lens and the opposite one, as displayed.
 */
export function tiltSides(g: Geometry, across: { x: number; y: number }): { toward: string; away: string; downhillDeg: number } {
  const downhillDeg = (Math.atan2(-across.y / g.height, -across.x / g.width) * 180) / Math.PI;
  return { toward: towards(g, downhillDeg), away: towards(g, downhillDeg + 180), downhillDeg };
}

/** "−22.0 ± 0.5 µm from left to right and +11.9 ± 0.5 µm from top to bottom" (the +x and +y directions as displayed). */
export function acrossWords(g: Geometry, across: { x: number | null; y: number | null }, err: { x: number | null; y: number | null }): string {
  const yDown = g.displayTopRow === 'first';
  return `${fmtSigned(across.x, 1)} ± ${fmtErr(err.x)} µm from left to right and ${fmtSigned(across.y, 1)} ± ${fmtErr(err.y)} µm from ${yDown ? 'top to bottom' : 'bottom to top'}`;
}

/**
 * What to do about a tilt, in words shared by the single frame, the focus pair and the series.
 * Signed (a pair or a series): which side must come toward the lens. Unsigned (one frame): the two
 * candidates along the axis, and how to tell them apart.
 */
export function tiltAdvice(g: Geometry, t: { acrossFrameUm: { x: number | null; y: number | null }; axisDeg: number | null; signResolved: boolean }): string {
  const ax = t.acrossFrameUm.x, ay = t.acrossFrameUm.y;
  if (t.signResolved && ax !== null && ay !== null) {
    const s = tiltSides(g, { x: ax, y: ay });
    return `the ${s.toward} side of the sensor must come toward the lens (its stars focus with the sensor nearer the lens), or the ${s.away} side away from it`;
  }
  const a = towards(g, (t.axisDeg ?? 0) + 180), b = towards(g, t.axisDeg ?? 0);
  return `either the ${a} or the ${b} side of the sensor must come toward the lens; one frame cannot tell which (a focus pair or a focus series can)`;
}
