/**
 * Analytic renderer: pixel integrals, total flux, FWHM, recorded FWHM and noise, each
 * against an independent computation written here (Simpson quadrature of the published
 * profile formulas; optics.md §1.1, §1.2, §1.6).
 */
import { describe, expect, it } from 'vitest';
import { renderScene } from '../../core/simulate/render.ts';
import { parseScene, type SceneInput } from '../../core/simulate/scene.ts';

const FWHM_PER_SIGMA = 2.354820045; // Gaussian, optics.md §1.1

/** Composite Simpson on [a, b] with n (even) intervals. */
function simpson(f: (t: number) => number, a: number, b: number, n = 200): number {
  const h = (b - a) / n;
  let s = f(a) + f(b);
  for (let i = 1; i < n; i++) s += (i % 2 ? 4 : 2) * f(a + i * h);
  return (s * h) / 3;
}

/** Standard normal CDF by Simpson integration of the density. */
function phi(x: number): number {
  if (x < 0) return 1 - phi(-x);
  return 0.5 + simpson((t) => Math.exp(-0.5 * t * t), 0, x, 400) / Math.sqrt(2 * Math.PI);
}

/** Moffat 1969 surface brightness per unit flux, elliptical: (β-1)/(π αa αb) [1 + u²/αa² + v²/αb²]^-β. */
function moffat(dx: number, dy: number, aa: number, ab: number, thDeg: number, beta: number): number {
  const t = (thDeg * Math.PI) / 180;
  const u = dx * Math.cos(t) + dy * Math.sin(t), v = -dx * Math.sin(t) + dy * Math.cos(t);
  return ((beta - 1) / (Math.PI * aa * ab)) * Math.pow(1 + (u * u) / (aa * aa) + (v * v) / (ab * ab), -beta);
}
const alphaOf = (fwhm: number, beta: number) => fwhm / (2 * Math.sqrt(Math.pow(2, 1 / beta) - 1));

/** 2-D Simpson integral of f over the unit pixel centred at (cx, cy). */
function pixelIntegral(f: (x: number, y: number) => number, cx: number, cy: number, n = 40): number {
  return simpson((y) => simpson((x) => f(x, y), cx - 0.5, cx + 0.5, n), cy - 0.5, cy + 0.5, n);
}

/** Bisection for the half-maximum radius of a decreasing g on [0, hi]. */
function halfMaxRadius(g: (r: number) => number, hi: number): number {
  const half = g(0) / 2;
  let lo = 0;
  for (let i = 0; i < 80; i++) {
    const mid = (lo + hi) / 2;
    if (g(mid) > half) lo = mid; else hi = mid;
  }
  return (lo + hi) / 2;
}

const QUIET = { sky: { level: 0 }, noise: { readNoiseE: 0, biasAdu: 0, gain: 1, shotNoise: false }, quantize: false };

function render(extra: SceneInput) {
  return renderScene(parseScene({ width: 64, height: 64, ...QUIET, ...extra }));
}

