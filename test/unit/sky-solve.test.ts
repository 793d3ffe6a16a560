// The plate solver on star lists made by the simulator from the bundled catalogue through known
// lenses (core/simulate/sky-field.ts): recovery is checked against the simulator's truth for each
// projection and distortion pattern, with and without a scale hint; then bad input (too few
// stars, a cloudy frame, a focal length off by 2x, a mirrored frame) gets a clear outcome and
// nothing invented. Random (non-sky) dots are in sky-false-positives.test.ts.
import { describe, expect, it } from 'vitest';
import { bundledCatalogue } from '../../core/sky/bundled.ts';
import { skyFieldStars, skyLensModel, randomDots, type SkyLens } from '../../core/simulate/sky-field.ts';
import { solveSky, type SkyOutcome, type SolveStar } from '../../core/sky/solve.ts';
import { centreScaleArcsecPerPx, pixelToSky, type Projection } from '../../core/sky/lens.ts';
import { angleBetween, DEG } from '../../core/sky/sphere.ts';
import { plateSolveStep } from '../../core/sky/step.ts';
import { skyFindings } from '../../core/sky/finding.ts';
import { Rng } from '../../core/simulate/prng.ts';
import type { Star } from '../../core/stars/types.ts';

const cat = bundledCatalogue();

interface Made { stars: SolveStar[]; lens: SkyLens; W: number; H: number }

function field(lens: Partial<SkyLens>, o: { W?: number; H?: number; seed?: number; noisePx?: number; magLimit?: number; max?: number } = {}): Made {
  const W = o.W ?? 6000, H = o.H ?? 4000;
  const full: SkyLens = {
    raDeg: 83.8, decDeg: -5.4, northDeg: -90, mirrored: false, projection: 'rectilinear',
    focalLengthMm: 50, pixelSizeUm: 6, k1: 0, k2: 0, centreOffsetPx: { x: 0, y: 0 }, ...lens,
  };
  const rng = new Rng(o.seed ?? 11);
  const noise = o.noisePx ?? 0.3;
  const stars = skyFieldStars(cat, { width: W, height: H, lens: full, magLimit: o.magLimit ?? 8.5, fluxMag0E: 1e7, maxStars: o.max ?? 500 })
    .map((s) => ({ x: s.x + noise * rng.normal(), y: s.y + noise * rng.normal(), flux: s.fluxE, errPx: noise, fwhmPx: 3 }));
  return { stars, lens: full, W, H };
}

/** Angular distance between the solved and the true sky position of the frame centre, in pixels of the true scale. */
function centreErrorPx(r: SkyOutcome, m: Made): number {
  if (!r.solved) return Infinity;
  const truth = skyLensModel(m.lens, m.W, m.H);
  const cx = (m.W - 1) / 2, cy = (m.H - 1) / 2;
  return angleBetween(pixelToSky(r.model, cx, cy)!, pixelToSky(truth, cx, cy)!) * truth.fPx;
}

const hintOf = (m: Made) => 206.265 * m.lens.pixelSizeUm / m.lens.focalLengthMm;

