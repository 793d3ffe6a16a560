/**
 * Through focus on synthetic star lists from the analytic moment model (diagnose-synth.ts: second
 * moments add under convolution, the defocus disc's per-axis variance d^2/16 with d = δ/N,
 * optics.md §1.1 and §4), and the series' parts on their own: the focus-curve parabola (the
 * defocused cone convolved with the core, optics.md §4; focus-sequence practice after
 * Tokovinin & Heathcote 2006), the surface fit, star matching, and bad input.
 *
 * Signs: a frame at focuser position P has focus error δ = P - F0 at the centre (positive = sensor
 * behind focus); the generator adds the tilt t·x and curvature c ρ^2 to δ, so a point's best focus
 * is F0 - t·x - c ρ^2: the through-focus tilt and curvature are minus the generator's.
 */
import { describe, expect, it } from 'vitest';
import { optics, synthStars, type Scene } from './diagnose-synth.ts';
import { throughFocus, formatThroughFocus, type FocusFrameInput } from '../../core/series/through-focus.ts';
import { fitCurves, vertexOf, starVertex } from '../../core/series/focus-curve.ts';
import { fitSurface, surfaceAt, surfaceRange } from '../../core/series/focus-surface.ts';
import { frameShift, matchSeries } from '../../core/series/match.ts';
import { mulberry32, normal } from '../helpers/rng.ts';
import type { Star } from '../../core/stars/types.ts';

const W = 1500, H = 1000, P_UM = 2.4, N = 4;
const base: Omit<Scene, 'seed'> = { width: W, height: H, nStars: 600, seeingFwhmPx: 2.5, fNumber: N, pixelSizeUm: P_UM, snr: [40, 400] };
const opt = optics({ fNumber: N, pixelSizeUm: P_UM, focalLengthMm: 400 });

function series(positions: number[], focus: number, s: Partial<Scene>, seed = 21): FocusFrameInput[] {
  return positions.map((p) => ({ stars: synthStars({ ...base, ...s, seed, defocusUm: p - focus }), width: W, height: H, optics: opt, positionUm: p, label: `${p} um` }));
}

const hCorner = (0.5 * Math.hypot(W, H) * P_UM) / 1000; // mm

