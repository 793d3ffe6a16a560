/**
 * Clean frames: no significant finding in at least 95 % of 40 seeds. Synthetic stars from the
 * analytic moment model (diagnose-synth.ts) with Fisher-level noise (optics.md 1.6) and 5 %
 * outliers; rendered clean seeds run in test/reference/recovery-trailing-clean.test.ts.
 */
import { describe, expect, it } from 'vitest';
import { diagnose } from '../../core/diagnose/index.ts';
import { optics, synthStars, type Scene } from './diagnose-synth.ts';

const W = 1500;
const H = 1000;
const base: Omit<Scene, 'seed'> = { width: W, height: H, nStars: 500, seeingFwhmPx: 2.5, fNumber: 4, pixelSizeUm: 2.4 };
const ctx = { width: W, height: H, optics: optics({ fNumber: 4, pixelSizeUm: 2.4 }) };
const run = (s: Partial<Scene>, seed: number) => diagnose(synthStars({ ...base, ...s, seed }), ctx);

describe('clean frames', () => {
  it('no significant finding in at least 95 % of 40 seeds (synthetic stars, Fisher-level noise, 5 % outliers)', () => {
    let bad = 0;
    const codes: string[] = [];
    for (let seed = 1000; seed < 1040; seed++) {
      const r = run({ outliers: 0.05 }, seed);
      const sig = r.findings.filter((f) => f.severity !== 'info');
      if (sig.length) { bad++; codes.push(...sig.map((f) => f.code)); }
      if (!sig.length) expect(r.findings.some((f) => f.code === 'CLEAN')).toBe(true);
    }
    console.log(`clean synthetic seeds: ${40 - bad} of 40 without a significant finding${codes.length ? ` (${codes.join(', ')})` : ''}`);
    expect(bad, `significant findings: ${codes.join(', ')}`).toBeLessThanOrEqual(2);
  });
});
