/**
 * Each diagnosis module on synthetic Star arrays from the analytic moment model of
 * diagnose-synth.ts (optics.md sections 1, 4, 6; Fisher-level noise, section 1.6).
 */
import { describe, expect, it } from 'vitest';
import { diagnose } from '../../core/diagnose/index.ts';
import { axisDiffDeg } from '../../core/field/stats.ts';
import { optics, synthStars, type Scene } from './diagnose-synth.ts';

const W = 1500;
const H = 1000;
const P = 2.4;
const N = 4;
const base: Omit<Scene, 'seed'> = { width: W, height: H, nStars: 500, seeingFwhmPx: 2.5, fNumber: N, pixelSizeUm: P };
const ctx = { width: W, height: H, optics: optics({ fNumber: N, pixelSizeUm: P }) };
const run = (s: Partial<Scene>, seed: number) => diagnose(synthStars({ ...base, ...s, seed }), ctx);
/** Generator tilt in um/mm for a focus change across the full width / height (um). */
const tiltFor = (ux: number, uy: number) => ({ x: ux / ((W * P) / 1000), y: uy / ((H * P) / 1000) });

describe('tilt (optics.md 4: blur = |delta|/N, sizes in quadrature)', () => {
  it.each([
    { across: [25, 0], d0: 0 },
    { across: [0, 20], d0: 5 },
    { across: [20, 15], d0: -10 },
  ])('recovers $across um across the frame (defocus $d0 um) within 20 % and 10 deg', ({ across, d0 }) => {
    const r = run({ tiltUmPerMm: tiltFor(across[0], across[1]), defocusUm: d0 }, 21);
    const t = r.diagnosis.tilt;
    expect(t.significant).toBe(true);
    expect(t.signResolved).toBe(false);
    const truth = Math.hypot(across[0], across[1]);
    const found = Math.hypot(t.acrossFrameUm.x!, t.acrossFrameUm.y!);
    expect(Math.abs(found / truth - 1)).toBeLessThan(0.2);
    // Axis of steepest focus change: atan2 of the slope in um/mm (the generator's tilt vector).
    const tv = tiltFor(across[0], across[1]);
    expect(axisDiffDeg(t.axisDeg!, (Math.atan2(tv.y, tv.x) * 180) / Math.PI)).toBeLessThan(10);
    expect(r.findings.some((f) => f.code === 'TILT')).toBe(true);
  });

  it('magnitude only from one frame: the V with best focus at the centre and the one-sided case give the same |tilt|', () => {
    const v = run({ tiltUmPerMm: tiltFor(0, 30), defocusUm: 0 }, 22).diagnosis.tilt;
    const one = run({ tiltUmPerMm: tiltFor(0, 30), defocusUm: 18 }, 22).diagnosis.tilt;
    expect(v.bestFocusInFrame).toBe(true);
    expect(one.bestFocusInFrame).toBe(false);
    expect(Math.abs(v.acrossFrameUm.y! - one.acrossFrameUm.y!) / 30).toBeLessThan(0.2);
  });

  it('without f-number and pixel size gives the pattern in px and no micrometres, and says why', () => {
    const stars = synthStars({ ...base, tiltUmPerMm: tiltFor(30, 0), seed: 23 });
    const r = diagnose(stars, { width: W, height: H, optics: optics({ fNumber: null, pixelSizeUm: null }) });
    const t = r.diagnosis.tilt;
    expect(t.significant).toBe(true);
    expect(t.acrossFrameUm.x).toBeNull();
    expect(t.tiltMrad).toBeNull();
    // Blur-disk change across the width: |delta| / (N p) px (optics.md 4) = 30 / (4 * 2.4) = 3.1 px.
    expect(Math.abs(t.acrossFrameBlurPx.x! / (30 / (N * P)) - 1)).toBeLessThan(0.2);
    expect(t.note).toMatch(/f-number/);
    const f = r.findings.find((x) => x.code === 'TILT')!;
    expect(f.message).not.toMatch(/\d um/);
    expect(r.findings.some((x) => x.code === 'OPTICS_UNKNOWN')).toBe(true);
  });
});

