/**
 * Series inputs are checked (issue 12 item 4; issue 11 "bad input"): every series command refuses
 * frames that cannot belong to one series (different sizes, cameras or plate scales, the same
 * picture twice) and says what to do. Stars from the analytic moment model (diagnose-synth.ts).
 */
import { describe, expect, it } from 'vitest';
import { compareFrames } from '../../core/series/compare.ts';
import { sweepFrames } from '../../core/series/sweep.ts';
import { focusPair } from '../../core/series/focus-pair.ts';
import { throughFocus } from '../../core/series/through-focus.ts';
import { checkSameSetup, type FrameInput } from '../../core/series/input.ts';
import { pixelsHash, cameraName } from '../../core/series/identity.ts';
import { optics, synthStars, type Scene } from './diagnose-synth.ts';
import { SkyloupeError } from '../../core/errors.ts';

const W = 900, H = 600, P = 3.76;
const base: Omit<Scene, 'seed'> = { width: W, height: H, nStars: 300, seeingFwhmPx: 2.5, fNumber: 4, pixelSizeUm: P };
const opt = (focalLengthMm: number, pixelSizeUm = P) => optics({ fNumber: 4, pixelSizeUm, focalLengthMm });
function frame(seed: number, more: Partial<FrameInput> & { scene?: Partial<Scene> } = {}): FrameInput {
  const { scene, ...rest } = more;
  return { stars: synthStars({ ...base, ...scene, seed }), width: W, height: H, optics: opt(400), label: `f${seed}.fits`, ...rest };
}
const sweep = (frames: FrameInput[]) => sweepFrames(frames.map((f, k) => ({ ...f, spacingMm: 55 + k })));
const series = (frames: FrameInput[]) => throughFocus(frames.map((f, k) => ({ ...f, positionUm: -40 + 20 * k })));

/** The error is a usage error (a clear message for a person), not a crash. */
function refused(fn: () => unknown, pattern: RegExp): void {
  let err: unknown = null;
  try { fn(); } catch (e) { err = e; }
  expect(err).toBeInstanceOf(SkyloupeError);
  expect((err as SkyloupeError).kind).toBe('usage');
  expect((err as Error).message).toMatch(pattern);
}

describe('frames of different sizes', () => {
  const other = (seed: number) => ({ ...frame(seed), width: 1200, height: 800, stars: synthStars({ ...base, width: 1200, height: 800, seed }) });
  it('sweep refuses them and names both sizes', () => refused(() => sweep([frame(1), frame(2), other(3)]), /sweep: the frames differ in size \(f1\.fits is 900 x 600 px, f3\.fits is 1200 x 800 px\)/));
  it('compare refuses them', () => refused(() => compareFrames(frame(1), other(2)), /compare: the frames differ in size/));
  it('focus-pair refuses them', () => refused(() => focusPair(frame(1), other(2), 30), /focus-pair: the frames differ in size/));
  it('through-focus refuses them', () => refused(() => series([frame(1), frame(2), other(3)]), /through-focus: the frames differ in size/));
});

describe('frames of different cameras', () => {
  it('sweep refuses them and names both cameras', () => refused(() => sweep([frame(1, { camera: 'Cam A' }), frame(2, { camera: 'Cam A' }), frame(3, { camera: 'Cam B' })]), /different cameras \(f1\.fits: "Cam A", f3\.fits: "Cam B"\)/));
  it('compare refuses them', () => refused(() => compareFrames(frame(1, { camera: 'Cam A' }), frame(2, { camera: 'Cam B' })), /compare: the frames come from different cameras/));
  it('focus-pair and through-focus refuse them', () => {
    refused(() => focusPair(frame(1, { camera: 'Cam A' }), frame(2, { camera: 'Cam B' }), 30), /focus-pair: the frames come from different cameras/);
    refused(() => series([frame(1, { camera: 'Cam A' }), frame(2), frame(3, { camera: 'Cam B' })]), /through-focus: the frames come from different cameras/);
  });
  it('a frame that names no camera is not held against one that does', () => {
    expect(checkSameSetup('sweep', [frame(1, { camera: 'Cam A' }), frame(2), frame(3, { camera: 'Cam A' })])).toEqual([]);
  });
});

