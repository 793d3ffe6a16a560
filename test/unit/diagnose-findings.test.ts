import { describe, expect, it } from 'vitest';
import { diagnose, formatFindings } from '../../core/diagnose/index.ts';
import { spacingStepMm } from '../../core/diagnose/findings.ts';
import { nextStops } from '../../core/diagnose/stopdown.ts';
import { units } from '../../core/diagnose/context.ts';
import { optics, synthStars, type Scene } from './diagnose-synth.ts';

const W = 1500;
const H = 1000;
const base: Omit<Scene, 'seed'> = { width: W, height: H, nStars: 500, seeingFwhmPx: 2.5, fNumber: 4, pixelSizeUm: 2.4 };
const ctxFor = (N: number | null, p: number | null, wavelengthNm?: number) => ({ width: W, height: H, optics: optics({ fNumber: N, pixelSizeUm: p }), wavelengthNm });

describe('findings', () => {
  it('a clean frame says it is clean, with nothing above info', () => {
    const r = diagnose(synthStars({ ...base, seed: 61 }), ctxFor(4, 2.4));
    expect(r.diagnosis.clean).toBe(true);
    expect(r.findings.every((f) => f.severity === 'info')).toBe(true);
    expect(r.findings.map((f) => f.code)).toContain('CLEAN');
  });

  it('few stars are said to be few', () => {
    const r = diagnose(synthStars({ ...base, nStars: 15, seed: 62 }), ctxFor(4, 2.4));
    expect(r.findings.map((f) => f.code)).toContain('FEW_STARS');
    expect(r.diagnosis.tilt.supported).toBe(false);
  });

  it('orders by severity and formats one block per finding', () => {
    const r = diagnose(synthStars({ ...base, curvatureUm: 60, trail: { lengthPx: 3, angleDeg: 20 }, seed: 63 }), ctxFor(4, 2.4));
    const sev = r.findings.map((f) => f.severity);
    const rank = { major: 0, minor: 1, info: 2 };
    for (let i = 1; i < sev.length; i++) expect(rank[sev[i]]).toBeGreaterThanOrEqual(rank[sev[i - 1]]);
    const text = formatFindings(r.findings);
    expect(text.split('\n')[0]).toBe('Findings:');
    for (const f of r.findings) expect(text).toContain(f.message.split(' ').slice(0, 4).join(' '));
    expect(formatFindings([])).toBe('Findings: none');
  });

  it('spacing step scales with depth of focus, N^2: 0.5 mm at f/5 (optics.md 5, a common-practice heuristic)', () => {
    expect(spacingStepMm(5)).toBe(0.5);
    expect(spacingStepMm(2)).toBe(0.1);
    expect(spacingStepMm(null)).toBe(0.5);
  });

  it('units: K = (1 + eps^2)/(8 N^2 p^2); optics.md 4 check value: N 4, p 3.76, FWHM 3.5 vs 2.5 px gives |delta| = 62.6 um', () => {
    const u = units(ctxFor(4, 3.76));
    // Gaussian-equivalent: T = 2 (FWHM/2.3548)^2; delta = sqrt(T - T0) / sqrt(K).
    const T = (f: number) => 2 * (f / 2.354820045) ** 2;
    expect(Math.sqrt(T(3.5) - T(2.5)) / u.sqrtK!).toBeCloseTo(62.6, 1);
    expect(units(ctxFor(null, 3.76)).micrometres).toBe(false);
  });
});

describe('stop-down', () => {
  it('next full stops follow the lens scale', () => {
    expect(nextStops(4)).toEqual([5.6, 8, 11, 16]);
    expect(nextStops(2.8, 2)).toEqual([4, 5.6]);
  });

  it('predicts the corner FWHM at the next stop within 15 % of a frame taken there (geometric blur ~ 1/N, optics.md 3 and 7)', () => {
    // The generator has no diffraction, so the prediction is run without it (wavelength -> 0).
    const scene = { ...base, curvatureUm: 45, tiltUmPerMm: { x: 3, y: 0 }, comaPx: 1.5 };
    const at4 = diagnose(synthStars({ ...scene, seed: 64 }), ctxFor(4, 2.4, 1e-6));
    const sd = at4.diagnosis.stopDown;
    expect(sd.available).toBe(true);
    const p56 = sd.predictions.find((p) => p.fNumber === 5.6)!;
    // The frame at f/5.6: focus errors in um are the same, coma scales as 1/N^2 (optics.md 3 table).
    const at56 = diagnose(synthStars({ ...scene, fNumber: 5.6, comaPx: 1.5 * (4 / 5.6) ** 2, seed: 65 }), ctxFor(5.6, 2.4, 1e-6));
    const corners = at56.field.zones.cells.filter((z) => z.zone === 'corners').map((z) => z.fwhmPx!);
    const measured = corners.reduce((s, v) => s + v, 0) / corners.length;
    console.log(`synthetic stop-down: predicted f/5.6 corners ${p56.cornerFwhmPx.toFixed(3)} px, frame at f/5.6 ${measured.toFixed(3)} px`);
    expect(Math.abs(p56.cornerFwhmPx / measured - 1)).toBeLessThan(0.15);
    const centre = at56.field.zones.cells.find((z) => z.zone === 'center')!.fwhmPx!;
    expect(Math.abs(p56.centreFwhmPx / centre - 1)).toBeLessThan(0.15);
  });

  it('without the f-number it says it cannot predict', () => {
    const r = diagnose(synthStars({ ...base, curvatureUm: 45, seed: 66 }), ctxFor(null, 2.4));
    expect(r.diagnosis.stopDown.available).toBe(false);
    expect(r.diagnosis.stopDown.note).toMatch(/f-number/);
  });
});
