// The per-star measurement runs as one WebAssembly call per star (core/stars/wasm/measure.as.ts);
// measureStarJs, the TypeScript path through the same fit, moments and HFD kernels, is its
// reference: both must give the same stars (model, flags, every number) on stamps of every
// kind the pipeline passes. That the committed module is the compiled source: wasm-modules.test.ts.
import { describe, it, expect } from 'vitest';
import { measureStar, measureStarJs, type StampInput, type MeasureOptions } from '../../core/stars/measure.ts';
import type { Star, StarFlag } from '../../core/stars/types.ts';
import { render, rng, gauss, addGaussianNoise, matchedSnr, type StarTruth } from '../reference/psf-stamps.ts';

/** Every number of a and b equal to 1e-9 relative (both NaN counts as equal); returns the paths that differ. */
function differences(a: Star, b: Star): string[] {
  const out: string[] = [];
  const walk = (p: string, x: unknown, y: unknown) => {
    if (typeof x === 'number' && typeof y === 'number') {
      if (Number.isNaN(x) && Number.isNaN(y)) return;
      if (!(Math.abs(x - y) <= 1e-9 * Math.max(Math.abs(x), 1e-12))) out.push(`${p}: ${x} vs ${y}`);
    } else if (x !== null && typeof x === 'object' && y !== null && typeof y === 'object' && !Array.isArray(x)) {
      for (const k of new Set([...Object.keys(x), ...Object.keys(y)])) walk(`${p}.${k}`, (x as Record<string, unknown>)[k], (y as Record<string, unknown>)[k]);
    } else if (JSON.stringify(x) !== JSON.stringify(y)) out.push(`${p}: ${JSON.stringify(x)} vs ${JSON.stringify(y)}`);
  };
  walk('star', a, b);
  return out;
}

describe('per-star measurement in WebAssembly', () => {
  it('gives the stars of the TypeScript path (models, gain, missing and infinite pixels, sky offsets, hot pixels, faint and empty stamps)', () => {
    const u = rng(404);
    const kinds = new Map<string, number>();
    for (let k = 0; k < 160; k++) {
      const W = k % 9 === 0 ? 31 : 23;
      const moffat = k % 2 === 1;
      const fw = k % 4 === 2 ? 0.9 + 1.5 * u() : 2 + 4 * u(); // a quarter undersampled (pixel-integrated fits)
      const t: StarTruth = { model: moffat ? 'moffat' : 'gaussian', beta: 2 + 3 * u(), x0: (W - 1) / 2 + u() - 0.5, y0: (W - 1) / 2 + u() - 0.5, flux: 2e4, fwhmMajor: fw, fwhmMinor: fw * (0.55 + 0.45 * u()), thetaDeg: 180 * u() - 90 };
      const clean = render(t, W, W, 'integrated', 4);
      const nu = k % 11 === 0 ? 2 + 4 * u() : 15 + 400 * u(); // some too faint to fit
      const sn = matchedSnr(clean, 1) / nu;
      const offset = k % 6 === 0 ? 12 * sn * (u() - 0.3) : 0; // sky the mesh missed
      const img = addGaussianNoise(clean, sn, u, offset);
      const flags: StarFlag[] = [];
      if (k % 8 === 0) for (let y = 0; y < W; y++) for (let x = 0; x < 3; x++) img[y * W + x] = Number.NaN; // off the frame
      if (k % 13 === 0) img[2 * W + 17] = k % 2 ? Infinity : -Infinity; // a corrupt pixel
      if (k % 10 === 5) { img[Math.round(t.y0) * W + Math.round(t.x0)] += 50 * sn * nu; flags.push('hot-pixel'); }
      if (k % 17 === 3) img.fill(0); // a flat stamp
      if (k % 19 === 4) img.fill(Number.NaN, 0, W * W - 8); // almost nothing left
      const input: StampInput = {
        stamp: img, w: W, h: W, originX: 100 * k, originY: 7 * k,
        skyVariance: k % 7 === 0 ? Number.NaN : sn * sn, // NaN: from the stamp's border
        gain: k % 3 === 0 ? 0.8 + u() : null,
        saturated: k % 23 === 0, sigmaGuessPx: k % 29 === 0 ? Number.NaN : fw / 2.3548, flags,
      };
      const opts: MeasureOptions = { model: (['auto', 'auto', 'gaussian', 'moffat'] as const)[k % 4], minSnr: k % 5 === 0 ? 30 : undefined };
      const copy = img.slice();
      const a = measureStar(input, opts);
      const b = measureStarJs(input, opts);
      expect(differences(a, b), `stamp ${k}`).toEqual([]);
      expect(img).toEqual(copy); // the input is never modified
      kinds.set(a.model, (kinds.get(a.model) ?? 0) + 1);
    }
    // the comparison covered every outcome
    expect(kinds.get('gaussian')).toBeGreaterThan(20);
    expect(kinds.get('moffat')).toBeGreaterThan(20);
    expect(kinds.get('moments')).toBeGreaterThan(5);
  });

  it('keeps to the TypeScript path for stamps it does not take (too large, malformed)', () => {
    const u = rng(5);
    const W = 140; // above the kernel's 128 x 128
    const img = new Float32Array(W * W);
    for (let i = 0; i < img.length; i++) img[i] = gauss(u);
    const input: StampInput = { stamp: img, w: W, h: W, originX: 0, originY: 0, skyVariance: 1, gain: null, saturated: false, sigmaGuessPx: 2, flags: [] };
    expect(differences(measureStar(input), measureStarJs(input))).toEqual([]);
    const bad: StampInput = { ...input, w: 2.5 };
    expect(measureStar(bad).flags).toContain('fit-failed');
  });
});
