/**
 * Small pieces of the desktop program: bridge argument checks, the display stretch,
 * the optics choice, and finding the Electron binary without loading the electron package.
 */
import { describe, expect, it } from 'vitest';
import path from 'node:path';
import * as check from '../../app/engine/validate.ts';
import { stretchGrey } from '../../app/engine/stretch.ts';
import { chooseOptics, cameraKey, cameraOf } from '../../app/engine/pipeline.ts';
import { findElectron } from '../../app/electron-path.ts';

describe('bridge arguments', () => {
  it('keeps only the last part of a file name', () => {
    expect(check.fileName('/etc/passwd')).toBe('passwd');
    expect(check.fileName('C:\\frames\\m31.fits')).toBe('m31.fits');
    expect(() => check.fileName('..')).toThrow(/not usable/);
    expect(() => check.fileName('a\u0000b')).toThrow(/not usable/);
    expect(() => check.fileName(42)).toThrow(/file name/);
    expect(() => check.fileName('x'.repeat(256))).toThrow(/1 to 255/);
  });

  it('accepts optics only as positive numbers in plausible ranges', () => {
    expect(check.optics({ focalLengthMm: 300, pixelSizeUm: 3.76, fNumber: 4 })).toEqual({ focalLengthMm: 300, pixelSizeUm: 3.76, fNumber: 4 });
    expect(check.optics(undefined)).toBeUndefined();
    expect(check.optics({})).toBeUndefined();
    expect(() => check.optics({ focalLengthMm: -1 })).toThrow(/focal length/);
    expect(() => check.optics({ fNumber: Number.NaN })).toThrow(/f-number/);
    expect(() => check.optics({ pixelSizeUm: '3.76' })).toThrow(/pixel size/);
    expect(() => check.optics({ evil: 1 })).toThrow(/unknown optics field/);
    expect(() => check.optics([1, 2])).toThrow(/object/);
  });

  it('checks ids, indices, kinds, sweep points and PNG data', () => {
    expect(check.analysisId('0a1b2c3d4e5f')).toBe('0a1b2c3d4e5f');
    expect(() => check.analysisId('../x')).toThrow();
    expect(check.starIndex(3)).toBe(3);
    expect(() => check.starIndex(1.5)).toThrow();
    expect(() => check.starIndex(-1)).toThrow();
    expect(check.exportKind('html')).toBe('html');
    expect(() => check.exportKind('exe')).toThrow();
    expect(() => check.sweepPoints([{ id: 'a', spacingMm: 1 }])).toThrow(/2 to 24/);
    expect(() => check.sweepPoints([{ id: 'a', spacingMm: 1 }, { id: 'b', spacingMm: Infinity }])).toThrow(/spacer distance/);
    // PNG signature 89 50 4E 47 0D 0A 1A 0A (RFC 2083 section 12.11)
    expect(check.pngBytes(new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a, 0]))).toHaveLength(9);
    expect(() => check.pngBytes(new TextEncoder().encode('<svg>not a png</svg>'))).toThrow(/not a PNG/);
    expect(check.pngName('view')).toBe('view.png');
    expect(() => check.frameBytes(new ArrayBuffer(0))).toThrow(/empty/);
  });
});

describe('display stretch', () => {
  it('follows the asinh curve between black and white (Lupton et al. 2004)', () => {
    const s = { black: 100, white: 1100, beta: 12 };
    const data = Float32Array.from([50, 100, 600, 1100, 5000, Number.NaN]);
    const g = stretchGrey(data, 6, { x0: 0, y0: 0, w: 6, h: 1 }, 1, false, s);
    const want = (v: number) => Math.min(255, Math.floor((255 * Math.asinh(12 * Math.max(0, (v - 100) / 1000))) / Math.asinh(12)));
    expect(Array.from(g.pixels)).toEqual([0, 0, want(600), 255, 255, 0]);
  });

  it('block-averages by the factor and flips the rows for FITS display', () => {
    // 4 x 4 ramp by row: rows 0..3 hold 0, 1, 2, 3
    const data = Float32Array.from({ length: 16 }, (_, i) => Math.floor(i / 4));
    const s = { black: 0, white: 3, beta: 1e-9 }; // beta -> 0: linear
    const up = stretchGrey(data, 4, { x0: 0, y0: 0, w: 4, h: 4 }, 2, false, s);
    expect([up.width, up.height]).toEqual([2, 2]);
    // first output row = mean of rows 0 and 1 = 0.5 -> 255 * 0.5 / 3 = 42.5
    expect(up.pixels[0]).toBe(42);
    const flipped = stretchGrey(data, 4, { x0: 0, y0: 0, w: 4, h: 4 }, 2, true, s);
    // flipped: first output row = rows 3 and 2 = 2.5 -> 212.5
    expect(flipped.pixels[0]).toBe(212);
  });
});

