/**
 * Coverage and sampling (issue 13 items 1 and 4, report half): POOR_COVERAGE only when the clean
 * stars do not cover the zones that hold sky; undersampled stars (median FWHM below about 1.5 px,
 * Howell's sampling parameter, optics.md 1.6 and 7) and stars whose shapes could not be measured
 * get their own notes; zones outside an image circle are "no data". Synthetic stars from the
 * analytic moment model of diagnose-synth.ts.
 */
import { describe, expect, it } from 'vitest';
import { diagnose } from '../../core/diagnose/index.ts';
import type { DataRegion } from '../../core/image/data-region.ts';
import type { Star } from '../../core/stars/types.ts';
import { optics, synthStars, type Scene } from './diagnose-synth.ts';

const W = 1024;
const H = 768;
const base: Omit<Scene, 'seed'> = { width: W, height: H, nStars: 220, seeingFwhmPx: 2.2, fNumber: 1.9, pixelSizeUm: 6.9 };
const ctx = { width: W, height: H, optics: optics({ fNumber: 1.9, pixelSizeUm: 6.9 }) };
const codes = (r: ReturnType<typeof diagnose>) => r.findings.map((f) => f.code);
const noShape = (s: Star): Star => ({ ...s, moments: { ixx: NaN, iyy: NaN, ixy: NaN, e1: NaN, e2: NaN } });

describe('coverage and sampling', () => {
  it('clean stars in every zone but shapes for only a tenth of them: a note on the shapes, no POOR_COVERAGE', () => {
    const stars = synthStars({ ...base, seed: 1 }).map((s, i) => (i % 10 ? noShape(s) : s));
    const r = diagnose(stars, ctx);
    expect(codes(r)).not.toContain('POOR_COVERAGE');
    expect(codes(r)).toContain('FEW_SHAPES');
    expect(r.diagnosis.coverage.cleanCover).toBe(true);
    expect(r.diagnosis.coverage.zonesWithStars).toBe(9);
    expect(r.findings.filter((f) => f.severity !== 'info')).toEqual([]);
  });

  it('undersampled stars (FWHM about 1.3 px) are said to be so, with no fault and no POOR_COVERAGE', () => {
    // a strong tilt too: with stars this small the shapes are not judged at all
    const stars = synthStars({ ...base, seeingFwhmPx: 1.2, seed: 2, tiltUmPerMm: { x: 8, y: 0 } }).map((s) => ({ ...s, fwhmPx: 1.3 }));
    const r = diagnose(stars, ctx);
    expect(codes(r)).toContain('UNDERSAMPLED');
    expect(codes(r)).not.toContain('POOR_COVERAGE');
    expect(r.findings.filter((f) => f.severity !== 'info')).toEqual([]);
    expect(r.findings.find((f) => f.code === 'UNDERSAMPLED')!.message).toMatch(/1\.5 px/);
  });

  it('stars in one half of the frame only: POOR_COVERAGE', () => {
    const stars = synthStars({ ...base, nStars: 300, seed: 3 }).filter((s) => s.x < W / 3);
    const r = diagnose(stars, ctx);
    expect(codes(r)).toContain('POOR_COVERAGE');
    expect(r.diagnosis.coverage.cleanCover).toBe(false);
  });

  it('an image circle: zones without sky are "no data" and do not count against the coverage', () => {
    const region: DataRegion = {
      kind: 'circle', circle: { xPx: (W - 1) / 2, yPx: (H - 1) / 2, radiusPx: 400 }, mask: null, skyFraction: 0.6,
      blackLevel: 0, vignetting: null, note: 'test',
    };
    const stars = synthStars({ ...base, nStars: 400, seed: 4 }).filter((s) => Math.hypot(s.x - (W - 1) / 2, s.y - (H - 1) / 2) < 390);
    const r = diagnose(stars, { ...ctx, dataRegion: region });
    expect(r.diagnosis.coverage.zonesWithData).toBeLessThanOrEqual(9);
    expect(codes(r)).not.toContain('POOR_COVERAGE');
    expect(r.diagnosis.coverage.adequate).toBe(true);
    // the frame's corner cells lie mostly outside a disc of radius 400 in a 1024 x 768 frame
    const corners = r.field.zones.cells.filter((z) => z.zone === 'corners');
    for (const z of corners) expect(z.dataFraction!).toBeLessThan(0.75);
  });
});