describe('frames of different plate scales', () => {
  it('sweep refuses a plate scale 15 times another (the case of issue 12)', () => {
    refused(() => sweep([frame(1), frame(2), frame(3, { optics: opt(400 / 15) })]), /sweep: the plate scales differ by 1400 %/);
  });
  it('sweep refuses 10 % but accepts 1 % (a spacer moves the focal length by far less than 5 %)', () => {
    refused(() => sweep([frame(1), frame(2), frame(3, { optics: opt(440) })]), /plate scales differ by 10 %/);
    expect(() => checkSameSetup('sweep', [frame(1), frame(2, { optics: opt(404) })], undefined, { scaleTolerance: 0.05 })).not.toThrow();
  });
  it('compare refuses a factor 15 (sizes would measure focal length) and warns at a factor 1.7', () => {
    refused(() => compareFrames(frame(1), frame(2, { optics: opt(400 * 15) })), /compare: the plate scales differ 15 times/);
    const r = compareFrames(frame(1), frame(2, { optics: opt(680) }));
    expect(r.unit).toBe('arcsec');
    expect(r.notes.join(' ')).toMatch(/plate scales differ .* compared in arcseconds/);
  });
  it('focus-pair refuses a different plate scale', () => refused(() => focusPair(frame(1), frame(2, { optics: opt(200) }), 30), /focus-pair: the plate scales differ/));
});

describe('the same picture twice', () => {
  it('is caught by the pixel hash in every command', () => {
    const a = frame(1, { pixelsHash: 'abc' }), b = frame(2, { pixelsHash: 'abc', label: 'copy.fits' });
    refused(() => sweep([a, frame(3), b]), /sweep: f1\.fits and copy\.fits are the same picture/);
    refused(() => compareFrames(a, b), /compare: f1\.fits and copy\.fits are the same picture/);
    refused(() => focusPair(a, b, 30), /focus-pair: f1\.fits and copy\.fits are the same picture/);
    refused(() => series([a, frame(3), b]), /through-focus: f1\.fits and copy\.fits are the same picture/);
  });
  it('different pixels hash differently; the same pixels hash alike', () => {
    const px = (v: number) => ({ width: 4, height: 2, data: Float32Array.from({ length: 8 }, (_, i) => i + v) });
    expect(pixelsHash(px(0))).toBe(pixelsHash(px(0)));
    expect(pixelsHash(px(0))).not.toBe(pixelsHash(px(1)));
    // The same values in another shape are another picture.
    expect(pixelsHash({ ...px(0), width: 2, height: 4 })).not.toBe(pixelsHash(px(0)));
  });
  it('reads the camera from the EXIF model or the INSTRUME card', () => {
    expect(cameraName({ hints: { from: 'exif', camera: ' Model X ' }, meta: {} })).toBe('Model X');
    expect(cameraName({ hints: null, meta: { INSTRUME: 'ZWO ASI000' } })).toBe('ZWO ASI000');
    expect(cameraName({ hints: null, meta: {} })).toBeNull();
  });
});

describe('too few frames, equal positions', () => {
  it('sweep needs three frames', () => {
    refused(() => sweepFrames([frame(1), frame(2)].map((f, k) => ({ ...f, spacingMm: 55 + k }))), /sweep: 2 frames cannot show .* at least three frames/);
  });
  it('sweep refuses two frames at the same spacing, naming them', () => {
    refused(() => sweepFrames([frame(1), frame(2), frame(3)].map((f, k) => ({ ...f, spacingMm: k === 2 ? 55 : 55 + k }))), /f1\.fits and f3\.fits have the same spacing \(55 mm\)/);
  });
  it('through-focus: two frames point to focus-pair; equal positions are refused', () => {
    refused(() => throughFocus([frame(1), frame(2)].map((f, k) => ({ ...f, positionUm: k * 30 }))), /use focus-pair NEAR FAR --step UM/);
    refused(() => throughFocus([frame(1), frame(2), frame(3)].map((f) => ({ ...f, positionUm: 10 }))), /every frame is at the same position/);
  });
  it('through-focus says which way to extend a series that never crosses focus', () => {
    // Focus at +100 um, frames from -40 to +40: the stars shrink toward the largest position.
    const fr = [0, 1, 2, 3, 4].map((k) => ({ ...frame(1, { scene: { defocusUm: -40 + 20 * k - 100, nStars: 400 } }), positionUm: -40 + 20 * k, pixelsHash: `h${k}` }));
    refused(() => throughFocus(fr), /never crosses focus.*Extend the series toward larger positions/);
  });
});
