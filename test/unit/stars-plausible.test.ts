// "A star must be a star" (issue 13 item 3): detections much narrower or (faint and) much wider
// than the significant stars around them are set aside. The sizes here are set by hand; the rule's
// numbers are argued in core/stars/plausible.ts (FWHM scatter ~1/SNR, optics.md 1.6).
import { describe, expect, it } from 'vitest';
import { implausibleFlags } from '../../core/stars/plausible.ts';
import type { Star, StarFlag } from '../../core/stars/types.ts';

function star(x: number, y: number, fwhm: number, snr: number, flags: StarFlag[] = []): Star {
  const nan = Number.NaN;
  return {
    x, y, flux: snr * 10, snr, fwhmPx: fwhm, fwhmMajorPx: fwhm, fwhmMinorPx: fwhm, ellipticity: 0, thetaDeg: 0, hfdPx: fwhm,
    coma: { x: 0, y: 0 }, flags, model: 'gaussian', moffatBeta: null, moments: { ixx: 1, iyy: 1, ixy: 0, e1: 0, e2: 0 },
    err: { x: nan, y: nan, fwhmPx: fwhm / snr, ellipticity: nan, thetaDeg: nan, hfdPx: nan, e1: nan, e2: nan },
  };
}

describe('implausibleFlags', () => {
  // bright stars 9 px wide everywhere (a defocused star tracker), and some detections of 2 px
  const bright = Array.from({ length: 40 }, (_, i) => star(20 + (i % 8) * 120, 20 + Math.floor(i / 8) * 150, 9 + 0.2 * Math.sin(i), 200));
  it('faint blobs a quarter of the stars\' size are spurious; significant ones are cosmic rays; real faint stars stay', () => {
    const stars = [...bright, star(500, 400, 2, 12), star(600, 300, 2.2, 15), star(700, 200, 2, 80), star(300, 300, 8.5, 11)];
    const f = implausibleFlags(stars, 1000, 800, 9);
    expect(f.slice(0, 40).every((x) => x.length === 0)).toBe(true);
    expect(f.slice(40)).toEqual([['spurious'], ['spurious'], ['cosmic-ray'], []]);
  });

  it('the reference is local: stars twice as large in one corner (a tilted sensor) are not set aside', () => {
    const sizeAt = (x: number, y: number) => (x > 500 && y > 400 ? 6 : 3);
    const stars: Star[] = [];
    for (let i = 0; i < 200; i++) { const x = 10 + (i * 37) % 980, y = 10 + (i * 53) % 780; stars.push(star(x, y, sizeAt(x, y), i % 2 ? 100 : 15)); }
    expect(implausibleFlags(stars, 1000, 800, 3).every((x) => x.length === 0)).toBe(true);
  });

  it('faint diffuse blobs more than twice the local size beyond their error are spurious', () => {
    const stars = [...bright.map((s) => ({ ...s, fwhmPx: 2.5 })), star(500, 400, 7, 13), star(520, 420, 5.6, 12)];
    const f = implausibleFlags(stars, 1000, 800, 2.5);
    expect(f[40]).toEqual(['spurious']);
    expect(f[41]).toEqual([]); // 5.6 - 5 = 0.6 px is within 3 standard errors (0.47 px each)
  });

  it('without significant stars the detection PSF size is the reference', () => {
    const f = implausibleFlags([star(10, 10, 1, 12), star(50, 50, 3, 12)], 100, 100, 3);
    expect(f).toEqual([['spurious'], []]);
  });
});