describe('spacing, astigmatism and curvature', () => {
  it('tells the radial from the tangential corner pattern (signed radial-minus-tangential moment, optics.md 5)', () => {
    // Generator: blur semi-axes (delta -+ ast/2)/(2N) radial/tangential, so D = -2 delta ast (...):
    // delta and ast of opposite sign -> radial, same sign -> tangential.
    const rad = run({ curvatureUm: -25, astigUm: 25 }, 31).diagnosis;
    const tan = run({ curvatureUm: 25, astigUm: 25 }, 31).diagnosis;
    expect(rad.spacing.pattern).toBe('radial');
    expect(rad.spacing.radMinusTanPx2!).toBeGreaterThan(0);
    expect(tan.spacing.pattern).toBe('tangential');
    expect(tan.spacing.radMinusTanPx2!).toBeLessThan(0);
    expect(rad.tilt.significant).toBe(false);
    expect(tan.tilt.significant).toBe(false);
    expect(rad.astigmatism.significant).toBe(true);
    const f = diagnose(synthStars({ ...base, curvatureUm: 25, astigUm: 25, seed: 31 }), ctx).findings.find((x) => x.code === 'SPACING')!;
    expect(f.message).toMatch(/depends on the corrector design/);
    expect(f.message).toMatch(/sweep/);
  });

  it('reads round symmetric growth as field curvature, not tilt or spacing', () => {
    const d = run({ curvatureUm: 40 }, 32).diagnosis;
    expect(d.curvature.significant).toBe(true);
    expect(d.spacing.pattern).toBe('none');
    expect(d.tilt.significant).toBe(false);
    // Generator: delta = c rho^2 with c = 40 um at unit field height.
    expect(Math.abs(d.curvature.cornerDefocusUm! / 40 - 1)).toBeLessThan(0.25);
    expect(d.curvature.signResolved).toBe(false);
  });

  it('finds an astigmatism pattern centred off the frame centre and calls it decentred', () => {
    const oc = { x: 1000, y: 350 };
    const d = run({ astigUm: 40, defocusUm: 10, opticalCentre: oc }, 33).diagnosis;
    expect(d.astigmatism.significant).toBe(true);
    expect(d.astigmatism.decentred).toBe(true);
    expect(Math.hypot(d.astigmatism.centerPx!.x - oc.x, d.astigmatism.centerPx!.y - oc.y)).toBeLessThan(0.05 * Math.hypot(W, H));
    expect(d.trailing.significant).toBe(false);
  });
});

describe('coma (spin-1, optics.md 3)', () => {
  it.each([
    { S: 2.5, tail: 'outward' },
    { S: -2.5, tail: 'inward' },
  ])('tail $tail and centre within 5 % of the diagonal', ({ S, tail }) => {
    const cc = { x: 600, y: 420 };
    const d = run({ comaPx: S, comaCentre: cc }, 41).diagnosis;
    expect(d.coma.significant).toBe(true);
    expect(d.coma.tail).toBe(tail);
    expect(Math.hypot(d.coma.centerPx!.x - cc.x, d.coma.centerPx!.y - cc.y)).toBeLessThan(0.05 * Math.hypot(W, H));
    expect(Math.abs(d.coma.cornerComaPx! / Math.abs(S) - 1)).toBeLessThan(0.15);
    // The coma's own share of the moments is removed: no tilt, curvature or spacing from it.
    expect(d.tilt.significant).toBe(false);
    expect(d.curvature.significant).toBe(false);
    expect(d.spacing.pattern).toBe('none');
  });
});

describe('trailing (optics.md 6)', () => {
  it.each([0, 37, -62, 90])('detects a uniform trail at %d deg within 5 deg and never reports tilt, astigmatism or spacing', (angle) => {
    const d = run({ trail: { lengthPx: 3, angleDeg: angle } }, 51).diagnosis;
    expect(d.trailing.significant).toBe(true);
    expect(d.trailing.kind).toBe('uniform');
    expect(axisDiffDeg(d.trailing.angleDeg!, angle)).toBeLessThan(5);
    expect(Math.abs(d.trailing.lengthPx! / 3 - 1)).toBeLessThan(0.2);
    expect(d.tilt.significant).toBe(false);
    expect(d.astigmatism.significant).toBe(false);
    expect(d.spacing.pattern).toBe('none');
  });

  it('detects field rotation about an off-centre point and does not call it astigmatism or spacing', () => {
    const c = { x: 250, y: 800 };
    const d = run({ rotation: { angleRad: 0.004, centre: c } }, 52).diagnosis;
    expect(d.trailing.kind).toBe('rotation');
    expect(Math.hypot(d.trailing.rotation!.centerPx!.x - c.x, d.trailing.rotation!.centerPx!.y - c.y)).toBeLessThan(0.05 * Math.hypot(W, H));
    // Rotation by w t: 0.004 rad = 0.229 deg.
    expect(Math.abs(d.trailing.rotation!.angleDeg / 0.2292 - 1)).toBeLessThan(0.2);
    expect(d.spacing.pattern).toBe('none');
    expect(d.astigmatism.significant).toBe(false);
    expect(d.tilt.significant).toBe(false);
  });
});
