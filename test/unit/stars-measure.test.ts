import { describe, it, expect } from 'vitest';
import { measureStar, type StampInput } from '../../core/stars/measure.ts';
import { adaptiveMoments } from '../../core/stars/moments.ts';
import { render, rng, gauss, addGaussianNoise, matchedSnr, renderComaSpot, type StarTruth } from '../reference/psf-stamps.ts';

const W = 25;
function input(stamp: Float32Array, skyVariance: number, extra: Partial<StampInput> = {}): StampInput {
  return { stamp, w: W, h: W, originX: 1000, originY: 2000, skyVariance, gain: null, saturated: false, sigmaGuessPx: 1.5, flags: [], ...extra };
}
function star(u: () => number, t: StarTruth, nu: number) {
  const clean = render(t, W, W, 'point');
  const sn = matchedSnr(clean, 1) / nu;
  return { img: addGaussianNoise(clean, sn, u), sn, clean };
}

describe('measureStar', () => {
  it('takes a local sky offset the mesh missed off the moments (nebulosity under a star)', () => {
    // Point-sampled Gaussian: its covariance is sigma^2 per axis (the definition); the offset
    // stands for sky the background mesh left in the residual.
    const u = rng(21);
    const fw = 4;
    const s2 = (fw / 2.354820045) ** 2;
    const t: StarTruth = { model: 'gaussian', x0: 12.2, y0: 11.9, flux: 2e4, fwhmMajor: fw, fwhmMinor: fw, thetaDeg: 0 };
    const { img, sn } = star(u, t, 150);
    const offset = 15 * sn;
    const lifted = img.map((v) => v + offset);
    const raw = adaptiveMoments(lifted, W, W, 12, 12, 1.7);
    expect((raw.ixx + raw.iyy) / (2 * s2)).toBeGreaterThan(1.1); // the bias this guards against
    const m = measureStar(input(lifted, sn * sn), { model: 'gaussian' });
    expect((m.moments.ixx + m.moments.iyy) / (2 * s2)).toBeCloseTo(1, 1);
    // the fit has its own background term and sees the same star either way
    const clean = measureStar(input(img, sn * sn), { model: 'gaussian' });
    expect(m.fwhmPx / clean.fwhmPx).toBeCloseTo(1, 2);
    // on a sky the mesh got right, the moments are those of the stamp as it is
    const direct = adaptiveMoments(img, W, W, 12, 12, 1.7);
    expect(clean.moments.ixx).toBeCloseTo(direct.ixx, 4);
  });

  it('reports plane coordinates, size, shape, HFD, moments and coma', () => {
    const u = rng(1);
    const t: StarTruth = { model: 'gaussian', x0: 12.3, y0: 11.7, flux: 1e4, fwhmMajor: 4.4, fwhmMinor: 3.6, thetaDeg: 30 };
    const { img, sn } = star(u, t, 150);
    const s = measureStar(input(img, sn * sn), { model: 'gaussian' });
    expect(s.flags).toEqual([]);
    expect(s.model).toBe('gaussian');
    expect(s.moffatBeta).toBeNull();
    expect(s.x - 1000).toBeCloseTo(12.3, 1);
    expect(s.y - 2000).toBeCloseTo(11.7, 1);
    // mean FWHM = sqrt(major * minor) (types.ts contract), ellipticity = 1 - b/a
    expect(s.fwhmPx).toBeCloseTo(Math.sqrt(s.fwhmMajorPx * s.fwhmMinorPx), 12);
    expect(s.ellipticity).toBeCloseTo(1 - s.fwhmMinorPx / s.fwhmMajorPx, 12);
    expect(s.fwhmPx / Math.sqrt(4.4 * 3.6)).toBeCloseTo(1, 1);
    expect(Math.abs(s.thetaDeg - 30)).toBeLessThan(5);
    // Gaussian HFD = FWHM (optics.md §1.1), here with the ~1/(12 s^2) uniform-pixel term
    expect(s.hfdPx / s.fwhmPx).toBeCloseTo(1, 1);
    expect(s.snr / 150).toBeCloseTo(1, 1);
    expect(s.flux / 1e4).toBeCloseTo(1, 1);
    for (const v of [s.err.x, s.err.y, s.err.fwhmPx, s.err.ellipticity, s.err.thetaDeg, s.err.hfdPx, s.err.e1, s.err.e2]) {
      expect(v).toBeGreaterThan(0);
      expect(Number.isFinite(v)).toBe(true);
    }
    expect(s.moments.ixx).toBeGreaterThan(s.moments.iyy); // major axis at 30 deg: wider in x than y
    expect(Math.abs(s.coma.x) + Math.abs(s.coma.y)).toBeLessThan(0.05);
    // JSON round trip keeps every field (report contract)
    const j = JSON.parse(JSON.stringify(s));
    expect(Object.keys(j).sort()).toEqual(Object.keys(s).sort());
  });

  it("'auto' keeps the Gaussian for Gaussian stars and picks the Moffat for beta = 2.5 stars (F test)", () => {
    const u = rng(8);
    let gPicked = 0, mPicked = 0;
    const n = 60;
    for (let k = 0; k < n; k++) {
      const fw = 3 + 2 * u();
      const g: StarTruth = { model: 'gaussian', x0: 12 + u() - 0.5, y0: 12 + u() - 0.5, flux: 1e4, fwhmMajor: fw, fwhmMinor: fw * 0.85, thetaDeg: 180 * u() - 90 };
      const a = star(u, g, 100);
      if (measureStar(input(a.img, a.sn * a.sn)).model === 'gaussian') gPicked++;
      const m: StarTruth = { ...g, model: 'moffat', beta: 2.5 };
      const b = star(u, m, 100);
      const sm = measureStar(input(b.img, b.sn * b.sn));
      if (sm.model === 'moffat') { mPicked++; expect(Math.abs((sm.moffatBeta as number) - 2.5)).toBeLessThan(1); }
    }
    // F > 9 for one extra parameter is a ~0.3 % false-alarm rate under the Gaussian
    expect(gPicked).toBeGreaterThanOrEqual(n - 3);
    expect(mPicked).toBeGreaterThanOrEqual(n - 2);
  });

  it('with a gain, shot noise enters the variance: errors match the scatter of shot-noise-limited stars', () => {
    const u = rng(3);
    const t: StarTruth = { model: 'gaussian', x0: 12.2, y0: 12.1, flux: 2e5, fwhmMajor: 4, fwhmMinor: 3.4, thetaDeg: 10 };
    const clean = render(t, W, W, 'point');
    const gain = 2, sky = 25; // e-/ADU, ADU^2
    const fw: number[] = [], er: number[] = [], erNoGain: number[] = [];
    for (let k = 0; k < 200; k++) {
      const img = new Float32Array(clean.length);
      for (let i = 0; i < img.length; i++) img[i] = clean[i] + Math.sqrt(sky + clean[i] / gain) * gauss(u);
      const s = measureStar(input(img, sky, { gain }), { model: 'gaussian' });
      fw.push(s.fwhmPx); er.push(s.err.fwhmPx);
      if (k < 20) erNoGain.push(measureStar(input(img, sky), { model: 'gaussian' }).err.fwhmPx);
    }
    const mu = fw.reduce((a, b) => a + b, 0) / fw.length;
    const sd = Math.sqrt(fw.reduce((a, b) => a + (b - mu) ** 2, 0) / (fw.length - 1));
    const med = (a: number[]) => [...a].sort((p, q) => p - q)[a.length >> 1];
    expect(Math.abs(med(er) / sd - 1)).toBeLessThan(0.2);
    expect(med(erNoGain)).toBeLessThan(med(er)); // sky-only variance understates it
  });

  it('coma: the vector points toward the flare', () => {
    const img = Float32Array.from(renderComaSpot(W, W, 10.5, 11.2, 1.6, 60, 1.1, 2e4));
    const s = measureStar(input(img, 1));
    const ang = (Math.atan2(s.coma.y, s.coma.x) * 180) / Math.PI;
    expect(Math.abs(ang - 60)).toBeLessThan(3);
  });

  it('flags: keeps detection flags, adds saturated, edge (missing pixels), low-snr', () => {
    const u = rng(5);
    const t: StarTruth = { model: 'gaussian', x0: 12, y0: 12, flux: 1e4, fwhmMajor: 4, fwhmMinor: 4, thetaDeg: 0 };
    const { img, sn } = star(u, t, 80);
    const sat = measureStar(input(img, sn * sn, { saturated: true, flags: ['blended'] }));
    expect(sat.flags).toContain('saturated');
    expect(sat.flags).toContain('blended');
    const holes = img.slice();
    for (let y = 0; y < W; y++) for (let x = 0; x < 4; x++) holes[y * W + x] = NaN; // off the frame edge
    const e = measureStar(input(holes, sn * sn));
    expect(e.flags).toContain('edge');
    expect(e.flags).not.toContain('fit-failed');
    expect(e.x - 1000).toBeCloseTo(12, 0);
    // an infinite (corrupt) pixel counts as missing and leaves the input untouched
    const inf = img.slice();
    inf[3 * W + 20] = Infinity;
    const si = measureStar(input(inf, sn * sn));
    expect(si.flags).toContain('edge');
    expect(si.flags).not.toContain('fit-failed');
    expect(si.fwhmPx / 4).toBeCloseTo(1, 1);
    expect(inf[3 * W + 20]).toBe(Infinity);
    const faint = star(u, t, 5);
    expect(measureStar(input(faint.img, faint.sn * faint.sn)).flags).toContain('low-snr');
    expect(measureStar(input(img, sn * sn), { minSnr: 1000 }).flags).toContain('low-snr');
  });

  it("a detection flagged 'hot-pixel' gets moments and HFD but no PSF fit (and no 'fit-failed')", () => {
    // a single-pixel spike on sky noise (common practice: a hot pixel has no light in its
    // neighbours, no optics can make it)
    const u = rng(9);
    const img = new Float32Array(W * W);
    for (let i = 0; i < img.length; i++) img[i] = 10 * gauss(u);
    img[12 * W + 12] = 5000;
    const flagged = measureStar(input(img, 100, { flags: ['hot-pixel'] }));
    expect(flagged.model).toBe('moments');
    expect(flagged.flags).toEqual(['hot-pixel']); // no fit tried, none failed
    expect(flagged.moffatBeta).toBeNull();
    expect(flagged.hfdPx).toBeLessThan(2);
    // the same stamp unflagged is fitted (and collapses to a point): the flag is what skips it
    const fitted = measureStar(input(img, 100));
    expect(fitted.model).not.toBe('moments');
    expect(fitted.fwhmPx).toBeLessThan(1);
  });

  it('never throws on bad stamps; returns fit-failed with NaN values', () => {
    const bad: StampInput[] = [
      input(new Float32Array(W * W).fill(NaN), 1),
      input(new Float32Array(W * W), 1),
      input(new Float32Array(W * W).fill(-5), 1),
      input(new Float32Array(W * W).fill(Infinity), 1),
      input(new Float32Array(W * W).fill(3), 0),
      { ...input(new Float32Array(4), 1), w: 2, h: 2 },
      { ...input(new Float32Array(10), 1) }, // length does not match w*h
      { ...input(new Float32Array(W * W), NaN), sigmaGuessPx: NaN, gain: -1 },
    ];
    for (const b of bad) {
      let s!: ReturnType<typeof measureStar>;
      expect(() => { s = measureStar(b); }).not.toThrow();
      expect(s.flags).toContain('fit-failed');
    }
    const u = rng(6);
    for (let k = 0; k < 30; k++) {
      const junk = Float32Array.from({ length: W * W }, () => (u() < 0.05 ? 1e6 * u() : gauss(u)));
      expect(() => measureStar(input(junk, 1), { model: 'auto' })).not.toThrow();
    }
    // all-NaN: edge and fit-failed, values NaN
    const s = measureStar(input(new Float32Array(W * W).fill(NaN), 1));
    expect(s.flags).toEqual(expect.arrayContaining(['edge', 'fit-failed']));
    expect(s.fwhmPx).toBeNaN();
  });
});
