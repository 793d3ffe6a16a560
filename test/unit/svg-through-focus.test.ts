/**
 * The focus series' figures (core/report/svg/through-focus.ts): pure SVG from plain data. Checked:
 * well-formed markup (every element closed), the panels laid out as the zones lie in the
 * displayed frame, the surface map's range against the surface evaluated by hand (a plane
 * is extreme at two opposite corners), equal-focus lines of a tilt plane run straight across
 * the frame, one pixel scale for every cut-out, and the night theme's red-only light.
 */
import { describe, expect, it } from 'vitest';
import { DAY, NIGHT } from '../../core/report/svg/theme.ts';
import { focusCurvesSvg, focusSurfaceSvg, stampStripSvg, type FocusCurvesData, type SurfaceData } from '../../core/report/svg/through-focus.ts';

/** Every opened element is closed, in order (a small well-formedness check for generated markup). */
function wellFormed(svg: string): boolean {
  const stack: string[] = [];
  for (const m of svg.matchAll(/<(\/?)([a-zA-Z][\w:-]*)([^>]*?)(\/?)>/g)) {
    const [, close, name, , self] = m;
    if (self) continue;
    if (close) { if (stack.pop() !== name) return false; } else stack.push(name);
  }
  return stack.length === 0;
}

const curves: FocusCurvesData = {
  positions: [-60, -30, 0, 30, 60], cols: 3, rows: 2, topRow: 'last', metric: 'HFD', unit: 'µm', band: 20,
  cells: Array.from({ length: 6 }, (_, i) => ({
    col: i % 3, row: Math.floor(i / 3), name: `z${i}`,
    values: [-60, -30, 0, 30, 60].map((p) => Math.sqrt(6 + 0.003 * (p - 5 * i) ** 2)),
    errors: [0.05, 0.05, 0.05, 0.05, 0.05], coef: [6 + 0.003 * 25 * i * i, -0.006 * 5 * i, 0.003] as [number, number, number], p0: 0,
    bestFocus: 5 * i, bestFocusErr: 0.5, outside: false,
  })),
};

describe('focus curves as small multiples', () => {
  it('draws one panel per zone, in the displayed layout (FITS: the first stored row at the bottom)', () => {
    const svg = focusCurvesSvg(curves, { theme: DAY, width: 900 });
    expect(wellFormed(svg)).toBe(true);
    expect((svg.match(/<g class="zone"/g) ?? []).length).toBe(6);
    const yOf = (col: number, row: number) => Number(new RegExp(`data-col="${col}" data-row="${row}"[^>]*><rect x="[\\d.]+" y="([\\d.]+)"`).exec(svg)![1]);
    expect(yOf(0, 0)).toBeGreaterThan(yOf(0, 1));
    const top = focusCurvesSvg({ ...curves, topRow: 'first' }, { theme: DAY });
    const yTop = Number(/data-col="0" data-row="0"[^>]*><rect x="[\d.]+" y="([\d.]+)"/.exec(top)![1]);
    expect(yTop).toBeLessThan(yOf(0, 0));
    expect(svg).toMatch(/data-best="20"/);
  });

  it('says so when there is nothing to draw', () => {
    expect(focusCurvesSvg({ ...curves, cells: [] }, { theme: DAY })).toMatch(/no focus curves/);
  });
});

describe('the best-focus surface map', () => {
  const W = 1200, H = 800, S = 0.5 * Math.hypot(W, H);
  const plane: SurfaceData = { width: W, height: H, topRow: 'first', centrePx: { x: (W - 1) / 2, y: (H - 1) / 2 }, scalePx: S, coef: [10, 12, 0, 0], points: [], unit: 'µm' };

  it('spans the plane\'s values at opposite edges (F = f0 + gx u, u = x / S from the centre)', () => {
    const svg = focusSurfaceSvg(plane, { theme: DAY });
    expect(wellFormed(svg)).toBe(true);
    // The map's cells are sampled at their centres: the range is within one cell of the edges.
    const lo = Number(/data-min="([-\d.]+)"/.exec(svg)![1]), hi = Number(/data-max="([-\d.]+)"/.exec(svg)![1]);
    const edge = 12 * (W / 2) / S;
    expect(lo).toBeLessThan(10 - 0.9 * edge);
    expect(hi).toBeGreaterThan(10 + 0.9 * edge);
    expect(hi - lo).toBeLessThanOrEqual(2 * edge + 1e-9);
  });

  it('draws straight equal-focus lines across a plane tilted along x', () => {
    const svg = focusSurfaceSvg({ ...plane, step: 2 }, { theme: DAY });
    const paths = [...svg.matchAll(/<path d="([^"]+)" data-level="([-\d.]+)"/g)];
    expect(paths.length).toBeGreaterThan(3);
    for (const [, d] of paths) {
      // The part of each line inside the frame is one x (the closed rings also run round the
      // padded grid's border, outside the frame, where the clip hides them).
      const s = (900 - 120 - 20) / W, x0 = 10, y0 = 34, x1 = x0 + W * s, y1 = y0 + H * s;
      const xs = [...d.matchAll(/([\d.]+),([\d.]+)/g)].map((m) => ({ x: Number(m[1]), y: Number(m[2]) })).filter((p) => p.x > x0 + 3 && p.x < x1 - 3 && p.y > y0 + 3 && p.y < y1 - 3);
      const spread = Math.max(...xs.map((p) => p.x)) - Math.min(...xs.map((p) => p.x));
      if (xs.length) expect(spread).toBeLessThan(1);
    }
  });

  it('keeps to red light in the night theme', () => {
    const svg = focusSurfaceSvg({ ...plane, coef: [0, 3, -2, 5] }, { theme: NIGHT });
    expect(svg).not.toMatch(/rgb\(\d+,[1-9]/);
    // The colour ramp of the night theme is red only: rgb(v,0,0).
    expect([...svg.matchAll(/fill="(rgb\([^)]*\))"/g)].every((m) => /rgb\(\d+,0,0\)/.test(m[1]))).toBe(true);
  });
});

describe('one star through focus', () => {
  it('draws every cut-out at one pixel scale, so the discs grow on the page', () => {
    const stamp = (w: number, v: number) => ({ position: v, w, h: w, values: Array.from({ length: w * w }, (_, i) => (i === (w * w) >> 1 ? 100 : 1)) });
    const svg = stampStripSvg({ title: 'centre', topRow: 'first', unit: 'µm', bestFocus: 0, frames: [stamp(9, -30), stamp(5, 0), null, stamp(13, 30)] }, { theme: DAY, width: 900 });
    expect(wellFormed(svg)).toBe(true);
    const sizes = new Set([...svg.matchAll(/<g shape-rendering="crispEdges" data-position="[-\d.]+"><rect x="[\d.]+" y="[\d.]+" width="([\d.]+)"/g)].map((m) => m[1]));
    expect(sizes.size).toBe(1);
    expect(svg).toMatch(/not measured/);
    const night = stampStripSvg({ title: 'c', topRow: 'first', unit: 'µm', bestFocus: null, frames: [stamp(5, 0)] }, { theme: NIGHT });
    expect(night).not.toMatch(/rgb\(\d+,[1-9]/);
  });
});