describe('analytic renderer, noise-free', () => {
  it('Gaussian pixel values equal the products of erf differences (pixel integrals of the Gaussian)', () => {
    const F = 1e5, sx = 2.2 / FWHM_PER_SIGMA, sy = 1.6 / FWHM_PER_SIGMA;
    const x0 = 31.37, y0 = 30.81;
    const r = render({
      stars: [{ x: x0, y: y0, fluxE: F }],
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 2.2, fwhmMinorPx: 1.6, thetaDeg: 0, stampFluxTolerance: 1e-9 },
    });
    const peak = F / (2 * Math.PI * sx * sy);
    let worst = 0;
    for (let iy = 26; iy <= 36; iy++) {
      const py = phi((iy + 0.5 - y0) / sy) - phi((iy - 0.5 - y0) / sy);
      for (let ix = 26; ix <= 37; ix++) {
        const px = phi((ix + 0.5 - x0) / sx) - phi((ix - 0.5 - x0) / sx);
        worst = Math.max(worst, Math.abs(r.data[iy * 64 + ix] - F * px * py));
      }
    }
    expect(worst / peak).toBeLessThan(2e-6);
  });

  it('rotated elliptical Moffat pixel values equal 2-D integrals of the Moffat formula', () => {
    const F = 1e5, beta = 2.5, maj = 3.0, min = 2.2, th = 35;
    const x0 = 32.2, y0 = 31.6;
    const r = render({
      stars: [{ x: x0, y: y0, fluxE: F }],
      psf: { kind: 'analytic', model: 'moffat', fwhmMajorPx: maj, fwhmMinorPx: min, thetaDeg: th, beta },
    });
    const aa = alphaOf(maj, beta), ab = alphaOf(min, beta);
    const f = (x: number, y: number) => moffat(x - x0, y - y0, aa, ab, th, beta);
    const peak = F * f(x0, y0);
    let worst = 0;
    for (let iy = 25; iy <= 39; iy += 2) {
      for (let ix = 25; ix <= 39; ix++) {
        worst = Math.max(worst, Math.abs(r.data[iy * 64 + ix] - F * pixelIntegral(f, ix, iy)));
      }
    }
    expect(worst / peak).toBeLessThan(2e-6);
  });

  it('total flux: Gaussian sums to F; Moffat to F (1 - outside) with F(<r) = 1 - (1 + r²/α²)^(1-β)', () => {
    const g = renderScene(parseScene({
      width: 200, height: 200, ...QUIET, stars: [{ x: 100.3, y: 99.6, fluxE: 1e6 }],
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 3, fwhmMinorPx: 2.4, thetaDeg: 20, stampFluxTolerance: 1e-8 },
    }));
    let s = 0;
    for (const v of g.data) s += v;
    expect(Math.abs(s / 1e6 - 1)).toBeLessThan(2e-8 + 1e-9);
    expect(g.truth.stars[0].renderedFluxE! / s).toBeCloseTo(1, 6);

    const tol = 1e-4;
    const m = renderScene(parseScene({
      width: 400, height: 400, ...QUIET, stars: [{ x: 200.5, y: 199.2, fluxE: 1e7 }],
      psf: { kind: 'analytic', model: 'moffat', fwhmMajorPx: 3, fwhmMinorPx: 3, beta: 2.5, stampFluxTolerance: tol },
    }));
    s = 0;
    for (const v of m.data) s += v;
    // The stamp is a disk of radius R with 1 - F(<R) = tol; its pixelated edge moves ~1e-5.
    expect(s / 1e7).toBeGreaterThan(1 - tol - 3e-5);
    expect(s / 1e7).toBeLessThan(1 - tol + 3e-5);
    expect(m.truth.stars[0].fluxE).toBe(1e7);
  });

  it('FWHM and angle from second moments (SExtractor A, B, THETA; pixel box a²/12 removed)', () => {
    const r = renderScene(parseScene({
      width: 80, height: 80, ...QUIET, stars: [{ x: 40.2, y: 39.7, fluxE: 1e6 }],
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 4, fwhmMinorPx: 2.5, thetaDeg: 30, stampFluxTolerance: 1e-9 },
    }));
    let s = 0, sx = 0, sy = 0;
    for (let y = 0; y < 80; y++) for (let x = 0; x < 80; x++) { const v = r.data[y * 80 + x]; s += v; sx += v * x; sy += v * y; }
    const mx = sx / s, my = sy / s;
    let xx = 0, yy = 0, xy = 0;
    for (let y = 0; y < 80; y++) for (let x = 0; x < 80; x++) {
      const v = r.data[y * 80 + x];
      xx += v * (x - mx) ** 2; yy += v * (y - my) ** 2; xy += v * (x - mx) * (y - my);
    }
    xx = xx / s - 1 / 12; yy = yy / s - 1 / 12; xy /= s;
    const A = Math.sqrt((xx + yy) / 2 + Math.sqrt(((xx - yy) / 2) ** 2 + xy * xy));
    const B = Math.sqrt((xx + yy) / 2 - Math.sqrt(((xx - yy) / 2) ** 2 + xy * xy));
    const theta = (0.5 * Math.atan2(2 * xy, xx - yy) * 180) / Math.PI;
    expect(mx).toBeCloseTo(40.2, 6);
    expect(my).toBeCloseTo(39.7, 6);
    expect(FWHM_PER_SIGMA * A).toBeCloseTo(4, 4);
    expect(FWHM_PER_SIGMA * B).toBeCloseTo(2.5, 4);
    expect(theta).toBeCloseTo(30, 3);
    const t = r.truth.stars[0];
    expect([t.fwhmMajorPx, t.fwhmMinorPx, t.thetaDeg]).toEqual([4, 2.5, 30]);
  });

  it('recorded FWHM (profile * 1-px box): Gaussian by erf differences, Moffat by 2-D quadrature', () => {
    const g = render({
      stars: [{ x: 32, y: 32, fluxE: 1e4 }],
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 1.8, fwhmMinorPx: 1.3, thetaDeg: 0 },
    }).truth.stars[0];
    // Along x, the box-convolved Gaussian is ∝ Φ((x+½)/σ) - Φ((x-½)/σ); the y factor is constant.
    for (const [fw, got] of [[1.8, g.recordedFwhmMajorPx!], [1.3, g.recordedFwhmMinorPx!]]) {
      const s = fw / FWHM_PER_SIGMA;
      const ref = 2 * halfMaxRadius((x) => phi((x + 0.5) / s) - phi((x - 0.5) / s), 5);
      expect(got).toBeCloseTo(ref, 6);
      expect(got).toBeGreaterThan(fw);
    }

    const beta = 3, maj = 2.6, min = 2.0, th = 50;
    const m = render({
      stars: [{ x: 32, y: 32, fluxE: 1e4 }],
      psf: { kind: 'analytic', model: 'moffat', fwhmMajorPx: maj, fwhmMinorPx: min, thetaDeg: th, beta },
    }).truth.stars[0];
    const aa = alphaOf(maj, beta), ab = alphaOf(min, beta);
    const f = (x: number, y: number) => moffat(x, y, aa, ab, th, beta);
    const t = (th * Math.PI) / 180;
    const alongMaj = (r: number) => pixelIntegral(f, r * Math.cos(t), r * Math.sin(t), 24);
    const alongMin = (r: number) => pixelIntegral(f, -r * Math.sin(t), r * Math.cos(t), 24);
    expect(m.recordedFwhmMajorPx!).toBeCloseTo(2 * halfMaxRadius(alongMaj, 5), 5);
    expect(m.recordedFwhmMinorPx!).toBeCloseTo(2 * halfMaxRadius(alongMin, 5), 5);
    expect(m.beta).toBe(3);
  });

  it('angles are normalised into (-90, 90] and minor > major is swapped', () => {
    const r = render({
      stars: [
        { x: 20, y: 20, fluxE: 1e3, thetaDeg: 120 },
        { x: 40, y: 40, fluxE: 1e3, thetaDeg: -90 },
        { x: 40, y: 20, fluxE: 1e3, fwhmMajorPx: 2, fwhmMinorPx: 3, thetaDeg: 10 },
      ],
      psf: { kind: 'analytic', fwhmMajorPx: 3, fwhmMinorPx: 2 },
    });
    expect(r.truth.stars[0].thetaDeg).toBeCloseTo(-60, 12);
    expect(r.truth.stars[1].thetaDeg).toBe(90);
    expect(r.truth.stars[2]).toMatchObject({ fwhmMajorPx: 3, fwhmMinorPx: 2, thetaDeg: 100 - 180 });
  });
});