describe('optics choice', () => {
  const noHints = { hints: null };
  const fileHints = { hints: { from: 'header' as const, focalLengthMm: 300, pixelSizeUm: 3.76 } };

  it('fills only what the file lacks from memory, and entered values win', () => {
    expect(chooseOptics(noHints, undefined, { focalLengthMm: 200, pixelSizeUm: 4.3, fNumber: 2.8 })).toEqual({ user: { focalLengthMm: 200, pixelSizeUm: 4.3, fNumber: 2.8 }, from: 'remembered', given: { focalLengthMm: 'remembered', pixelSizeUm: 'remembered', fNumber: 'remembered' } });
    expect(chooseOptics(fileHints, undefined, { focalLengthMm: 200, fNumber: 2.8 })).toEqual({ user: { fNumber: 2.8 }, from: 'remembered', given: { fNumber: 'remembered' } });
    expect(chooseOptics(fileHints, { focalLengthMm: 250 }, { fNumber: 2.8 })).toEqual({ user: { focalLengthMm: 250, fNumber: 2.8 }, from: 'entered', given: { focalLengthMm: 'typed', fNumber: 'remembered' } });
    expect(chooseOptics(fileHints, undefined, undefined)).toEqual({ user: {}, from: 'file', given: {} });
    expect(chooseOptics(noHints, undefined, undefined)).toEqual({ user: {}, from: 'none', given: {} });
  });

  it('names the camera, or the frame size when the file names none', () => {
    expect(cameraKey({ hints: { from: 'exif', camera: 'Canon EOS 6D' }, meta: {}, width: 10, height: 10 })).toBe('Canon EOS 6D');
    expect(cameraKey({ hints: null, meta: { INSTRUME: 'ZWO ASI2600MM' }, width: 10, height: 10 })).toBe('ZWO ASI2600MM');
    expect(cameraKey({ hints: null, meta: {}, width: 6248, height: 4176 })).toBe('unnamed camera, 6248 x 4176 px');
    expect(cameraOf({ hints: null, meta: {}, width: 6248, height: 4176 }).named).toBe(false);
    expect(cameraOf({ hints: null, meta: { INSTRUME: 'ZWO ASI2600MM' }, width: 10, height: 10 }).named).toBe(true);
  });
});

describe('Electron binary', () => {
  const pkg = path.join('/x', 'node_modules', 'electron');
  const resolve = () => path.join(pkg, 'package.json');

  it('is missing when the install step never wrote path.txt', () => {
    const r = findElectron({ resolve, exists: () => false, read: () => '', env: {} });
    expect(r).toEqual({ found: false, why: expect.stringContaining('path.txt') });
  });

  it('is found at dist/<path.txt> when that file exists', () => {
    const bin = path.join(pkg, 'dist', 'electron');
    const r = findElectron({ resolve, exists: (p) => p === path.join(pkg, 'path.txt') || p === bin, read: () => 'electron\n', env: {} });
    expect(r).toEqual({ found: true, binary: bin });
  });

  it('is missing when path.txt points at nothing, and follows ELECTRON_OVERRIDE_DIST_PATH', () => {
    expect(findElectron({ resolve, exists: (p) => p.endsWith('path.txt'), read: () => 'electron', env: {} }).found).toBe(false);
    const r = findElectron({ resolve, exists: () => true, read: () => 'electron', env: { ELECTRON_OVERRIDE_DIST_PATH: '/opt/e' } });
    expect(r).toEqual({ found: true, binary: path.join('/opt/e', 'electron') });
  });

  it('is missing when the package is not installed, without loading it', () => {
    expect(findElectron({ resolve: () => { throw new Error('nope'); }, env: {} })).toEqual({ found: false, why: 'the electron package is not installed' });
  });
});

describe('spacer distance from a file name', async () => {
  const { spacingFromName } = await import('../../app/renderer/names.ts');
  it('reads "<number> mm", with a sign only where a sign can be', () => {
    expect(spacingFromName('spacer-55.4mm.fits')).toBe(55.4);
    expect(spacingFromName('back_-0.5 mm.fit')).toBe(-0.5);
    expect(spacingFromName('-1.25mm.fits')).toBe(-1.25);
    expect(spacingFromName('s=+0.3mm')).toBe(0.3);
    expect(spacingFromName('light_0001.fits')).toBeNull();
  });
});
