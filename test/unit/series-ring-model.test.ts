/**
 * The ring model of a defocused, spherically aberrated star (core/series/ring-model.ts) against
 * outside references: Abramowitz & Stegun (I0 values, Table 9.8 [MEM]); the Rayleigh distribution
 * (a Gaussian-blurred point, closed form); the Marcum Q symmetry identity
 * Q1(a, b) + Q1(b, a) = 1 + exp(-(a^2 + b^2)/2) I0(a b) (Nuttall 1975 / Simon & Alouini [MEM]);
 * the uniform disc of geometric defocus (optics.md §1.1: radius holding fraction f is R sqrt(f));
 * the ray error of spherical aberration (optics.md §3, ε = -2N ∂W/∂ρ); and a Monte Carlo through
 * the simulator's own ray generator (core/simulate, an independent implementation).
 */
import { describe, expect, it } from 'vitest';
import { besselI0Scaled, modelRadii, pupilZones, ringFraction, solveIncreasing } from '../../core/series/ring-model.ts';
import { emptyRayModel, sampleOffsets, SEEING_GAUSSIAN } from '../../core/simulate/psf-optics.ts';
import { Rng } from '../../core/simulate/prng.ts';

describe('Bessel I0 and the blurred ring', () => {
  it('I0 matches tabulated values (A&S Table 9.8 [MEM]: I0(1) = 1.266065878, I0(2) = 2.279585302, I0(5) = 27.23987182)', () => {
    expect(besselI0Scaled(0)).toBeCloseTo(1, 7);
    expect(besselI0Scaled(1) * Math.exp(1)).toBeCloseTo(1.266065878, 6);
    expect(besselI0Scaled(2) * Math.exp(2)).toBeCloseTo(2.279585302, 6);
    expect(Math.abs(besselI0Scaled(5) * Math.exp(5) / 27.23987182 - 1)).toBeLessThan(2e-7);
  });

  it('a blurred point (ring of radius 0) is the Rayleigh distribution: 1 - exp(-b^2/2)', () => {
    for (const b of [0.3, 1, 1.7, 3, 5]) expect(Math.abs(ringFraction(0, b) - (1 - Math.exp(-b * b / 2)))).toBeLessThan(2e-5);
  });

  it('obeys the Marcum Q symmetry identity', () => {
    for (const [a, b] of [[0.5, 1.2], [2, 3.1], [4.4, 3.3], [7, 7.5], [10.5, 9]]) {
      const lhs = (1 - ringFraction(a, b)) + (1 - ringFraction(b, a));
      const rhs = 1 + Math.exp(-((a - b) ** 2) / 2) * besselI0Scaled(a * b);
      expect(Math.abs(lhs - rhs)).toBeLessThan(1e-4);
    }
  });

  it('agrees with a Monte Carlo of a ring blurred by a 2-D Gaussian, inside and beyond the table', () => {
    const rng = new Rng(5);
    for (const [a, b] of [[1.5, 2], [6, 5.5], [14, 14.6]]) {
      let inside = 0;
      const n = 200_000;
      for (let i = 0; i < n; i++) if (Math.hypot(a + rng.normal(), rng.normal()) < b) inside++;
      // binomial standard error < 0.0012; the normal approximation beyond the table is good to ~1e-3
      expect(Math.abs(ringFraction(a, b) - inside / n)).toBeLessThan(0.005);
    }
  });
});

describe('radii holding 20, 50 and 80 % of the light', () => {
  it('a sharp defocused disc: R sqrt(f) (optics.md §1.1), and R sqrt(eps^2 + f (1 - eps^2)) behind an obstruction', () => {
    const kappa = 0.05, delta = 200; // R = kappa delta = 10 px
    for (const eps of [0, 0.35]) {
      const r = modelRadii({ deltaUm: delta, sphericalUm: 0, kappa, coreSigmaPx: 0.01 }, pupilZones(eps, 4000), [0.2, 0.5, 0.8]);
      [0.2, 0.5, 0.8].forEach((f, i) => expect(r[i]).toBeCloseTo(10 * Math.sqrt(eps * eps + f * (1 - eps * eps)), 2));
    }
  });

  it('with spherical aberration, outside the caustic the radius of fraction f is kappa |delta - L f| sqrt(f) (zone u = f focuses at L f)', () => {
    // Sharp core; delta = -200 lies outside [3L, 0] for L = -50, where the zones' radii grow monotonically.
    const r = modelRadii({ deltaUm: -200, sphericalUm: -50, kappa: 0.05, coreSigmaPx: 0.01 }, pupilZones(0, 4000), [0.2, 0.5, 0.8]);
    [0.2, 0.5, 0.8].forEach((f, i) => expect(r[i]).toBeCloseTo(0.05 * Math.abs(-200 + 50 * f) * Math.sqrt(f), 2));
  });

  it('matches the simulator ray generator with Gaussian seeing, on both sides of focus, both signs', () => {
    const N = 4, p = 2.4, kappa = 1 / (2 * N * p), sigma = 1.1;
    for (const [delta, L] of [[-80, -50], [60, -50], [-60, 50], [90, 50], [30, 0]]) {
      const m = emptyRayModel();
      m.sagPx = m.tanPx = -delta / (2 * N * p);
      m.sphericalPx = L / (2 * N * p);
      m.seeing = SEEING_GAUSSIAN;
      m.seeingSigmaPx = sigma;
      const n = 200_000;
      const x = new Float64Array(n), y = new Float64Array(n);
      sampleOffsets(m, new Rng(17), n, x, y);
      const rr = Float64Array.from(x, (v, i) => Math.hypot(v, y[i])).sort();
      const model = modelRadii({ deltaUm: delta, sphericalUm: L, kappa, coreSigmaPx: sigma }, pupilZones(0, 256), [0.2, 0.5, 0.8]);
      [0.2, 0.5, 0.8].forEach((f, i) => expect(Math.abs(model[i] / rr[Math.floor(f * n)] - 1), `delta ${delta} L ${L} f ${f}`).toBeLessThan(0.01));
    }
  });

  it('solveIncreasing finds roots of increasing functions', () => {
    expect(solveIncreasing((x) => x * x * x, 8, 0, 10)).toBeCloseTo(2, 9);
    expect(solveIncreasing((x) => 1 - Math.exp(-x), 0.5, 0, 50)).toBeCloseTo(Math.LN2, 9);
  });
});
