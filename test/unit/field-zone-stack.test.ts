import { describe, it, expect } from 'vitest';
import { alignedCutout, lanczos3, lanczos3Taps, stackStars, measureStack, zonePsfs, type StackPlane } from '../../core/field/zone-stack.ts';
import { measureStar } from '../../core/stars/measure.ts';
import type { Star } from '../../core/stars/types.ts';
import { makeProfile, renderAnalyticStar, autoOrder, recordedFwhm, type AnalyticStar } from '../../core/simulate/psf-analytic.ts';
import { Rng } from '../../core/simulate/prng.ts';

/**
 * Recovery tests against the simulator's truth (core/simulate renders each star integrated over
 * its pixels; recordedFwhm is the profile convolved with the pixel box, the size the engine reports).
 */

const SIDE = 420;
const GRID = 5; // 5 x 5 = 25 stars per frame
const SIGMA = 10; // per-pixel noise (ADU), sky already subtracted

interface Shape { model: 'gaussian' | 'moffat'; fwhmMajorPx: number; fwhmMinorPx: number; thetaDeg: number; beta: number }

/** One frame of GRID^2 copies of one PSF at random sub-pixel positions, with Gaussian noise; measured star by star. */
function frame(seed: number, shape: Shape, fluxE: number): { plane: StackPlane; stars: Star[] } {
  const rng = new Rng(seed);
  const data = new Float32Array(SIDE * SIDE);
  const step = SIDE / GRID;
  const truth: AnalyticStar[] = [];
  for (let gy = 0; gy < GRID; gy++) for (let gx = 0; gx < GRID; gx++) {
    const s: AnalyticStar = { ...shape, x: (gx + 0.5) * step + rng.uniform(), y: (gy + 0.5) * step + rng.uniform(), fluxE };
    const p = makeProfile(s);
    renderAnalyticStar(data, SIDE, SIDE, s, p, 1e-7, autoOrder(p), 0);
    truth.push(s);
  }
  for (let i = 0; i < data.length; i++) data[i] += SIGMA * rng.normal();
  const plane: StackPlane = { data, width: SIDE, height: SIDE, scale: 1, offset: 0, skySigma: SIGMA };
  // every star measured as the pipeline does: a stamp about its brightest pixel, the engine's fit
  const R = 14;
  const stars = truth.map((t) => {
    const ox = Math.round(t.x) - R;
    const oy = Math.round(t.y) - R;
    const w = 2 * R + 1;
    const stamp = new Float32Array(w * w);
    for (let y = 0; y < w; y++) for (let x = 0; x < w; x++) stamp[y * w + x] = data[(oy + y) * SIDE + ox + x];
    return measureStar({ stamp, w, h: w, originX: ox, originY: oy, skyVariance: SIGMA * SIGMA, gain: null, saturated: false, sigmaGuessPx: 1.7, flags: [] }, { minSnr: 0 });
  });
  return { plane, stars };
}

const mean = (v: number[]) => v.reduce((a, b) => a + b, 0) / v.length;
const std = (v: number[]) => { const m = mean(v); return Math.sqrt(v.reduce((a, b) => a + (b - m) ** 2, 0) / (v.length - 1)); };