describe('plate solving simulated catalogue fields (simulator truth)', () => {
  const cases: { name: string; lens: Partial<SkyLens>; pattern: string; projection: Projection; W?: number; H?: number }[] = [
    { name: '50 mm, no distortion', lens: { focalLengthMm: 50, raDeg: 83.8, decDeg: -5.4 }, pattern: 'none', projection: 'rectilinear' },
    { name: '24 mm, barrel -3 %', lens: { focalLengthMm: 24, k1: -0.03, raDeg: 280, decDeg: 38, northDeg: 20 }, pattern: 'barrel', projection: 'rectilinear' },
    { name: '135 mm, pincushion +1 %', lens: { focalLengthMm: 135, k1: 0.01, raDeg: 201, decDeg: -11, northDeg: 135 }, pattern: 'pincushion', projection: 'rectilinear' },
    { name: '20 mm, mustache', lens: { focalLengthMm: 20, k1: -0.04, k2: 0.05, raDeg: 10, decDeg: 41, northDeg: -30 }, pattern: 'mustache', projection: 'rectilinear' },
    { name: '8 mm equidistant fisheye', lens: { focalLengthMm: 8, projection: 'fisheye-equidistant', raDeg: 266, decDeg: -29, northDeg: 70 }, pattern: 'none', projection: 'fisheye-equidistant' },
    { name: '15 mm equisolid fisheye', lens: { focalLengthMm: 15, projection: 'fisheye-equisolid', raDeg: 150, decDeg: 60, northDeg: -100 }, pattern: 'none', projection: 'fisheye-equisolid' },
    { name: '10 mm stereographic fisheye, barrel', lens: { focalLengthMm: 10, projection: 'fisheye-stereographic', k1: -0.02, raDeg: 300, decDeg: 5, northDeg: 10 }, pattern: 'barrel', projection: 'fisheye-stereographic' },
  ];
  for (const c of cases) {
    it(`${c.name}: placed with and without a hint, lens recovered`, () => {
      const m = field(c.lens, { W: c.W, H: c.H });
      for (const hint of [hintOf(m), null]) {
        const r = solveSky(m.stars, { width: m.W, height: m.H, scaleHintArcsecPerPx: hint });
        expect(r.solved, r.solved ? '' : r.reason).toBe(true);
        if (!r.solved) continue;
        expect(centreErrorPx(r, m)).toBeLessThan(1);
        expect(r.model.projection).toBe(c.projection);
        const f = (r.model.fPx * m.lens.pixelSizeUm) / 1000;
        expect(Math.abs(f / m.lens.focalLengthMm - 1)).toBeLessThan(0.002);
        expect(r.model.parity).toBe(1);
        expect(r.distortion.pattern).toBe(c.pattern);
        const k1 = m.lens.k1 ?? 0;
        expect(Math.abs(r.model.k1 - k1)).toBeLessThan(Math.max(4 * (r.distortion.k1Err ?? 0), 2e-4) + 0.002 * Math.abs(k1));
        if (c.pattern === 'mustache') expect(Math.abs(r.model.k2 - (m.lens.k2 ?? 0))).toBeLessThan(5 * (r.distortion.k2Err ?? 1));
        expect(r.search.mode).toBe(hint ? 'hint' : 'blind');
        expect(r.search.falsePositiveBound).toBeLessThan(1e-6);
      }
    });
  }

  it('an optical centre off the frame centre is found when the distortion shows it', () => {
    const m = field({ focalLengthMm: 24, k1: -0.05, centreOffsetPx: { x: 150, y: -90 }, raDeg: 120, decDeg: 20 });
    const r = solveSky(m.stars, { width: m.W, height: m.H, scaleHintArcsecPerPx: hintOf(m) });
    expect(r.solved).toBe(true);
    if (!r.solved) return;
    expect(r.centreFitted).toBe(true);
    expect(Math.abs(r.model.cx - ((m.W - 1) / 2 + 150))).toBeLessThan(5 * r.fit.err.cx! + 2);
    expect(Math.abs(r.model.cy - ((m.H - 1) / 2 - 90))).toBeLessThan(5 * r.fit.err.cy! + 2);
  });
});

