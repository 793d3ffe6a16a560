// Optics resolution. Plate scale from the definition of the radian (206264.806"/rad) and
// the check value in /work/shared/reference/optics.md §7 (3.76 um at 400 mm = 1.9389"/px);
// f-number N = f / D (definition of the focal ratio).
import { describe, expect, it } from 'vitest';
import { SkyloupeError } from '../../core/errors.ts';
import { fitsOpticsHints } from '../../core/frame/fits.ts';
import { plateScaleArcsecPerPx, resolveOptics } from '../../core/frame/optics.ts';

describe('plateScaleArcsecPerPx', () => {
  it('3.76 um at 400 mm -> 1.9389"/px (optics.md §7 check value)', () => {
    expect(plateScaleArcsecPerPx(3.76, 400)).toBeCloseTo(1.9389, 4);
  });

  it('1 mm at 206264.806 mm subtends 1 arcsecond (definition of the radian)', () => {
    expect(plateScaleArcsecPerPx(1000, 206264.806)).toBeCloseTo(1, 8);
  });
});

describe('resolveOptics', () => {
  const hints = { from: 'header' as const, focalLengthMm: 400, pixelSizeUm: 3.76, apertureMm: 80 };

  it('header values, f-number derived as f/D = 400/80 = 5, plate scale derived', () => {
    const o = resolveOptics(hints, {}, 1);
    expect(o.focalLengthMm).toBe(400);
    expect(o.pixelSizeUm).toBe(3.76);
    expect(o.fNumber).toBe(5);
    expect(o.plateScaleArcsecPerPx).toBeCloseTo(1.9389, 4);
    expect(o.source).toEqual({
      focalLengthMm: 'header', pixelSizeUm: 'header', fNumber: 'derived', plateScaleArcsecPerPx: 'derived',
      keywords: { focalLengthMm: null, pixelSizeUm: null, fNumber: 'focal length/aperture' },
    });
  });

  it('CFA superpixels (scale 2): the measured plane has twice the pitch and twice the plate scale', () => {
    const o = resolveOptics(hints, {}, 2);
    expect(o.pixelSizeUm).toBe(7.52);
    expect(o.plateScaleArcsecPerPx).toBeCloseTo(2 * 1.9389, 3);
  });

  it('user values override and are marked; f/D uses the resolved focal length', () => {
    const o = resolveOptics(hints, { focalLengthMm: 530 }, 1);
    expect(o.focalLengthMm).toBe(530);
    expect(o.source.focalLengthMm).toBe('user');
    expect(o.fNumber).toBeCloseTo(530 / 80, 12);
    const o2 = resolveOptics({ ...hints, fNumber: 4.8 }, { fNumber: 4, pixelSizeUm: 2.4 }, 2);
    expect([o2.fNumber, o2.source.fNumber, o2.pixelSizeUm, o2.source.pixelSizeUm]).toEqual([4, 'user', 4.8, 'user']);
  });

  it('a stated FOCRATIO wins over f/D', () => {
    expect(resolveOptics({ ...hints, fNumber: 5.6 }, {}, 1)).toMatchObject({ fNumber: 5.6, source: { fNumber: 'header' } });
  });

  it('unknowns stay null with a null source', () => {
    const o = resolveOptics(null, {}, 1);
    expect(o).toEqual({
      focalLengthMm: null, pixelSizeUm: null, fNumber: null, plateScaleArcsecPerPx: null,
      source: { focalLengthMm: null, pixelSizeUm: null, fNumber: null, plateScaleArcsecPerPx: null, keywords: { focalLengthMm: null, pixelSizeUm: null, fNumber: null } },
    });
    const e = resolveOptics({ from: 'exif', focalLengthMm: 50, fNumber: 2 }, {}, 1);
    expect([e.source.focalLengthMm, e.source.fNumber, e.pixelSizeUm, e.plateScaleArcsecPerPx]).toEqual(['exif', 'exif', null, null]);
  });

  it('XPIXSZ already includes binning (its "after binning" meaning [CP, from memory]): not multiplied by XBINNING again', () => {
    const h = fitsOpticsHints(new Map<string, string | number | boolean | null>([['XPIXSZ', 7.52], ['XBINNING', 2], ['FOCALLEN', 400]]));
    const o = resolveOptics(h, {}, 1);
    expect(o.pixelSizeUm).toBe(7.52);
    expect(h?.binning).toBe(2);
  });

  // The f-number's common header spellings (issue 13 "Metadata"; FOCRATIO and APTDIA are the SBIG
  // extension keywords, FNUMBER is written by some capture programs [CP, from memory]); the
  // report names the card that served.
  const keys = (o: Record<string, number>) => new Map<string, string | number | boolean | null>(Object.entries(o));
  it('FNUMBER is read as the f-number, and the card is named', () => {
    const o = resolveOptics(fitsOpticsHints(keys({ FOCALLEN: 35, FNUMBER: 1.9, XPIXSZ: 6.9 })), {}, 1);
    expect(o.fNumber).toBe(1.9);
    expect(o.source.fNumber).toBe('header');
    expect(o.source.keywords).toEqual({ focalLengthMm: 'FOCALLEN', pixelSizeUm: 'XPIXSZ', fNumber: 'FNUMBER' });
  });

  it('FOCRATIO wins over FNUMBER and over FOCALLEN/APTDIA', () => {
    const o = resolveOptics(fitsOpticsHints(keys({ FOCALLEN: 400, FOCRATIO: 5.6, FNUMBER: 4, APTDIA: 80 })), {}, 1);
    expect([o.fNumber, o.source.keywords?.fNumber]).toEqual([5.6, 'FOCRATIO']);
  });

  it('APTDIA with FOCALLEN gives N = f/D = 400/80 = 5, derived from both cards', () => {
    const o = resolveOptics(fitsOpticsHints(keys({ FOCALLEN: 400, APTDIA: 80, PIXSIZE1: 3.76 })), {}, 1);
    expect(o.fNumber).toBe(5);
    expect(o.source.fNumber).toBe('derived');
    expect(o.source.keywords).toEqual({ focalLengthMm: 'FOCALLEN', pixelSizeUm: 'PIXSIZE1', fNumber: 'FOCALLEN/APTDIA' });
    // with the user's focal length, the ratio says so
    const u = resolveOptics(fitsOpticsHints(keys({ APTDIA: 80 })), { focalLengthMm: 480 }, 1);
    expect([u.fNumber, u.source.fNumber, u.source.keywords?.fNumber, u.source.keywords?.focalLengthMm]).toEqual([6, 'derived', 'user focal length/APTDIA', null]);
  });

  it('a user f-number names no card', () => {
    const o = resolveOptics(fitsOpticsHints(keys({ FNUMBER: 2.8 })), { fNumber: 4 }, 1);
    expect([o.fNumber, o.source.fNumber, o.source.keywords?.fNumber]).toEqual([4, 'user', null]);
  });

  it('bad user values are usage errors', () => {
    for (const bad of [0, -3, Number.NaN, Number.POSITIVE_INFINITY]) {
      let err: unknown;
      try { resolveOptics(null, { focalLengthMm: bad }, 1); } catch (e) { err = e; }
      expect(err).toBeInstanceOf(SkyloupeError);
      expect((err as SkyloupeError).kind).toBe('usage');
    }
  });
});
