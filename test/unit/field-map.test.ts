import { describe, expect, it } from 'vitest';
import { analyzeField, buildFieldMap } from '../../core/field/map.ts';
import { starColumns } from '../../core/field/quantities.ts';
import { adaptiveDims } from '../../core/field/zones.ts';
import { geometry } from '../../core/field/geometry.ts';
import { evalSurface, fitSurface } from '../../core/field/surface.ts';
import { synthStars, type Scene } from './diagnose-synth.ts';
import type { Star } from '../../core/stars/types.ts';

const base: Omit<Scene, 'seed'> = { width: 1500, height: 1000, nStars: 500, seeingFwhmPx: 2.5, fNumber: 4, pixelSizeUm: 2.4 };

function star(ixx: number, iyy: number, ixy: number, x = 10, y = 10, flags: Star['flags'] = []): Star {
  const T = ixx + iyy;
  return {
    x, y, flux: 1, snr: 100, fwhmPx: 2.5, fwhmMajorPx: 2.5, fwhmMinorPx: 2.5, ellipticity: 0, thetaDeg: 0, hfdPx: 2.5,
    coma: { x: 0, y: 0 }, flags, model: 'gaussian', moffatBeta: null,
    moments: { ixx, iyy, ixy, e1: (ixx - iyy) / T, e2: (2 * ixy) / T },
    err: { x: 0.01, y: 0.01, fwhmPx: 0.01, ellipticity: 0.01, thetaDeg: 1, hfdPx: 0.01, e1: 0.02, e2: 0.02 },
  };
}

describe('per-star quantities', () => {
  it('distortion components follow optics.md 8 check value (Ixx 5, Iyy 3, Ixy 1 -> e = (0.25, 0.25))', () => {
    const c = starColumns([star(5, 3, 1)]);
    expect(c.e1[0]).toBeCloseTo(0.25, 12);
    expect(c.e2[0]).toBeCloseTo(0.25, 12);
    expect(c.T[0]).toBe(8);
  });

  it('uses only clean stars (flags empty) with positive-definite moments', () => {
    const c = starColumns([star(2, 2, 0), star(2, 2, 0, 5, 5, ['saturated']), star(1, 1, 2), star(NaN, 1, 0)]);
    expect(c.n).toBe(1);
  });
});

describe('zones', () => {
  it('averages e as vectors: round noisy stars give |mean e| near 0 while mean |e| is the Rayleigh value s_e sqrt(pi/2) (optics.md 1.6)', () => {
    const stars = synthStars({ ...base, snr: [50, 50], nStars: 900, seed: 11 });
    const fa = analyzeField(stars, { width: base.width, height: base.height });
    const centre = fa.map.zones.cells.find((z) => z.zone === 'center')!;
    const members = stars.filter((s) => s.x >= centre.bounds.x0 && s.x < centre.bounds.x1 && s.y >= centre.bounds.y0 && s.y < centre.bounds.y1);
    const meanAbs = members.reduce((a, s) => a + Math.hypot(s.moments.e1, s.moments.e2), 0) / members.length;
    // sigma(e_i) = 2/nu = 0.04 per component -> mean |e| = 0.04 sqrt(pi/2) = 0.0501 (optics.md 8: nu = 50 gives 0.050).
    expect(meanAbs).toBeGreaterThan(0.045);
    expect(meanAbs).toBeLessThan(0.056);
    expect(centre.eMag!).toBeLessThan(4 * 0.04 / Math.sqrt(members.length) * 1.5);
  });

  it('3x3 names follow the display (first stored row on top) and the grids hold every star', () => {
    const stars = synthStars({ ...base, seed: 12 });
    const map = buildFieldMap(stars, { width: base.width, height: base.height, displayTopRow: 'first' });
    expect(map.zones.cells[0].name).toBe('top-left');
    expect(map.zones.cells[8].name).toBe('bottom-right');
    expect(map.zones.cells[4].zone).toBe('center');
    expect(map.zones.cells.reduce((s, z) => s + z.n, 0)).toBe(map.starsUsed);
    expect(map.grid.cells.reduce((s, z) => s + z.n, 0)).toBe(map.starsUsed);
    const flipped = buildFieldMap(stars, { width: base.width, height: base.height, displayTopRow: 'last' });
    expect(flipped.zones.cells[0].name).toBe('bottom-left');
  });

  it('adaptive grid keeps about 25 stars a cell, 3 to 12 a side, following the frame aspect', () => {
    const g = geometry(1500, 1000);
    const small = adaptiveDims(100, g);
    expect(small.rows).toBe(3);
    expect(small.cols).toBeGreaterThanOrEqual(3);
    expect(small.cols).toBeLessThanOrEqual(4);
    const d = adaptiveDims(2400, g);
    expect(d.cols * d.rows).toBeGreaterThan(80);
    expect(d.cols * d.rows).toBeLessThan(120);
    expect(d.cols).toBeGreaterThan(d.rows);
    expect(adaptiveDims(1e6, g)).toEqual({ cols: 12, rows: 12 });
  });

  it('map is plain JSON (round-trips unchanged)', () => {
    const map = buildFieldMap(synthStars({ ...base, nStars: 200, seed: 13 }), { width: base.width, height: base.height });
    const text = JSON.stringify(map);
    expect(JSON.stringify(JSON.parse(text))).toBe(text);
    expect(text).not.toMatch(/NaN|Infinity/);
  });
});