describe('focus curves (w^2 = A + B x + C x^2, F = P0 - B / 2C)', () => {
  it('recovers each zone\'s vertex exactly from noise-free parabolas with a shared seeing jitter per frame', () => {
    const P = [-60, -40, -20, 0, 20, 40, 60];
    const truth = [-12, 3, 25];
    // Seeing jitter per frame, made orthogonal to 1, P and P^2 over the frames (what a focus
    // curve cannot tell from its own shape): the shared frame terms must take it up entirely.
    let jitter = [0.3, -0.2, 0.5, 0.1, -0.4, 0.2, -0.1];
    const basis: number[][] = [];
    for (const v0 of [P.map(() => 1), P.map((p) => p), P.map((p) => p * p)]) {
      let v = [...v0];
      for (const b of basis) { const d = v.reduce((a, x, i) => a + x * b[i], 0); v = v.map((x, i) => x - d * b[i]); }
      const n = Math.hypot(...v);
      basis.push(v.map((x) => x / n));
    }
    for (const b of basis) { const d = jitter.reduce((a, x, i) => a + x * b[i], 0); jitter = jitter.map((x, i) => x - d * b[i]); }
    const y = truth.map((F, z) => P.map((p, f) => 4 + z + 0.004 * (p - F) ** 2 + jitter[f]));
    const sig = y.map((r) => r.map(() => 0.01));
    const fit = fitCurves({ positions: P, y, sig })!;
    fit.zones.forEach((z, i) => expect(vertexOf(z!).focus).toBeCloseTo(truth[i], 6));
    fit.frameTerms.forEach((t, f) => expect(t).toBeCloseTo(jitter[f], 6));
    // Fitted zone by zone without the frame terms, the jitter shows as misfit: errors blow up.
    const alone = fitCurves({ positions: P, y, sig, frameTerms: false })!;
    expect(fit.errorScale).toBeLessThan(1.01);
    expect(alone.errorScale).toBeGreaterThan(10);
    // Without jitter the vertices are exact.
    const clean = fitCurves({ positions: P, y: truth.map((F, z) => P.map((p) => 4 + z + 0.004 * (p - F) ** 2)), sig })!;
    clean.zones.forEach((z, i) => expect(vertexOf(z!).focus).toBeCloseTo(truth[i], 8));
  });

  it('gives vertex errors that match the scatter over noisy repeats (delta method on the covariance)', () => {
    const P = [-60, -40, -20, 0, 20, 40, 60];
    const rnd = normal(mulberry32(3));
    const found: number[] = [];
    const errs: number[] = [];
    for (let k = 0; k < 300; k++) {
      const y = [P.map((p) => 4 + 0.004 * (p - 7) ** 2 + 0.08 * rnd())];
      const f = fitCurves({ positions: P, y, sig: [P.map(() => 0.08)], frameTerms: false })!;
      const v = vertexOf(f.zones[0]!);
      found.push(v.focus);
      errs.push(v.focusErr);
    }
    const mean = found.reduce((a, b) => a + b, 0) / found.length;
    const sd = Math.sqrt(found.reduce((a, b) => a + (b - mean) ** 2, 0) / (found.length - 1));
    const medErr = [...errs].sort((a, b) => a - b)[errs.length >> 1];
    expect(Math.abs(mean - 7)).toBeLessThan(3 * sd / Math.sqrt(found.length));
    expect(medErr / sd).toBeGreaterThan(0.8);
    expect(medErr / sd).toBeLessThan(1.3);
  });

  it('a single star\'s vertex with the zone\'s C held', () => {
    const P = [-30, -10, 10, 30];
    const w2 = P.map((p) => 3 + 0.01 * (p - 4) ** 2);
    const v = starVertex(P, w2, P.map(() => 0.05), 0.01, 0, P.map(() => 0))!;
    expect(v.focus).toBeCloseTo(4, 8);
  });
});

describe('focus surface (optics.md §4: plane plus paraboloid of the zones\' best foci)', () => {
  it('recovers tilt and curvature and gives the frame\'s range', () => {
    const S = 0.5 * Math.hypot(W, H);
    const pts = [];
    for (let i = 0; i < 5; i++) for (let j = 0; j < 4; j++) {
      const x = (i + 0.5) * W / 5, y = (j + 0.5) * H / 4;
      const u = (x - (W - 1) / 2) / S, v = (y - (H - 1) / 2) / S;
      pts.push({ x, y, focus: 10 + 6 * u - 3 * v - 8 * (u * u + v * v), err: 0.5 });
    }
    const s = fitSurface(pts, W, H)!;
    expect(s.coef[0]).toBeCloseTo(10, 8);
    expect(s.coef[1]).toBeCloseTo(6, 8);
    expect(s.coef[2]).toBeCloseTo(-3, 8);
    expect(s.coef[3]).toBeCloseTo(-8, 8);
    // A corner lies at field height 1 exactly.
    expect(surfaceAt(s, [0, 0, 0, 1], -0.5, -0.5)).toBeCloseTo(1, 10);
    const r = surfaceRange(s, s.coef, W, H);
    expect(r.hi).toBeCloseTo(10 + (36 + 9) / 32, 1); // the paraboloid's top lies inside the frame
  });
});

