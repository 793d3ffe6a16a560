import { describe, expect, it } from 'vitest';
import { lnGamma, poisson } from '../../core/simulate/noise.ts';
import { Rng, streamSeed } from '../../core/simulate/prng.ts';

/** Standard normal CDF by composite Simpson integration of the density (independent of the code under test). */
function phi(x: number): number {
  if (x < 0) return 1 - phi(-x);
  const n = 2000, h = x / n;
  let s = 0;
  for (let i = 0; i <= n; i++) {
    const t = i * h;
    const w = i === 0 || i === n ? 1 : i % 2 ? 4 : 2;
    s += w * Math.exp(-0.5 * t * t);
  }
  return 0.5 + (s * h) / 3 / Math.sqrt(2 * Math.PI);
}

describe('prng', () => {
  it('is deterministic per seed and differs between seeds and streams', () => {
    const a = new Rng(42), b = new Rng(42), c = new Rng(43);
    const sa = [a.u32(), a.u32(), a.u32()], sb = [b.u32(), b.u32(), b.u32()], sc = [c.u32(), c.u32(), c.u32()];
    expect(sa).toEqual(sb);
    expect(sa).not.toEqual(sc);
    expect(streamSeed(1, 0)).not.toBe(streamSeed(1, 1));
  });

  it('uniform has mean 1/2 and variance 1/12 (moments of U(0,1))', () => {
    const r = new Rng(7);
    const n = 500_000;
    let s = 0, s2 = 0, min = 1, max = 0;
    for (let i = 0; i < n; i++) {
      const u = r.uniform();
      s += u; s2 += u * u;
      if (u < min) min = u;
      if (u > max) max = u;
    }
    const m = s / n, v = s2 / n - m * m;
    expect(Math.abs(m - 0.5)).toBeLessThan(5 * Math.sqrt(1 / 12 / n));
    expect(Math.abs(v - 1 / 12)).toBeLessThan(1e-3);
    expect(min).toBeGreaterThanOrEqual(0);
    expect(max).toBeLessThan(1);
  });

  it('normal matches N(0,1): mean 0, variance 1, kurtosis 3, CDF at several points incl. the ziggurat tail', () => {
    const r = new Rng(11);
    const n = 1_000_000;
    let s = 0, s2 = 0, s4 = 0;
    const cuts = [-2, -1, 0, 0.5, 1, 2, 3, 3.6];
    const below = new Array(cuts.length).fill(0);
    for (let i = 0; i < n; i++) {
      const x = r.normal();
      s += x; s2 += x * x; s4 += x * x * x * x;
      for (let k = 0; k < cuts.length; k++) if (x < cuts[k]) below[k]++;
    }
    expect(Math.abs(s / n)).toBeLessThan(5 / Math.sqrt(n));
    expect(Math.abs(s2 / n - 1)).toBeLessThan(5 * Math.sqrt(2 / n));
    // E[x^4] = 3 for a normal; Var(x^4) = 96 -> standard error sqrt(96/n).
    expect(Math.abs(s4 / n - 3)).toBeLessThan(5 * Math.sqrt(96 / n));
    cuts.forEach((c, k) => {
      const p = phi(c);
      expect(Math.abs(below[k] / n - p)).toBeLessThan(5 * Math.sqrt((p * (1 - p)) / n) + 1e-6);
    });
  });
});

describe('poisson', () => {
  it('lnGamma matches ln((n-1)!) and ln Γ(1/2) = ln sqrt(π)', () => {
    let lf = 0;
    for (let n = 1; n <= 60; n++) {
      expect(lnGamma(n)).toBeCloseTo(lf, 10); // lf = ln((n-1)!)
      lf += Math.log(n);
    }
    expect(lnGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 12);
  });

  // Mean = variance = mu is the defining property of the Poisson distribution.
  for (const mu of [0.3, 4, 9.99, 10, 55, 800, 1e5]) {
    it(`has mean and variance mu = ${mu}`, () => {
      const r = new Rng(1000 + mu);
      const n = 200_000;
      let s = 0, s2 = 0, bad = 0;
      for (let i = 0; i < n; i++) {
        const k = poisson(r, mu);
        if (!(Number.isInteger(k) && k >= 0)) bad++;
        s += k; s2 += k * k;
      }
      expect(bad).toBe(0);
      const m = s / n, v = s2 / n - m * m;
      expect(Math.abs(m - mu)).toBeLessThan(5 * Math.sqrt(mu / n));
      // Var of the sample variance ≈ (mu + 2 mu^2)/n (4th central moment mu + 3mu^2).
      expect(Math.abs(v - mu)).toBeLessThan(5 * Math.sqrt((mu + 2 * mu * mu) / n));
    });
  }

  for (const mu of [4, 30]) {
    it(`follows the Poisson pmf e^-mu mu^k / k! (chi-square, mu = ${mu})`, () => {
      const r = new Rng(77);
      const n = 200_000;
      const kmax = Math.ceil(mu + 8 * Math.sqrt(mu));
      const counts = new Array(kmax + 1).fill(0);
      for (let i = 0; i < n; i++) counts[Math.min(kmax, poisson(r, mu))]++;
      // pmf by the recurrence p_k = p_{k-1} mu / k; the last bin holds the tail.
      const pmf: number[] = [];
      let p = Math.exp(-mu), cum = 0;
      for (let k = 0; k < kmax; k++) { pmf.push(p); cum += p; p *= mu / (k + 1); }
      pmf.push(1 - cum);
      let chi2 = 0, dof = -1;
      for (let k = 0; k <= kmax; k++) {
        const e = pmf[k] * n;
        if (e < 5) continue;
        chi2 += (counts[k] - e) ** 2 / e;
        dof++;
      }
      expect(chi2).toBeLessThan(dof + 5 * Math.sqrt(2 * dof));
    });
  }

  it('returns 0 for a zero or negative mean', () => {
    const r = new Rng(1);
    expect(poisson(r, 0)).toBe(0);
    expect(poisson(r, -3)).toBe(0);
  });
});
