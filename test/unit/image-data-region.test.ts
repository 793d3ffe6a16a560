/**
 * Where the sky is (core/image/data-region.ts), on frames made here with known geometry: a sky
 * of Poisson-like noise (normal approximation) over a black level with read noise, a fisheye's
 * image disc, a masked band, and vignetting 1 - v (r/R)^2 (the simulator's law, stated here).
 * References: the circle and the vignetting are the ones drawn; the area of a disc is pi r^2 and
 * of a disc clipped by two parallel chords the circular-segment formula (CRC handbook, from memory).
 */
import { describe, expect, it } from 'vitest';
import { circleFraction, findDataRegion, fitCircle, inDataRegion } from '../../core/image/data-region.ts';
import { mulberry32, normal } from '../helpers/rng.ts';

const BLACK = 500;
const READ = 3;

function frame(w: number, h: number, sky: (x: number, y: number) => number | null, seed = 1): Float32Array {
  const rnd = normal(mulberry32(seed));
  const d = new Float32Array(w * h);
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) {
    const s = sky(x, y);
    d[y * w + x] = s === null ? BLACK + READ * rnd() : BLACK + s + Math.sqrt(s + READ * READ) * rnd();
  }
  return d;
}

describe('data region', () => {
  it('a full frame with vignetting (corner illumination 0.5): kind full, falloff read within 0.05', () => {
    const w = 600, h = 400;
    const R = Math.hypot(w, h) / 2;
    const d = frame(w, h, (x, y) => 800 * (1 - 0.5 * ((x - (w - 1) / 2) ** 2 + (y - (h - 1) / 2) ** 2) / (R * R)));
    const r = findDataRegion(d, w, h);
    expect(r.kind).toBe('full');
    expect(r.skyFraction).toBe(1);
    // relative to 0 ADU here (no black region shows the black level): (500 + 400) / (500 + 800)
    expect(r.vignetting!.blackLevelFrom).toBe('zero');
    expect(r.vignetting!.edgeIllumination).toBeCloseTo(900 / 1300, 1);
  });

  it('a fisheye disc clipped top and bottom (radius 0.48 of the width): circle within 0.5 %, sky fraction and vignetting', () => {
    const w = 900, h = 600;
    const cx = 451.3, cy = 297.8, rad = 0.48 * w;
    const d = frame(w, h, (x, y) => {
      const r2 = (x - cx) ** 2 + (y - cy) ** 2;
      return r2 <= rad * rad ? 600 * (1 - 0.45 * r2 / (rad * rad)) : null;
    });
    const r = findDataRegion(d, w, h);
    expect(r.kind).toBe('circle');
    const c = r.circle!;
    expect(Math.abs(c.xPx - cx)).toBeLessThan(0.005 * rad);
    expect(Math.abs(c.yPx - cy)).toBeLessThan(0.005 * rad);
    expect(Math.abs(c.radiusPx / rad - 1)).toBeLessThan(0.005);
    // disc area within the frame: the disc less two circular segments beyond y = 0 and y = h
    const seg = (dist: number) => rad * rad * Math.acos(dist / rad) - dist * Math.sqrt(rad * rad - dist * dist);
    const area = Math.PI * rad * rad - seg(cy + 0.5) - seg(h - 0.5 - cy);
    expect(Math.abs(r.skyFraction - area / (w * h))).toBeLessThan(0.01);
    expect(r.blackLevel).toBeCloseTo(BLACK, -1);
    expect(r.vignetting!.blackLevelFrom).toBe('black region');
    expect(Math.abs(r.vignetting!.edgeIllumination - 0.55)).toBeLessThan(0.05);
    expect(inDataRegion(r, cx, cy)).toBe(true);
    expect(inDataRegion(r, 2, 2)).toBe(false);
    expect(inDataRegion(r, cx + rad - 5, cy, 10)).toBe(false);
  });

  it('a black band that is no circle is a mask; missing (NaN) pixels too', () => {
    const w = 600, h = 400;
    const d = frame(w, h, (x) => (x < 150 ? null : 700));
    const r = findDataRegion(d, w, h);
    expect(r.kind).toBe('mask');
    expect(Math.abs(r.skyFraction - 450 / 600)).toBeLessThan(0.03);
    expect(inDataRegion(r, 50, 200)).toBe(false);
    expect(inDataRegion(r, 400, 200)).toBe(true);
    const n = frame(w, h, () => 700);
    for (let y = 0; y < h; y++) for (let x = 0; x < 100; x++) n[y * w + x] = NaN;
    const m = findDataRegion(n, w, h);
    expect(m.kind).toBe('mask');
    expect(inDataRegion(m, 20, 100)).toBe(false);
  });

  it('a frame that is dark at one side only through vignetting (smooth, no step) stays full', () => {
    const w = 600, h = 400;
    const d = frame(w, h, (x) => 900 * Math.max(0.02, 1 - x / 620));
    expect(findDataRegion(d, w, h).kind).toBe('full');
  });

  it('Kasa fit: exact for points on a circle; circleFraction: pi r^2 for a disc inside the frame', () => {
    const xs: number[] = [];
    const ys: number[] = [];
    for (let k = 0; k < 40; k++) { xs.push(300 + 123 * Math.cos(k * 0.1)); ys.push(-50 + 123 * Math.sin(k * 0.1)); }
    const c = fitCircle(xs, ys)!;
    expect(c.x).toBeCloseTo(300, 6);
    expect(c.y).toBeCloseTo(-50, 6);
    expect(c.r).toBeCloseTo(123, 6);
    expect(circleFraction(1000, 800, { x: 499.5, y: 399.5, r: 300 })).toBeCloseTo((Math.PI * 300 * 300) / (1000 * 800), 2);
  });
});

describe('data region against the detections', () => {
  it('a dark part holding stars as densely as the rest is dark sky, not black; a black one keeps its stars out', async () => {
    const { confirmRegion } = await import('../../core/image/data-region.ts');
    const w = 600, h = 400;
    const d = frame(w, h, (x) => (x < 150 ? null : 700));
    const r = findDataRegion(d, w, h);
    const rnd = mulberry32(3);
    const stars = Array.from({ length: 200 }, () => ({ x: rnd() * w, y: rnd() * h }));
    expect(confirmRegion(r, stars, w, h, 8).kind).toBe('full');
    const skyOnly = stars.filter((s) => s.x > 170);
    expect(confirmRegion(r, skyOnly, w, h, 8).kind).toBe('mask');
  });
});
