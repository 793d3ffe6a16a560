/**
 * The closed-form adaptive-moment model (core/field/coma-calibration.ts: a geometric blur through
 * a Gaussian core, weighted as in Bernstein & Jarvis 2002 adaptive moments) against two
 * independent implementations: stars rendered by photon sampling in core/simulate and measured
 * by core/stars' pixel-based adaptive moments. Also its unweighted limits (optics.md 1.1, 1.5, 6).
 */
import { describe, expect, it } from 'vitest';
import { adaptiveComaMoments, adaptiveDefocusT, adaptiveTrail, comaFromMeasured, coreForComa, trailLengthFromMoments } from '../../core/field/coma-calibration.ts';
import { renderAndAnalyze, scene } from './recovery-render.ts';
import type { Star } from '../../core/stars/types.ts';
import type { SimTruthStar } from '../../core/simulate/render.ts';

function match(stars: Star[], truth: SimTruthStar[]): [Star, SimTruthStar][] {
  const out: [Star, SimTruthStar][] = [];
  for (const s of stars) {
    if (s.flags.length) continue;
    let best: SimTruthStar | null = null;
    let bd = 2;
    for (const t of truth) {
      const d = Math.hypot(t.x - s.x, t.y - s.y);
      if (d < bd) { bd = d; best = t; }
    }
    if (best && best.photons! > 15000) out.push([s, best]);
  }
  return out;
}

describe('limits of the closed form', () => {
  it('small blur: unweighted results (disk d^2/16 per axis, optics.md 1.1; trail L^2/12, section 6; coma S^2/2 and S^2/6, section 1.5)', () => {
    // Core sigma 1 (s^2 = 1), blur 0.1-0.2: the weight changes the blur's moments only at relative
    // order (blur/core)^2, i.e. about 1-4 %.
    const rel = (a: number, b: number) => Math.abs(a / b - 1);
    expect(rel(adaptiveDefocusT(0.2) - 2, 0.2 ** 2 / 8)).toBeLessThan(0.02);
    expect(rel(adaptiveTrail(0.2).D, 0.2 ** 2 / 12)).toBeLessThan(0.02);
    const c = adaptiveComaMoments(0.1, 1);
    expect(rel(c.T - 2, 0.1 ** 2 / 2 + 0.1 ** 2 / 6)).toBeLessThan(0.02);
    expect(rel(c.D, 0.1 ** 2 / 2 - 0.1 ** 2 / 6)).toBeLessThan(0.02);
  });

  it('a trail leaves the across-trail width at the core for any length (separable profile and weight)', () => {
    for (const x of [0.5, 2, 6, 12]) {
      const t = adaptiveTrail(x);
      expect(t.T - t.D).toBeCloseTo(2, 6);
    }
    expect(trailLengthFromMoments(adaptiveTrail(4).D, adaptiveTrail(4).T)).toBeCloseTo(4, 2);
  });

  it('inverts its own coma model', () => {
    const s2 = 1.3;
    const m = adaptiveComaMoments(2.2, s2);
    const inv = comaFromMeasured(m.c, m.T);
    expect(inv.S).toBeCloseTo(2.2, 2);
    expect(inv.s2).toBeCloseTo(s2, 2);
    expect(coreForComa(2.2, m.T)).toBeCloseTo(s2, 3);
  });
});

describe('against rendered and measured stars', () => {
  it('coma: measured spin-1 moment and size agree with the closed form within 3 % (S up to 2.5 core sigmas)', async () => {
    const { analysis, truth } = await renderAndAnalyze(scene({ seed: 5, stars: 400, aberrations: { comaUmPerMm: 4 } }));
    const pairs = match(analysis.stars, truth.stars).filter(([, t]) => t.comaSagittalPx! > 0.8 && t.comaSagittalPx! < 3);
    expect(pairs.length).toBeGreaterThan(40);
    let rc = 0;
    let rt = 0;
    for (const [s, t] of pairs) {
      // Core: seeing variance + pixel box 1/12 per axis (optics.md 1.6).
      const s2 = t.seeingVariancePx! + 1 / 12;
      const m = adaptiveComaMoments(t.comaSagittalPx!, s2);
      rc += Math.hypot(s.coma.x, s.coma.y) / m.c;
      rt += (s.moments.ixx + s.moments.iyy) / m.T;
    }
    console.log(`coma: ${pairs.length} stars, measured/closed-form spin-1 ${(rc / pairs.length).toFixed(4)}, size ${(rt / pairs.length).toFixed(4)}`);
    expect(Math.abs(rc / pairs.length - 1)).toBeLessThan(0.03);
    expect(Math.abs(rt / pairs.length - 1)).toBeLessThan(0.01);
  });

  it('defocus: measured size agrees with the closed form within 1 % (disk d = |delta| / (N p), optics.md 4)', async () => {
    const { analysis, truth } = await renderAndAnalyze(scene({ seed: 6, stars: 200, aberrations: { defocusCenterUm: 40 } }));
    const pairs = match(analysis.stars, truth.stars);
    expect(pairs.length).toBeGreaterThan(40);
    let r = 0;
    let ru = 0;
    for (const [s, t] of pairs) {
      const s2 = t.seeingVariancePx! + 1 / 12;
      const T = s.moments.ixx + s.moments.iyy;
      r += T / (s2 * adaptiveDefocusT(t.defocusDiskPx! / Math.sqrt(s2)));
      ru += T / (2 * s2 + t.defocusDiskPx! ** 2 / 8);
    }
    console.log(`defocus: ${pairs.length} stars, measured/closed-form ${(r / pairs.length).toFixed(4)}, measured/unweighted ${(ru / pairs.length).toFixed(4)}`);
    expect(Math.abs(r / pairs.length - 1)).toBeLessThan(0.01);
  });

  it('trail: measured |M| agrees with the closed form within 2 % and the across-trail width stays the core', async () => {
    const { analysis, truth } = await renderAndAnalyze(scene({ seed: 7, stars: 200, trailing: { lengthPx: 5, angleDeg: 25 } }));
    const pairs = match(analysis.stars, truth.stars);
    expect(pairs.length).toBeGreaterThan(40);
    let rw = 0;
    let rm = 0;
    let L = 0;
    for (const [s, t] of pairs) {
      const s2 = t.seeingVariancePx! + 1 / 12;
      const m = s.moments;
      const Mabs = Math.hypot(m.ixx - m.iyy, 2 * m.ixy);
      rw += (m.ixx + m.iyy - Mabs) / (2 * s2);
      rm += Mabs / (s2 * adaptiveTrail(t.trailLengthPx! / Math.sqrt(s2)).D);
      L += trailLengthFromMoments(Mabs, m.ixx + m.iyy);
    }
    console.log(`trail: ${pairs.length} stars, across width ${(rw / pairs.length).toFixed(4)}, |M| ${(rm / pairs.length).toFixed(4)}, length ${(L / pairs.length).toFixed(3)} px (true 5)`);
    expect(Math.abs(rw / pairs.length - 1)).toBeLessThan(0.01);
    expect(Math.abs(rm / pairs.length - 1)).toBeLessThan(0.02);
  });
});