describe('matching stars across frames', () => {
  const stars = synthStars({ ...base, seed: 5 });
  const shifted = (dx: number, dy: number, scale = 1, drop = 0, seed = 1): Star[] => {
    const r = mulberry32(seed);
    const cx = (W - 1) / 2, cy = (H - 1) / 2;
    return stars.filter(() => r() >= drop).map((s) => ({ ...s, x: cx + (s.x - cx) * scale + dx + 0.05 * (r() - 0.5), y: cy + (s.y - cy) * scale + dy + 0.05 * (r() - 0.5) }));
  };

  it('finds a few-pixel shift and follows the stars, also through a small scale change', () => {
    const s = frameShift(stars, shifted(7.3, -4.1))!;
    expect(s.dxPx).toBeCloseTo(7.3, 1);
    expect(s.dyPx).toBeCloseTo(-4.1, 1);
    const m = matchSeries([stars, shifted(7.3, -4.1, 1, 0.1, 2), shifted(-3, 2, 1.003, 0.1, 3)]);
    expect(m.unmatched).toHaveLength(0);
    const followed = m.tracks.filter((t) => t.every((j) => j >= 0)).length;
    expect(followed).toBeGreaterThan(0.75 * stars.length);
    // No wrong pairs: every follow lands on the same original star (same flux).
    const f2 = shifted(-3, 2, 1.003, 0.1, 3);
    for (const t of m.tracks) if (t[0] >= 0 && t[2] >= 0) expect(f2[t[2]].flux).toBe(stars[t[0]].flux);
  });

  it('does not pair frames of different fields', () => {
    const other = synthStars({ ...base, seed: 99 });
    const m = matchSeries([stars, other, shifted(1, 1)]);
    expect(m.unmatched.map((u) => u.frame)).toContain(1);
  });
});

describe('through focus on the analytic moment model', () => {
  const P = [-80, -55, -30, -5, 20, 45, 70];

  it('recovers a signed tilt in both axes with best focus central', () => {
    const tilt = { x: 25 / ((W * P_UM) / 1000), y: -15 / ((H * P_UM) / 1000) };
    const r = throughFocus(series(P, -5, { tiltUmPerMm: tilt }));
    console.log(formatThroughFocus(r));
    expect(r.schema).toBe('skyloupe.throughfocus/1');
    expect(r.tilt!.significant).toBe(true);
    expect(Math.abs(r.tilt!.acrossFrameUm.x - -25)).toBeLessThan(Math.max(1.5, 3 * r.tilt!.acrossFrameErrUm.x));
    expect(Math.abs(r.tilt!.acrossFrameUm.y - 15)).toBeLessThan(Math.max(1.5, 3 * r.tilt!.acrossFrameErrUm.y));
    expect(Math.abs(r.centreFocusUm! - -5)).toBeLessThan(1.5);
    // Best focus rises toward -x (left) and +y: the right side must come toward the lens.
    expect(r.findings.find((f) => f.code === 'THROUGH_FOCUS_TILT')!.message).toMatch(/right/);
    // Moves keep the centre: opposite corners move by opposite amounts.
    const mv = r.tilt!.moves.map((m) => m.moveUm);
    expect(mv[0] + mv[3]).toBeCloseTo(0, 6);
  });

  it('says how far each adjuster of a tilt plate must move, and in turns of its screw', () => {
    const tilt = { x: 20 / ((W * P_UM) / 1000), y: 0 };
    const cx = (W - 1) / 2, cy = (H - 1) / 2;
    // Three adjusters at 0, 120 and 240 degrees on a circle of 400 px about the centre.
    const adjusters = [0, 120, 240].map((d) => ({ name: `${d}`, xPx: cx + 400 * Math.cos((d * Math.PI) / 180), yPx: cy + 400 * Math.sin((d * Math.PI) / 180) }));
    const r = throughFocus(series(P, 0, { tiltUmPerMm: tilt }), { adjusters, screwPitchMm: 0.5 });
    // Best focus falls by 20 um across the width: at +400 px it is 20 * 400 / W lower, so that
    // adjuster must bring the sensor toward the lens by that much (negative = toward).
    const m = r.tilt!.moves;
    expect(Math.abs(m[0].moveUm - -20 * 400 / W)).toBeLessThan(3 * m[0].moveErrUm + 0.3);
    expect(Math.abs(m[1].moveUm - 20 * 200 / W)).toBeLessThan(3 * m[1].moveErrUm + 0.3);
    expect(m[0].turns!).toBeCloseTo(m[0].moveUm / 500, 10);
    expect(m[0].moveUm + m[1].moveUm + m[2].moveUm).toBeCloseTo(0, 6);
  });

  it('recovers curvature and astigmatism (S - T separation) at the corners', () => {
    const r = throughFocus(series(P, 10, { curvatureUm: 12, astigUm: 10 }));
    // The generator's curvatureUm is the focus error at field height 1: best focus there is 12 um nearer.
    expect(Math.abs(r.curvature!.cornerUm - -12)).toBeLessThan(Math.max(1.5, 3 * r.curvature!.cornerErrUm));
    expect(r.curvature!.significant).toBe(true);
    // astigUm > 0: the radial line (sagittal focus) nearer the lens: sagittal minus tangential = -10.
    expect(Math.abs(r.astigmatism!.separationUm - -10)).toBeLessThan(Math.max(1.5, 3 * r.astigmatism!.separationErrUm));
    expect(r.tilt!.significant).toBe(false);
    // Mean of the paraboloid over the frame: centre + c/3; the whole-field compromise: midrange.
    expect(r.bestFocusUm!).toBeCloseTo(r.centreFocusUm! + r.surface!.coef.curvatureUm / 3, 6);
    expect(r.spherical.note).toMatch(/pixels/);
  });

  it('gives the critical focus zone as +-2.44 lambda N^2 (common practice; optics.md §3: 67.1 um in total at f/5, 550 nm)', () => {
    const r = throughFocus(series(P, 0, {}));
    expect(r.criticalFocusZone!.halfWidthUm).toBeCloseTo(2.44 * 0.55 * 16, 8);
    const r5 = throughFocus(series(P, 0, {}).map((f) => ({ ...f, optics: optics({ fNumber: 5, pixelSizeUm: P_UM, focalLengthMm: 400 }) })), { wavelengthNm: 550 });
    expect(2 * r5.criticalFocusZone!.halfWidthUm).toBeCloseTo(67.1, 1);
  });
});