describe('bad input: a clear outcome, nothing invented', () => {
  it('too few stars: not placed, and says how many', () => {
    const m = field({ focalLengthMm: 50 }, { max: 5 });
    const r = solveSky(m.stars, { width: m.W, height: m.H, scaleHintArcsecPerPx: hintOf(m) });
    expect(r.solved).toBe(false);
    if (!r.solved) expect(r.reason).toMatch(/too few stars.*5 usable/);
    const none = solveSky([], { width: 100, height: 100 });
    expect(none.solved).toBe(false);
  });

  it('a cloudy frame (a few stars through gaps, blobs of lit cloud): placed right or not at all', () => {
    const rng = new Rng(5);
    for (let seed = 1; seed <= 6; seed++) {
      const m = field({ focalLengthMm: 35, raDeg: 30 * seed, decDeg: 10 * seed - 30 }, { seed });
      // keep a random fifth of the stars (the gaps), add cloud blobs as extra detections
      const kept = m.stars.filter(() => rng.uniform() < 0.2);
      const blobs = randomDots(60, m.W, m.H, 100 + seed).map((d) => ({ x: d.x, y: d.y, flux: d.fluxE * 3, errPx: 0.5, fwhmPx: 12 }));
      const r = solveSky([...kept, ...blobs], { width: m.W, height: m.H, scaleHintArcsecPerPx: hintOf(m) });
      if (r.solved) expect(centreErrorPx(r, m)).toBeLessThan(1);
      else expect(r.reason).toMatch(/none passed the verification|too few stars/);
    }
  });

  it('a header focal length off by 2x: found near the hint, reported, and the measured value used', () => {
    const m = field({ focalLengthMm: 50, raDeg: 200, decDeg: 45 });
    const stars: Star[] = m.stars.map((s) => ({
      x: s.x, y: s.y, flux: s.flux, snr: 100, fwhmPx: 3, fwhmMajorPx: 3, fwhmMinorPx: 3, ellipticity: 0, thetaDeg: 0, hfdPx: 3,
      coma: { x: 0, y: 0 }, flags: [], model: 'gaussian', moffatBeta: null,
      moments: { ixx: 1, iyy: 1, ixy: 0, e1: 0, e2: 0 }, err: { x: 0.2, y: 0.2, fwhmPx: 0.1, ellipticity: 0.01, thetaDeg: 1, hfdPx: 0.1 },
    } as unknown as Star));
    const optics = { focalLengthMm: 100, pixelSizeUm: 6, fNumber: 2, plateScaleArcsecPerPx: 206.265 * 6 / 100,
      source: { focalLengthMm: 'header' as const, pixelSizeUm: 'header' as const, fNumber: 'header' as const, plateScaleArcsecPerPx: 'derived' as const } };
    const r = plateSolveStep({ width: m.W, height: m.H, displayTopRow: 'first', planeScale: 1, optics, stars, meta: {} });
    expect(r.astrometry.solved).toBe(true);
    expect(r.astrometry.search.hintFailed).toBe(true);
    expect(r.astrometry.focalLengthCheck?.replaced).toBe(true);
    expect(r.optics.focalLengthMm!).toBeCloseTo(50, 0);
    expect(r.optics.source.focalLengthMm).toBe('plate-solve');
    expect(r.optics.plateScaleArcsecPerPx!).toBeCloseTo(206.265 * 6 / 50, 2);
    const words = skyFindings(r.astrometry).find((f) => f.code === 'FOCAL_LENGTH');
    expect(words?.message).toMatch(/not the 100 mm the header states/);
  });

  it('a mirrored frame: placed with mirrored parity at the same place', () => {
    const m = field({ focalLengthMm: 85, raDeg: 56.8, decDeg: 24.1 }); // the Pleiades region
    const mirrored = m.stars.map((s) => ({ ...s, x: m.W - 1 - s.x }));
    const a = solveSky(m.stars, { width: m.W, height: m.H, scaleHintArcsecPerPx: hintOf(m) });
    const b = solveSky(mirrored, { width: m.W, height: m.H, scaleHintArcsecPerPx: hintOf(m) });
    expect(a.solved && b.solved).toBe(true);
    if (!a.solved || !b.solved) return;
    expect(a.model.parity).toBe(1);
    expect(b.model.parity).toBe(-1);
    const cx = (m.W - 1) / 2, cy = (m.H - 1) / 2;
    expect(angleBetween(pixelToSky(a.model, cx, cy)!, pixelToSky(b.model, cx, cy)!) * a.model.fPx).toBeLessThan(1);
    expect(Math.abs(centreScaleArcsecPerPx(a.model) / centreScaleArcsecPerPx(b.model) - 1)).toBeLessThan(0.001);
  });

  it('stars flagged as hot pixels, cosmic rays or streaks are not used', () => {
    const m = field({ focalLengthMm: 50 });
    const junk = randomDots(200, m.W, m.H, 9).map((d) => ({ x: d.x, y: d.y, flux: 1e9, errPx: 0.1, fwhmPx: 1, flags: ['hot-pixel'] }));
    const r = solveSky([...junk, ...m.stars], { width: m.W, height: m.H, scaleHintArcsecPerPx: hintOf(m) });
    expect(r.solved).toBe(true);
    if (r.solved) expect(r.matches.every((x) => x.star >= junk.length)).toBe(true);
  });
});

void DEG;