describe('Lanczos-3 resampling (Duchon 1979; Turkowski 1990)', () => {
  it('is the windowed sinc: 1 at 0, 0 at the other integers, taps summing to 1', () => {
    expect(lanczos3(0)).toBe(1);
    for (const k of [1, 2, -1, -2, 3]) expect(Math.abs(lanczos3(k))).toBeLessThan(1e-12);
    // sinc(0.5) sinc(1/6) = (2/pi) * sin(pi/6)/(pi/6) = 0.6079 (the definition, by hand)
    expect(lanczos3(0.5)).toBeCloseTo((2 / Math.PI) * (Math.sin(Math.PI / 6) / (Math.PI / 6)), 12);
    const t = lanczos3Taps(0.3);
    expect(t.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
    // zero shift picks the pixel itself
    Array.from(lanczos3Taps(0)).forEach((w, k) => expect(w).toBeCloseTo(k === 2 ? 1 : 0, 12));
  });

  it('shifts a smooth image by a fraction of a pixel to 5e-3 of its peak', () => {
    // a Gaussian of sigma 2 px sampled at pixel centres, resampled about a non-integer centre
    const W = 40;
    const data = new Float32Array(W * W);
    const x0 = 19.37, y0 = 20.71, s = 2;
    for (let y = 0; y < W; y++) for (let x = 0; x < W; x++) data[y * W + x] = Math.exp(-((x - x0) ** 2 + (y - y0) ** 2) / (2 * s * s));
    const side = 15;
    const out = new Float64Array(side * side);
    expect(alignedCutout({ data, width: W, height: W }, x0, y0, side, out)).toBe(true);
    let worst = 0;
    for (let v = 0; v < side; v++) for (let u = 0; u < side; u++) {
      const dx = u - 7, dy = v - 7;
      worst = Math.max(worst, Math.abs(out[v * side + u] - Math.exp(-(dx * dx + dy * dy) / (2 * s * s))));
    }
    // Lanczos-3 is not exact on a Gaussian of sigma 2 px (its passband droops): a few 1e-3 of the peak
    expect(worst).toBeLessThan(5e-3);
    // a cut-out whose taps leave the plane is refused
    expect(alignedCutout({ data, width: W, height: W }, 3.2, 20, side, out)).toBe(false);
  });
});

describe('zone stack: the noise falls as 1/sqrt(N) (statistics, common practice)', () => {
  const shape: Shape = { model: 'gaussian', fwhmMajorPx: 4.4, fwhmMinorPx: 3.7, thetaDeg: 30, beta: 0 };
  const rec = recordedFwhm({ ...shape, x: 0, y: 0, fluxE: 1 });
  const truthFwhm = Math.sqrt(rec.major * rec.minor);
  const truthEll = 1 - rec.minor / rec.major;
  // faint stars: SNR about 25 each, so one star's size is uncertain by several per cent
  const flux = 25 * SIGMA * Math.sqrt(4 * Math.PI * (4.05 / 2.3548) ** 2);
  const frames = Array.from({ length: 40 }, (_, k) => frame(100 + k, shape, flux));
  const side = 2 * Math.ceil(2.5 * 4.4) + 1;
  const single: { fwhm: number; ell: number }[] = [];
  const stacked: { fwhm: number; ell: number }[] = [];
  for (const f of frames) {
    const idx = f.stars.map((_, i) => i);
    const st = stackStars(f.plane, f.stars, idx, side)!;
    expect(st.used.length).toBe(idx.length);
    const m = measureStack(st.image, st.variance, side, 4);
    stacked.push({ fwhm: m.fwhmPx, ell: m.ellipticity });
    // the same measurement on a "stack" of one star: the single star's error
    for (const i of idx) {
      const one = stackStars(f.plane, f.stars, [i], side)!;
      const s1 = measureStack(one.image, one.variance, side, 4);
      if (Number.isFinite(s1.fwhmPx)) single.push({ fwhm: s1.fwhmPx, ell: s1.ellipticity });
    }
  }
  const N = GRID * GRID;

  it('recovers the recorded FWHM within 2 % and the ellipticity within 0.02 of the truth', () => {
    expect(Math.abs(mean(stacked.map((s) => s.fwhm)) / truthFwhm - 1)).toBeLessThan(0.02);
    expect(Math.abs(mean(stacked.map((s) => s.ell)) - truthEll)).toBeLessThan(0.02);
  });

  it('scatters about sqrt(N) = 5 times less than one star (ratio within 0.7 and 1.4 times that, from 40 stacks)', () => {
    const rFwhm = std(single.map((s) => s.fwhm)) / std(stacked.map((s) => s.fwhm));
    const rEll = std(single.map((s) => s.ell)) / std(stacked.map((s) => s.ell));
    // 40 stacks give the scatter to about +-11 % (chi-square with 39 degrees of freedom)
    expect(rFwhm).toBeGreaterThan(0.7 * Math.sqrt(N));
    expect(rFwhm).toBeLessThan(1.4 * Math.sqrt(N));
    expect(rEll).toBeGreaterThan(0.7 * Math.sqrt(N));
    expect(rEll).toBeLessThan(1.4 * Math.sqrt(N));
  });
});

describe('zone stacks over a frame', () => {
  it('stacks a Moffat field per 3 x 3 zone: beta-3 Moffat FWHM within 3 %, stack normalised, members listed', () => {
    const shape: Shape = { model: 'moffat', fwhmMajorPx: 5, fwhmMinorPx: 5, thetaDeg: 0, beta: 3 };
    const rec = recordedFwhm({ ...shape, x: 0, y: 0, fluxE: 1 });
    const f = frame(7, shape, 40000);
    const z = zonePsfs(f.plane, f.stars, { width: SIDE, height: SIDE, displayTopRow: 'first' });
    expect(z.zones).toHaveLength(9);
    expect(z.zones.reduce((a, b) => a + b.stacked, 0)).toBe(25);
    const centre = z.zones.find((q) => q.name === 'centre')!;
    expect(centre.zone).toBe('center');
    expect(z.zones.find((q) => q.col === 0 && q.row === 0)!.name).toBe('top-left');
    for (const q of z.zones) {
      expect(q.ppm).not.toBeNull();
      const sum = q.ppm!.reduce((a, b) => a + b, 0);
      expect(Math.abs(sum - 1e6)).toBeLessThan(q.ppm!.length); // rounding only
      expect(q.members.length).toBe(q.stacked);
      for (const i of q.members) expect(f.stars[i].x).toBeGreaterThanOrEqual(q.bounds.x0);
      expect(Math.abs(q.fwhmPx! / rec.major - 1)).toBeLessThan(0.03);
      expect(q.ellipticity!).toBeLessThan(0.03);
    }
  });

  it('leaves out flagged stars and says when a zone has none', () => {
    const shape: Shape = { model: 'gaussian', fwhmMajorPx: 3, fwhmMinorPx: 3, thetaDeg: 0, beta: 0 };
    const f = frame(9, shape, 20000);
    const stars = f.stars.map((s, i) => (i === 0 ? { ...s, flags: ['saturated' as const] } : s));
    const z = zonePsfs(f.plane, stars, { width: SIDE, height: SIDE, displayTopRow: 'last' });
    const tl = z.zones.find((q) => q.col === 0 && q.row === 0)!;
    // storage row 0 is shown at the bottom when the last row is on top
    expect(tl.name).toBe('bottom-left');
    expect(tl.members).not.toContain(0);
    const none = zonePsfs(f.plane, stars.map((s) => ({ ...s, flags: ['spurious' as const] })), { width: SIDE, height: SIDE, displayTopRow: 'first' });
    for (const q of none.zones) { expect(q.stacked).toBe(0); expect(q.ppm).toBeNull(); expect(q.fwhmPx).toBeNull(); }
  });
});

describe('zone stack of undersampled stars', () => {
  it('widens a 1.6 px (as recorded 1.75 px) Gaussian by a few per cent, no more than 8 %, and says so', () => {
    // the price of resampling aliased images: measured here, stated in the section's note
    const shape: Shape = { model: 'gaussian', fwhmMajorPx: 1.6, fwhmMinorPx: 1.6, thetaDeg: 0, beta: 0 };
    const rec = recordedFwhm({ ...shape, x: 0, y: 0, fluxE: 1 });
    const ratios: number[] = [];
    const ells: number[] = [];
    let note: string | null = null;
    for (let k = 0; k < 6; k++) {
      const f = frame(300 + k, shape, 30000);
      const z = zonePsfs(f.plane, f.stars, { width: SIDE, height: SIDE, displayTopRow: 'first', cols: 1, rows: 1 });
      ratios.push(z.zones[0].fwhmPx! / rec.major);
      ells.push(z.zones[0].ellipticity!);
      note = z.note;
    }
    expect(mean(ratios)).toBeGreaterThan(1);
    expect(mean(ratios)).toBeLessThan(1.08);
    expect(mean(ells)).toBeLessThan(0.03);
    expect(note).toContain('undersampled');
  });
});

describe('zone stack on a colour-filter mosaic plane', () => {
  it('maps frame coordinates to 2x2 superpixels and gives sizes in frame px (plane.ts: scale 2, offset 0.5)', () => {
    const shape: Shape = { model: 'gaussian', fwhmMajorPx: 3, fwhmMinorPx: 3, thetaDeg: 0, beta: 0 };
    const rec = recordedFwhm({ ...shape, x: 0, y: 0, fluxE: 1 });
    const f = frame(21, shape, 30000);
    // the same stars described in full-resolution frame coordinates of a mosaic twice the size
    const stars = f.stars.map((s) => ({ ...s, x: 2 * s.x + 0.5, y: 2 * s.y + 0.5, fwhmPx: 2 * s.fwhmPx }));
    const z = zonePsfs({ ...f.plane, scale: 2, offset: 0.5 }, stars, { width: 2 * SIDE, height: 2 * SIDE, displayTopRow: 'first', cols: 1, rows: 1 });
    expect(z.pixelScale).toBe(2);
    expect(z.zones[0].stacked).toBe(25);
    expect(Math.abs(z.zones[0].fwhmPx! / (2 * rec.major) - 1)).toBeLessThan(0.03);
  });
});