describe('noise', () => {
  it('flat sky: mean = level + bias, variance = (sky e- + read²)/gain² + 1/12 (Poisson + Gaussian + rounding)', () => {
    const r = renderScene(parseScene({
      width: 400, height: 300, stars: [], sky: { level: 1000 },
      noise: { gain: 2, readNoiseE: 5, biasAdu: 100 },
    }));
    const n = r.data.length;
    let s = 0, s2 = 0, nonInt = 0;
    for (const v of r.data) { s += v; s2 += v * v; if (!Number.isInteger(v)) nonInt++; }
    const mean = s / n, v = s2 / n - mean * mean;
    const expected = (2000 + 25) / 4 + 1 / 12; // uniform rounding error has variance 1/12 [CP]
    expect(nonInt).toBe(0);
    expect(Math.abs(mean - 1100)).toBeLessThan(5 * Math.sqrt(expected / n));
    expect(Math.abs(v / expected - 1)).toBeLessThan(5 * Math.sqrt(2 / n));
  });

  it('star pixels are Poisson: variance across identical stars equals their mean, pixel by pixel', () => {
    const stars = [];
    for (let j = 0; j < 15; j++) for (let i = 0; i < 20; i++) stars.push({ x: 10 + 20 * i + 0.3, y: 10 + 20 * j + 0.6, fluxE: 2e4 });
    const r = renderScene(parseScene({
      width: 400, height: 300, stars, sky: { level: 0 }, quantize: false,
      noise: { gain: 1, readNoiseE: 0, biasAdu: 0, shotNoise: true },
      psf: { kind: 'analytic', model: 'gaussian', fwhmMajorPx: 2.5, fwhmMinorPx: 2.5 },
    }));
    let worst = 0;
    for (let dy = -1; dy <= 2; dy++) {
      for (let dx = -1; dx <= 2; dx++) {
        let s = 0, s2 = 0;
        for (const st of stars) {
          const v = r.data[(Math.floor(st.y) + dy) * 400 + Math.floor(st.x) + dx];
          s += v; s2 += v * v;
        }
        const m = s / stars.length, v = (s2 - s * m) / (stars.length - 1);
        // Sample variance of n Poisson draws has relative s.e. ~ sqrt(2/(n-1)).
        worst = Math.max(worst, Math.abs(v / m - 1) / Math.sqrt(2 / (stars.length - 1)));
      }
    }
    expect(worst).toBeLessThan(4.5);
  });

  it('saturates at 65535 ADU and flags the star', () => {
    const r = renderScene(parseScene({
      width: 64, height: 64, stars: [{ x: 32, y: 32, fluxE: 5e6 }, { x: 10, y: 10, fluxE: 1e3 }],
      psf: { kind: 'analytic', fwhmMajorPx: 2.5 },
    }));
    let max = 0;
    for (const v of r.data) max = Math.max(max, v);
    expect(max).toBe(65535);
    expect(r.truth.stars.map((s) => s.saturated)).toEqual([true, false]);
  });
});
