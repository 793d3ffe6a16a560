/** Frame geometry: normalised field coordinates and zone names. */
import { usage } from '../errors.ts';

export interface Geometry {
  readonly width: number;
  readonly height: number;
  /** Frame centre in pixel coordinates (pixel centres at integers). */
  readonly cx: number;
  readonly cy: number;
  /** Half-diagonal, px: the unit of normalised field height (corner = 1). */
  readonly scale: number;
  /** Which stored row the display shows at the top (for naming sides). */
  readonly displayTopRow: 'first' | 'last';
  /** The image circle when the sky is a disc (a circular fisheye): then (cx, cy) is its centre and `scale` its radius. */
  readonly circle: { x: number; y: number; r: number } | null;
}

/**
 * The frame's field coordinates. For an image circle (kind 'circle' of the data region) the unit
 * of field height is the disc's radius about its centre, since the frame's corners hold no sky.
 */
export function geometry(width: number, height: number, displayTopRow: 'first' | 'last' = 'first', circle: { xPx: number; yPx: number; radiusPx: number } | null = null): Geometry {
  if (!(Number.isFinite(width) && Number.isFinite(height) && width >= 8 && height >= 8)) {
    throw usage(`frame size ${width} x ${height} is not usable for a field map (need at least 8 x 8 px)`);
  }
  if (circle && circle.radiusPx > 0) {
    return { width, height, cx: circle.xPx, cy: circle.yPx, scale: circle.radiusPx, displayTopRow, circle: { x: circle.xPx, y: circle.yPx, r: circle.radiusPx } };
  }
  return { width, height, cx: (width - 1) / 2, cy: (height - 1) / 2, scale: 0.5 * Math.hypot(width, height), displayTopRow, circle: null };
}

/** Name of a side or corner from the signs of dx, dy (pixel axes), as the frame is displayed. */
export function sideName(g: Geometry, dx: number, dy: number): string {
  const h = dx < 0 ? 'left' : dx > 0 ? 'right' : '';
  const yUp = g.displayTopRow === 'first' ? dy < 0 : dy > 0;
  const v = dy === 0 ? '' : yUp ? 'top' : 'bottom';
  if (h && v) return `${v}-${h}`;
  return h || v || 'centre';
}

export type ZoneClass = 'center' | 'edges' | 'corners';

/** 3x3 zone class of a cell (col, row in 0..2). */
export function zoneClass(col: number, row: number): ZoneClass {
  const mc = col === 1;
  const mr = row === 1;
  if (mc && mr) return 'center';
  if (mc || mr) return 'edges';
  return 'corners';
}