describe('bad input gets a clear message', () => {
  const P = [-60, -30, 0, 30, 60];
  it('positions all equal', () => {
    expect(() => throughFocus(series([10, 10, 10], 0, {}))).toThrow(/same position/);
  });
  it('two frames: use focus-pair', () => {
    expect(() => throughFocus(series([0, 30], 0, {}))).toThrow(/focus-pair/);
  });
  it('only two distinct positions', () => {
    expect(() => throughFocus(series([0, 30, 30], 0, {}))).toThrow(/three or more/);
  });
  it('frames of different fields', () => {
    const s = series(P, 0, {});
    s[2] = { ...s[2], stars: synthStars({ ...base, seed: 777, defocusUm: 0 }) };
    expect(() => throughFocus(s)).toThrow(/does not show the same stars/);
  });
  it('frames of different sizes', () => {
    const s = series(P, 0, {});
    s[1] = { ...s[1], width: 1200 };
    expect(() => throughFocus(s)).toThrow(/differ in size/);
  });
  it('a series that never crosses focus says which way to extend it', () => {
    expect(() => throughFocus(series(P, 150, {}))).toThrow(/Extend the series toward larger positions/);
    expect(() => throughFocus(series(P, -150, {}))).toThrow(/Extend the series toward smaller positions/);
  });
  it('a clouded frame in the series is named', () => {
    const s = series(P, 0, {});
    s[3] = { ...s[3], stars: s[3].stars.slice(0, 2) };
    expect(() => throughFocus(s)).toThrow(/30 um has 2 usable stars: clouded/);
  });
  it('frames without stars', () => {
    const s = series(P, 0, {}).map((f) => ({ ...f, stars: f.stars.slice(0, 5) }));
    expect(() => throughFocus(s)).toThrow(/at least 10|same stars/);
  });
});

void hCorner;
