// Frames of random (non-sky) dots must never be placed on the sky. The verification accepts a
// placement only when its likelihood ratio against "unrelated dots" exceeds T = 1e12, so by
// Markov's (Ville's) inequality each tried placement passes with probability at most 1/T (Lang et
// al. 2010, AJ 139, 1782, section 2.4; core/sky/verify.ts): 0 false placements are expected in
// any number of trials a test can run. 200 frames with a scale hint, 12 more also searched within
// a factor 2.5 of their hint, and 6 without any hint (every scale): uniformly random dots with a
// spread of brightness, sizes and densities; the outcome must say why it was not placed.
// (A longer run, 200 frames searched at every scale, is in test/bench/sky-trials.ts.)
import { describe, expect, it } from 'vitest';
import { randomDots } from '../../core/simulate/sky-field.ts';
import { solveSky } from '../../core/sky/solve.ts';
import { bundledCatalogue } from '../../core/sky/bundled.ts';

const FOCALS = [14, 20, 24, 35, 50, 85, 135, 200, 300, 400];

function trial(s: number, blind: boolean, near = false) {
  const W = 3000 + (s % 5) * 600, H = 2000 + (s % 3) * 500;
  const dots = randomDots(40 + (s % 9) * 35, W, H, 7000 + s).map((d) => ({ x: d.x, y: d.y, flux: d.fluxE, errPx: 0.3, fwhmPx: 3 }));
  const pixelUm = 3.76 + (s % 4);
  const hint = blind ? null : (206.265 * pixelUm) / FOCALS[s % FOCALS.length];
  return solveSky(dots, { width: W, height: H, scaleHintArcsecPerPx: hint, blind: blind || near });
}

const LONG = 600_000;

describe('random dots are never placed on the sky (false-positive trials)', () => {
  bundledCatalogue();
  let placed = 0, tried = 0, bound = 0;
  const record = (r: ReturnType<typeof trial>) => {
    tried++;
    bound += r.search.falsePositiveBound;
    if (r.solved) placed++;
    else expect(r.reason).toMatch(/none passed the verification/);
  };
  for (let block = 0; block < 5; block++) {
    it(`hinted frames ${40 * block + 1}-${40 * block + 40}`, () => {
      for (let s = 40 * block + 1; s <= 40 * block + 40; s++) record(trial(s, false));
      expect(placed).toBe(0);
    }, LONG);
  }
  it('hinted frames also searched within a factor 2.5 of the hint', () => {
    for (let s = 501; s <= 512; s++) record(trial(s, false, true));
    expect(placed).toBe(0);
  }, LONG);
  it('frames without a hint, searched at every scale', () => {
    for (let s = 1001; s <= 1006; s++) {
      const r = trial(s, true);
      record(r);
      expect(r.search.placementsTried).toBeGreaterThan(0);
    }
    expect(placed).toBe(0);
  }, LONG);
  it('0 of 218 placed, and the summed bound says why that is expected', () => {
    expect(tried).toBe(218);
    expect(placed).toBe(0);
    // the bound: placements tried x 1/T, summed over all frames
    expect(bound).toBeLessThan(1e-5);
  });
});