describe('surfaces', () => {
  it('recovers a noise-free quadratic exactly', () => {
    const g = geometry(1000, 800);
    const n = 300;
    const xs = Float64Array.from({ length: n }, (_, i) => (i * 37) % 1000);
    const ys = Float64Array.from({ length: n }, (_, i) => (i * 53) % 800);
    const f = (x: number, y: number) => 2 + 0.001 * x - 0.002 * y + 1e-6 * x * x + 3e-6 * x * y;
    const v = Float64Array.from(xs, (x, i) => f(x, ys[i]));
    const s = fitSurface(g, xs, ys, v, new Float64Array(n).fill(0.01), 'test', '1', 2)!;
    for (const [x, y] of [[0, 0], [500, 400], [999, 799], [123, 700]]) expect(evalSurface(s, x, y)).toBeCloseTo(f(x, y), 8);
    expect(s.samples.values.length).toBe(s.samples.cols * s.samples.rows);
  });
});

describe('optical centre', () => {
  it('is the frame centre, marked as assumed, when no pattern locates it', () => {
    const map = buildFieldMap(synthStars({ ...base, seed: 14 }), { width: base.width, height: base.height });
    expect(map.centre.source).toBe('frame-centre');
    expect(map.centre.errX).toBeNull();
  });

  it('is found from an off-centre astigmatism pattern within its errors', () => {
    const oc = { x: 900, y: 420 };
    const map = buildFieldMap(synthStars({ ...base, astigUm: 40, defocusUm: 10, opticalCentre: oc, seed: 15 }), { width: base.width, height: base.height });
    expect(map.centre.source).toMatch(/spin2/);
    expect(Math.abs(map.centre.x - oc.x)).toBeLessThan(Math.max(4 * (map.centre.errX ?? 0), 15));
    expect(Math.abs(map.centre.y - oc.y)).toBeLessThan(Math.max(4 * (map.centre.errY ?? 0), 15));
    // Generator: D = (vR - vT) with aR = (delta - ast/2)/(2N): delta, ast > 0 -> tangential (Re A < 0).
    expect(map.spin2!.a.re).toBeLessThan(0);
  });

  it('is found from a decentred coma pattern', () => {
    const cc = { x: 500, y: 650 };
    const map = buildFieldMap(synthStars({ ...base, comaPx: 2.5, comaCentre: cc, seed: 16 }), { width: base.width, height: base.height });
    expect(map.spin1!.centrePx).not.toBeNull();
    expect(Math.hypot(map.spin1!.centrePx!.x - cc.x, map.spin1!.centrePx!.y - cc.y)).toBeLessThan(0.02 * Math.hypot(1500, 1000));
    // Generator's S = 2.5 px at unit field height: the fit reads the geometric coma length.
    expect(map.spin1!.alpha.re).toBeGreaterThan(2.5 * 0.9);
    expect(map.spin1!.alpha.re).toBeLessThan(2.5 * 1.1);
  });
});
